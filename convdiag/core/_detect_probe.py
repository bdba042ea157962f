"""Detectors that spend a few extra evaluations of f: tolerance, pole, flat zero set.

Every evaluation goes through the diagnosis's :class:`~convdiag.core._detect_trace.Prober`
(counted, budgeted). The noise floor and the rounding level of f are in ``_detect_noise``
(re-exported here). Rules and thresholds (basis in brackets):

unattainable-tolerance
    xtol + rtol·|x| below the gap between adjacent doubles at the root (IEEE 754), or a
    residual tolerance ftol below the rounding level of f there, or a run that did not
    converge, reached the rounding floor of f (its best |f| within 100 × the floor) and asks
    for a step tolerance below the accuracy rounding allows, max(gap, ε_f/|f'|) — and, when
    its last iterates straddle the root at that floor, at least the smallest step they keep
    taking there (steps |f|/|f'| of a rounding-sized f, rounded to doubles). The
    rounding level ε_f is ``_detect_noise.rounding_level``: the largest of Moré and Wild's
    level, eps·Σ|terms| for an expression that is a sum, and the median |f| over stalled
    iterates that straddle the root (a run caught in a cycle at the rounding level of f
    keeps taking steps |f|/|f'| of that size). A high-precision run compares with its own
    spacing, 10^-digits relative. When that level is Moré and Wild's noise at least 1e4 times
    the double rounding of f (``_detect_noise.well_above_rounding``), the finding is a noise
    floor instead: f computes in a lower precision or carries an inner solver's error, and
    more digits in the solver cannot help.
pole
    The bracket history is judged by ``_signchange.judge_refinement`` (|f| ~ width^q:
    root q ≥ 0.3, pole q ≤ −0.3, jump at few-ulp width): first over the whole history
    (a root when |f| fell overall: a flat end is then the rounding or noise floor, which
    would otherwise look like a jump), then over the last halvings down from 64 × the
    final width; a bracket that is still wide is refined with ``classify_sign_change``
    on the probe budget.
flat zero set
    f is exactly 0 at the best iterate and also at x ± δ, δ = width/1024 of the last
    bracket (the hybrid's flag) or 1e-6·max(1, |x|): f underflows to zero on a stretch.
"""

from __future__ import annotations

import math

import numpy as np

from ._detect_advice import _remedy_same
from ._detect_noise import (
    NOISE_NEAR,
    detect_noise,
    noise_explains,
    noise_floor_finding,
    rounding_level,
    well_above_rounding,
)
from ._detect_path import Context, g
from ._detect_stop import stalled_tail
from ._detect_trace import EPS, Trace, trace_converged
from ._findings import Evidence, Finding

__all__ = ["detect_flat_zero", "detect_noise", "detect_pole", "detect_unattainable", "noise_explains"]

POLE_SPAN = 64.0
ZERO_DELTA = 1e-6


