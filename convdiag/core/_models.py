"""Local models: what each step assumed about the function, as data a plot can draw.

Every model has a ``kind`` string, ``predict()`` (the abscissa the model puts
the root at) and ``curve(lo, hi, n)`` that samples the model on an x-range
for drawing. Models hold plain numbers only.
"""

from __future__ import annotations

from dataclasses import asdict, dataclass
from typing import Any, ClassVar, Union

import numpy as np
from numpy.typing import NDArray

__all__ = [
    "Chord",
    "InverseParabola",
    "InversePolynomial",
    "LocalModel",
    "Midpoint",
    "PowerLaw",
    "Tangent",
    "TangentHyperbola",
    "model_from_dict",
]

FloatArray = NDArray[np.float64]


def _f(v: Any) -> float:
    try:
        return float(v)
    except (TypeError, ValueError, OverflowError):
        return float(complex(v).real)


class _Model:
    kind: ClassVar[str] = ""

    def to_dict(self) -> dict[str, Any]:
        d = {k: (list(v) if isinstance(v, tuple) else v) for k, v in asdict(self).items()}  # type: ignore[call-overload]
        d["kind"] = self.kind
        return d


@dataclass(frozen=True)
class Tangent(_Model):
    """Newton's model: the line through (x, y) with slope ``slope``."""

    kind: ClassVar[str] = "tangent"
    x: float
    y: float
    slope: float

    def predict(self) -> float:
        return self.x - self.y / self.slope if self.slope != 0 else float("nan")

    def curve(self, lo: float, hi: float, n: int = 2) -> tuple[FloatArray, FloatArray]:
        xs = np.linspace(lo, hi, max(n, 2))
        return xs, _f(self.y) + _f(self.slope) * (xs - _f(self.x))


@dataclass(frozen=True)
class Chord(_Model):
    """A line through two points (secant, regula falsi, Steffensen)."""

    kind: ClassVar[str] = "chord"
    xa: float
    ya: float
    xb: float
    yb: float

    @property
    def slope(self) -> float:
        dx = self.xb - self.xa
        return (self.yb - self.ya) / dx if dx != 0 else float("nan")

    def predict(self) -> float:
        dy = self.yb - self.ya
        return self.xb - self.yb * (self.xb - self.xa) / dy if dy != 0 else float("nan")

    def curve(self, lo: float, hi: float, n: int = 2) -> tuple[FloatArray, FloatArray]:
        xs = np.linspace(lo, hi, max(n, 2))
        return xs, _f(self.yb) + _f(self.slope) * (xs - _f(self.xb))


@dataclass(frozen=True)
class InverseParabola(_Model):
    """The sideways parabola x = p(y) through three points; its root is p(0)."""

    kind: ClassVar[str] = "inverse-parabola"
    xs: tuple[float, float, float]
    ys: tuple[float, float, float]

    def x_of_y(self, y: Any) -> Any:
        (x0, x1, x2), (y0, y1, y2) = self.xs, self.ys
        return (
            x0 * (y - y1) * (y - y2) / ((y0 - y1) * (y0 - y2))
            + x1 * (y - y0) * (y - y2) / ((y1 - y0) * (y1 - y2))
            + x2 * (y - y0) * (y - y1) / ((y2 - y0) * (y2 - y1))
        )

    def predict(self) -> float:
        return self.x_of_y(0.0)  # type: ignore[no-any-return]

    def curve(self, lo: float, hi: float, n: int = 200) -> tuple[FloatArray, FloatArray]:
        """Sample y over the span of the points (and 0), map through p; clip to [lo, hi]."""
        yv = [_f(v) for v in self.ys]
        ylo, yhi = min(yv + [0.0]), max(yv + [0.0])
        pad = 0.15 * (yhi - ylo or 1.0)
        ys = np.linspace(ylo - pad, yhi + pad, max(n, 3))
        p = InverseParabola(tuple(_f(v) for v in self.xs), tuple(yv))  # type: ignore[arg-type]
        with np.errstate(all="ignore"):
            xs = np.asarray(p.x_of_y(ys), dtype=float)
        keep = (xs >= lo) & (xs <= hi)
        xs = np.where(keep, xs, np.nan)
        return xs, np.where(keep, ys, np.nan)


@dataclass(frozen=True)
class Midpoint(_Model):
    """Bisection's model: no model, just the middle of the bracket."""

    kind: ClassVar[str] = "midpoint"
    lo: float
    hi: float

    def predict(self) -> float:
        return self.lo + (self.hi - self.lo) / 2

    def curve(self, lo: float, hi: float, n: int = 2) -> tuple[FloatArray, FloatArray]:
        return np.array([], dtype=float), np.array([], dtype=float)


