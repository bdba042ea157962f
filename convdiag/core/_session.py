"""The driver: owns tolerances and budgets, steps a method forward and back.

:class:`Session` evaluates the starts, then pulls steps from the method's
generator on demand, keeping every step so a viewer can move back and
forth. :func:`solve` runs a session to the end and returns the
:class:`~convdiag.core._run.Run`.
"""

from __future__ import annotations

import contextlib
import math
import numbers
from collections.abc import Generator, Sequence
from typing import Any

from ..errors import BracketError, ParameterError
from ._evaluate import Arithmetic, Evaluator
from ._methods import METHODS
from ._problem import Problem, as_problem
from ._run import CONVERGED, STOP_REASONS, Failure, Run, Settings
from ._step import Halt, Method, Start, Step, midpoint, same_sign

__all__ = ["Session", "solve", "start_session"]

EPS = 2.220446049250313e-16


def _method(method: str | Method | type[Method], owner: str) -> Method:
    if isinstance(method, Method):
        return method
    if isinstance(method, type) and issubclass(method, Method):
        return method()
    if isinstance(method, str) and method in METHODS:
        return METHODS[method]()
    raise ParameterError(
        f"The 'method' parameter of {owner} must be one of {', '.join(sorted(METHODS))}. Got {method!r} instead."
    )


def _number(v: Any, name: str, owner: str, *, allow_complex: bool = False) -> Any:
    ok = isinstance(v, numbers.Real) and not isinstance(v, bool)
    if allow_complex and isinstance(v, numbers.Complex) and not isinstance(v, bool):
        ok = True
    if not ok and type(v).__module__.startswith("mpmath"):
        ok = True
    if not ok:
        raise ParameterError.expected(name, owner, "a finite number", v)
    z = complex(v)
    if not (math.isfinite(z.real) and math.isfinite(z.imag)):
        raise ParameterError.expected(name, owner, "a finite number", v)
    return v


def _validate_settings(
    xtol: float, rtol: float, ftol: float, max_evals: int, max_time: float | None, max_steps: int | None, owner: str
) -> Settings:
    for name, val in (("xtol", xtol), ("rtol", rtol), ("ftol", ftol)):
        if not isinstance(val, numbers.Real) or isinstance(val, bool) or not (val >= 0 and math.isfinite(val)):
            raise ParameterError.expected(name, owner, "a finite float >= 0", val)
    if not isinstance(max_evals, numbers.Integral) or isinstance(max_evals, bool) or max_evals < 1:
        raise ParameterError.expected("max_evals", owner, "an int >= 1", max_evals)
    if max_time is not None and (
        not isinstance(max_time, numbers.Real) or isinstance(max_time, bool) or not max_time > 0
    ):
        raise ParameterError.expected("max_time", owner, "a float > 0 or None", max_time)
    if max_steps is not None and (
        not isinstance(max_steps, numbers.Integral) or isinstance(max_steps, bool) or max_steps < 1
    ):
        raise ParameterError.expected("max_steps", owner, "an int >= 1 or None", max_steps)
    return Settings(float(xtol), float(rtol), float(ftol), int(max_evals), max_time, max_steps)


def _default_starts(m: Method, x0: Any, n: int) -> list[Any]:
    d = 1e-4 * max(1, abs(x0))
    return [x0 + k * d for k in range(n)]


