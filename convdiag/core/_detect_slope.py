"""The derivative check: your f' against the slope of f at a few iterates.

Rules and thresholds (basis in brackets):

slope of f
    A ladder of central differences d_k = (f(x + h_k) − f(x − h_k))/(2h_k), h_k = h_0/10^k,
    h_0 = eps^(1/3)·max(1, |x|) (the usual central difference step), k = 0 … 6, each rung
    extrapolated, R_k = d_k + (d_k − d_(k−1))/99 (Richardson's extrapolation of an error
    ∝ h²). An estimate is accepted only when it is *stable across the steps*: the
    difference e_k between consecutive rungs (|d_1 − d_0| for R_1, |R_k − R_(k−1)| after)
    is at most 1e-5·|R_k| (or 10 × the rounding bound eps·(|f(x+h)| + |f(x−h)|)/(2h) of
    the rung, for a slope near 0) and no larger than the rung before (the estimates are
    still closing in, not growing apart). A step relative to |x| alone can be huge (18 at
    x ≈ 3e6) next to the scale on which f varies (sin E varies on a scale of 1): such rungs
    average f's variation away and disagree with the smaller ones, so they are never
    accepted [common practice, no source: Ridders' and Richardson's tableaux accept an
    entry when neighbouring entries agree]. The ladder stops early when the rounding
    bound exceeds 1e-4·|d_k| (smaller steps only add rounding) or when e_k grew 5-fold
    twice in a row (rounding or noise in f, ∝ 1/h). When f takes complex input (real
    runs), the complex step Im f(x + ih)/h, h = 1e-20 (exact to rounding for analytic f;
    Squire and Trefethen, SIAM Rev. 40 (1998), from memory) is used when it agrees with a
    rung (d_k or R_k) to 1e-4 relative plus that rung's rounding bound: that check keeps
    code that is not complex-analytic (abs, a real part) from passing a wrong slope.
    No stable estimate and no checked complex step: the point is not compared (a note
    says so); the derivative is never called wrong on estimates that disagree with
    each other.
wrong-derivative
    Your f' is compared at up to 3 iterates (the first, a middle one, the best) with
    the slope of f. A point disagrees when |g − D| > max(1e-3·max(|g|, |D|), 10·(error
    estimate of D)) [Newton with a slope off by a relative δ converges with rate δ
    (REFERENCES §1): below 1e-3 that still gains 3 digits a step]. Flag when two points
    disagree, or one by more than 10 % (noise in f can push a single difference
    estimate past the first bar).
"""

from __future__ import annotations

import math

import numpy as np

from ._detect_advice import _bracketing
from ._detect_order import rate_order
from ._detect_path import Context, g
from ._detect_trace import EPS, Trace
from ._findings import Evidence, Finding, Remedy

__all__ = ["check_derivative"]

CSTEP = 1e-20
#: rungs of the difference ladder (h_0 … h_0/10^6) and how they must agree (module docstring)
LADDER_RUNGS = 7
LADDER_STABLE = 1e-5
LADDER_ROUNDING = 1e-4
LADDER_GROWTH = 5.0
CS_AGREE = 1e-4
DERIV_REL = 1e-3
DERIV_ONE = 0.1


def _complex_step(t: Trace, ctx: Context, x: float) -> float:
    """Im f(x + ih)/h, h = 1e-20, or NaN when f does not take complex input (one probe)."""
    pr = ctx.prober
    if t.arithmetic != "real" or t.f is None or pr.remaining < 1:
        return math.nan
    pr.spend(1)
    try:
        with np.errstate(all="ignore"):
            return float(complex(t.f(complex(x, CSTEP))).imag / CSTEP)
    except Exception:  # noqa: BLE001 - not complex-analytic code
        return math.nan


def _slope(t: Trace, ctx: Context, x: float) -> tuple[float, float, str]:
    """f'(x), an error estimate and how; NaN when no estimate is stable across the steps (module docstring)."""
    pr = ctx.prober
    if pr.remaining < 4 or t.f is None:
        return math.nan, math.nan, "no budget"
    cs = _complex_step(t, ctx, x)
    h = EPS ** (1 / 3) * max(1.0, abs(x))
    ds: list[float] = []
    rs: list[float] = []
    errs: list[float] = []
    grew = 0
    for _ in range(LADDER_RUNGS):
        if pr.remaining < 2:
            break
        xp, xm = x + h, x - h
        fp, fm = pr(xp), pr(xm)
        d = (fp - fm) / (xp - xm)
        rnd = EPS * (abs(fp) + abs(fm)) / (xp - xm)
        if not math.isfinite(d):
            break
        r = d if not ds else d + (d - ds[-1]) / 99
        if math.isfinite(cs) and any(abs(cs - v) <= CS_AGREE * max(abs(cs), abs(v)) + 2 * rnd for v in (d, r)):
            return cs, 4 * EPS * abs(cs), f"complex step (checked against a central difference at h = {h:.2g})"
        if ds:
            e = abs(d - ds[-1]) if len(ds) == 1 else abs(r - rs[-1])
            closing = not errs or e <= errs[-1]
            if e <= max(LADDER_STABLE * abs(r), 10 * rnd) and closing:
                return r, max(e, rnd), (f"central differences at h = {h * 10:.2g} and {h:.2g}, extrapolated (stable across "
                              f"{len(ds) + 1} steps)")
            grew = grew + 1 if errs and e >= LADDER_GROWTH * errs[-1] else 0
            errs.append(e)
            if grew >= 2:
                break  # the estimates grow apart like 1/h: rounding or noise in f, or f varies on a scale below h
        ds.append(d)
        rs.append(r)
        if rnd > LADDER_ROUNDING * abs(d):
            break  # smaller steps only add rounding
        h /= 10
    spread = (max(rs) - min(rs)) if rs else math.nan
    return math.nan, spread, f"no estimate stable across {len(ds)} steps from h = {EPS ** (1 / 3) * max(1.0, abs(x)):.2g}"


