"""The budget finding: the solver stopped on its budget while still converging, and how many more evaluations it needs.

Rules and thresholds (basis in brackets):

budget
    The run stopped on a budget (or a recording ended with its last step above the
    tolerance, 1e-6·max(1, |x|) when none is given [the loosest default among common
    solvers], while the last 3 steps still shrank).
estimate
    ``_detect_rate.evals_needed`` extrapolates only from a converging regime: a rate or
    order measured on an asymptotic window (``_detect_order``), or — with no such estimate
    — the last 3 steps of an open method shrinking with each contraction ratio at most
    twice the one before (a linear rate keeps its ratio, a superlinear one lowers it)
    [common practice, no source]. Newton on Kepler's equation at e = 0.99, M = 0.1 from
    E0 = M shrinks its steps 85 → 55 → 3.2 → 1.8 while still wandering (ratios 0.65, 0.058,
    0.57): no estimate is read from that.
check
    An extrapolation can still be wrong, so the count is checked before a remedy rests on it:
    (i) a run of convdiag's whose method's next step depends only on its last iterates
    (newton, secant, iqi, steffensen, halley, newton-ratio) is continued from them, with the
    run's own tolerances, on the probe budget: the evaluations it takes to converge are the
    count. Re-running from the start repeats the same iterates up to there, so the evaluations
    used plus that count are enough. This also counts when no estimate could be read.
    (ii) Bisection's count is exact (it halves the width). (iii) Any other run of convdiag's is
    re-run with the remedy when the probe budget allows it. A check that fails refutes the
    estimate.
remedy
    "The same run with max_evals = used + count" (with the run's tolerances) only when the
    count was checked. Otherwise — a recording or sequence (its solver is not convdiag's), too
    small a probe budget, a refuted estimate — the finding states the estimate as unchecked (or
    says that none can be made) and the remedy is hybrid on a bracket (``_detect_advice``), which
    needs no estimate.
"""

from __future__ import annotations

import math
from dataclasses import replace

from ._detect_advice import _remedy_same
from ._detect_order import rate_order
from ._detect_path import Context
from ._detect_rate import RESIDUAL_DROP, _falling, _improving, evals_needed
from ._detect_trace import EPS, Trace, _shrinking, tolerance, trace_converged
from ._findings import Evidence, Finding, Remedy

__all__ = ["MEMORYLESS", "detect_budget", "unexplained_stop"]

#: open methods whose next step depends only on their last n_starts iterates (module docstring, check (i))
MEMORYLESS = frozenset({"newton", "secant", "iqi", "steffensen", "halley", "newton-ratio"})
#: default relative tolerance of solve (``Settings.rtol``)
_RTOL = 4 * EPS


def _own_run(t: Trace) -> bool:
    """A run of convdiag's in double precision whose problem the diagnosis can run again."""
    return t.kind == "run" and t.problem is not None and t.arithmetic == "real" and not t.digits


def _settings(t: Trace) -> dict[str, float]:
    """The run's tolerances, as remedy settings: a rerun stops where the run would have."""
    out: dict[str, float] = {}
    if t.xtol:
        out["xtol"] = float(t.xtol)
    if t.rtol is not None and t.rtol != _RTOL:
        out["rtol"] = float(t.rtol)
    if t.ftol:
        out["ftol"] = float(t.ftol)
    return out


def _continue(t: Trace, ctx: Context) -> tuple[int | None, int, str] | None:
    """Continue a memoryless run from its last iterates on the probe budget (check (i)).

    Returns (evaluations it took to converge, or None when it did not; evaluations spent; a sentence),
    or None when the run cannot be continued.
    """
    from ._methods import METHODS
    from ._session import solve

    cls = METHODS.get(t.method or "")
    pr = ctx.prober
    if cls is None or t.method not in MEMORYLESS or not _own_run(t) or t.n < cls.n_starts or not pr.available:
        return None
    starts = [float(v) for v in t.xs[t.n - cls.n_starts:]]
    if not all(math.isfinite(v) for v in starts) or len(set(starts)) < len(starts):
        return None
    allowed = pr.remaining
    if allowed < cls.n_starts + cls.evals_per_step:
        return None
    run = solve(t.problem, t.method, start=starts if len(starts) > 1 else starts[0], max_evals=allowed,
                xtol=float(t.xtol or 0.0), rtol=float(t.rtol if t.rtol is not None else _RTOL),
                ftol=float(t.ftol or 0.0))
    pr.spend(run.evaluations)
    where = "its last iterate" if len(starts) == 1 else f"its last {len(starts)} iterates"
    if run.converged:
        return run.evaluations, run.evaluations, (f"counted: the run continued from {where} converged ({run.stop_reason}) after "
                                 f"{run.evaluations} evaluations")
    return None, run.evaluations, (f"the run continued from {where} did not converge in {run.evaluations} more evaluations "
                  f"(the probe budget; it stopped on {run.stop_reason})")


def _rerun(t: Trace, ctx: Context, remedy: Remedy) -> bool | None:
    """Apply the remedy to the run's problem when the probe budget covers it (check (iii)); None: not tried."""
    pr = ctx.prober
    if not _own_run(t) or remedy.max_evals is None or pr.remaining < remedy.max_evals:
        return None
    try:
        run = remedy.solve(t.problem)
    except Exception:  # noqa: BLE001 - a remedy that cannot even start is a failed check
        return False
    pr.spend(run.evaluations)
    return bool(run.converged)


