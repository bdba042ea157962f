"""The small interface every method shares: ``Start``, ``Step``, ``Halt`` and ``Method``.

A method is an object that holds settings. ``steps(ev, start)`` is a
generator that yields one :class:`Step` per iteration; it calls ``ev.f``,
``ev.df`` and ``ev.d2f`` for every evaluation (the evaluator records them
and enforces budgets). The driver in ``_session.py`` owns tolerances and
budgets; methods never stop on their own except by raising :class:`Halt`
when they cannot go on (a zero derivative, say).

Methods must be written with plain arithmetic and comparisons (no
``math.*`` calls, no ``float()``) so that the same code runs on floats,
complex numbers and mpmath numbers.
"""

from __future__ import annotations

import math
from collections.abc import Iterator
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any, ClassVar

from ._models import LocalModel

if TYPE_CHECKING:
    from ._evaluate import Evaluator

__all__ = ["Halt", "Method", "Start", "Step", "midpoint", "same_sign"]

Number = Any  # float, complex or mpmath.mpf; kept loose on purpose


@dataclass(frozen=True)
class Start:
    """Where a run begins: the starting points and f at each (evaluated by the driver).

    For bracketing methods ``xs`` is ``(a, b)`` with a sign change.
    """

    xs: tuple[Number, ...]
    fs: tuple[Number, ...]


@dataclass(frozen=True)
class Step:
    """One iteration: the new point, what the method assumed, and why.

    Attributes
    ----------
    x, fx : the new iterate and f there.
    model : the local model the step used (tangent, chord, parabola, ...).
    reason : one sentence: what the method did and, on a fallback, why.
    bracket, bracket_before : the bracket after and before the step
        (bracketing methods only).
    best : the method's best root estimate after this step.
    index : step number (1 for the first step).
    evals : evaluations used so far, the starts included.
    seconds : wall time so far.
    """

    x: Number
    fx: Number
    model: LocalModel
    reason: str
    bracket: tuple[Number, Number] | None = None
    bracket_before: tuple[Number, Number] | None = None
    best: Number = None
    index: int = 0
    evals: int = 0
    seconds: float = 0.0

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready: NaN and infinities become None, a complex number ``[re, im]`` (also inside lists)."""

        def num(v: Any) -> Any:
            if v is None or isinstance(v, str):
                return v
            if isinstance(v, (list, tuple)):
                return [num(u) for u in v]
            try:
                f = float(v)
            except (TypeError, ValueError, OverflowError):
                try:
                    z = complex(v)
                except (TypeError, ValueError, OverflowError):
                    return None
                return [num(z.real), num(z.imag)]
            return f if math.isfinite(f) else None

        return {
            "index": self.index,
            "x": num(self.x),
            "fx": num(self.fx),
            "model": {k: num(v) for k, v in self.model.to_dict().items()},
            "reason": self.reason,
            "bracket": None if self.bracket is None else [num(self.bracket[0]), num(self.bracket[1])],
            "best": num(self.best),
            "evals": self.evals,
            "seconds": self.seconds,
        }


class Halt(Exception):
    """Raised inside a run when it cannot go on; the driver turns it into a stop reason.

    ``reason`` is a stop-reason code (see ``convdiag.core._session.STOP_REASONS``).
    """

    def __init__(
        self,
        reason: str,
        message: str,
        *,
        advice: str = "",
        x: Number = None,
        evaluation: int | None = None,
    ) -> None:
        super().__init__(message)
        self.reason = reason
        self.message = message
        self.advice = advice
        self.x = x
        self.evaluation = evaluation


class Method:
    """Base class of the steppable methods.

    Subclasses set the class attributes and implement :meth:`steps`.

    Attributes
    ----------
    name : the name used on the command line.
    nominal_order : the theoretical order of convergence at a simple root.
    evals_per_step : function evaluations one step needs (f and f' each count).
    needs_bracket : whether the method starts from a sign-changing bracket.
    n_starts : how many starting points an open method uses.
    derivatives : how many derivatives a step needs (0, 1 or 2).
    stops_on_step : the step-size rule applies (bracketing methods also stop
        on the bracket width; a method whose stopping rule is the width
        alone sets this to False).
    """

    name: ClassVar[str] = ""
    title: ClassVar[str] = ""
    nominal_order: ClassVar[float] = 1.0
    evals_per_step: ClassVar[int] = 1
    needs_bracket: ClassVar[bool] = False
    n_starts: ClassVar[int] = 1
    derivatives: ClassVar[int] = 0
    stops_on_step: ClassVar[bool] = True

    def steps(self, ev: Evaluator, start: Start) -> Iterator[Step]:
        raise NotImplementedError

    @classmethod
    def efficiency_index(cls) -> float:
        """Ostrowski's efficiency index p^(1/d), d evaluations per step."""
        return float(cls.nominal_order ** (1.0 / cls.evals_per_step))

    def __repr__(self) -> str:
        return f"{type(self).__name__}()"


def midpoint(a: Number, b: Number) -> Number:
    """(a + b) / 2 without overflow on huge brackets (works for floats and mpmath)."""
    d = b - a
    if d - d != 0:  # b - a overflowed to infinity
        return a / 2 + b / 2
    return a + d / 2


def same_sign(a: Number, b: Number) -> bool:
    """True when a and b are both > 0 or both < 0 (works for floats and mpmath)."""
    return bool((a > 0 and b > 0) or (a < 0 and b < 0))
