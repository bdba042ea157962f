"""What the diagnosis reads: one normalised trace of an iteration (the budgeted prober is re-exported).

:func:`build_trace` turns a :class:`~convdiag.core._run.Run`, a
:class:`~convdiag.core._record.Recorder` (or its
:class:`~convdiag.core._record.EvalLog`), or a plain sequence into a
:class:`Trace`: iterates, residuals, evaluations, the slope each step used,
the bracket history, failed evaluations, the requested tolerances and, when
there is one, the function itself for a few extra evaluations.

A recording lists every evaluation a third-party solver made, not just its
iterates. Rules for reading it (each states its threshold):

- consecutive evaluations at the same x are one point (MINPACK's ``fsolve``
  evaluates its start several times);
- an evaluation closer than 1e-7·max(1, |x|) to the point before it, after
  which the solver moved at least 100 times as far, is a difference-derivative
  probe, not an iterate (forward differences use steps near √eps ≈ 1.5e-8
  relative; an iterate of a converging solver is followed by a smaller step);
- derivative rows (``df``) at an iterate give the slope the step used; a recording with them at
  every iterate but the last is an open method with a derivative (Newton; Halley with ``d2f`` rows),
  read before the bracket check: Newton's iterates may straddle the root and stay inside the first
  two by chance;
- the diagnosis calls the recorded function as the solver did: with the extra
  positional ``args`` of the solver's latest call (``Recorder.call_args``), so that
  ``scipy.optimize.newton(rf, x0, args=(Re,))`` is probed as f(x, Re).
"""

from __future__ import annotations

import functools
import math
from collections.abc import Callable
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from numpy.typing import NDArray

from ..errors import ParameterError
from ._detect_prober import Prober
from ._detect_stop import SEQ_TOL, _shrinking, tolerance, trace_converged

__all__ = ["SEQ_TOL", "Prober", "Trace", "_shrinking", "build_trace", "tolerance", "trace_converged"]

EPS = 2.220446049250313e-16
#: a point this close (relative to max(1, |x|)) to the one before it may be a difference probe
PROBE_GAP = 1e-7
#: ... when the solver then moved at least this many times as far
PROBE_MOVE = 100.0
_BRACKETING = {"bisection", "regula-falsi", "illinois", "hybrid"}


@dataclass
class Trace:
    """One iteration, normalised for the detectors (see the module docstring)."""

    kind: str  # "run", "recording" or "sequence"
    label: str
    xs: NDArray[np.float64]
    fs: NDArray[np.float64] | None = None  # residuals (signed unless ``fs_signed`` is False)
    fs_signed: bool = True
    evals: NDArray[np.int64] | None = None
    total_evals: int | None = None
    method: str | None = None
    method_inferred: bool = False
    slopes: NDArray[np.float64] | None = None  # slope the step from iterate k used (NaN: unknown)
    brackets: list[tuple[float, float, float, float]] | None = None  # (lo, hi, f_lo, f_hi) after each step
    reasons: tuple[str, ...] = ()
    stop_reason: str | None = None
    converged_own: bool | None = None
    failure: Any = None
    failures: list[tuple[float, str, str]] = field(default_factory=list)  # (x, status, note)
    xtol: float | None = None
    rtol: float | None = None
    ftol: float | None = None
    max_evals: int | None = None
    seconds_per_eval: float | None = None
    starts: tuple[float, ...] = ()
    bracket0: tuple[float, float] | None = None
    f: Callable[[Any], Any] | None = None
    fprime: Callable[[Any], Any] | None = None  # a derivative the user supplied
    derivative_source: str | None = None
    problem: Any = None
    nominal_order: float | None = None
    evals_per_step: float | None = None
    order_source: Any = None
    arithmetic: str = "real"
    digits: int | None = None  # working digits of a high-precision run
    complex_root: complex | None = None  # the root of a complex run (the detectors see real parts)
    notes: list[str] = field(default_factory=list)

    @property
    def n(self) -> int:
        return int(self.xs.shape[0])

    @property
    def open_method(self) -> bool:
        return self.brackets is None

    def best_index(self) -> int:
        """Index of the finite iterate with the smallest |f| (the last one when f is unknown)."""
        if self.fs is None or self.n == 0:
            return max(self.n - 1, 0)
        a = np.abs(self.fs[: self.n])
        ok = np.isfinite(a) & np.isfinite(self.xs)
        if not np.any(ok):
            return max(self.n - 1, 0)
        idx = np.flatnonzero(ok)
        return int(idx[np.argmin(a[idx])])


