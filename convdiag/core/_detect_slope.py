"""The derivative check: your f' against the slope of f at a few iterates.

Rules and thresholds (basis in brackets):

wrong-derivative
    Your f' is compared at up to 3 iterates (the first, a middle one, the best) with
    the slope of f: the complex step Im f(x + ih)/h, h = 1e-20 (exact to rounding for
    analytic f; Squire and Trefethen, SIAM Rev. 40 (1998), from memory), accepted when
    it agrees with a central difference to 1e-4; otherwise Richardson's extrapolation
    of central differences at h and 2h, h = eps^(1/3)·max(1, |x|) (the usual central
    difference step) shrunk ten-fold (at most 4 times) until the two agree to 1e-6, or
    until their difference grows like 1/h (rounding or noise). A point disagrees when
    |g − D| > max(1e-3·max(|g|, |D|), 10·(error estimate of D)) [Newton with a slope
    off by a relative δ converges with rate δ (REFERENCES §1): below 1e-3 that still
    gains 3 digits a step; the error estimate is the difference of the two central
    differences, a standard bound]. Flag when two points disagree, or one by more than
    10 % (noise in f can push a single difference estimate past the first bar).
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
SLOPE_SHRINKS = 4
DERIV_REL = 1e-3
DERIV_ONE = 0.1


def _slope(t: Trace, ctx: Context, x: float) -> tuple[float, float, str]:
    """f'(x), an error estimate and how: complex step when valid, else Richardson-extrapolated differences.

    The difference step starts at eps^(1/3)·max(1, |x|) and shrinks ten-fold (4 times at most) while the
    differences at h and 2h disagree by more than 1e-6 relative (f varies on a shorter scale than |x|),
    unless their disagreement grew five-fold or more at the last shrink (rounding or noise, ∝ 1/h).
    """
    pr = ctx.prober
    s = max(1.0, abs(x))
    h = EPS ** (1 / 3) * s
    if pr.remaining < 4 or t.f is None:
        return math.nan, math.nan, "no budget"
    d1 = (pr(x + h) - pr(x - h)) / (2 * h)
    cs = math.nan
    if t.arithmetic == "real" and pr.remaining >= 1:
        pr.spend(1)
        try:
            with np.errstate(all="ignore"):
                cs = complex(t.f(complex(x, CSTEP))).imag / CSTEP
        except Exception:  # noqa: BLE001 - not complex-analytic code
            cs = math.nan
    if math.isfinite(cs) and abs(cs - d1) <= 1e-4 * max(abs(cs), abs(d1)) + 1e-10:
        return cs, 4 * EPS * abs(cs), "complex step (checked against a central difference)"
    best = (d1, math.inf, "central difference")
    last = math.inf
    for shrink in range(SLOPE_SHRINKS + 1):
        if shrink:
            h /= 10
            if pr.remaining < 4:
                break
            d1 = (pr(x + h) - pr(x - h)) / (2 * h)
        elif pr.remaining < 2:
            break
        d2 = (pr(x + 2 * h) - pr(x - 2 * h)) / (4 * h)
        est = ((4 * d1 - d2) / 3, abs(d1 - d2) / 3, f"central differences at h = {h:.2g} and 2h, extrapolated")
        if est[1] < best[1]:
            best = est
        if est[1] <= 1e-6 * abs(est[0]) or est[1] >= 5 * last:
            break  # accurate; or the error grew like 1/h: rounding or noise in f limits it, not its curvature
        last = est[1]
    return best


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
        if math.isfinite(d) and math.isfinite(gv):
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
