"""The evaluations of a bracket search: every point counted, every call recorded, the budget enforced.

:class:`Sampler` is what :func:`~convdiag.core._brackets.find_brackets` and the
local classifiers (``_signchange``, ``_edges``) call in place of f: one point
at a time, or an array in one call when f accepts arrays.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from time import perf_counter
from typing import Any

import numpy as np
from numpy.typing import NDArray

from ._evallog import DF, EvalLog, F, _Raised, build_log, classify_value
from ._problem import Problem
from ._step import Halt

__all__ = ["Sampler"]


class Sampler:
    """Evaluates f for a search: counts every point, records every call, stops at the budget.

    Calling it evaluates one point and returns a float: NaN where f raised or
    returned something that is not a real number, ±inf kept. The budgets
    raise ``Halt("max-evals")`` and ``Halt("max-time")`` (checked before each
    call). A KeyboardInterrupt inside f is recorded and turned into
    ``Halt("interrupted")``; from then on every evaluation is refused the same
    way, so the search wraps up with what it found. :meth:`many` evaluates an
    array in one call when f accepts arrays (checked once on two points), else
    point by point.
    """

    def __init__(self, problem: Problem, max_evals: int, max_time: float | None = None) -> None:
        self.f = problem.f
        self.fprime = problem.fprime
        self.derivative_source = problem.derivative_source if problem.fprime is not None else ""
        self.max_evals = max_evals
        self.max_time = max_time
        self.timed_out = False
        self.interrupted = False
        self.vector: bool | None = True if problem.is_expression else None
        self.rows: list[tuple[int, Any, Any, float, float]] = []
        self.t0 = perf_counter()
        self.count = 0
        self.exhausted = False
        self.last_problem = ""
        self.notes: list[str] = []

    @property
    def remaining(self) -> int:
        return max(0, self.max_evals - self.count)

    def _budget(self, n: int = 1) -> None:
        if self.interrupted:
            raise Halt("interrupted", "The search was interrupted (KeyboardInterrupt).")
        if self.count + n > self.max_evals:
            self.exhausted = True
            raise Halt("max-evals", f"The evaluation budget of {self.max_evals} ran out.")
        if self.max_time is not None and perf_counter() - self.t0 > self.max_time:
            self.exhausted = self.timed_out = True
            raise Halt("max-time", f"The time budget of {self.max_time:g} s ran out.")

    def _call(self, fn: Callable[[Any], Any], x: Any, kind: int) -> Any:
        t = perf_counter()
        try:
            y = fn(x)
        except Exception as exc:  # noqa: BLE001 - the user's code failed here: an undefined point, recorded
            self.rows.append((kind, x, _Raised(exc), t, perf_counter()))
            self.last_problem = f"raised {type(exc).__name__}: {exc}"
            return _Raised(exc)
        except KeyboardInterrupt as exc:  # recorded; the search wraps up with what it found
            self.rows.append((kind, x, _Raised(exc), t, perf_counter()))
            self.interrupted = True
            raise Halt("interrupted", "The search was interrupted (KeyboardInterrupt).") from None
        except BaseException as exc:  # SystemExit and the like: record it, then let it through
            self.rows.append((kind, x, _Raised(exc), t, perf_counter()))
            raise
        self.rows.append((kind, x, y, t, perf_counter()))
        return y

    def _value(self, y: Any) -> float:
        v, status, note = classify_value(y)
        if status in ("ok", "inf"):
            return v
        self.last_problem = note
        return math.nan

    def __call__(self, x: float) -> float:
        self._budget()
        self.count += 1
        return self._value(self._call(self.f, x, F))

    def df(self, x: float) -> float:
        """f'(x) from the problem (given or symbolic), recorded and counted; NaN if there is none."""
        if self.fprime is None:
            return math.nan
        self._budget()
        self.count += 1
        return self._value(self._call(self.fprime, x, DF))

    def _array(self, xs: NDArray[np.float64]) -> NDArray[np.float64] | None:
        self.count += len(xs)
        y = self._call(self.f, xs.copy(), F)
        if isinstance(y, _Raised):
            return None
        try:
            ya = np.asarray(y)
        except Exception:  # noqa: BLE001 - an object numpy cannot take: not vectorised
            return None
        if ya.shape != xs.shape or ya.dtype.kind not in "fiuc":
            return None
        return np.array([self._value(v) for v in ya.tolist()], dtype=np.float64)

    def many(self, xs: Sequence[float] | NDArray[np.float64]) -> NDArray[np.float64]:
        """f at every point of ``xs`` (raises Halt if the budget cannot cover them all)."""
        xs = np.asarray(xs, dtype=np.float64)
        self._budget(len(xs))
        if len(xs) >= 2 and self.vector is not False:
            if self.vector is None:
                self._budget(len(xs) + 2)
                first = self._array(xs[:2])
                self.vector = first is not None
                if first is None:
                    self.notes.append("f did not accept an array (tried once on two points); evaluated point by point")
                elif len(xs) == 2:
                    return first
                else:
                    rest = self._array(xs[2:])
                    if rest is not None:
                        return np.concatenate([first, rest])
            else:
                out = self._array(xs)
                if out is not None:
                    return out
            if self.vector:
                self._budget(len(xs))
                self.notes.append("an array call of f failed; that batch was evaluated point by point")
        return np.array([self(float(x)) for x in xs], dtype=np.float64)

    def log(self) -> EvalLog:
        return build_log(self.rows, self.t0, source="find_brackets")
