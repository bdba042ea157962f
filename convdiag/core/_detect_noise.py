"""The floor of f near a stalled iteration: computational noise, and the rounding level of f.

Every evaluation goes through the diagnosis's :class:`~convdiag.core._detect_trace.Prober`
(counted, budgeted). Rules and thresholds (basis in brackets):

when f is sampled
    Only when the iterates have stalled (``_detect_stop.stalled_tail``: the last iterates
    within 1e-2 of the distance travelled and of max(1, |x|)). Iterates still thrown about
    (a wandering Newton run on Kepler's equation reaches |E| ~ 1e5) say nothing about a floor,
    and a sample spaced like them reads f's own variation (sin E sampled 1e4 apart) as noise.
noise-floor
    Moré and Wild's estimate is taken at the best iterate with the default spacing, and with
    spacing h2 = (spread of the stalled iterates)/8 [the noise module's advice for piecewise
    smooth noise] when the sample's width 8·h2 is at most a tenth of the length |f'/f''| over
    which the slope of f changes (f' and f'' from the first and second differences across the
    default sample): wider, f's own curvature dominates the differences [common practice, no
    source]. Noise is found when a status is "ok" (above 100 × rounding) and the stalled |f|
    is within 100 × that level. Attainable accuracy in x: level/|f'| (Wilkinson's condition
    number of a simple root, from memory), f' from a central difference over
    max(16 × spread, 1e-4·max(1, |x|)).
    An iteration that met its tolerance is not sampled, except a recording or sequence whose
    tolerance was not given (``_detect_stop`` assumes one): it is a noise floor, and the
    verdict, when the noise is at least 1e4 × the double rounding of f (below; the noise is then
    not double rounding: single precision's eps is 5e8 times double's, and terms that cancel
    by a factor 1e4 are already seen by (ii) for an expression) [common practice, no source]
    and the stalled iterates took a step smaller than the attainable accuracy (the solver
    believed in digits the noise does not allow). A rounding level that is such noise is
    reported as a noise floor, not as a limit of double precision (``_detect_probe``).
noise floor behind a cycle or a zero slope (:func:`noise_behind`)
    A cycle (``_detect_path``) or a stop on a zero slope (``_detect_flat``: equal values of f
    at the last two iterates, or f' = 0) is the noise itself when Moré and Wild's estimate at
    the best iterate has status "ok", |f| at the points involved (the cycle points, the last two
    iterates) is within 100 × that level, and the width involved (the cycle's width, the last
    step) is at most ``NOISE_PATH`` (4) × the attainable accuracy level/|f'| [Wilkinson's
    condition number; "a few times", common practice, no source]. f is sampled for it only when
    |f| at those points is at most ``PATH_DROP`` (1e-3) × the largest |f| of the run (a cycle
    between values of f like the start's is no floor) [common practice, no source]. Then the
    iteration has reached the root to the accuracy the noise allows and bounces about in it:
    the noise floor is the finding, with the cycle or the flat step as its evidence, and its
    remedy's step tolerance is at least 1.5 × that width, so that the remedy stops where the
    run bounced.
rounding level of f (:func:`rounding_level`)
    The largest of (i) Moré and Wild's level at the best iterate (the noise module's estimate
    eps·max(|f|, |x·f'|) when no level is found); (ii) when f is an expression that is a sum
    of terms t_i at its top level: eps·Σ|t_i(x)|, the first-order bound on the rounding of a
    sum (Higham, *Accuracy and Stability of Numerical Algorithms*, 2nd ed. 2002, §4.2, from
    memory) — it sees rounding in terms that cancel, which (i)'s fallback misses (Kepler's
    E − e·sin E − M near E = 0.25: terms of 0.25, |x·f'| only 0.01); (iii) when the iterates
    stalled with f taking both signs over the stalled ones, within 100 × the larger of (i) and
    (ii): the median |f| there. The iterates straddle the root, so the smooth part of f is no
    larger there than what rounding adds, and the run's own steps are |f|/|f'| with this |f|.
    Such a run also cannot take steps smaller than the smallest one it keeps taking there
    (|f|/|f'| of a rounding-sized f, rounded to a double): that step is reported with the level.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import replace
from typing import Any

import numpy as np

from ._detect_advice import _remedy_same
from ._detect_path import Context, g
from ._detect_stop import SEQ_TOL, stalled_tail, tolerance, tolerance_assumed
from ._detect_trace import EPS, Trace, trace_converged
from ._findings import Evidence, Finding

__all__ = ["NOISE_PATH", "NOISE_WELL_ABOVE", "detect_noise", "noise_behind", "noise_explains", "noise_floor_finding",
           "noise_instead", "rounding_level", "well_above_rounding"]

NOISE_NEAR = 100.0
#: noise this many times the double rounding of f is not rounding in double precision (module docstring)
NOISE_WELL_ABOVE = 1e4
#: the second sample's width 8·h2 must stay within this fraction of |f'/f''| (module docstring)
CURVATURE_SHARE = 0.1
#: a cycle or flat step at most this many times the attainable accuracy wide is the noise (module docstring)
NOISE_PATH = 4.0
#: ... and |f| there at most this fraction of the largest |f| of the run, before f is sampled (module docstring)
PATH_DROP = 1e-3


def _length_scale(est: Any) -> float:
    """|f'/f''| from the first and second differences across a sample (inf when f'' looks 0)."""
    pts = [(x, v) for x, v in est.samples if math.isfinite(x) and math.isfinite(v)] if est is not None else []
    if len(pts) < 3:
        return 0.0
    (xa, fa), (_, fm), (xb, fb) = pts[0], pts[len(pts) // 2], pts[-1]
    w = (xb - xa) / 2
    if not w > 0:
        return 0.0
    d1 = (fb - fa) / (2 * w)
    d2 = (fb - 2 * fm + fa) / (w * w)
    if d2 == 0:
        return math.inf
    return float(abs(d1) / abs(d2))


def _noise(t: Trace, ctx: Context, x: float, spread: float) -> Any:
    """Moré–Wild at x: the default spacing, then spread/8 when the curvature allows (module docstring)."""
    from ._noise import estimate_noise

    if "noise" in ctx.cache:
        return ctx.cache["noise"]
    pr = ctx.prober
    found: list[Any] = []
    for h in [None] + ([spread / 8] if spread > 0 else []):
        room = pr.remaining - 2  # keep two evaluations for the slope that turns noise into an accuracy in x
        if room < 9:
            break
        if h is not None:
            scale = _length_scale(found[0]) if found else 0.0
            if not 8 * h <= CURVATURE_SHARE * scale:
                ctx.notes.append(f"f was not sampled at spacing {h:.2g} (the spread of the stalled iterates / 8): "
                                 f"the slope of f changes over about {scale:.2g}, so its curvature would dominate")
                break
        found.append(estimate_noise(None, x, h=h, evaluate=pr, max_attempts=max(1, min(3, room // 9))))
    ok = [e for e in found if e.status == "ok"]
    best = max(ok, key=lambda e: e.level) if ok else (next((e for e in found if e.found), None))
    ctx.cache["noise"] = best
    return best


def _spread(t: Trace) -> float | None:
    """The spread of the stalled iterates, or None when the iteration has not stalled."""
    st = stalled_tail(t)
    return None if st is None else st[1]


def noise_explains(t: Trace, ctx: Context) -> bool:
    """f is noisy (Moré–Wild status "ok") and the later iterates sit at that noise floor.

    Used to keep a "rate" measured on iterates that wander in the noise from being read as a
    multiple root, a wrong derivative or slow convergence.
    """
    if t.f is None or t.fs is None or t.n < 4 or ("noise" not in ctx.cache and ctx.prober.remaining < 11):
        return False
    if "noise" not in ctx.cache and _spread(t) is None:
        return False  # not stalled: no floor to sit at
    est = _noise(t, ctx, float(t.xs[t.best_index()]), _spread(t) or 0.0)
    if est is None or est.status != "ok":
        return False
    late = np.abs(t.fs[t.n // 2:])
    late = late[np.isfinite(late)]
    if len(late) and float(np.median(late)) <= NOISE_NEAR * est.level:
        ctx.notes.append(f"the later iterates sit at the noise floor of f (level {est.level:.2g}): a rate measured "
                         "there describes the noise, not the convergence")
        return True
    return False


def well_above_rounding(t: Trace, est: Any, x: float) -> bool:
    """Moré–Wild found noise (status "ok") at least ``NOISE_WELL_ABOVE`` times the double rounding of f at x.

    Double rounding is the larger of the estimate's eps·max(|f|, |x·f'|) and, for an expression
    that is a sum, eps·Σ|terms| (rounding in terms that cancel; module docstring).
    """
    if est is None or est.status != "ok" or not math.isfinite(est.level):
        return False
    terms = _terms_rounding(t, x)
    floor = max(est.rounding, terms if math.isfinite(terms) else 0.0)
    return bool(est.level >= NOISE_WELL_ABOVE * floor)


def detect_noise(t: Trace, ctx: Context) -> Finding | None:
    pr = ctx.prober
    if t.f is None or t.n < 4 or pr.remaining < 11:
        return None
    done = trace_converged(t)
    if done and not tolerance_assumed(t):
        return None  # it met the tolerance it was given: a noisy path within it is no finding
    stall = stalled_tail(t)
    if stall is None:
        return None
    k0, spread, _ = stall
    x = float(t.xs[t.best_index()])
    est = _noise(t, ctx, x, spread)
    if est is None or est.status != "ok":
        return None
    ftail = np.abs(t.fs[k0:]) if t.fs is not None else np.zeros(0)
    fmed = float(np.median(ftail)) if len(ftail) else math.nan
    if not fmed <= NOISE_NEAR * est.level:
        ctx.notes.append(f"f carries noise of about {est.level:.2g}, but the stalled |f| ({fmed:.2g}) is far above it")
        return None
    if done and not well_above_rounding(t, est, x):
        return None  # rounding-sized noise at a stop that met the assumed tolerance: nothing to change
    D = max(16 * spread, 1e-4 * max(1.0, abs(x)))
    try:
        slope = (pr(x + D) - pr(x - D)) / (2 * D)
    except Exception:  # noqa: BLE001 - budget
        slope = math.nan
    if done:
        from ._noise import attainable_accuracy

        acc = attainable_accuracy(est.level, slope) if math.isfinite(slope) else math.nan
        moves = np.abs(np.diff(t.xs[k0:]))
        moves = moves[moves > 0]
        if not (len(moves) and math.isfinite(acc) and float(np.min(moves)) < acc):
            return None  # its steps stayed coarser than the noise: the stop is not at the floor
    return noise_floor_finding(t, ctx, est, x, slope, f"central difference over ±{D:.2g}", k0, spread)


def _path_width(t: Trace, finding: Finding) -> tuple[float, list[int]] | None:
    """(the width a cycle or a zero-slope stop spans, the indices of its iterates), or None for other findings."""
    if finding.kind == "cycle":
        pts = finding.value("cycle points")
        width = finding.value("cycle width")
        if not pts or width is None:
            return None
        return float(width), list(range(t.n - len(pts), t.n))
    if finding.kind == "flat" and finding.tag == "zero slope" and t.n >= 2:
        return float(abs(t.xs[-1] - t.xs[-2])), [t.n - 2, t.n - 1]
    return None


def noise_behind(t: Trace, ctx: Context, finding: Finding) -> Finding | None:
    """The noise-floor finding when a cycle or a zero-slope stop is the noise of f (module docstring), else None."""
    pr = ctx.prober
    got = _path_width(t, finding)
    if got is None or t.f is None or t.fs is None or t.n < 4:
        return None
    width, idx = got
    if not (math.isfinite(width) and width > 0) or ("noise" not in ctx.cache and pr.remaining < 11):
        return None
    fpts = np.abs(t.fs[idx])
    fall = np.abs(t.fs[np.isfinite(t.fs)])
    if not (np.all(np.isfinite(fpts)) and len(fall) and float(np.max(fpts)) <= PATH_DROP * float(np.max(fall))):
        return None  # |f| there is not far below the run's own: no floor reached, nothing worth sampling for
    stall = stalled_tail(t)
    k0 = stall[0] if stall is not None else idx[0]
    spread = stall[1] if stall is not None else width
    x = float(t.xs[t.best_index()])
    est = _noise(t, ctx, x, spread)
    if est is None or est.status != "ok":
        return None
    if not float(np.max(fpts)) <= NOISE_NEAR * est.level:
        return None
    known = ctx.cache.get("noise slope")
    if known is not None and known[0] == x:  # the noise finding measured it already
        slope, how = known[1], known[2]
    else:
        D = max(16 * spread, 1e-4 * max(1.0, abs(x)))
        try:
            slope = (pr(x + D) - pr(x - D)) / (2 * D)
        except Exception:  # noqa: BLE001 - budget
            return None
        how = f"central difference over ±{D:.2g}"
    from ._noise import attainable_accuracy

    acc = attainable_accuracy(est.level, slope) if math.isfinite(slope) else math.nan
    if not width <= NOISE_PATH * acc:
        ctx.notes.append(f"f carries noise of about {est.level:.2g}, but the {finding.kind} ({finding.tag}) spans "
                         f"{width:.2g}, more than {NOISE_PATH:g} × the accuracy it allows ({acc:.2g}): not the noise")
        return None
    what = (f"the cycle of period {finding.value('period')}" if finding.kind == "cycle"
            else "the zero slope between the last two iterates")
    nf = noise_floor_finding(t, ctx, est, x, slope, how, k0, spread, min_xtol=1.5 * width)
    keep = ("period", "cycle points", "repetitions", "where")  # the rows that describe the path, not a verdict on it
    ev: tuple[Evidence, ...] = (
        (f"{finding.kind} ({finding.tag})", width, f"the width it spans: {width / acc:.2g} × the attainable "
         "accuracy. " + finding.summary),
        *((f"{finding.kind}: {lab}", v, note) for lab, v, note in finding.evidence if lab in keep),
        ("|f| there", tuple(float(v) for v in fpts), f"within {NOISE_NEAR:g} × the noise level: as good as 0"),
    )
    return replace(
        nf,
        summary=nf.summary + f" What looks like {what} is this noise: it spans {g(width, 3)}, within "
        f"{NOISE_PATH:g} × the accuracy the noise allows.",
        evidence=nf.evidence + ev, iterates=tuple(sorted(set(nf.iterates) | set(idx))))


def noise_instead(t: Trace, ctx: Context, detector: Callable[[Trace, Context], Finding | None]) -> Finding | None:
    """The noise-floor finding when the cycle or zero-slope stop ``detector`` reports is the noise of f, else None.

    The detector runs without probes (its remedy's bracket search would spend the budget the noise
    estimate needs); the diagnosis runs it again, for real, when its finding stands.
    """
    from ._detect_trace import Prober

    try:
        with np.errstate(all="ignore"):
            path = detector(t, Context(Prober(None, 0), root=ctx.root, bracket=ctx.bracket, notes=[]))
    except Exception:  # noqa: BLE001 - the real run of the detector reports its trouble
        return None
    return None if path is None else noise_behind(t, ctx, path)


def noise_floor_finding(t: Trace, ctx: Context, est: Any, x: float, slope: float, slope_how: str, k0: int,
                        spread: float, *, min_xtol: float = 0.0) -> Finding:
    """The noise-floor finding: the noise in f, the accuracy in x it allows, and tolerances it can meet.

    ``min_xtol``: the remedy's step tolerance is at least this (the width a run bounced about in).
    """
    from ._noise import attainable_accuracy

    tail = t.xs[k0:]
    ftail = np.abs(t.fs[k0:]) if t.fs is not None else np.zeros(0)
    fmed = float(np.median(ftail)) if len(ftail) else math.nan
    acc = attainable_accuracy(est.level, slope) if math.isfinite(slope) else math.nan
    ctx.cache["attainable"] = acc
    ctx.cache["noise slope"] = (x, slope, slope_how)
    xtol = max(3 * acc, min_xtol) if math.isfinite(acc) else None
    remedy = _remedy_same(t, ctx, xtol=xtol, ftol=3 * est.level,
                          note="tolerances the noise allows: 3 × the attainable accuracy in x, 3 × the noise in f")
    ev: list[Evidence] = [
        ("noise level in f", est.level, f"Moré–Wild estimate (standard deviation) at x = {g(x, 10)}"),
        ("times rounding", est.above_rounding, f"rounding level {est.rounding:.2g}"),
        ("sample spacing", est.h, f"{est.evaluations} evaluations, difference order {est.order}"),
        ("slope f'", slope, slope_how),
        ("attainable accuracy in x", acc, "noise/|f'|: no method resolves the root better"),
        ("stalled iterates", (float(np.min(tail)), float(np.max(tail))),
         f"smallest and largest of the last {len(tail)} iterates"),
        ("spread of the stalled iterates", spread, "largest − smallest"),
        ("median |f| there", fmed, "the residual the noise allows"),
    ]
    assumed = ""
    if tolerance_assumed(t):
        tol, how = tolerance(t, x)
        ev.append(("tolerance", tol, how))
        met = trace_converged(t)
        assumed = (f" No tolerance was given, so the diagnosis assumed {g(tol, 3)} ({SEQ_TOL:g}·max(1, |x|))"
                   + (f"; the iteration met it, but its last steps are finer than the noise allows, so its result is "
                      f"good to about {g(acc, 3)} only." if met else "."))
    lo_prec = well_above_rounding(t, est, x)
    return Finding(
        "noise-floor",
        f"f carries computational noise of about {est.level:.2g} ({est.above_rounding:.3g} times rounding), so the "
        f"iterates can only wander within about {g(acc, 3)} of the root; they stalled there." + assumed,
        tuple(ev),
        f"Ask for no more than the noise allows: xtol ≥ {g(xtol, 3)} or ftol ≥ {g(3 * est.level, 3)}; or make f "
        "less noisy: tighten the tolerance of the inner solver, quadrature or series inside it, or compute the model "
        "in a higher working precision (float64 where it uses float32)"
        + (" — more digits in the solver (solve(..., digits=30)) cannot help, because f rounds in its own "
           "arithmetic" if lo_prec else "")
        + ". Remedy: " + remedy.describe() + ".",
        remedy, tuple(range(k0, t.n)), tag=f"level {est.level:.2g}")


def _terms_rounding(t: Trace, x: float) -> float:
    """eps·Σ|t_i(x)| over the top-level terms of an expression f (NaN when f is not such a sum)."""
    problem = t.problem
    expr = getattr(problem, "expression", None)
    if expr is None or not getattr(expr.sympy, "is_Add", False):
        return math.nan
    from ._expr import Expression, sympy_to_text

    total = 0.0
    try:
        for term in expr.sympy.args:
            part = Expression(sympy_to_text(term), expr.variable, expr.params, term)
            total += abs(complex(part.numeric(problem.params)(x)).real)
    except Exception:  # noqa: BLE001 - a term sympy cannot print or evaluate: no estimate from the terms
        return math.nan
    return EPS * total if math.isfinite(total) else math.nan


def rounding_level(t: Trace, ctx: Context, x: float) -> tuple[float, float, str, float]:
    """(level ε_f, the floor without the stalled residuals, how, smallest stalled step) near x (module docstring).

    The smallest stalled step is NaN unless the stalled iterates straddle the root at the rounding floor.
    """
    est = _noise(t, ctx, x, 0.0)
    base = math.nan
    how = ""
    if est is not None:
        base = est.level if est.found else est.rounding
        how = "Moré–Wild estimate at the best iterate" if est.found else "eps·max(|f|, |x·f'|) at the best iterate"
    terms = _terms_rounding(t, x)
    if math.isfinite(terms) and not terms <= base:
        base, how = terms, "eps × the sum of |terms| of f at the best iterate (rounding in terms that cancel)"
    if not math.isfinite(base):
        return math.nan, math.nan, "", math.nan
    level, step = base, math.nan
    stall = stalled_tail(t)
    if stall is not None and t.fs is not None and t.fs_signed:
        fs = t.fs[stall[0]:]
        ok = np.isfinite(fs)
        if np.any(fs[ok] > 0) and np.any(fs[ok] < 0):
            med = float(np.median(np.abs(fs[ok])))
            if med <= NOISE_NEAR * base:
                moves = np.abs(np.diff(t.xs[stall[0]:]))
                moves = moves[moves > 0]
                step = float(np.min(moves)) if len(moves) else math.nan
                if med > base:
                    level, how = med, (f"median |f| over the last {len(fs)} iterates, which straddle the root (f "
                                       f"takes both signs); the estimate at the point itself is {base:.2g}")
    return level, base, how, step
