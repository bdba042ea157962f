"""What the step and progress figures share: the explorer's palette, fixed axis labels, f sampled for a curve,
and the sideways parabola of inverse quadratic interpolation drawn over a whole plot."""

from __future__ import annotations

import math
import time
from collections.abc import Callable, Sequence
from typing import Any

import numpy as np
from numpy.typing import NDArray

from ..core._run import _float as _fl

__all__ = ["COLOURS", "FloatArray", "parabola_turn", "sample_curve", "sideways_parabola"]

FloatArray = NDArray[np.float64]
_EMPTY: FloatArray = np.zeros(0)

#: the explorer's palette (ink, model, new point, bracket, earlier points, step size, |f|, error).
COLOURS = {
    "ink": "#243447", "grid": "#d5dbe1", "model": "#d9822b", "new": "#b8336a", "bracket": "#3aa6a0",
    "past": "#8795a3", "start": "#4a6fa5", "step": "#3d6fb6", "resid": "#7d8c2b", "error": "#b8336a",
}


def _fixed_labels(ax: Any, xlabel: str, size: float) -> None:
    """Put the axis labels at fixed places under the tick labels: no layout work on each redraw."""
    ax.set_xlabel(xlabel, fontsize=size)
    height_pt = ax.get_position().height * ax.figure.get_figheight() * 72
    ax.xaxis.set_label_coords(0.5, -(1.7 * size + 5) / max(height_pt, 1.0))
    ax.xaxis.label.set_verticalalignment("top")
    ax.yaxis.set_label_coords(-0.08, 0.5)


# -- f sampled for its curve -------------------------------------------------------------------------
def _one(f: Callable[[Any], Any], x: float) -> float:
    try:
        with np.errstate(all="ignore"):
            return _fl(f(float(x)))
    except Exception:  # noqa: BLE001  (the user's function failed here: a gap in the curve)
        return math.nan


def sample_curve(f: Callable[[Any], Any], lo: float, hi: float, n: int = 300, *,
                 seconds: float = 2.0) -> tuple[FloatArray, FloatArray]:
    """f on ``n`` equally spaced points of [lo, hi]; NaN where f raises or is not a real number.

    A function that does not take arrays is sampled point by point within about ``seconds`` of wall
    time: when the first points show that ``n`` of them would take longer (an inner ODE solve, a
    quadrature), the curve is drawn through fewer points, at least 16.

    Examples
    --------
    >>> xs, ys = sample_curve(lambda x: x * x - 2, 0.0, 2.0, 5)
    >>> ys.tolist()
    [-2.0, -1.75, -1.0, 0.25, 2.0]
    """
    xs = np.linspace(lo, hi, max(int(n), 2))
    ys: FloatArray | None = None
    try:
        with np.errstate(all="ignore"):
            out = np.asarray(f(xs))
        if out.shape == xs.shape and out.dtype.kind in "fiu":
            ys = out.astype(np.float64)
    except Exception:  # noqa: BLE001  (not vectorised: go point by point)
        ys = None
    if ys is None:
        ys = _point_by_point(f, xs, seconds)
        if ys.shape != xs.shape:  # too slow for n points: fewer, still evenly spaced
            xs = np.linspace(lo, hi, ys.shape[0])
            ys = np.array([_one(f, x) for x in xs], dtype=np.float64)
    ys[~np.isfinite(ys)] = np.nan
    return xs, ys


_MIN_SAMPLES = 16


def _point_by_point(f: Callable[[Any], Any], xs: FloatArray, seconds: float) -> FloatArray:
    """f at each of ``xs``; or, when the first few calls show that would exceed ``seconds``, an empty array of the
    length that fits (the caller resamples on that many points)."""
    n, out, t0 = xs.shape[0], [], time.perf_counter()
    for i, x in enumerate(xs):
        out.append(_one(f, x))
        if i == 2 and n > _MIN_SAMPLES:
            per_call = (time.perf_counter() - t0) / 3
            fits = int(seconds / per_call) if per_call > 0 else n
            if fits < n:
                return np.empty(max(_MIN_SAMPLES, fits))
    return np.array(out, dtype=np.float64)