def detect_unattainable(t: Trace, ctx: Context) -> Finding | None:
    if t.n == 0:
        return None
    k = t.best_index()
    x = float(t.xs[k])
    if not math.isfinite(x):
        return None
    exact = t.stop_reason == "exact-zero" or (t.fs is not None and float(t.fs[k]) == 0.0)
    if t.digits:  # a high-precision run: its own spacing, 10^-digits relative
        gap = max(abs(x), 1e-300) * 10.0 ** (-t.digits)
    else:
        gap = float(np.spacing(abs(x))) if x != 0 else 5e-324
    asked = None if t.xtol is None else t.xtol + (t.rtol or 0.0) * abs(x)
    ev: list[Evidence] = []
    why = []
    attain = gap
    level = math.nan
    f0 = abs(float(t.fs[0])) if t.fs is not None and len(t.fs) else math.inf
    reached = t.fs is None or trace_converged(t) or abs(float(t.fs[k])) <= 1e-8 * f0  # near a root at all
    if asked is not None and asked < gap and not (asked == 0 and exact) and reached:
        why.append(f"the step tolerance {asked:.3g} is below the gap between adjacent doubles at x ({gap:.3g})")
    needs_level = (t.ftol is not None and t.ftol > 0) or (asked is not None and not trace_converged(t))
    how = ""
    stalled_step = math.nan
    slope = h = math.nan
    room = ctx.prober.remaining >= (2 if "noise" in ctx.cache else 11)  # the slope, and a noise sample if none yet
    if needs_level and t.f is not None and room and not t.digits:
        level, base, how, step = rounding_level(t, ctx, x)
        if math.isfinite(level):
            h = 1e-6 * max(1.0, abs(x))
            try:
                slope = (ctx.prober(x + h) - ctx.prober(x - h)) / (2 * h)
            except Exception:  # noqa: BLE001 - budget
                slope = math.nan
            if math.isfinite(slope) and slope != 0:
                attain = max(gap, level / abs(slope))
            if math.isfinite(step) and not trace_converged(t):
                attain = max(attain, step)
                stalled_step = step
            f_best = abs(float(t.fs[k])) if t.fs is not None else math.inf
            at_floor = f_best <= NOISE_NEAR * base  # the run reached the rounding floor of f
            near_root = at_floor or trace_converged(t)
            if t.ftol is not None and 0 < t.ftol < level and not exact and near_root:
                why.append(f"the residual tolerance {t.ftol:.3g} is below the rounding level of f near the root "
                           f"({level:.3g})")
            if asked is not None and not trace_converged(t) and asked < attain and at_floor and not exact and not why:
                why.append(f"the step tolerance {asked:.3g} is below the accuracy rounding allows ({attain:.3g})")
    if not why:
        return None
    est = ctx.cache.get("noise")
    if math.isfinite(level) and well_above_rounding(t, est, x):
        # the floor is noise far above double rounding (f computes in lower precision, or an inner solver is
        # loose): more digits in the solver cannot help, a looser tolerance or a less noisy f can
        stall = stalled_tail(t)
        k0, spread = stall[:2] if stall is not None else (max(0, t.n - 4), float(np.ptp(t.xs[max(0, t.n - 4):])))
        return noise_floor_finding(t, ctx, est, x, slope, f"central difference over ±{h:.2g}", k0, spread)
    ev.append(("requested xtol + rtol·|x|", asked if asked is not None else math.nan, ""))
    if t.ftol:
        ev.append(("requested ftol", t.ftol, ""))
    ev.append(("gap between doubles at x", gap, f"x = {g(x, 17)}" + (f"; {t.digits}-digit numbers" if t.digits
                                                                              else "")))
    if math.isfinite(level):
        ev.append(("rounding level of f", level, how))
    if math.isfinite(stalled_step):
        ev.append(("smallest stalled step", stalled_step,
                   "the smallest step the iterates keep taking at the rounding floor (they straddle the root)"))
    ev.append(("attainable accuracy in x", attain, "the largest of the gap, rounding level/|f'|"
               + (" and the smallest stalled step" if math.isfinite(stalled_step) else "")))
    new_xtol = 2 * attain
    remedy = _remedy_same(t, ctx, xtol=new_xtol, ftol=(4 * level if t.ftol and math.isfinite(level) else None),
                          note="tolerances double precision can meet")
    return Finding(
        "unattainable-tolerance",
        "The tolerance cannot be met in double precision: " + "; ".join(why) + ".",
        tuple(ev),
        f"Ask for xtol ≥ {g(new_xtol, 3)} (about the attainable accuracy, {g(attain, 3)})"
        + (f" and ftol ≥ {g(4 * level, 3)}" if t.ftol and math.isfinite(level) else "")
        + "; more digits need higher precision arithmetic (solve(..., digits=30)). Remedy: " + remedy.describe() + ".",
        remedy, (k,), tag=f"attainable {attain:.2g}")


def _history(t: Trace) -> tuple[list[float], list[float], list[float], tuple[float, float, float, float]] | None:
    br = t.brackets
    if not br:
        return None
    if t.bracket0 is not None and t.fs is not None and t.n >= 1:
        a, b = t.bracket0
        vals = dict(zip(t.xs.tolist(), t.fs.tolist()))
        first = (a, b, vals.get(a, math.nan), vals.get(b, math.nan))
    elif t.fs is not None and t.n >= 2:
        (a, fa), (b, fb) = sorted([(float(t.xs[0]), float(t.fs[0])), (float(t.xs[1]), float(t.fs[1]))])
        first = (a, b, fa, fb)
    else:
        return None
    rows = [first, *br]
    rows = [r for r in rows if all(math.isfinite(v) for v in r)]
    if len(rows) < 2:
        return None
    widths = [r[1] - r[0] for r in rows]
    amax = [max(abs(r[2]), abs(r[3])) for r in rows]
    amin = [min(abs(r[2]), abs(r[3])) for r in rows]
    return widths, amax, amin, rows[-1]