def detect_budget(t: Trace, ctx: Context) -> Finding | None:
    budget_stop = t.stop_reason in ("max-evals", "max-time", "max-steps")
    if t.kind == "run" and not (budget_stop and _improving(t)):
        return None
    if t.kind != "run" and (trace_converged(t) or not (_shrinking(t) if t.n else _falling(t))):
        return None
    if t.n == 0 and t.fs is None:
        return None
    est = rate_order(t, ctx) if t.n >= 3 or t.n == 0 else None
    estimate, how = evals_needed(t, est)
    entries = max(t.n, len(t.fs) if t.fs is not None else 0)
    used = t.total_evals or (int(t.evals[-1]) if t.evals is not None and len(t.evals) else entries)
    cont = _continue(t, ctx)
    need: int | None = None  # a checked count
    checked = ""  # how it was checked
    refuted = ""  # a check that failed where the estimate said it would succeed
    unknown = ""  # a check that could not reach the estimate (or there was none)
    if cont is not None:
        k, spent, said = cont
        if k is not None:
            need, checked = k, said
        elif estimate is not None and spent >= estimate:
            refuted = said
        else:
            unknown = said
    elif t.method == "bisection" and t.brackets:
        need, checked = estimate, "exact: bisection halves the width each step"
    elif estimate is not None:
        trial = _remedy_same(t, ctx, max_evals=used + estimate, **_settings(t))
        ok = _rerun(t, ctx, trial)
        if ok:
            need, checked = estimate, f"checked: the remedy, applied, converged within {used + estimate}"
        elif ok is False:
            refuted = f"the remedy with max_evals = {used + estimate}, applied, did not converge"
    if need is None and estimate is None and not unknown:
        return None  # nothing to count on: the unexplained stop says so (``_diagnose``)
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
    if need is not None:
        ev.append(("evaluations still needed", need, checked))
        if estimate is not None and estimate != need:
            ev.append(("extrapolated estimate", estimate, how))
    elif estimate is not None:
        ev.append(("evaluations still needed", estimate, how + (" — refuted by the check" if refuted else
                                                                " — unchecked")))
    if refuted or unknown:
        ev.append(("check", "failed" if refuted else "inconclusive", refuted or unknown))
    count = need if need is not None else estimate
    if t.seconds_per_eval and count is not None:
        ev.append(("time still needed", count * t.seconds_per_eval, "seconds, at the mean time per evaluation"))
    what = "The budget ran out after" if t.kind == "run" else "The iteration stopped after"
    state = (f"while the iterates were still converging"
             f"{f' ({est.label_text})' if est is not None and est.converged_estimate else ''}")
    if need is not None:
        remedy = _remedy_same(t, ctx, max_evals=used + need, note="the same run with a budget that covers the count",
                              **_settings(t))
        if t.brackets is not None and t.method is not None:
            remedy = replace(remedy, method=t.method)
        if estimate is None:  # counted, although the steps had not settled into convergence
            state = "before the iterates had settled into convergence"
        return Finding(
            "budget", f"{what} {used} evaluations {state}; {need} more evaluations reach the tolerance ({checked}).",
            tuple(ev),
            f"Raise the evaluation budget to {used + need} (max_evals, maxiter or maxfev). Remedy: "
            + remedy.describe() + ".",
            remedy, (t.n - 1,) if t.n else (), tag=f"{need} more")
    near = float(t.xs[t.best_index()]) if t.n else None
    remedy = ctx.bracket_remedy(t, near, "a bracketing method needs no estimate of the evaluations left")
    if refuted:
        summary = (f"{what} {used} evaluations; the iterates seemed to converge, but {refuted} (the extrapolation "
                   f"said {estimate} more): how many more it needs is unknown.")
        tag = "no estimate"
    elif estimate is None:
        summary = (f"{what} {used} evaluations before the iterates settled into convergence, and {unknown}: how many "
                   "more it needs is unknown.")
        tag = "no estimate"
    else:
        summary = (f"{what} {used} evaluations {state}; about {estimate} more evaluations may reach the tolerance "
                   f"(extrapolated, unchecked: {how}).")
        tag = f"about {estimate} more, unchecked"
    return Finding(
        "budget", summary, tuple(ev),
        (f"Raise the evaluation budget (max_evals, maxiter or maxfev) to about {used + estimate}, or more: the "
         "estimate is an extrapolation. " if estimate is not None and not refuted else "")
        + f"A bracketing method converges without an estimate: {remedy.describe()}.",
        remedy, (t.n - 1,) if t.n else (), tag=tag)


def unexplained_stop(t: Trace) -> Finding:
    """No detector fired on a run that did not converge: say so, as a budget finding."""
    stop = t.stop_reason or "the end of the sequence"
    return Finding(
        "budget",
        f"The solver stopped ({stop}) without converging, and none of the known patterns (cycle, divergence, "
        "flat-tangent throws, multiple root, noise or rounding floor, pole, flat spot, exponential-like crawl) "
        "shows in its iterates.",
        (("iterates", t.n, ""), ("stop", stop, "")),
        "Look at the iterates and f near them; try a bracketing method (hybrid) on a bracket from "
        "convdiag.find_brackets.",
        Remedy("hybrid", near=float(t.xs[0]) if t.n else 0.0, note="a bracket searched near the start"),
        (), tag="no pattern",
    )