def _floats(values: Any) -> NDArray[np.float64]:
    out = []
    for v in values:
        try:
            out.append(float(v))
        except (TypeError, ValueError, OverflowError):
            try:
                out.append(float(complex(v).real))
            except (TypeError, ValueError, OverflowError):
                out.append(math.nan)
    return np.asarray(out, dtype=np.float64)


def _slopes_from_steps(xs: NDArray[np.float64], fs: NDArray[np.float64] | None) -> NDArray[np.float64] | None:
    """The slope g_k with x_(k+1) = x_k − f_k/g_k that each step of an open method used."""
    if fs is None or len(xs) < 2:
        return None
    g = np.full(len(xs), np.nan)
    with np.errstate(all="ignore"):
        s = np.diff(xs)
        g[:-1] = np.where(s != 0, -fs[:-1] / s, np.nan)
    return g


def _bracket_history(
    xs: NDArray[np.float64], fs: NDArray[np.float64]
) -> list[tuple[float, float, float, float]] | None:
    """Rebuild the bracket after each evaluation when the points behave like a bracketing method.

    The first two points must give f of opposite signs, and every later point must fall strictly
    inside the current bracket (it then replaces the end whose f has its sign). None otherwise.
    """
    if len(xs) < 3 or not (np.all(np.isfinite(xs)) and np.all(np.isfinite(fs))):
        return None
    a, b, fa, fb = float(xs[0]), float(xs[1]), float(fs[0]), float(fs[1])
    if not (fa < 0 < fb or fb < 0 < fa):
        return None
    if a > b:
        a, b, fa, fb = b, a, fb, fa
    out = []
    for x, fx in zip(xs[2:].tolist(), fs[2:].tolist()):
        if not a < x < b:
            return None
        if fx == 0:
            out.append((a, b, fa, fb))
            break
        if (fx < 0) == (fa < 0):
            a, fa = x, fx
        else:
            b, fb = x, fx
        out.append((a, b, fa, fb))
    return out


def _from_run(run: Any, t: Trace) -> None:
    problem = run.source
    t.kind, t.label, t.method = "run", f"{run.method} on {run.problem}", run.method
    t.xs, t.fs = run.iterates, run.values
    t.evals, t.total_evals = run.evals_at_iterates, run.evaluations
    t.reasons = tuple(s.reason for s in run.steps)
    t.stop_reason, t.converged_own, t.failure = run.stop_reason, bool(run.converged), run.failure
    s = run.settings
    t.xtol, t.rtol, t.ftol, t.max_evals = s.xtol, s.rtol, s.ftol, s.max_evals
    t.starts = tuple(float(v) for v in _floats(run.starts))
    t.nominal_order, t.evals_per_step = float(run.nominal_order), float(run.evals_per_step)
    t.arithmetic, t.order_source = run.arithmetic, run
    t.digits = run.digits if run.arithmetic == "mpmath" else None
    t.derivative_source = run.derivative_source
    if problem is not None and run.arithmetic != "complex":
        t.problem, t.f = problem, problem.f
        if run.derivative_source == "user":
            t.fprime = problem.fprime
    if run.bracket is not None and any(st.bracket is not None for st in run.steps):
        t.bracket0 = (float(run.bracket[0]), float(run.bracket[1]))
        values = dict(zip(_floats(run.starts).tolist(), _floats(run.start_values).tolist()))
        values.update(zip(t.xs.tolist(), t.fs.tolist()))
        t.brackets = []
        for st in run.steps:
            if st.bracket is None:
                continue
            lo, hi = float(st.bracket[0]), float(st.bracket[1])
            t.brackets.append((lo, hi, values.get(lo, math.nan), values.get(hi, math.nan)))
    else:
        t.slopes = _slopes_from_steps(t.xs, t.fs)
        if t.slopes is not None:
            t.slopes[: len(run.starts) - 1] = np.nan  # moves between starts are not steps
    if len(run.evals):
        t.seconds_per_eval = float(run.evals.total_seconds) / len(run.evals)
    if run.arithmetic != "complex":  # complex values are the point of a complex run, not failures
        _log_failures(run.evals, t)
    else:
        t.complex_root = complex(run.root)
        t.notes.append("a complex run: the path checks see the real parts of the iterates, and f is not probed")


