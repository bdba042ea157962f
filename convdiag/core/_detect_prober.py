"""The diagnosis's budgeted prober: every extra evaluation of f, counted and kept, failures as NaN."""

from __future__ import annotations

import math
from collections.abc import Callable
from typing import Any

import numpy as np

from ._step import Halt

__all__ = ["Prober"]


class Prober:
    """Calls f for the diagnosis: counts, keeps (x, f), turns failures into NaN, enforces a budget.

    When the budget is spent it raises :class:`~convdiag.core._step.Halt` with reason
    ``max-evals`` (the helpers in ``_signchange`` stop cleanly on that).
    """

    def __init__(self, f: Callable[[Any], Any] | None, budget: int, *, enabled: bool = True) -> None:
        self.f = f
        self.budget = budget if (enabled and f is not None) else 0
        self.points: list[tuple[float, float]] = []
        self.count = 0

    @property
    def remaining(self) -> int:
        return max(0, self.budget - self.count)

    @property
    def available(self) -> bool:
        return self.f is not None and self.remaining > 0

    def spend(self, n: int) -> None:
        """Count evaluations made by a library routine that called f directly."""
        self.count += int(n)

    def __call__(self, x: float) -> float:
        from ._record import classify_value

        if self.f is None or self.count >= self.budget:
            raise Halt("max-evals", "the diagnosis's probe budget ran out")
        self.count += 1
        try:
            with np.errstate(all="ignore"):
                y = self.f(x)
        except Exception:  # noqa: BLE001 - the user's code failed here: an undefined point
            v = math.nan
        else:
            v, status, _ = classify_value(y)
            if status not in ("ok", "inf"):
                v = math.nan
        self.points.append((float(x), v))
        return v
