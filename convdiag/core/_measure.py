"""Measuring the order of a run or a sequence: errors, window, multiplicity, error constant, efficiency.

:func:`_measure_run` and :func:`_measure_sequence` choose the reference
(``_refchoice``), turn the iterates into log10 errors, and hand them to
:func:`_measure`, which runs the window engine (``_window``) and adds what the
method's theory says: the multiplicity a linear rate implies, the error
constant against its theoretical value, and the efficiency index. A
double-precision run of an expression is also replayed at high precision
(:func:`_replay_estimate`).
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import replace
from typing import Any

import numpy as np
from numpy.typing import NDArray

from ..errors import ParameterError
from ._order import EPS, GOLDEN, OrderEstimate, _Options
from ._refchoice import (
    _choose_reference,
    _complex_reference,
    _finite_floats,
    _log_abs,
    _log_errors,
    _point_floors,
    _Ref,
)
from ._window import _analyse


def _secant_rate(m: int) -> float:
    """The positive root of t^m + t^(m−1) = 1 (secant at a root of multiplicity m)."""
    roots = np.roots([1.0, 1.0] + [0.0] * (m - 2) + [-1.0])
    return float(max(r.real for r in roots if abs(r.imag) < 1e-12 and r.real > 0))


_RATE_FORMULAS: dict[str, tuple[str, Callable[[int], float]]] = {
    "newton": ("(m−1)/m", lambda m: (m - 1) / m),
    "steffensen": ("(m−1)/m", lambda m: (m - 1) / m),
    "halley": ("(m−1)/(m+1)", lambda m: (m - 1) / (m + 1)),
    "secant": ("the root of t^m + t^(m−1) = 1", _secant_rate),
}


def _multiplicity_from_rate(method: str | None, rate: float) -> tuple[int | None, str]:
    if method not in _RATE_FORMULAS:
        return None, ""
    text, g = _RATE_FORMULAS[method]
    vals = {m: g(m) for m in range(2, 21)}
    m = min(vals, key=lambda k: abs(vals[k] - rate))
    gap = min(abs(vals[m] - vals[k]) for k in (m - 1, m + 1) if k in vals)
    if abs(vals[m] - rate) <= min(0.02, gap / 2):
        return m, f"the rate {rate:.4g} of {method} implies m = {m} (rate {text} = {vals[m]:.4g})"
    return None, f"the rate {rate:.4g} matches no multiplicity of {method} (rate {text})"


def _theory_constant(method: str | None, hp: Any) -> tuple[float | None, str]:
    """Asymptotic error constant at a simple root (shared/REFERENCES.md §1), c_k = f^(k)(r)/(k! f'(r))."""
    if hp is None or method is None or (hp.multiplicity or 1) != 1 or len(hp.derivatives) < 3:
        return None, ""
    d1, d2, d3 = hp.derivatives[:3]
    if not d1:
        return None, ""
    c2, c3 = d2 / (2 * d1), d3 / (6 * d1)
    table = {
        "newton": (abs(c2), "|f''/(2f')|"),
        "steffensen": (abs(c2 * (1 + d1)), "|c2·(1 + f'(r))|"),
        "secant": (abs(c2) ** (GOLDEN - 1), "|f''/(2f')|^(φ−1)"),
        "iqi": (abs(2 * c2 * c2 - c3) ** ((1.8392867552141612 - 1) / 2), "|2c2² − c3|^((p−1)/2)"),
        "halley": (abs(c2 * c2 - c3), "|c2² − c3|"),
    }
    return table.get(method, (None, ""))


def _measure(
    L: NDArray[np.float64], ref: _Ref, floor: float, opts: _Options, *, method: str | None,
    evals: NDArray[np.int64] | None, log_res: NDArray[np.float64] | None, digits: int | None, basis: str,
    source: str, notes: list[str], floor_note: str = "", floors: NDArray[np.float64] | None = None,
) -> OrderEstimate:
    from ._methods import METHODS

    log_floor = np.maximum(math.log10(floor) if floor > 0 else -np.inf,
                           np.nan_to_num(floors, nan=-np.inf) if floors is not None else -np.inf)
    a = _analyse(L, np.broadcast_to(log_floor, L.shape).astype(np.float64), opts.min_points)
    if ref.kind == "differences" and a.label == "sublinear" and not a.drop >= 100:
        a.label, a.value, a.spread, a.rate, a.rate_spread = "not converging", math.nan, math.nan, None, None
        a.notes.append(f"without a root, steps that shrink by only a factor {a.drop:.3g} cannot tell slow "
                       "convergence from a slow drift away (Newton on x·e^(−x) drifts to infinity this way)")
        a.window, a.points = None, 0
    cls = METHODS.get(method or "")
    nominal = float(cls.nominal_order) if cls is not None else None
    est: dict[str, Any] = {}
    # evaluations per step over the window, and efficiency
    d: float | None = None
    if a.window is not None and evals is not None and len(evals) == len(L):
        lo, hi = (a.window[0] - 1, a.window[1] + 2) if a.rate is None else (a.window[0], a.window[1] + 2)
        steps = np.diff(evals[max(lo, 0) : hi])
        d = float(np.median(steps)) if len(steps) else None
    if d is None:
        d = opts.evals_per_step if opts.evals_per_step is not None else (float(cls.evals_per_step) if cls else None)
    if d is not None and math.isfinite(a.value) and a.value > 0:
        est["efficiency"] = float(a.value ** (1 / d))
    if cls is not None:
        est["efficiency_theory"] = cls.efficiency_index()
    # multiplicity
    mnotes: list[str] = []
    m: int | None = None
    if a.rate is not None and a.label == "linear" and ref.kind != "residuals":
        m, text = _multiplicity_from_rate(method, a.rate)
        if text:
            mnotes.append(text)
    hp = ref.hp
    if hp is not None:  # the function itself, at high precision, has the last word
        mnotes.append(f"reference root: m = {hp.multiplicity} from u = f/f'"
                      + (f", first nonvanishing derivative of order {hp.derivative_order}"
                         if hp.derivative_order is not None else ""))
        if m is not None and hp.multiplicity is not None and m != hp.multiplicity:
            mnotes.append(f"the rate suggests m = {m} but the function has m = {hp.multiplicity} at the root")
        m = hp.multiplicity
    if log_res is not None and a.window is not None and ref.kind in ("given", "high-precision"):
        ks = np.arange(max(a.window[0] - 1, 0), min(a.window[1] + 2, len(L)))
        ok = np.isfinite(L[ks]) & np.isfinite(log_res[ks])
        if np.sum(ok) >= 3 and np.ptp(L[ks][ok]) > 0.5:
            slope = float(np.polyfit(L[ks][ok], log_res[ks][ok], 1)[0])
            mnotes.append(f"|f(x_k)| ∝ e_k^{slope:.3f} over the window")
    # error constant against theory
    if (nominal is not None and a.rate is None and ref.kind != "residuals" and math.isfinite(a.value)
            and abs(a.value - nominal) <= 0.15 * nominal):
        assert a.window is not None
        lo = max(a.window[0] - 1, 0)
        ks = np.arange(lo + (a.window[1] + 1 - lo) // 2, a.window[1] + 1)  # the later half of the window
        logk = L[ks + 1] - nominal * L[ks]
        logk = logk[np.isfinite(logk)]
        if len(logk):
            est["error_constant"] = float(10.0 ** np.median(logk))
            theory, formula = _theory_constant(method, hp)
            est["error_constant_theory"] = theory
            est["error_constant_note"] = (f"median of e_(k+1)/e_k^{nominal:.4g} over the later half of the window"
                                          + (f"; theory {formula} at the root" if theory is not None else ""))
    if a.label == "linear" and nominal is not None and nominal > 1.5 and (hp is None or hp.multiplicity == 1):
        if hp is None and m is not None and m > 1:  # no reference to say the root is simple: the rate's reading first
            notes.append(f"{method} converges only linearly here; its rate implies a root of multiplicity {m}, or a "
                         "wrong f' (a wrong derivative gives a linear rate |1 − f'(r)/g(r)|)")
        else:
            notes.append(f"{method} should converge with order {nominal:.3g} at a simple root but is linear here: "
                         "check the derivative (a wrong f' gives a linear rate |1 − f'(r)/g(r)|) or the function's "
                         "smoothness")
    if a.label == "cubic" and method == "newton":
        notes.append("Newton is cubic where f''(r) = 0 (c2 = 0)")
    root = float(abs(ref.value)) if isinstance(ref.value, complex) else (
        float(ref.value) if ref.value is not None else None)
    with np.errstate(all="ignore"):
        errs = tuple(float(v) for v in 10.0**L)
    return OrderEstimate(
        value=a.value, spread=a.spread, window=a.window, points=a.points, label=a.label,
        reference=ref.label, reference_note=ref.note, root=root, rate=a.rate, rate_spread=a.rate_spread,
        multiplicity=m, multiplicity_note="; ".join(mnotes), evals_per_step=d, method=method, nominal_order=nominal,
        centre=a.centre, block=a.block, errors=errs, log_errors=tuple(float(v) for v in L), orders=tuple(float(v) for v in a.orders),
        evals=None if evals is None or len(evals) != len(L) else tuple(int(v) for v in evals),
        floor=floor, floor_note=floor_note, digits=digits, basis=basis, notes=(*notes, *a.notes), source=source,
        **est,
    )


def _measure_run(run: Any, root: Any, do_replay: bool, opts: _Options) -> OrderEstimate:
    problem = run.source if run.arithmetic != "complex" else None
    if run.arithmetic == "mpmath" and run.digits:
        opts = replace(opts, digits=max(opts.digits, min(run.digits, 2000)))
    exact = list(run.iterates_exact)
    xs = exact if run.arithmetic != "real" else [float(v) for v in run.iterates]
    unit = 10.0 ** (-run.digits) if run.arithmetic == "mpmath" and run.digits else EPS
    notes: list[str] = []
    if run.arithmetic == "complex":  # |x − r| in the complex plane; no high-precision root or replay
        ref = _complex_reference(xs, root, opts)
    else:
        ref = _choose_reference(problem, xs, root, opts, converged=run.converged, best=run.root,
                                has_residuals=True, unit=unit, notes=notes, residuals=list(run.values))
    floor = opts.floor if opts.floor is not None else (ref.floor_hp if run.arithmetic == "mpmath" else ref.floor)
    evals = run.evals_at_iterates
    L = _log_errors(xs, ref, list(run.values_exact))
    log_res: NDArray[np.float64] | None = _log_abs(list(run.values_exact))
    if ref.kind == "differences":
        evals, log_res = evals[1:], None
    source = f"{run.method} on {run.problem}"
    fnote = "given" if opts.floor is not None else (ref.floor_note if run.arithmetic == "real" else "")
    est = _measure(L, ref, floor, opts, method=run.method, evals=evals, log_res=log_res,
                   floors=_point_floors(xs, ref.kind, -run.digits if unit != EPS else math.log10(EPS), opts),
                   digits=run.digits if run.arithmetic == "mpmath" else None, basis="run", source=source,
                   notes=list(notes), floor_note=fnote)
    if not do_replay or run.arithmetic != "real" or problem is None:
        return est
    if ref.hp is None and ref.kind != "differences":
        return replace(est, notes=(*est.notes, "no high-precision replay: it needs a high-precision root"))
    rep = _replay_estimate(run, problem, ref, opts, source, notes)
    if isinstance(rep, str):
        return replace(est, notes=(*est.notes, rep))
    if rep.converged_estimate:
        return replace(rep, alternative=est)
    return replace(est, alternative=rep)


def _replay_estimate(run: Any, problem: Any, ref: _Ref, opts: _Options, source: str,
                     notes: list[str]) -> OrderEstimate | str:
    """The estimate on a high-precision replay, deepened (3 × the digits, at most twice) while its window has
    fewer than 4 settled single-step values."""
    from ._reference import reference_root, replay, rounding_floor

    digits, hp, floor_hp = opts.digits, ref.hp, ref.floor_hp
    same_steps = None if run.converged else max(len(run.steps), 1)
    best: OrderEstimate | str = "no high-precision replay"
    for attempt in range(3):
        if attempt:
            digits = min(3 * digits, 2000)
            if hp is not None:
                hp = reference_root(problem, float(hp.value), digits=digits)
                if not hp.confirmed:
                    break
                floor_hp = rounding_floor(problem, hp, digits=digits)[1]
        try:
            hp_run = replay(run, digits=digits, max_steps=same_steps)
        except ParameterError as exc:
            return f"no high-precision replay: {exc}"
        r = float(hp.value) if hp is not None else float(run.root)
        gap = abs(float(hp_run.root) - r) if _finite_floats([hp_run.root]) else math.inf
        if not gap <= max(1e-8 * max(abs(r), 1.0), 1e3 * ref.floor) and run.converged:
            return best if isinstance(best, OrderEstimate) else (
                f"the replay at {digits} digits ended {gap:.3g} away from the reference root (the double-precision "
                "path and the exact one parted), so it is not used")
        hp_ref = _Ref(ref.kind, None if hp is None else hp.value, hp, ref.note)
        if hp is None:
            floor_hp = 0.0  # differences: the per-point floors below carry the rounding
        L2 = _log_errors(list(hp_run.iterates_exact), hp_ref, None)
        deeper = f" ({opts.digits} digits gave too few settled points)" if attempt else ""
        hp_evals = hp_run.evals_at_iterates[1:] if hp is None else hp_run.evals_at_iterates
        rep = _measure(L2, hp_ref, floor_hp if opts.floor is None else 0.0, opts, method=run.method,
                       floors=_point_floors(list(hp_run.iterates_exact), ref.kind, -digits, opts),
                       evals=hp_evals, log_res=None if hp is None else _log_abs(list(hp_run.values_exact)), digits=digits,
                       basis="replay", source=f"{source}, replayed at {digits} digits{deeper}", notes=list(notes),
                       floor_note=f"4 units in the {digits}th digit of |r|, and the noise of f scaled to {digits} digits")
        if rep.converged_estimate or not isinstance(best, OrderEstimate):
            best = rep
        settled = rep.rate is not None or ("settled single-step orders" in rep.centre and rep.points >= 4)
        if settled or digits >= 2000 or same_steps is not None:
            break
    return best


def _measure_sequence(source: Any, root: Any, method: str | None, kind: Any, opts: _Options) -> OrderEstimate:
    from ._problem import as_problem
    from ._record import Recorder
    from ._sequence import as_sequence

    seq = as_sequence(source, kind=kind)
    problem = None
    if isinstance(source, Recorder) and opts.reference in ("auto", "high-precision"):
        try:
            problem = as_problem(getattr(source, "__wrapped__"))  # noqa: B009 (a slot mypy does not see)
        except ParameterError:
            problem = None
    method = method or (seq.method if seq.method else None)
    root = root if root is not None else seq.root
    xs: list[Any] = list(seq.exact) if seq.exact is not None else (
        [] if seq.iterates is None else [float(v) for v in seq.iterates])
    unit = 10.0 ** (-seq.digits) if seq.exact is not None and seq.digits else EPS
    converged = len(xs) >= 2 and float(abs(xs[-1] - xs[-2])) <= 1e3 * unit * max(abs(float(xs[-1])), 1e-300)
    notes: list[str] = []
    if opts.reference == "residuals" and seq.residuals is None:
        raise ParameterError("reference='residuals' needs residuals f(x_k); this sequence has iterates only.")
    ref = _choose_reference(problem, xs, root, opts, converged=converged, best=xs[-1] if xs else None,
                            has_residuals=seq.residuals is not None, unit=unit, notes=notes,
                            residuals=None if seq.residuals is None else list(seq.residuals))
    floor = opts.floor if opts.floor is not None else ref.floor
    res = None if seq.residuals is None else [float(v) for v in seq.residuals]
    L = _log_errors(xs, ref, res)
    evals = seq.evals
    if ref.kind == "differences" and evals is not None:
        evals = evals[1:]
    log_res = _log_abs(res) if res is not None and ref.kind in ("given", "high-precision") else None
    return _measure(L, ref, floor, opts, method=method, evals=evals, log_res=log_res, digits=seq.digits,
                    floors=None if seq.iterates is None else _point_floors(
                        xs, ref.kind, -seq.digits if seq.digits and unit != EPS else math.log10(EPS), opts),
                    basis="sequence", source=seq.label, notes=notes,
                    floor_note="given" if opts.floor is not None else ref.floor_note)