def _log_failures(log: Any, t: Trace) -> None:
    notes = dict(log.notes)
    for i in np.flatnonzero(~log.ok):
        if log.kind[i] == "df" and log.x_imag[i] != 0:
            continue  # a complex-step trial, not a point of the iteration
        t.failures.append((float(log.x[i]), str(log.status[i]), notes.get(int(i), "")))


def _from_log(log: Any, t: Trace) -> None:
    kinds = np.asarray(log.kind)
    is_f = (kinds == "f") | (kinds == "f+df")
    rows = [int(i) for i in np.flatnonzero(is_f & np.asarray(log.ok) & (np.asarray(log.x_imag) == 0))]
    xs = np.asarray(log.x, dtype=np.float64)
    vals = np.asarray(log.value, dtype=np.float64)
    keep: list[int] = []
    for i in rows:  # consecutive evaluations at the same point count once
        if keep and xs[i] == xs[keep[-1]]:
            continue
        keep.append(i)
    dropped = 0
    j = 1
    while j < len(keep) - 1:  # difference probes: a tiny move, then a large one
        x0, x1, x2 = xs[keep[j - 1]], xs[keep[j]], xs[keep[j + 1]]
        gap = abs(x1 - x0)
        if gap <= PROBE_GAP * max(1.0, abs(x0)) and abs(x2 - x1) >= PROBE_MOVE * gap:
            del keep[j]
            dropped += 1
            continue
        j += 1
    if dropped:
        t.notes.append(f"{dropped} evaluation{'s' if dropped != 1 else ''} within {PROBE_GAP:g}·max(1, |x|) of the "
                       "point before, followed by a large move, were read as difference-derivative probes")
    t.xs, t.fs = xs[keep], vals[keep]
    t.evals = np.asarray([i + 1 for i in keep], dtype=np.int64)
    t.total_evals = len(log)
    der: dict[float, float] = {}
    for i in np.flatnonzero((kinds == "df") | (kinds == "f+df")).tolist():
        d = float(log.derivative[i])
        if math.isfinite(d) and log.x_imag[i] == 0:
            der.setdefault(float(xs[i]), d)
    has_df = bool(der) and all(float(x) in der for x in t.xs[:-1])
    has_d2f = bool(np.any(kinds == "d2f"))
    if t.method is None and len(t.xs) >= 3:
        # derivative rows at the iterates mark an open method with a derivative, even when its first points
        # happen to straddle the root and every later one falls inside (Newton on Colebrook's equation)
        br = None if has_df else _bracket_history(t.xs, t.fs)
        if has_df:
            t.method, t.method_inferred = ("halley" if has_d2f else "newton"), True
        elif br is not None:
            t.brackets, t.method_inferred = br, True
    elif t.method in _BRACKETING:
        t.brackets = _bracket_history(t.xs, t.fs)
    if t.brackets is None:
        t.slopes = _slopes_from_steps(t.xs, t.fs)
        if t.slopes is not None and not has_df:
            t.slopes[0] = np.nan  # a derivative-free open solver's first two points are its starts
    if len(log):
        t.seconds_per_eval = float(log.total_seconds) / len(log)
    _log_failures(log, t)


