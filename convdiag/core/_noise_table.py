"""One sample of f and its verdict: Moré and Wild's difference table and the "h too large" pre-check.

:func:`_attempt` evaluates f at equally spaced points and judges the sample
(noise found, spacing too small or too large, confirmation needed, failed);
:func:`~convdiag.core._noise.estimate_noise` chooses the spacings and the
final answer. The choices are explained in the notes of :mod:`convdiag.core._noise`.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any, Literal

import numpy as np

from ._evallog import STATUS_OK, classify_value

FloatArray = np.ndarray[Any, np.dtype[np.float64]]

EPS = 2.220446049250313e-16
#: Relative spread above which the spacing is too large (Moré and Wild's 0.1).
SPREAD_LIMIT = 0.1
#: Three consecutive difference orders must agree within this factor (Moré and Wild's 4).
AGREE_FACTOR = 4.0
#: A level within this many times the rounding level counts as "no noise" (common practice, no source).
ROUNDING_FACTOR = 100.0


def _difference_table(fvals: FloatArray) -> tuple[str, float, int]:
    """Moré and Wild's test on one sample: ``(status, level, order)``, values scaled to avoid overflow."""
    n = fvals.size
    if np.count_nonzero(np.diff(fvals) == 0.0) >= n / 2:
        return "h-too-small", math.nan, 0
    scale = float(np.max(np.abs(fvals)))
    g = fvals / scale
    levels = np.empty(n - 1)
    both_signs = np.zeros(n - 1, dtype=bool)
    gamma = 1.0
    for j in range(1, n):
        d = np.diff(g, n=j)
        gamma *= j / (2.0 * (2 * j - 1))  # gamma_j = (j!)^2 / (2j)!: 1/2, 1/6, 1/20, ...
        levels[j - 1] = math.sqrt(gamma * float(np.mean(d * d)))
        both_signs[j - 1] = float(d.min()) < 0.0 < float(d.max())
    for k in range(1, n - 2):
        window = levels[k - 1 : k + 2]
        if window.max() <= AGREE_FACTOR * window.min() and both_signs[k - 1]:
            return "ok", float(levels[k - 1]) * scale, k
    return "h-too-large", math.nan, 0


def _precheck(fvals: FloatArray) -> Literal["pass", "too-large", "confirm"]:
    """The "h too large" pre-check, usable near a root (module docstring, "Near a root").

    "pass": values within 10 % (Moré and Wild), or else first differences
    within 10 %; "confirm": first differences of both signs, check at h/100.
    """
    fmin, fmax = float(fvals.min()), float(fvals.max())
    if fmax - fmin <= SPREAD_LIMIT * max(abs(fmin), abs(fmax)):
        return "pass"
    d1 = np.diff(fvals)
    dmin, dmax = float(d1.min()), float(d1.max())
    if dmin < 0.0 < dmax:
        return "confirm"
    return "pass" if dmax - dmin <= SPREAD_LIMIT * max(abs(dmin), abs(dmax)) else "too-large"


@dataclass(frozen=True)
class _Attempt:  # one sample and its verdict
    spacing: float
    points: tuple[float, ...]
    values: tuple[float, ...]
    status: str  # ok, no-noise, h-too-small, h-too-large, unconfirmed, confirms, failed
    level: float = math.nan  # the difference table's level, also when unconfirmed
    order: int = 0
    rounding: float = math.nan
    failure: str = ""


def _attempt(call: Callable[[float], Any], x: float, spacing: float, offsets: FloatArray) -> _Attempt:
    """Evaluate one sample and judge it; the user's exceptions become a "failed" attempt."""
    points = tuple(float(x + s * spacing) for s in offsets)
    values: list[float] = []
    for i, p in enumerate(points):
        try:
            raw = call(p)
        except Exception as exc:  # noqa: BLE001 - the user's code: any exception becomes a finding
            failure = f"f raised {type(exc).__name__}: {exc}"
        else:
            v, state, why = classify_value(raw)
            if state == STATUS_OK:
                values.append(v)
                continue
            failure = f"f {why}"
        message = (
            f"{failure} at x={p!r} (sample point {i + 1} of {len(points)}, spacing {spacing:.3g}); "
            "no noise estimate; try another point or a smaller spacing h."
        )
        return _Attempt(spacing, points[: len(values)], tuple(values), "failed", failure=message)
    fvals = np.asarray(values)
    slope = (values[-1] - values[0]) / (points[-1] - points[0]) if points[-1] != points[0] else 0.0
    rounding = EPS * max(float(np.max(np.abs(fvals))), abs(x) * abs(slope))
    table, level, order = _difference_table(fvals)
    if table == "h-too-small":
        return _Attempt(spacing, points, tuple(values), table, rounding=rounding)
    check = _precheck(fvals)
    if check == "too-large" or table == "h-too-large":
        status = "h-too-large"
    elif check == "confirm":
        status = "unconfirmed"
    else:
        status = "no-noise" if level <= ROUNDING_FACTOR * rounding else "ok"
    return _Attempt(spacing, points, tuple(values), status, level, order, rounding)