def resolve_starts(
    m: Method, start: Any, bracket: Sequence[Any] | None, owner: str, *, allow_complex: bool
) -> tuple[list[Any], tuple[Any, Any] | None, list[str]]:
    """Starting points for the method from what the user gave. Returns (points, bracket, notes)."""
    notes: list[str] = []
    if start is None:
        starts: list[Any] = []
    elif isinstance(start, (list, tuple)):
        starts = [_number(v, "start", owner, allow_complex=allow_complex) for v in start]
    else:
        starts = [_number(start, "start", owner, allow_complex=allow_complex)]
    br: tuple[Any, Any] | None = None
    if bracket is not None:
        if not isinstance(bracket, (list, tuple)) or len(bracket) != 2:
            raise ParameterError.expected("bracket", owner, "a pair (a, b)", bracket)
        a, b = (_number(v, "bracket", owner) for v in bracket)
        if a == b:
            raise ParameterError(f"The 'bracket' parameter of {owner} must have a < b. Got a = b = {a!r}.")
        if a > b:
            a, b = b, a
            notes.append("the bracket was given as (b, a); used (a, b)")
        br = (a, b)
    if m.needs_bracket:
        if br is None and len(starts) >= 2:
            a, b = sorted(starts[:2])
            if a == b:
                raise ParameterError(f"{m.name} needs a bracket with a < b; both starts are {a!r}.")
            br = (a, b)
        if br is None:
            raise ParameterError(
                f"{m.name} needs a bracket (a, b) where f changes sign; got "
                f"{'only the start ' + repr(starts[0]) if starts else 'no bracket'}. "
                "Pass bracket=(a, b) (command line: --bracket A B), or use convdiag.find_brackets "
                "to find one."
            )
        return list(br), br, notes
    if not starts:
        if br is None:
            raise ParameterError(
                f"{m.name} needs a start: pass start=x0 (command line: --start X) or bracket=(a, b)."
            )
        a, b = br
        starts = {1: [midpoint(a, b)], 2: [a, b], 3: [a, b, midpoint(a, b)]}[m.n_starts]
    if len(starts) > m.n_starts:
        raise ParameterError(f"{m.name} takes at most {m.n_starts} start(s); got {len(starts)}: {starts!r}.")
    if len(starts) < m.n_starts:
        extra = _default_starts(m, starts[-1], m.n_starts - len(starts) + 1)[1:]
        notes.append(f"{m.name} needs {m.n_starts} starts; added {', '.join(f'{v:.6g}' for v in extra)}")
        starts = starts + extra
    if len(set(starts)) < len(starts):
        raise ParameterError(f"The starts of {m.name} must be distinct. Got {starts!r}.")
    return starts, br, notes


