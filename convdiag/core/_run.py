"""The record of one run: settings, every step, every evaluation, and why it stopped."""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from numpy.typing import NDArray

from ..errors import EvaluationError
from ._record import EvalLog
from ._show import Showable
from ._step import Step

__all__ = ["CONVERGED", "STOP_REASONS", "Failure", "Run", "Settings"]

# Stop reasons. The first four mean the run converged by its own rule.
STOP_REASONS: dict[str, str] = {
    "exact-zero": "f is exactly zero at the last iterate",
    "residual-small": "|f| fell below the residual tolerance",
    "step-small": "the step fell below the step tolerance",
    "bracket-small": "the bracket shrank below the tolerance (or to adjacent floating-point numbers)",
    "max-evals": "the evaluation budget ran out",
    "max-time": "the time budget ran out",
    "max-steps": "the step budget ran out",
    "function-raised": "the function raised an exception",
    "nonfinite-value": "the function returned NaN or infinity",
    "bad-value": "the function returned something that is not a real number",
    "iterate-overflow": "the next iterate was not a finite number",
    "zero-derivative": "the derivative was zero, so the step is undefined",
    "flat-secant": "two points had equal values of f, so the interpolation is undefined",
    "interrupted": "interrupted by the user (KeyboardInterrupt)",
}
CONVERGED = frozenset({"exact-zero", "residual-small", "step-small", "bracket-small"})


@dataclass(frozen=True)
class Settings:
    """Stopping rules of a run.

    A run stops when f is exactly zero, when |f(x)| <= ``ftol``, when the
    step (open methods) or the bracket width (bracketing methods) is at or
    below ``xtol + rtol * |x|``, or when a budget (``max_evals``,
    ``max_time``, ``max_steps``) runs out.
    """

    xtol: float = 0.0
    rtol: float = 4 * 2.220446049250313e-16
    ftol: float = 0.0
    max_evals: int = 100
    max_time: float | None = None
    max_steps: int | None = None

    def to_dict(self) -> dict[str, Any]:
        return {
            "xtol": self.xtol,
            "rtol": self.rtol,
            "ftol": self.ftol,
            "max_evals": self.max_evals,
            "max_time": self.max_time,
            "max_steps": self.max_steps,
        }


@dataclass(frozen=True)
class Failure:
    """Why a run could not go on: the stop reason, a sentence, and what to try."""

    reason: str
    message: str
    advice: str = ""
    evaluation: int | None = None
    x: float | None = None

    def to_dict(self) -> dict[str, Any]:
        return {
            "reason": self.reason,
            "message": self.message,
            "advice": self.advice,
            "evaluation": self.evaluation,
            "x": self.x if self.x is not None and math.isfinite(self.x) else None,  # JSON-ready
        }


def _float(v: Any) -> float:
    try:
        return float(v)
    except (TypeError, ValueError, OverflowError):
        try:
            return float(complex(v).real)
        except (TypeError, ValueError, OverflowError):
            return math.nan


