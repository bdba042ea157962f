"""The driver: owns tolerances and budgets, steps a method forward and back.

:class:`Session` evaluates the starts, then pulls steps from the method's
generator on demand, keeping every step so a viewer can move back and
forth. :func:`solve` runs a session to the end and returns the
:class:`~convdiag.core._run.Run`. The arguments are checked in ``_arguments``.
"""

from __future__ import annotations

import contextlib
import math
from collections.abc import Generator, Sequence
from typing import Any

from ..errors import BracketError
from ._arguments import EPS, _validate_settings, session_arguments
from ._evaluate import Arithmetic, Evaluator
from ._problem import Problem
from ._run import CONVERGED, STOP_REASONS, Failure, Run, Settings
from ._step import Halt, Method, Start, Step, midpoint, same_sign

__all__ = ["Session", "solve", "start_session"]
# Imported from here by the vector and sweep drivers; listed so the re-export is explicit (mypy --strict).
__all__ += ["EPS", "_validate_settings"]


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
    m, problem, starts, br, settings, arithmetic, notes = session_arguments(
        f, method, start=start, bracket=bracket, fprime=fprime, fprime2=fprime2, params=params, xtol=xtol, rtol=rtol,
        ftol=ftol, max_evals=max_evals, max_time=max_time, max_steps=max_steps, digits=digits)
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
    session = start_session(f, method, start=start, bracket=bracket, fprime=fprime, fprime2=fprime2, params=params,
                            xtol=xtol, rtol=rtol, ftol=ftol, max_evals=max_evals, max_time=max_time,
                            max_steps=max_steps, digits=digits)
    return session.run_to_end()