# -- the sideways parabola x = p(y) ------------------------------------------------------------------
def _parabola(xs: Sequence[Any], ys: Sequence[Any]) -> tuple[float, float, float, float] | None:
    """(a, b, x2, y2) with x − x2 = a v² + b v, v = y − y2, through the three points (None if degenerate).

    The third point sits at the origin (no constant term, less cancellation); a and b are expanded from
    the Lagrange form through the other two.
    """
    px, py = [_fl(v) for v in xs], [_fl(v) for v in ys]
    if len(px) != 3 or len(py) != 3 or not all(map(math.isfinite, px + py)):
        return None
    (u0, u1), (v0, v1) = (px[0] - px[2], px[1] - px[2]), (py[0] - py[2], py[1] - py[2])
    d0, d1 = (v0 - v1) * v0, (v1 - v0) * v1
    if d0 == 0.0 or d1 == 0.0:
        return None
    return u0 / d0 + u1 / d1, -(u0 * v1 / d0 + u1 * v0 / d1), px[2], py[2]


def parabola_turn(xs: Sequence[Any], ys: Sequence[Any]) -> float:
    """The x at which the sideways parabola through three points turns back (NaN for a straight line).

    Examples
    --------
    >>> parabola_turn([1.0, 0.0, 1.0], [-1.0, 0.0, 1.0])  # x = y²
    0.0
    """
    p = _parabola(xs, ys)
    if p is None or p[0] == 0.0:
        return math.nan
    a, b, x2, _ = p
    return x2 - b * b / (4.0 * a)


def sideways_parabola(xs: Sequence[Any], ys: Sequence[Any], xlim: tuple[float, float], ylim: tuple[float, float],
                      n: int = 300) -> tuple[FloatArray, FloatArray]:
    """The parabola x = p(y) through three points, over the whole plot: NaN where it leaves the x-range.

    It is sampled densely both ways (evenly in y over ``ylim``, and at the two y of each of ``n`` evenly spaced x
    in ``xlim``) and at the points where it meets the plot's sides, so a flat stretch is drawn as smoothly as a
    steep one and each visible piece reaches the edge it leaves through.

    Examples
    --------
    >>> x, y = sideways_parabola([0.0, 1.0, 4.0], [0.0, 1.0, 2.0], (0.0, 4.0), (0.0, 2.0), n=5)
    >>> bool(np.allclose(x[np.isfinite(x)], (y * y)[np.isfinite(x)]))  # x = y² through the three points
    True
    """
    p = _parabola(xs, ys)
    if p is None:
        return _EMPTY, _EMPTY
    a, b, x2, y2 = p
    lo, hi = xlim
    t = np.concatenate([np.linspace(lo, hi, n), [lo, hi]]) - x2  # solve a v² + b v − t = 0 for v
    with np.errstate(all="ignore"):
        if a != 0.0:
            q = -0.5 * (b + math.copysign(1.0, b) * np.sqrt(b * b + 4.0 * a * t))  # the stable form of the roots
            roots = np.concatenate([q / a, -t / q])
        else:
            roots = t / b if b != 0.0 else _EMPTY
        vv = np.concatenate([np.linspace(ylim[0], ylim[1], n) - y2, roots])
        vv = np.unique(vv[np.isfinite(vv) & (vv >= ylim[0] - y2) & (vv <= ylim[1] - y2)])
        xx, yy = (a * vv + b) * vv + x2, vv + y2
    slack = 1e-9 * (hi - lo)
    inside = (xx >= lo - slack) & (xx <= hi + slack)
    return np.where(inside, np.clip(xx, lo, hi), np.nan), np.where(inside, yy, np.nan)