@dataclass(frozen=True)
class TangentHyperbola(_Model):
    """Halley's model: y(t) = (y0 + a t) / (1 + b t), t = x - x0, matching f, f', f'' at x0.

    b = -f''/(2 f'), a = f' + y0 b; the root is t = -y0 / a.
    """

    kind: ClassVar[str] = "tangent-hyperbola"
    x: float
    y: float
    slope: float
    curvature: float

    def _ab(self) -> tuple[Any, Any]:
        b = -self.curvature / (2 * self.slope)
        return self.slope + self.y * b, b

    def predict(self) -> float:
        a, _ = self._ab()
        return self.x - self.y / a  # type: ignore[no-any-return]

    def curve(self, lo: float, hi: float, n: int = 200) -> tuple[FloatArray, FloatArray]:
        m = TangentHyperbola(_f(self.x), _f(self.y), _f(self.slope), _f(self.curvature))
        a, b = m._ab()
        xs = np.linspace(lo, hi, max(n, 3))
        t = xs - m.x
        with np.errstate(all="ignore"):
            den = 1 + b * t
            ys = (m.y + a * t) / den
        ys[np.abs(den) < 1e-3] = np.nan  # break the line at the asymptote
        return xs, ys


def newton_coefficients(xs: Any, ys: Any) -> list[Any]:
    """Divided differences of x over y (the Newton form of the inverse polynomial x = p(y))."""
    dd = list(xs)
    n = len(dd)
    coef = [dd[0]]
    for j in range(1, n):
        for i in range(n - 1, j - 1, -1):
            dd[i] = (dd[i] - dd[i - 1]) / (ys[i] - ys[i - j])
        coef.append(dd[j])
    return coef


def newton_value(coef: Any, ys: Any, y: Any, n: int | None = None) -> tuple[Any, Any]:
    """p(y) and p'(y) of the Newton form using its first ``n`` coefficients (Horner)."""
    n = len(coef) if n is None else n
    p = coef[n - 1]
    dp = 0 * p
    for j in range(n - 2, -1, -1):
        dp = dp * (y - ys[j]) + p
        p = p * (y - ys[j]) + coef[j]
    return p, dp


@dataclass(frozen=True)
class InversePolynomial(_Model):
    """The sideways polynomial x = p(y) through three or four points; its root is p(0).

    ``shift`` is a deliberate step past that root which the method took (the hybrid steps
    toward the bracket end with the larger |f| by the model's own error estimate, so that it
    lands across the root); ``predict()`` is where the method evaluated: p(0) + shift.
    """

    kind: ClassVar[str] = "inverse-polynomial"
    xs: tuple[float, ...]
    ys: tuple[float, ...]
    shift: float = 0.0

    def x_of_y(self, y: Any) -> Any:
        return newton_value(newton_coefficients(self.xs, self.ys), self.ys, y)[0]

    def predict(self) -> float:
        return self.x_of_y(0) + self.shift  # type: ignore[no-any-return]

    def curve(self, lo: float, hi: float, n: int = 200) -> tuple[FloatArray, FloatArray]:
        """Sample y over the span of the points (and 0), map through p; clip to [lo, hi]."""
        yv = [_f(v) for v in self.ys]
        ylo, yhi = min(yv + [0.0]), max(yv + [0.0])
        pad = 0.15 * (yhi - ylo or 1.0)
        ys = np.linspace(ylo - pad, yhi + pad, max(n, 3))
        coef = newton_coefficients([_f(v) for v in self.xs], yv)
        with np.errstate(all="ignore"):
            xs = np.asarray(newton_value(coef, yv, ys)[0], dtype=float)
        keep = (xs >= lo) & (xs <= hi)
        return np.where(keep, xs, np.nan), np.where(keep, ys, np.nan)


@dataclass(frozen=True)
class PowerLaw(_Model):
    """The local model of a root of multiplicity m: f(x) = sign·s(x-r)·(scale·|x - r|)^m.

    s(t) is the sign of t. ``m`` need not be an integer (it is fitted); ``shift`` is a step
    past the model's root that the method took (see :class:`InversePolynomial`), so
    ``predict()`` is r + shift.
    """

    kind: ClassVar[str] = "power-law"
    r: float
    m: float
    scale: float
    sign: float
    shift: float = 0.0

    def predict(self) -> float:
        return self.r + self.shift

    def curve(self, lo: float, hi: float, n: int = 200) -> tuple[FloatArray, FloatArray]:
        xs = np.linspace(lo, hi, max(n, 3))
        d = xs - _f(self.r)
        with np.errstate(all="ignore"):
            ys = _f(self.sign) * np.sign(d) * (_f(self.scale) * np.abs(d)) ** _f(self.m)
        return xs, ys


LocalModel = Union[Tangent, Chord, InverseParabola, Midpoint, TangentHyperbola, InversePolynomial, PowerLaw]

_BY_KIND: dict[str, type[Any]] = {
    c.kind: c for c in (Tangent, Chord, InverseParabola, Midpoint, TangentHyperbola, InversePolynomial, PowerLaw)
}


def model_from_dict(d: dict[str, Any]) -> LocalModel:
    """Inverse of ``model.to_dict()``."""
    d = dict(d)
    cls = _BY_KIND[d.pop("kind")]
    return cls(**{k: (tuple(v) if isinstance(v, list) else v) for k, v in d.items()})  # type: ignore[no-any-return]
