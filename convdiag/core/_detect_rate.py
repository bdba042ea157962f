"""Detectors that read the rate of convergence: multiple root, wrong derivative, slow, budget.

They rest on the observed order of convergence (:func:`~convdiag.core._order.estimate_order`), and
only on a window where a rate may be read (``_detect_order.rate_order``: no error growing
2-fold inside the window of an open method). Rules and thresholds (basis in brackets):

multiple-root
    Linear convergence (not at a measured noise floor), f' at the best iterate below
    0.1 × f' at the start (central differences over 1e-3 of the distance travelled; f'
    vanishes at a multiple root), and a multiplicity m ≥ 2 from (in this order) the high-precision
    reference root (u = f/f' and the first nonvanishing derivative), the method's rate
    law at a root of multiplicity m (Newton (m−1)/m, Halley (m−1)/(m+1), secant the root
    of t^m + t^(m−1) = 1; shared/REFERENCES.md §1), or the slope of log|f_k| against log
    of the step sizes (|f| ∝ e^m; within 0.2 of an integer).
wrong-derivative (from the rate)
    A derivative method (Newton, Halley, newton-m) converging linearly at a root the
    reference says is simple: Newton with a slope g ≠ f' has rate |1 − f'(r)/g(r)|
    (REFERENCES §1), so g ≈ f'/(1 ± rate).
slow
    Linear (or sublinear) convergence with a rate per evaluation above 0.6: bisection
    gains a factor 2 per evaluation (rate 0.5); at 0.6 a method needs a third more
    evaluations than bisection for the same accuracy [the margin covers the ±0.05
    scatter of measured rates; common practice, no source]. A bracketing run that
    converged is slow only if it used more evaluations than bisection needs on the
    same bracket, 2 + ⌈log2(width/tol)⌉ (a slow phase in a run that still beat
    bisection is not worth a change).
budget
    The run stopped on a budget (or a recording ended with its last step above the
    tolerance, 1e-6·max(1, |x|) when none is given [the loosest default among common
    solvers], while the last 3 steps still shrank).
    Evaluations still needed: at rate ρ, ⌈log(tol/e)/log ρ⌉ steps; at order p,
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
from ._detect_noise import noise_explains
from ._detect_order import rate_order
from ._detect_path import Context, g
from ._detect_trace import Trace, _shrinking, tolerance, trace_converged
from ._findings import Evidence, Finding, Remedy

__all__ = ["detect_budget", "detect_multiple_root", "detect_rate_derivative", "detect_slow", "evals_needed"]

SLOW_RATE = 0.6
FLAT_LIMIT = 0.1
#: residual-only sequences: converged when |f| fell by this factor (no tolerance given)
RESIDUAL_DROP = 1e-12
#: steps assumed when a budget stopped a run before it had 3 iterates [common practice, no source]
GUESS_STEPS = 10
_DERIVATIVE_METHODS = {"newton", "halley", "newton-m"}


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
    if not measured and not _shrinking(t, 2):
        return None, "no rate or order measured, and the steps are not shrinking"
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
        c = errs[-1] / errs[-2] ** p if errs[-2] > 0 else 1.0
        c = min(max(c, 1e-300), 1e300)
        steps, ee = 0, e
        while ee > tol and steps < 200:
            nxt = c * ee**p
            ee = nxt if nxt < ee else ee / 2
            steps += 1
        how = f"order {p:.3g}{'' if measured else ' (the method’s nominal order: too few points to measure)'} " \
              f"from the error {e:.3g} down to {tol:.3g}"
    if t.brackets:  # the width closes a step behind the error when one end lags
        return math.ceil((steps + 3) * d), how + " (+1 step for the width to close, +1 for the test, +1 to spare)"
    return math.ceil((steps + 2) * d), how + " (+1 step for the stopping test, +1 to spare)"


def _residual_multiplicity(t: Trace, est: Any) -> tuple[int | None, float]:
    """m from |f_k| ∝ e_k^m over the linear window (steps stand in for errors)."""
    if t.fs is None or est is None or est.window is None or t.n < 6:
        return None, math.nan
    lo, hi = est.window
    steps = np.abs(np.diff(t.xs))
    ks = np.arange(max(lo, 0), min(hi + 1, len(steps)))
    if len(ks) < 3:
        return None, math.nan
    with np.errstate(all="ignore"):
        le, lf = np.log10(steps[ks]), np.log10(np.abs(t.fs[ks]))
    ok = np.isfinite(le) & np.isfinite(lf)
    if np.sum(ok) < 3 or np.ptp(le[ok]) < 0.5:
        return None, math.nan
    slope = float(np.polyfit(le[ok], lf[ok], 1)[0])
    m = round(slope)
    return (m if abs(slope - m) <= 0.2 else None), slope


def detect_multiple_root(t: Trace, ctx: Context) -> Finding | None:
    est = rate_order(t, ctx)
    if est is None or est.label != "linear" or est.rate is None:
        return None
    if ctx.cache.get("derivative", {}).get("bad"):
        return None
    m_res, slope = _residual_multiplicity(t, est)
    hp = est.reference == "high-precision root"
    m = est.multiplicity if est.multiplicity is not None else m_res
    if hp and est.multiplicity == 1:
        return None
    if m is None or m < 2 or noise_explains(t, ctx):
        return None
    ev: list[Evidence] = [("linear rate", est.rate, f"over e_{est.window[0]}…e_{est.window[1]}"
                           if est.window else "")]
    if est.multiplicity_note:
        ev.append(("multiplicity", m, est.multiplicity_note.split("; ")[0]))
        hp_note = next((n for n in est.multiplicity_note.split("; ") if n.startswith("reference root")), "")
        if hp_note:
            ev.append(("high-precision check", m, hp_note))
    else:
        ev.append(("multiplicity", m, "from |f| ∝ e^m"))
    if math.isfinite(slope):
        ev.append(("|f| ∝ step^q", slope, "q = m at a root of multiplicity m"))
    pr = ctx.prober
    x = float(t.xs[t.best_index()])
    if pr.available and pr.remaining >= 4 and t.n:
        x0 = float(t.xs[0])
        h = max(1e-3 * abs(x0 - x), 1e-8 * max(1.0, abs(x)))
        try:
            d_l = (pr(x + h) - pr(x - h)) / (2 * h)
            d_0 = (pr(x0 + h) - pr(x0 - h)) / (2 * h)
        except Exception:  # noqa: BLE001 - budget
            d_l = d_0 = math.nan
        if math.isfinite(d_l) and math.isfinite(d_0):
            if abs(d_l) > FLAT_LIMIT * abs(d_0):
                ctx.notes.append(f"a linear rate suggested multiplicity {m}, but f' at the best iterate ({d_l:.3g}) "
                                 f"is not small against f' at the start ({d_0:.3g}): not a multiple root")
                return None
            ev.append(("f' at the best iterate", d_l, f"f' at the start: {g(d_0, 3)}; f' vanishes at a multiple root"))
    x0 = t.starts[0] if t.starts else float(t.xs[0])
    remedy = Remedy("newton-m", start=(x0,), multiplicity=int(m),
                    note=f"x − {m}·f/f' is quadratic at a root of multiplicity {m}")
    what = t.method or "the solver"
    return Finding(
        "multiple-root",
        f"The root near {g(x, 10)} has multiplicity {m}: {what} converges only linearly there (rate {est.rate:.3g}).",
        tuple(ev),
        f"Use the modified Newton step x − {m}·f/f' (method 'newton-m' with multiplicity={m}) or Newton on f/f' "
        "(method 'newton-ratio', which needs f'' but not m); both are quadratic again. Expect about 1/"
        f"{m} of the digits at most: rounding in f hides a multiple root. Remedy: " + remedy.describe() + ".",
        remedy, tuple(range(est.window[0], min(est.window[1] + 2, t.n))) if est.window else (), tag=f"m = {m}")


def detect_rate_derivative(t: Trace, ctx: Context) -> Finding | None:
    est = rate_order(t, ctx)
    if est is None or est.label != "linear" or est.rate is None or t.method not in _DERIVATIVE_METHODS:
        return None
    if "derivative" in ctx.cache:  # your derivative was checked against f and agreed
        if not ctx.cache["derivative"]["bad"] and not noise_explains(t, ctx):
            ctx.notes.append(f"{t.method} is linear at a simple root although your derivative agrees with the slope "
                             "of f: f may not be smooth at the root")
        return None
    m_res, slope = _residual_multiplicity(t, est)
    simple = (est.reference == "high-precision root" and est.multiplicity == 1) or (
        est.reference != "high-precision root" and m_res == 1)
    if not simple or t.derivative_source not in (None, "user") or noise_explains(t, ctx):
        return None
    rho = est.rate
    x0 = t.starts[0] if t.starts else float(t.xs[0])
    remedy = Remedy(t.method or "newton", start=(x0,), drop_fprime=True,
                    note="the same method with a derivative convdiag computes from f")
    return Finding(
        "wrong-derivative",
        f"{t.method} converges linearly (rate {rho:.3g}) at a simple root, where it should be order "
        f"{t.nominal_order or 2:g}: the slope it used is off by a factor of about {1 / (1 - rho):.3g} or "
        f"{1 / (1 + rho):.3g}.",
        (("linear rate", rho, "Newton with slope g ≠ f' has rate |1 − f'(r)/g(r)|"),
         ("multiplicity", 1, "high-precision reference root" if est.reference == "high-precision root"
          else f"|f| ∝ step^{slope:.2f}")),
        "Check the derivative (pass f itself so it can be compared), or leave it out. Remedy: "
        + remedy.describe() + ".",
        remedy, (), tag=f"rate {rho:.3g}")


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
        remedy = _remedy_same(t)
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


def detect_budget(t: Trace, ctx: Context) -> Finding | None:
    budget_stop = t.stop_reason in ("max-evals", "max-time", "max-steps")
    if t.kind == "run" and not (budget_stop and _improving(t)):
        return None
    if t.kind != "run" and (trace_converged(t) or not (_shrinking(t) if t.n else _falling(t))):
        return None
    if t.n == 0 and t.fs is None:
        return None
    est = rate_order(t, ctx) if t.n >= 3 or t.n == 0 else None
    need, how = evals_needed(t, est)
    if need is None:
        return None
    entries = max(t.n, len(t.fs) if t.fs is not None else 0)
    used = t.total_evals or (int(t.evals[-1]) if t.evals is not None and len(t.evals) else entries)
    if t.n:
        tol, tol_how = tolerance(t, float(t.xs[t.best_index()]))
    else:
        tol = t.ftol or RESIDUAL_DROP * abs(float(t.fs[0])) if t.fs is not None else math.nan
        tol_how = "residual tolerance" + ("" if t.ftol else f" (assumed: |f| down by {RESIDUAL_DROP:g})")
    ev: list[Evidence] = [("evaluations used", used, f"stop: {t.stop_reason}" if t.stop_reason else "")]
    if est is not None:
        ev.append(("convergence", est.label_text, f"observed order {est.value:.3g}" if math.isfinite(est.value)
                   else ""))
    ev.append(("tolerance", tol, tol_how))
    ev.append(("evaluations still needed", need, how))
    if t.seconds_per_eval:
        ev.append(("time still needed", need * t.seconds_per_eval, "seconds, at the mean time per evaluation"))
    remedy = _remedy_same(t, max_evals=used + need, note="the same run with a budget that covers the estimate")
    if t.brackets is not None and t.method is not None:
        remedy = Remedy(t.method, bracket=remedy.bracket, max_evals=used + need, note=remedy.note)
    what = "The budget ran out after" if t.kind == "run" else "The iteration stopped after"
    return Finding(
        "budget",
        f"{what} {used} evaluations while the iterates were still converging"
        f"{f' ({est.label_text})' if est is not None and est.converged_estimate else ''}; "
        f"about {need} more evaluations reach the tolerance.",
        tuple(ev),
        f"Raise the evaluation budget to about {used + need} (max_evals, maxiter or maxfev). Remedy: "
        + remedy.describe() + ".",
        remedy, (t.n - 1,) if t.n else (), tag=f"{need} more")


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