class Session:
    """Step a method through a problem one iteration at a time.

    Use :func:`start_session` to build one. ``forward()`` computes the next
    step (or replays one already computed after ``back()``), ``back()``
    moves the cursor back, ``run_to_end()`` finishes, ``reset()`` moves the
    cursor to the start. Computed steps are never thrown away.
    """

    def __init__(
        self,
        problem: Problem,
        method: Method,
        starts: list[Any],
        bracket: tuple[Any, Any] | None,
        settings: Settings,
        *,
        arithmetic: Arithmetic = "real",
        digits: int | None = None,
        notes: Sequence[str] = (),
    ) -> None:
        self.problem = problem
        self.method = method
        self.settings = settings
        self.bracket = bracket
        self.arithmetic = arithmetic
        self.digits = digits
        self._notes = list(notes)
        self.ev = Evaluator(problem, max_evals=settings.max_evals, max_time=settings.max_time, arithmetic=arithmetic)
        self.steps: list[Step] = []
        self.position = 0
        self.stop_reason: str | None = None
        self.failure: Failure | None = None
        self.starts: list[Any] = list(starts)
        self.start_values: list[Any] = []
        self._gen: Generator[Step, None, None] | None = None
        self._begin()

    # -- internals ------------------------------------------------------------
    def _precision(self) -> contextlib.AbstractContextManager[Any]:
        """mpmath's working precision for high-precision runs (never changed globally)."""
        if self.arithmetic != "mpmath":
            return contextlib.nullcontext()
        import mpmath

        return mpmath.workdps(self.digits)  # type: ignore[no-any-return]

    def _begin(self) -> None:
        with self._precision():
            self._begin_inner()

    def _begin_inner(self) -> None:
        try:
            for x in self.starts:
                self.start_values.append(self.ev.f(x))
        except Halt as h:
            self.starts = self.starts[: len(self.start_values)]
            self._halt(h)
            return
        except KeyboardInterrupt:
            self.starts = self.starts[: len(self.start_values)]
            self._finish("interrupted")
            return
        if self.method.needs_bracket:
            (a, b), (fa, fb) = self.starts, self.start_values
            if fa == 0 or fb == 0:
                self._finish("exact-zero")
                return
            if same_sign(fa, fb):
                raise BracketError(
                    f"f has the same sign at both ends of [{a!r}, {b!r}] (f({a!r}) = {float(fa):.6g}, "
                    f"f({b!r}) = {float(fb):.6g}), so {self.method.name} cannot start. Try "
                    f"convdiag.find_brackets(f, domain=({a!r}, {b!r})), or an open method such as newton.",
                    evals=self.ev.log(source=self.method.name),
                )
        elif any(v == 0 for v in self.start_values):
            self._finish("exact-zero")
            return
        self._gen = self.method.steps(self.ev, Start(tuple(self.starts), tuple(self.start_values)))  # type: ignore[assignment]

    def _finish(self, reason: str) -> None:
        self.stop_reason = reason
        if self._gen is not None:
            self._gen.close()
            self._gen = None

    def _halt(self, h: Halt) -> None:
        x: float | None
        try:
            x = None if h.x is None else float(h.x)
        except (TypeError, ValueError, OverflowError):
            x = None
        self.failure = Failure(h.reason, h.message, h.advice, h.evaluation, x)
        self._finish(h.reason)

    def _check_stop(self, step: Step) -> None:
        s = self.settings
        if step.fx == 0:
            self._finish("exact-zero")
            return
        if s.ftol > 0 and abs(step.fx) <= s.ftol:
            self._finish("residual-small")
            return
        if step.bracket is not None:
            a, b = step.bracket
            best = step.best if step.best is not None else step.x
            mid = midpoint(a, b)
            # strict "<", as brentq and scipy.optimize.elementwise.find_root compare
            if (b - a) < s.xtol + s.rtol * abs(best) or mid == a or mid == b:
                self._finish("bracket-small")
                return
        if self.method.stops_on_step:
            prev = self.steps[-2].x if len(self.steps) >= 2 else self.starts[-1]
            if abs(step.x - prev) <= s.xtol + s.rtol * abs(step.x):
                self._finish("step-small")
                return
        if s.max_steps is not None and len(self.steps) >= s.max_steps:
            self._finish("max-steps")

    def _advance(self) -> Step | None:
        with self._precision():
            return self._advance_inner()

    def _advance_inner(self) -> Step | None:
        if self._gen is None:
            return None
        try:
            step = next(self._gen)
        except Halt as h:
            self._halt(h)
            return None
        except StopIteration:
            self._finish("max-steps")
            return None
        except KeyboardInterrupt:
            self._finish("interrupted")
            return None
        except (ZeroDivisionError, OverflowError, ArithmeticError) as exc:
            self._halt(
                Halt(
                    "iterate-overflow",
                    f"{self.method.name} could not compute its next point: {type(exc).__name__}: {exc}.",
                    advice="Start closer to the root, or use a bracketing method.",
                )
            )
            return None
        step = _stamp(step, len(self.steps) + 1, self.ev.count, self.ev.elapsed)
        self.steps.append(step)
        self._check_stop(step)
        return step

    # -- public ------------------------------------------------------------------
    @property
    def finished(self) -> bool:
        """No more steps can be computed."""
        return self._gen is None

    @property
    def at_end(self) -> bool:
        return self.finished and self.position == len(self.steps)

    @property
    def current(self) -> Step | None:
        """The step the cursor is on (None before the first step)."""
        return self.steps[self.position - 1] if self.position > 0 else None

    def forward(self) -> Step | None:
        """Move one step forward, computing it if needed. Returns None at the end."""
        if self.position < len(self.steps):
            self.position += 1
            return self.steps[self.position - 1]
        step = self._advance()
        if step is not None:
            self.position = len(self.steps)
        return step

    def back(self) -> Step | None:
        """Move the cursor one step back; returns the step now current."""
        if self.position > 0:
            self.position -= 1
        return self.current

    def reset(self) -> None:
        """Move the cursor back to the starts (computed steps are kept)."""
        self.position = 0

    def run_to_end(self) -> Run:
        """Compute every remaining step and move the cursor to the last one."""
        try:
            while self._gen is not None:
                self._advance()
        except KeyboardInterrupt:
            self._finish("interrupted")
        self.position = len(self.steps)
        return self.run

    @property
    def run(self) -> Run:
        """A :class:`Run` of everything computed so far."""
        reason = self.stop_reason or "in-progress"
        converged = reason in CONVERGED
        root = self._best()
        if reason == "in-progress":
            message = f"{len(self.steps)} steps computed so far; the run has not stopped yet."
        else:
            message = STOP_REASONS[reason]
            if self.failure is not None:
                message = self.failure.message
        return Run(
            method=self.method.name,
            method_title=self.method.title,
            problem=self.problem.label,
            starts=tuple(self.starts),
            start_values=tuple(self.start_values),
            bracket=self.bracket,
            settings=self.settings,
            steps=tuple(self.steps),
            evals=self.ev.log(source=self.method.name),
            stop_reason=reason,
            converged=converged,
            root=root,
            message=message,
            failure=self.failure,
            derivative_source=self.ev.derivative_source if self.method.derivatives >= 1 else None,
            second_derivative_source=self.ev.second_derivative_source if self.method.derivatives >= 2 else None,
            notes=tuple(self._notes + self.ev.notes),
            arithmetic=self.arithmetic,
            digits=self.digits,
            nominal_order=self.method.nominal_order,
            evals_per_step=self.method.evals_per_step,
            params=dict(self.problem.params),
            source=self.problem,
        )

    def _best(self) -> Any:
        if self.stop_reason in CONVERGED:
            if self.steps:
                last = self.steps[-1]
                return last.best if last.best is not None else last.x
            for x, v in zip(self.starts, self.start_values):
                if v == 0:
                    return x
        pts = list(zip(self.starts, self.start_values)) + [(s.x, s.fx) for s in self.steps]
        finite = [(abs(v), i, x) for i, (x, v) in enumerate(pts) if _finite(v) and _finite(x)]
        if not finite:
            return math.nan
        return min(finite)[2]


