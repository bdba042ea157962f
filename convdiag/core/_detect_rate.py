"""Detectors that read the rate of convergence: slow; and the count of evaluations still needed.

What a linear rate says about the root (a multiple root, a wrong derivative) is in
``_detect_multiplicity`` (re-exported here).

They rest on the observed order of convergence (:func:`~convdiag.core._order.estimate_order`), and
only on a window where a rate may be read (``_detect_order.rate_order``: no error growing
2-fold inside the window of an open method). Rules and thresholds (basis in brackets):

slow
    Linear (or sublinear) convergence with a rate per evaluation above 0.6: bisection
    gains a factor 2 per evaluation (rate 0.5); at 0.6 a method needs a third more
    evaluations than bisection for the same accuracy [the margin covers the ±0.05
    scatter of measured rates; common practice, no source]. A bracketing run that
    converged is slow only if it used more evaluations than bisection needs on the
    same bracket, 2 + ⌈log2(width/tol)⌉ (a slow phase in a run that still beat
    bisection is not worth a change).
evaluations still needed (:func:`evals_needed`; the budget finding, which checks the
count, is in ``_detect_budget``)
    Only from a converging regime: a rate or order measured on an asymptotic window, or
    else the last 3 steps shrinking, each contraction ratio at most ``SETTLED_RATIO`` (2)
    times the one before (a linear rate keeps its ratio, a superlinear one lowers it)
    [common practice, no source]. At rate ρ, ⌈log(tol/e)/log ρ⌉ steps; at order p,
    e ← C·e^p (C from the last two errors) until e ≤ tol; then + 1 step for the
    stopping test and + 1 to spare; bisection ⌈log2(width/tol)⌉ + 1. Times the
    evaluations per step. With fewer than 3 iterates, 10 steps are assumed [common
    practice, no source], and said so.
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from ._detect_advice import _remedy_same
from ._detect_multiplicity import RATE_TAG, detect_multiple_root, detect_rate_derivative
from ._detect_noise import noise_explains
from ._detect_order import rate_order
from ._detect_path import Context, g
from ._detect_trace import Trace, _shrinking, tolerance, trace_converged
from ._findings import Evidence, Finding, Remedy

__all__ = ["RATE_TAG", "detect_multiple_root", "detect_rate_derivative", "detect_slow", "evals_needed", "settled"]

SLOW_RATE = 0.6
#: residual-only sequences: converged when |f| fell by this factor (no tolerance given)
RESIDUAL_DROP = 1e-12
#: steps assumed when a budget stopped a run before it had 3 iterates [common practice, no source]
GUESS_STEPS = 10
#: the last contraction ratios of an unmeasured run may grow at most this much from one step to the next
SETTLED_RATIO = 2.0


def settled(t: Trace) -> bool:
    """The last 3 steps shrank, each contraction ratio at most SETTLED_RATIO times the one before."""
    if not _shrinking(t, 3):
        return False
    s = np.abs(np.diff(t.xs[-4:]))
    q1, q2 = float(s[1] / s[0]), float(s[2] / s[1])
    return q2 <= SETTLED_RATIO * q1


def _run_errors(est: Any) -> tuple[float, ...]:
    own = est.in_run if est.in_run is not None else est
    return tuple(float(e) for e in own.errors)


def evals_needed(t: Trace, est: Any) -> tuple[int | None, str]:
    """Evaluations still needed to reach the tolerance at the observed rate or order.

    With too few points for an estimate, the method's nominal order is assumed (stated in the
    returned sentence) as long as the last two steps shrank.
    """
    measured = est is not None and est.converged_estimate
    if t.n == 0 and t.fs is not None and measured:  # residuals only: count down to the residual tolerance
        r = [abs(float(v)) for v in t.fs if math.isfinite(float(v)) and v != 0]
        tol = t.ftol if t.ftol else RESIDUAL_DROP * abs(float(t.fs[0]))
        if len(r) < 2 or r[-1] <= tol:
            return None, "too few residuals"
        if est.rate is not None and 0 < est.rate < 1:
            steps = math.ceil(math.log(tol / r[-1]) / math.log(est.rate))
        else:
            p = est.value if math.isfinite(est.value) and est.value > 1 else 1.5
            steps, e = 0, r[-1]
            c = min(max(r[-1] / r[-2] ** p, 1e-300), 1e300)
            while e > tol and steps < 200:
                e = min(c * e**p, e / 2)
                steps += 1
        d = est.evals_per_step or 1.0
        return math.ceil((steps + 1) * d), f"{est.label_text} from |f| = {r[-1]:.3g} down to {tol:.3g} (+1 to spare)"
    if t.n < 3:
        if t.n == 0:
            return None, "too few iterates"
        d0 = t.evals_per_step or 1.0
        return math.ceil(GUESS_STEPS * d0), (f"too few steps to measure a rate: {GUESS_STEPS} steps assumed, "
                                                  "typical of a superlinear method from a fair start")
    x = float(t.xs[t.best_index()])
    tol, _ = tolerance(t, x)
    tol = max(tol, 2 * float(np.spacing(abs(x))) if x else tol)
    if not measured and not (_shrinking(t, 2) if t.brackets is not None else settled(t)):
        s = np.abs(np.diff(t.xs[-4:]))
        return None, ("no rate or order measured, and the last steps (" + ", ".join(f"{v:.3g}" for v in s)
                      + ") have not settled into convergence")
    d = (est.evals_per_step if measured else None) or t.evals_per_step or 1.0
    if t.brackets and t.method == "bisection":
        lo, hi = t.brackets[-1][:2]
        steps = max(0, math.ceil(math.log2(max(hi - lo, tol) / tol))) + 1
        return math.ceil(steps * d), f"bisection halves the width {hi - lo:.3g} down to {tol:.3g} (+1 to spare)"
    errs = [e for e in _run_errors(est) if math.isfinite(e) and e > 0] if measured else []
    if not measured or est.reference == "successive differences" or not errs:
        errs = [float(v) for v in np.abs(np.diff(t.xs)) if math.isfinite(v) and v > 0]
    if len(errs) < 2:
        return None, "too few errors"
    e = errs[-1]
    rate = est.rate if measured else None
    if rate is None and not measured and not (t.nominal_order and t.nominal_order > 1.05):
        rate = errs[-1] / errs[-2]
    if rate is not None and 0 < rate < 1:
        steps = max(0, math.ceil(math.log(tol / e) / math.log(rate))) if e > tol else 0
        how = f"rate {rate:.3g} from the error {e:.3g} down to {tol:.3g}"
    else:
        p = est.value if measured and math.isfinite(est.value) and est.value > 1 else (t.nominal_order or 2.0)
        # an order measured over blocks of b steps (Illinois-type patterns) extrapolates block by block:
        # e_(k+b) = c·e_k^(p^b), with c from the errors b steps apart
        b = est.block if measured and len(errs) > est.block else 1
        pb = p**b
        c = errs[-1] / errs[-1 - b] ** pb if errs[-1 - b] > 0 else 1.0
        c = min(max(c, 1e-300), 1e300)
        steps, ee = 0, e
        while ee > tol and steps < 200:
            nxt = c * ee**pb
            ee = nxt if nxt < ee else ee / 2
            steps += b
        how = f"order {p:.3g}{'' if measured else ' (the method’s nominal order: too few points to measure)'} " \
              f"from the error {e:.3g} down to {tol:.3g}"
    if t.brackets:  # the width closes a step behind the error when one end lags
        return math.ceil((steps + 3) * d), how + " (+1 step for the width to close, +1 for the test, +1 to spare)"
    return math.ceil((steps + 2) * d), how + " (+1 step for the stopping test, +1 to spare)"


def _fixed_end(t: Trace) -> tuple[float, int] | None:
    if not t.brackets or len(t.brackets) < 4:
        return None
    lo, hi = t.brackets[-1][:2]
    for end, j in ((lo, 0), (hi, 1)):
        k = 0
        for b in reversed(t.brackets):
            if b[j] != end:
                break
            k += 1
        if k >= 4:
            return end, k
    return None


def _bisection_evals(t: Trace) -> int | None:
    """Evaluations bisection needs on the run's first bracket to reach its tolerance (the two ends included)."""
    if not t.brackets or t.n < 2:
        return None
    a, b = t.bracket0 if t.bracket0 is not None else sorted((float(t.xs[0]), float(t.xs[1])))
    x = float(t.xs[t.best_index()])
    tol, _ = tolerance(t, x)
    tol = max(tol, float(np.spacing(abs(x))) if x else 5e-324)
    return 2 + max(0, math.ceil(math.log2((b - a) / tol)))