def detect_pole(t: Trace, ctx: Context) -> Finding | None:
    from ._signchange import classify_sign_change, judge_refinement

    h = _history(t)
    if h is None:
        return None
    widths, amax, amin, (lo, hi, flo, fhi) = h
    if flo == 0 or fhi == 0:
        return None
    mid = lo + (hi - lo) / 2
    resolution = not (lo < mid < hi) or (hi - lo) <= 4 * math.ulp(max(abs(lo), abs(hi)))
    whole = judge_refinement(widths, amax, amin, start=0)
    if whole[0] == "root":  # |f| fell over the whole refinement; a flat end is the rounding or noise floor
        return None
    start = max([i for i, w in enumerate(widths) if w >= POLE_SPAN * widths[-1]], default=0)
    kind, qmax, qmin, reason = judge_refinement(widths, amax, amin, start=start, at_resolution=resolution)
    probes = 0
    if kind is None and ctx.prober.available and ctx.prober.remaining >= 12 and (flo < 0) != (fhi < 0):
        sc = classify_sign_change(ctx.prober, lo, hi, f_lo=flo, f_hi=fhi, max_evals=min(ctx.prober.remaining, 60))
        kind, reason, probes = sc.kind, sc.reason, sc.evaluations
        lo, hi, qmax, qmin = sc.lo, sc.hi, sc.q_max, sc.q_min
    if kind not in ("pole", "jump"):
        return None
    x = lo + (hi - lo) / 2
    flagged = [i + 1 for i, r in enumerate(t.reasons) if "a pole, not a root" in r]
    ev: list[Evidence] = [
        ("sign change at", x, f"final bracket [{g(lo, 17)}, {g(hi, 17)}]"),
        ("|f| at the bracket ends", (amin[-1], amax[-1]), f"started at {g(amin[0], 3)} … {g(amax[0], 3)}"),
        ("exponent q in |f| ~ width^q", qmin if kind == "pole" and qmin < 0 else qmax,
         "a root has q > 0; a pole q < 0; a jump q ≈ 0"),
        ("bracket shrank", widths[0] / widths[-1] if widths[-1] > 0 else math.inf, "times"),
    ]
    if probes:
        ev.append(("refinement probes", probes, "halvings of the final bracket"))
    if flagged:
        ev.append(("hybrid flagged it", len(flagged), f"steps {flagged[0]}…: '|f| … grew … a pole, not a root'"))
    what = "a pole" if kind == "pole" else "a jump (discontinuity)"
    remedy = ctx.bracket_remedy(t, x, f"a bracket around a true root, not around {what}")
    return Finding(
        "pole",
        f"The sign change at x ≈ {g(x, 12)} is {what}, not a root: {reason}. |f| there is {g(amax[-1], 3)}.",
        tuple(ev),
        "No root lies in this bracket. Search for one that closes on a zero (|f| shrinking): "
        + remedy.describe() + ".",
        remedy, (t.n - 1,), tag=f"{kind} at {g(x, 6)}")


def detect_flat_zero(t: Trace, ctx: Context) -> Finding | None:
    if t.fs is None or t.n == 0 or t.f is None:
        return None
    k = t.best_index()
    if float(t.fs[k]) != 0.0:
        return None
    x = float(t.xs[k])
    width = None
    if t.brackets:
        lo, hi = t.brackets[-1][:2]
        width = hi - lo
        tol = (t.xtol or 0.0) + (t.rtol if t.rtol is not None else 4 * EPS) * abs(x)
        if not width > tol:
            return None  # the bracket closed on x: an ordinary root
    gap = 16 * math.ulp(x) if x else 16 * 5e-324
    delta = max(width / 1024 if width else ZERO_DELTA * max(1.0, abs(x)), gap)
    pr = ctx.prober
    if pr.remaining < 4:
        return None
    try:
        vals = [(x + s * delta * c, pr(x + s * delta * c)) for c in (1.0, 32.0) for s in (-1.0, 1.0)]
    except Exception:  # noqa: BLE001 - budget
        return None
    if not all(v == 0.0 for _, v in vals):
        return None
    span = 32 * delta
    flagged = bool(t.reasons) and "f may be flat (underflow)" in t.reasons[-1]
    return Finding(
        "flat",
        f"f is exactly zero at x = {g(x, 12)} and also at x ± {g(delta, 3)} and x ± {g(span, 3)}: it underflows "
        "to zero on a whole stretch, so this point is one of many where f rounds to 0, not the root.",
        (("zero at", x, "the point the run stopped at"), ("also zero at", tuple(v for v, _ in vals), "4 probes"),
         ("bracket width", width if width is not None else math.nan, "still wide when f hit 0")),
        ("Rescale f so that it does not underflow near the root (divide out the factor that decays, or solve for "
        "log of the decaying part), or accept any point of the stretch if that is good enough."
         + (" The hybrid flagged this: its step hit f = 0 while the bracket was still wide." if flagged else "")),
        None, (k,), tag="flat zero set")