def _finite(v: Any) -> bool:
    try:
        return bool(abs(v) < math.inf)
    except TypeError:
        return False


def _stamp(step: Step, index: int, evals: int, seconds: float) -> Step:
    return Step(
        step.x,
        step.fx,
        step.model,
        step.reason,
        step.bracket,
        step.bracket_before,
        step.best if step.best is not None else step.x,
        index,
        evals,
        seconds,
    )


def start_session(
    f: Any,
    method: str | Method | type[Method] = "newton",
    *,
    start: Any = None,
    bracket: Sequence[float] | None = None,
    fprime: Any = None,
    fprime2: Any = None,
    params: dict[str, float] | None = None,
    xtol: float = 0.0,
    rtol: float | None = None,
    ftol: float = 0.0,
    max_evals: int = 100,
    max_time: float | None = None,
    max_steps: int | None = None,
    digits: int | None = None,
) -> Session:
    """Build a :class:`Session`; the arguments are those of :func:`solve`."""
    owner = "solve"
    m = _method(method, owner)
    problem = as_problem(f, fprime=fprime, fprime2=fprime2, params=params)
    arithmetic: Arithmetic = "real"
    if digits is not None:
        if not isinstance(digits, int) or isinstance(digits, bool) or not 16 <= digits <= 10_000:
            raise ParameterError.expected("digits", owner, "an int between 16 and 10000 or None", digits)
        arithmetic = "mpmath"
    if rtol is None:
        rtol = 4 * EPS if digits is None else 4.0 * 10.0 ** (-digits)
    settings = _validate_settings(xtol, rtol, ftol, max_evals, max_time, max_steps, owner)
    starts, br, notes = resolve_starts(m, start, bracket, owner, allow_complex=not m.needs_bracket and digits is None)
    if any(isinstance(v, complex) or (hasattr(v, "imag") and v.imag != 0) for v in starts):
        arithmetic = "complex"
        starts = [complex(v) for v in starts]
    if arithmetic == "mpmath":
        import mpmath

        with mpmath.workdps(digits):
            starts = [mpmath.mpf(v) for v in starts]
            if br is not None:
                br = (mpmath.mpf(br[0]), mpmath.mpf(br[1]))
    else:
        starts = [float(v) if arithmetic == "real" else v for v in starts]
    return Session(problem, m, starts, br, settings, arithmetic=arithmetic, digits=digits, notes=notes)