def check_derivative(t: Trace, ctx: Context) -> Finding | None:
    """Compare the derivative you supplied with the slope of f at a few iterates."""
    if t.fprime is None or t.f is None or not ctx.prober.available or t.n == 0:
        return None
    idx = sorted({0, t.n // 2, t.best_index()})
    rows: list[tuple[float, float, float, float, str]] = []
    for k in idx:
        x = float(t.xs[k])
        if not math.isfinite(x) or ctx.prober.remaining < 5:
            continue
        if rows and ctx.prober.remaining < ctx.prober.budget // 2:
            break  # keep half the budget for the other findings
        try:
            ctx.prober.spend(1)
            gv = float(t.fprime(x))
        except Exception:  # noqa: BLE001, S112 - the user's derivative failed; nothing to compare
            continue
        try:
            d, err, how = _slope(t, ctx, x)
        except Exception:  # noqa: BLE001 - budget ran out in the middle
            break
        if not math.isfinite(d):
            ctx.notes.append(f"the slope of f at x = {g(x, 8)} was not compared with your derivative: {how} "
                             "(f varies on a scale shorter than the steps, or is noisy)")
        elif math.isfinite(gv):
            rows.append((x, gv, d, err if math.isfinite(err) else 0.0, how))
    if not rows:
        return None
    worst = max(rows, key=lambda r: abs(r[1] - r[2]) / max(abs(r[1]), abs(r[2]), 1e-300))
    bad = [r for r in rows if abs(r[1] - r[2]) > max(DERIV_REL * max(abs(r[1]), abs(r[2])), 10 * r[3])]
    if len(bad) == 1 and len(rows) > 1 and _rel(bad[0]) <= DERIV_ONE:
        ctx.notes.append(f"your derivative differs from the slope of f by {_rel(bad[0]):.1e} (relative) at one of "
                         f"{len(rows)} points only; not flagged (a difference estimate in a noisy f can do that)")
        bad = []
    ctx.cache["derivative"] = {"checked": len(rows), "bad": len(bad), "worst": worst}
    if not bad:
        ctx.notes.append(f"your derivative agrees with the slope of f at {len(rows)} iterate(s) "
                         f"(largest relative difference {_rel(worst):.1e})")
        return None
    x, gv, d, err, how = worst
    ev: list[Evidence] = [(f"f' at x = {g(x, 8)}", (x, gv, d), (f"x, your f', the slope of f ({how}); relative "
                           f"difference {_rel((x, gv, d, err, how)):.3g}")) for x, gv, d, err, how in bad]
    ratio = gv / d if d else math.inf
    ev.append(("points checked", len(rows), f"{len(bad)} disagree"))
    rate_note = ""
    est = rate_order(t, ctx)
    if est is not None and est.label == "linear" and est.rate is not None:
        rate_note = f" Newton with a wrong slope g converges only linearly, rate |1 − f'/g| ({est.rate:.3g} here)."
    x0 = t.starts[0] if t.starts else float(t.xs[0])
    remedy = Remedy(t.method if t.method and not _bracketing(t.method) else "newton", start=(x0,),
                    drop_fprime=True, note="the same method with a derivative convdiag computes from f")
    return Finding(
        "wrong-derivative",
        f"The derivative you supplied disagrees with the slope of f: at x = {g(x, 8)} it gives {g(gv, 6)} where "
        f"{_slope_words(d)} (ratio {ratio:.4g}).{rate_note}",
        tuple(ev),
        "Fix the derivative function (compare it term by term with f), or leave it out: convdiag then differentiates "
        "f itself. Remedy: " + remedy.describe() + ".",
        remedy, tuple(idx), tag=f"ratio {ratio:.3g}")


def _rel(row: tuple[float, float, float, float, str]) -> float:
    return abs(row[1] - row[2]) / max(abs(row[1]), abs(row[2]), 1e-300)


def _slope_words(d: float) -> str:
    """The slope in words that match its sign: 'f rises at 2', 'f falls at 195.6 (slope −195.6)'."""
    if d > 0:
        return f"f rises at {g(d, 6)}"
    if d < 0:
        return f"f falls at {g(-d, 6)} (slope {g(d, 6)})"
    return "f is flat (slope 0)"