@dataclass(frozen=True, repr=False)
class Run(Showable):
    """Everything one run did.

    Attributes
    ----------
    method, method_title : the method's name and readable title.
    problem : label of the function.
    starts, start_values : starting points and f there.
    bracket : the initial bracket, if the run used one.
    steps : every :class:`Step`, in order.
    evals : :class:`EvalLog` of every evaluation (starts, derivatives, all).
    stop_reason : one of ``STOP_REASONS``.
    converged : the run met its own stopping rule.
    root : best root estimate (last best iterate; for a failed run the
        finite iterate with the smallest |f|).
    message, advice : why it stopped and, if it failed, what to try.
    derivative_source : where f' came from (if the method used it).
    arithmetic, digits : number type of the run ("real", "complex", "mpmath").
    """

    method: str
    method_title: str
    problem: str
    starts: tuple[Any, ...]
    start_values: tuple[Any, ...]
    bracket: tuple[Any, Any] | None
    settings: Settings
    steps: tuple[Step, ...]
    evals: EvalLog
    stop_reason: str
    converged: bool
    root: Any
    message: str
    failure: Failure | None = None
    derivative_source: str | None = None
    second_derivative_source: str | None = None
    notes: tuple[str, ...] = ()
    arithmetic: str = "real"
    digits: int | None = None
    nominal_order: float = math.nan
    evals_per_step: int = 1
    params: dict[str, float] = field(default_factory=dict)
    source: Any = field(default=None, compare=False)  # the Problem, for replays and diagnosis

    # -- sequences ------------------------------------------------------------
    @property
    def iterates(self) -> NDArray[np.float64]:
        """Starting points followed by each step's new point (real parts for complex runs)."""
        return np.array([_float(v) for v in (*self.starts, *(s.x for s in self.steps))], dtype=np.float64)

    @property
    def values(self) -> NDArray[np.float64]:
        """f at each of :attr:`iterates`."""
        return np.array([_float(v) for v in (*self.start_values, *(s.fx for s in self.steps))], dtype=np.float64)

    @property
    def iterates_exact(self) -> list[Any]:
        """Iterates in the run's own number type (mpmath numbers for a high-precision run)."""
        return [*self.starts, *(s.x for s in self.steps)]

    @property
    def values_exact(self) -> list[Any]:
        return [*self.start_values, *(s.fx for s in self.steps)]

    @property
    def n_starts(self) -> int:
        return len(self.starts)

    @property
    def evaluations(self) -> int:
        return len(self.evals)

    @property
    def evals_at_iterates(self) -> NDArray[np.int64]:
        """Cumulative evaluations when each iterate became known."""
        return np.array([*range(1, self.n_starts + 1), *(s.evals for s in self.steps)], dtype=np.int64)

    @property
    def brackets(self) -> NDArray[np.float64]:
        """Bracket after each step as an (n, 2) array (empty for open methods)."""
        rows = [(_float(s.bracket[0]), _float(s.bracket[1])) for s in self.steps if s.bracket is not None]
        return np.array(rows, dtype=np.float64).reshape(-1, 2)

    # -- actions ----------------------------------------------------------------
    def raise_for_failure(self) -> Run:
        """Raise :class:`EvaluationError` (with this run attached) if the function failed."""
        if self.failure is not None and self.stop_reason in (
            "function-raised",
            "nonfinite-value",
            "bad-value",
        ):
            raise EvaluationError(f"{self.failure.message} {self.failure.advice}", run=self)
        return self

    def to_dict(self) -> dict[str, Any]:
        """A JSON-ready dict; ``method``, ``evaluations``, ``iterates``, ``values``,
        ``stop_reason`` and ``root`` are stable keys."""

        def clean(v: Any) -> Any:
            f = _float(v)
            return f if math.isfinite(f) else None

        return {
            "method": self.method,
            "problem": self.problem,
            "evaluations": self.evaluations,
            "iterates": [clean(v) for v in self.iterates],
            "values": [clean(v) for v in self.values],
            "stop_reason": self.stop_reason,
            "converged": self.converged,
            "root": clean(self.root),
            "message": self.message,
            "failure": None if self.failure is None else self.failure.to_dict(),
            "starts": [clean(v) for v in self.starts],
            "bracket": None if self.bracket is None else [clean(v) for v in self.bracket],
            "settings": self.settings.to_dict(),
            "derivative_source": self.derivative_source,
            "steps": [s.to_dict() for s in self.steps],
            "notes": list(self.notes),
            "arithmetic": self.arithmetic,
            "params": dict(self.params),
        }

    def __repr__(self) -> str:
        state = "converged" if self.converged else f"stopped: {self.stop_reason}"
        root = _float(self.root)
        return (
            f"<Run {self.method}: {state}, {len(self.steps)} steps, "
            f"{self.evaluations} evaluations, root≈{root:.6g}>"
        )