def solve(
    f: Any,
    method: str | Method | type[Method] = "newton",
    *,
    start: Any = None,
    bracket: Sequence[float] | None = None,
    fprime: Any = None,
    fprime2: Any = None,
    params: dict[str, float] | None = None,
    xtol: float = 0.0,
    rtol: float | None = None,
    ftol: float = 0.0,
    max_evals: int = 100,
    max_time: float | None = None,
    max_steps: int | None = None,
    digits: int | None = None,
) -> Run:
    """Run one method on f and return the full record.

    Parameters
    ----------
    f : callable, str or sympy expression
        The function (``f(x)`` or ``f(x, **params)``), or expression text.
    method : str
        ``newton``, ``secant``, ``iqi``, ``bisection``, ``regula-falsi``,
        ``illinois``, ``steffensen``, ``halley`` (and any registered method).
    start : float or sequence of floats, optional
        Starting point(s) of an open method; missing ones are added next to
        the first. Complex starts run in complex arithmetic.
    bracket : (a, b), optional
        A bracket with a sign change (required by bracketing methods).
    fprime, fprime2 : optional
        Derivatives; otherwise symbolic, complex-step or central difference.
    params : dict, optional
        Model parameters passed to ``f``.
    xtol, rtol : float
        Stop when the step (open methods) or bracket width (bracketing
        methods) is at most ``xtol + rtol*|x|``. ``rtol`` defaults to
        4·machine epsilon (4·10^-digits for high-precision runs).
    ftol : float
        Stop when ``|f(x)| <= ftol`` (default 0: only an exact zero).
    max_evals, max_time, max_steps : budgets
        Every evaluation counts (derivatives too).
    digits : int, optional
        Run in mpmath arithmetic with this many significant digits.

    Returns
    -------
    Run
        Never raises because of the user's function: a failure is recorded
        in ``run.failure`` and ``run.stop_reason`` with everything computed
        so far. ``run.raise_for_failure()`` raises if you prefer.

    Raises
    ------
    ParameterError
        A bad argument (non-finite start, unknown method, ...).
    BracketError
        The bracket has no sign change.

    Examples
    --------
    >>> from convdiag import solve
    >>> run = solve("x**3 - 2*x + 2", "newton", start=0.0, max_evals=12)
    >>> run.iterates[:4].tolist()
    [0.0, 1.0, 0.0, 1.0]
    >>> run.stop_reason
    'max-evals'
    """
    session = start_session(
        f,
        method,
        start=start,
        bracket=bracket,
        fprime=fprime,
        fprime2=fprime2,
        params=params,
        xtol=xtol,
        rtol=rtol,
        ftol=ftol,
        max_evals=max_evals,
        max_time=max_time,
        max_steps=max_steps,
        digits=digits,
    )
    return session.run_to_end()
