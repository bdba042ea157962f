"""Outcome classes of a run, from its stop reason and a small rolling record of its last steps.

The vectorised engine (:mod:`convdiag.core._vengine`) keeps, per lane that
failed, the last three step lengths, the last two residuals, the largest
iterate, whether a step was thrown far and the best iterate;
:func:`classify_run` builds the same record from a scalar
:class:`~convdiag.core._run.Run`, so one set of rules (:func:`classify`)
names both.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from typing import Any

import numpy as np
from numpy.typing import NDArray

from ._run import CONVERGED, STOP_REASONS, Run

__all__ = ["OUTCOMES", "OUTCOME_MEANING", "REASONS", "classify", "classify_run"]

Arr = NDArray[Any]

#: Stop reasons by code (``Lanes.reason_code`` indexes this): those of :func:`convdiag.solve`, plus
#: "no-sign-change" (a bracketing method could not start) and "not-run" (never computed).
REASONS: tuple[str, ...] = tuple(dict.fromkeys((*STOP_REASONS, "no-sign-change", "not-run")))
R = {r: np.uint8(i) for i, r in enumerate(REASONS)}
CONVERGED_CODES = np.array([r in CONVERGED for r in REASONS])

#: Outcome classes by code (``Lanes.outcome_code`` indexes this).
OUTCOMES: tuple[str, ...] = (
    "converged", "cycle", "divergence", "flat", "domain-error", "budget", "slow", "multiple-root", "stalled",
    "no-bracket", "timeout", "not-run", "pole",
)
OUTCOME_MEANING: dict[str, str] = {
    "converged": "met the stopping rule (step, residual or exact zero)",
    "cycle": "stayed bounded without converging, repeating a cycle of period 2 or 3",
    "divergence": "the iterates ran away: overflowed, or went beyond 1e4 times the start's scale",
    "flat": "a zero derivative or equal values stopped it, a near-flat spot threw a step far away, or f is "
    "exactly zero over a stretch (underflow) where a bracketing method stopped",
    "domain-error": "the function raised or returned NaN, infinity or a non-real value",
    "budget": "the budget ran out: the steps were still shrinking, or the iterates wandered with no pattern",
    "slow": "the budget ran out during linear (slow) convergence",
    "multiple-root": "the budget ran out converging linearly at the rate of a multiple root",
    "stalled": "the steps stopped shrinking at the rounding-noise level (under 1e-12·|x|) without meeting "
    "the tolerance: loosen xtol/rtol",
    "no-bracket": "f has the same sign at both ends of the bracket, so a bracketing method cannot start",
    "timeout": "not finished when the sweep's time budget (max_time) ran out; a worker still on it was stopped",
    "not-run": "not computed (the sweep was interrupted first)",
    "pole": "a bracketing method closed in on a sign change where |f| grew: a pole or jump, not a root",
}
O = {o: np.uint8(i) for i, o in enumerate(OUTCOMES)}
KICK = 1e3  # a step longer than KICK * max(1, |x|) was thrown far (a near-flat spot)
FAR = 1e4  # iterates beyond FAR * max(1, |x0|) ran away
#: The rolling record kept per lane: best iterate, its value and |f|; the last four step lengths;
#: the last four residuals; |x|; whether a step was thrown far; the largest |x|; the start's scale.
TRACK = ("bx", "bv", "bf", "s1", "s2", "s3", "s4", "fa", "fb", "fc", "fd", "ax", "kick", "xmax", "scale")
#: a cycle of period p repeats step lengths and residuals p steps apart to this relative tolerance: period 2 is
#: checked on four pairs (two step lengths, two residuals), period 3 on the two the record holds, so more tightly
#: (common practice, no source: an attracting cycle repeats to many more digits within a few rounds, while a
#: wandering orbit matches by chance rarely)
CYCLE_MATCH_2, CYCLE_MATCH_3 = 5e-2, 1e-3


def modulus(a: Arr) -> Arr:
    """|a| lane by lane, complex moduli by ``hypot`` (Python's ``abs``)."""
    return np.hypot(a.real, a.imag) if a.dtype.kind == "c" else np.abs(a)


def track_dtype(key: str, dt: Any) -> Any:
    return dt if key in ("bx", "bv") else (np.bool_ if key == "kick" else np.float64)


def track_init(v: dict[str, Arr], x0: Arr, dt: Any) -> None:
    """Start the rolling record in ``v`` for lanes starting at ``x0``."""
    n = x0.shape[0]
    v["bx"], v["bv"], v["bf"] = np.full(n, np.nan, dt), np.full(n, np.nan, dt), np.full(n, np.inf)
    v["s1"], v["s2"], v["s3"], v["s4"], v["fa"], v["fb"], v["fc"], v["fd"], v["ax"] = (np.full(n, np.nan)
                                                                                    for _ in range(9))
    v["kick"], v["xmax"], v["scale"] = np.zeros(n, bool), np.zeros(n), np.maximum(1.0, modulus(x0))


def track_start(v: dict[str, Arr], x: Arr, fx: Arr) -> None:
    """Record a start (or a step's new point) ``x`` with value ``fx``."""
    af = modulus(fx)
    better = af < v["bf"]
    v["bf"], v["bx"], v["bv"] = np.where(better, af, v["bf"]), np.where(better, x, v["bx"]), \
        np.where(better, fx, v["bv"])
    v["ax"] = modulus(x)
    v["xmax"], v["fa"] = np.maximum(v["xmax"], v["ax"]), af


def track_step(v: dict[str, Arr], xp: Arr, xn: Arr, fn: Arr) -> None:
    """Record a step from ``xp`` to ``xn`` (value ``fn``)."""
    with np.errstate(all="ignore"):
        s = modulus(xn - xp)
        v["kick"] = v["kick"] | (s > KICK * np.maximum(1.0, modulus(xp)))
    v["s4"], v["s3"], v["s2"], v["s1"] = v["s3"], v["s2"], v["s1"], s
    v["fd"], v["fc"], v["fb"] = v["fc"], v["fb"], v["fa"]
    track_start(v, xn, fn)


def _multiplicity(q: Arr, method: str) -> Arr:
    """Multiplicity m whose linear rate the method shows (REFERENCES §1: Newton (m-1)/m, Halley (m-1)/(m+1),
    secant: root of t^m + t^(m-1) = 1)."""
    with np.errstate(all="ignore"):
        if method == "newton":
            out: Arr = 1 / (1 - q)
            return out
        if method == "halley":
            out = (1 + q) / (1 - q)
            return out
        if method == "secant":
            out = 1 - np.log1p(q) / np.log(q)
            return out
    return np.full(q.shape, np.nan)


def classify(reason: Arr, t: Mapping[str, Arr], method: str) -> Arr:
    """Outcome codes from stop-reason codes and the rolling record (see :data:`OUTCOME_MEANING`)."""
    r = {k: reason == R[k] for k in REASONS}
    conv = CONVERGED_CODES[reason]
    with np.errstate(all="ignore"):
        s1, s2, s3 = t["s1"], t["s2"], t["s3"]
        shrinking = (s1 < s2) & (s2 < s3) & (t["fa"] < t["fb"]) & (t["fb"] < t["fc"])
        q1, q2 = s1 / s2, s2 / s3
        linear = shrinking & (q1 >= 0.1) & (np.abs(q1 - q2) <= 0.1 * q1)
        m = _multiplicity(q1, method)
        settled = s1 <= 0.01 * np.maximum(1.0, t["ax"])  # far from every root, x**m also shrinks at this rate
        multiple = linear & settled & (np.abs(q1 - q2) <= 0.02 * q1) & (np.abs(m - np.round(m)) < 0.1) & (m > 1.9)
        multiple &= m < 6.1
        far = t["xmax"] > FAR * t["scale"]
        # period 2 or 3: the step lengths and residuals repeat p steps apart (and the steps do not shrink)
        def same(u: Arr, w: Arr, tol: float) -> Arr:
            out: Arr = np.abs(u - w) <= tol * np.maximum(u, w)
            return out

        c2, c3 = CYCLE_MATCH_2, CYCLE_MATCH_3
        periodic = (same(s1, s3, c2) & same(t["fa"], t["fc"], c2) & same(s2, t["s4"], c2) &
                    same(t["fb"], t["fd"], c2)) | (same(s1, t["s4"], c3) & same(t["fa"], t["fd"], c3))
        periodic &= s1 > 1e-12 * np.maximum(1.0, t["ax"])
    budget = r["max-evals"] | r["max-steps"] | r["max-time"]
    # bounded without converging: a cycle where a period shows, else the budget ran out while it wandered
    out = np.where(periodic, O["cycle"], O["budget"]).astype(np.uint8)
    out[budget & shrinking] = O["budget"]
    out[budget & linear] = O["slow"]
    out[budget & multiple] = O["multiple-root"]
    with np.errstate(all="ignore"):
        noise = (s1 <= 1e-12 * t["ax"]) & (s2 <= 1e-12 * t["ax"])
    out[budget & ~shrinking & noise] = O["stalled"]
    out[r["function-raised"] | r["nonfinite-value"] | r["bad-value"]] = O["domain-error"]
    kick = t["kick"]
    out[r["zero-derivative"] | r["flat-secant"] | kick] = O["flat"]
    # ran away: overflowed, or went far (still out there, or far without being thrown)
    out[r["iterate-overflow"] | (far & (~kick | (t["ax"] >= 0.5 * t["xmax"])))] = O["divergence"]
    out[reason == R["no-sign-change"]] = O["no-bracket"]
    out[(reason == R["not-run"]) | r["interrupted"]] = O["not-run"]
    out[conv] = O["converged"]
    return out


def classify_run(run: Run) -> str:
    """The outcome class of a scalar run, by the rules :func:`~convdiag.solve_many` applies to each lane.

    Examples
    --------
    >>> from convdiag import solve
    >>> classify_run(solve("x**3 - 2*x + 2", "newton", start=0.0, max_evals=40))
    'cycle'
    >>> classify_run(solve("x**2 - 2", "newton", start=1.0))
    'converged'
    """
    starts, values = list(run.starts), list(run.start_values)
    xs = [*starts, *(s.x for s in run.steps)]
    cplx = any(isinstance(_num(v), complex) for v in xs)
    dt = np.complex128 if cplx else np.float64

    def a(v: Any) -> Arr:
        return np.array([_num(v)], dtype=dt)

    t: dict[str, Arr] = {}
    track_init(t, a(starts[0] if starts else math.nan), dt)
    for x, fx in zip(starts, values):
        track_start(t, a(x), a(fx))
    prev = starts[-1] if starts else math.nan
    for s in run.steps:
        track_step(t, a(prev), a(s.x), a(s.fx))
        prev = s.x
    code = R.get(run.stop_reason, R["not-run"])
    return OUTCOMES[int(classify(np.array([code], np.uint8), t, run.method)[0])]


def _num(v: Any) -> Any:
    if isinstance(v, (float, complex)):
        return v
    try:
        return float(v)
    except (TypeError, ValueError, OverflowError):
        return complex(v)