def detect_slow(t: Trace, ctx: Context) -> Finding | None:
    est = rate_order(t, ctx)
    if est is None or est.label not in ("linear", "sublinear") or est.rate is None:
        return None
    d = est.evals_per_step or t.evals_per_step or 1.0
    per_eval = est.rate ** (1 / d) if est.rate > 0 else 0.0
    if per_eval <= SLOW_RATE or not _improving(t):
        return None
    bisect = _bisection_evals(t)
    if bisect is not None and trace_converged(t) and (t.total_evals or 0) <= bisect:
        return None  # a slow phase, but the whole run did no worse than bisection would have
    if noise_explains(t, ctx):
        return None
    ev: list[Evidence] = [("rate per step", est.rate, est.label_text),
                          ("rate per evaluation", per_eval, "bisection: 0.5")]
    if bisect is not None:
        ev.append(("bisection would need", bisect, "evaluations on the same bracket to the same tolerance"))
    fixed = _fixed_end(t)
    if fixed is not None:
        ev.append(("bracket end that never moved", fixed[0], f"for the last {fixed[1]} steps"))
    steps = np.abs(np.diff(t.xs))
    if len(steps) and math.isfinite(float(steps[-1])) and est.rate < 1:
        ev.append(("error implied by the last step", float(steps[-1]) * est.rate / (1 - est.rate),
                   "step × ρ/(1 − ρ): a small step is not a small error at a rate near 1"))
    if not trace_converged(t):
        need, how = evals_needed(t, est)
        if need is not None:
            ev.append(("evaluations still needed", need, how))
    if t.total_evals is not None:
        ev.append(("evaluations used", t.total_evals, ""))
    if t.brackets is not None:
        remedy = _remedy_same(t, ctx)
        remedy = Remedy("hybrid", bracket=remedy.bracket, note="superlinear and keeps the bracket")
    else:
        near = t.starts[0] if t.starts else (float(t.xs[0]) if t.n else None)
        remedy = ctx.bracket_remedy(t, near, "superlinear with a bracket")
    why = (f"one end of the bracket stayed at {g(fixed[0])} for {fixed[1]} steps, so each chord creeps up on the "
           "root from the other side" if fixed is not None
           else f"each evaluation gains only a factor {1 / per_eval:.3g}")
    return Finding(
        "slow",
        f"Convergence is linear with rate {est.rate:.3g} per step ({per_eval:.3g} per evaluation, slower than "
        f"bisection's 0.5): {why}.",
        tuple(ev),
        "Use a superlinear method that keeps the bracket (illinois, or hybrid). Remedy: " + remedy.describe() + ".",
        remedy, tuple(range(est.window[0], min(est.window[1] + 2, t.n))) if est.window else (),
        tag=f"rate {est.rate:.3g}")


def _improving(t: Trace) -> bool:
    """Still getting closer at the end: the best |f| is among the last 3 iterates (or there is no f).

    A bracketing run always is: its bracket shrinks every step, while |f| at its midpoints goes up and down.
    """
    if t.fs is None or t.n < 4 or t.brackets is not None or trace_converged(t):
        return True
    return t.best_index() >= t.n - 3


def _falling(t: Trace) -> bool:
    """Residual-only sequence: |f| fell over the last 3 entries."""
    if t.fs is None or len(t.fs) < 4:
        return False
    r = np.abs(t.fs[-4:])
    return bool(np.all(np.isfinite(r)) and np.all(r[1:] < r[:-1]))