def _from_sequence(seq: Any, t: Trace) -> None:
    t.label = seq.label
    t.method = t.method or seq.method
    if seq.iterates is not None:
        t.xs = np.asarray(seq.iterates, dtype=np.float64)
    if seq.residuals is not None:
        fs = np.asarray(seq.residuals, dtype=np.float64)
        t.fs, t.fs_signed = fs, bool(np.any(fs < 0))
    t.evals = seq.evals
    if t.evals is not None and len(t.evals):
        t.total_evals = int(t.evals[-1])
    if seq.root is not None:
        t.notes.append(f"the sequence names a root, {seq.root:.17g}")
    if t.n >= 3 and t.fs is not None and t.fs_signed and (t.method in _BRACKETING or t.method is None):
        br = _bracket_history(t.xs, t.fs)
        if br is not None:
            t.brackets, t.method_inferred = br, t.method is None
    if t.brackets is None and t.fs is not None and t.fs_signed and t.n:
        t.slopes = _slopes_from_steps(t.xs, t.fs)
    t.order_source = seq


def _bound(recorder: Any, fallback: tuple[Any, ...] = ()) -> Callable[[Any], Any]:
    """The recorded function called as the solver called it: f(x, *args) with the solver's extra ``args``."""
    raw: Callable[..., Any] = getattr(recorder, "__wrapped__")  # noqa: B009 (set on the instance; mypy does not see it)
    args = tuple(getattr(recorder, "call_args", ()) or fallback)
    if not args:
        return raw
    return functools.partial(_call_with, raw, args)


def _call_with(f: Callable[..., Any], args: tuple[Any, ...], x: Any) -> Any:
    return f(x, *args)


def build_trace(source: Any, *, f: Any = None, fprime: Any = None, method: str | None = None,
                xtol: float | None = None, ftol: float | None = None) -> Trace:
    """Normalise a run, recording or sequence (see the module docstring).

    Raises
    ------
    ParameterError
        ``source`` is none of the accepted kinds, or has fewer than 3 entries.
    """
    from ._problem import as_problem
    from ._record import F_AND_DF, EvalLog, Recorder
    from ._run import Run
    from ._sequence import IterationSequence, as_sequence

    t = Trace(kind="sequence", label="sequence", xs=np.zeros(0), method=method)
    if isinstance(source, Run):
        _from_run(source, t)
        if method is not None:
            t.method = method
    elif isinstance(source, (Recorder, EvalLog)):
        t.kind = "recording"
        log = source.log if isinstance(source, Recorder) else source
        t.label = f"recording of {source.name}" if isinstance(source, Recorder) else f"recording ({log.source})"
        if isinstance(source, Recorder):
            raw = _bound(source)
            if source._kind == F_AND_DF:  # the function returns (f, f')
                t.f = lambda x, _r=raw: _r(x)[0]
                t.fprime = lambda x, _r=raw: _r(x)[1]
            else:
                t.f = raw
                if source.fprime is not None:
                    t.fprime = _bound(source.fprime, getattr(source, "call_args", ()))
        _from_log(log, t)
        if len(t.xs) < 3 and not (t.failures and len(t.xs) >= 1):
            raise ParameterError(
                f"The recording holds {len(t.xs)} distinct evaluation point(s) of f; a diagnosis needs at least 3 "
                "(or 1 and a failed evaluation). Record the solver's whole run (wrap f before calling it)."
            )
    else:
        seq = source if isinstance(source, IterationSequence) else as_sequence(source)
        _from_sequence(seq, t)
    if f is not None:
        problem = as_problem(f, fprime=fprime)
        t.problem, t.f = problem, problem.f
        if fprime is not None:
            t.fprime = problem.fprime
    elif fprime is not None:
        t.fprime = as_problem(fprime).f
    if t.fprime is not None and t.derivative_source is None:
        t.derivative_source = "user"
    if t.problem is None and t.f is not None and t.kind == "recording":
        try:
            t.problem = as_problem(t.f)
        except ParameterError:
            t.problem = None
    if xtol is not None:
        t.xtol, t.rtol = float(xtol), 0.0
    if ftol is not None:
        t.ftol = float(ftol)
    if t.method is not None:
        from ._methods import METHODS

        cls = METHODS.get(t.method)
        if cls is not None:
            t.nominal_order = t.nominal_order or float(cls.nominal_order)
            t.evals_per_step = t.evals_per_step or float(cls.evals_per_step)
    if t.kind != "run" and t.evals is not None and len(t.evals) >= 3:
        d = np.diff(t.evals)
        t.evals_per_step = float(np.median(d)) if len(d) else t.evals_per_step
    return t
