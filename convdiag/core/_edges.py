"""Where f stops being defined, and what a dip of |f| between three samples is.

:func:`locate_edge` bisects between a point where f is finite and one where
it is not; :func:`inspect_dip` minimises s·f (s the common sign) to tell a
touch of zero from a crossing, a near miss or nothing. Like
``_signchange.classify_sign_change`` they call f a bounded number of times
through :class:`_Probe` (defined here, shared with ``_signchange``): an
exception or NaN counts as undefined, and a ``max-evals``/``max-time``/``interrupted``
:class:`~convdiag.core._step.Halt` stops the work with what was learnt.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any, Literal

from ._evallog import classify_value
from ._step import Halt

__all__ = ["Dip", "Edge", "inspect_dip", "locate_edge"]

DipKind = Literal["touch", "crossing", "near-miss", "none", "undefined", "unfinished"]


class _Exhausted(Exception):
    """The local or the caller's evaluation budget ran out."""


class _Probe:
    """Calls f, counts, turns exceptions and non-numbers into NaN, stops at the budget."""

    def __init__(self, f: Callable[[Any], Any], max_evals: int) -> None:
        self.f = f
        self.max_evals = max_evals
        self.count = 0
        self.last_problem = ""

    def __call__(self, x: float) -> float:
        if self.count >= self.max_evals:
            raise _Exhausted
        self.count += 1
        try:
            y = self.f(x)
        except Halt as h:
            if h.reason in ("max-evals", "max-time", "interrupted"):
                self.count -= 1
                raise _Exhausted from None
            self.last_problem = h.message
            return math.nan
        except Exception as exc:  # noqa: BLE001 - the user's function failed here: an undefined point
            self.last_problem = f"raised {type(exc).__name__}: {exc}"
            return math.nan
        v, status, note = classify_value(y)
        if status not in ("ok", "inf"):
            self.last_problem = note
            return math.nan
        return v


def _at_resolution(a: float, b: float) -> bool:
    m = a + (b - a) / 2
    return not (a < m < b) or (b - a) <= 4 * math.ulp(max(abs(a), abs(b)))


@dataclass(frozen=True)
class Edge:
    """The boundary between where f is defined and where it is not.

    ``x_defined`` and ``x_undefined`` are the closest pair found (f finite at
    the first, NaN/raising/infinite at the second); ``defined_points`` lists
    every point found defined on the way, in order, with f there, so the
    caller can look for sign changes between them.
    """

    x_defined: float
    x_undefined: float
    f_defined: float
    what: str
    evaluations: int
    complete: bool
    defined_points: tuple[tuple[float, float], ...] = ()

    @property
    def undefined_side(self) -> Literal["left", "right"]:
        return "left" if self.x_undefined < self.x_defined else "right"


def locate_edge(
    f: Callable[[Any], Any],
    x_defined: float,
    x_undefined: float,
    *,
    f_defined: float | None = None,
    what: str = "",
    xtol: float = 0.0,
    max_evals: int = 60,
) -> Edge:
    """Bisect between a point where f is finite and one where it is not.

    Stops when the two are at most ``xtol`` apart (or a few ulps apart).

    Examples
    --------
    >>> import math
    >>> e = locate_edge(lambda x: math.sqrt(x) - 2, 1.0, -1.0, xtol=1e-9)
    >>> abs(e.x_defined) < 1e-9 and e.undefined_side
    'left'
    """
    probe = _Probe(f, max_evals)
    d, u = float(x_defined), float(x_undefined)
    complete = True
    try:
        fd = probe(d) if f_defined is None else float(f_defined)
    except _Exhausted:
        return Edge(d, u, math.nan, what, probe.count, False)
    points = [(d, fd)]
    try:
        while abs(u - d) > xtol and not _at_resolution(min(d, u), max(d, u)):
            m = d + (u - d) / 2
            fm = probe(m)
            if math.isfinite(fm):
                d, fd = m, fm
                points.append((d, fd))
            else:
                u = m
                what = probe.last_problem or (f"f = {fm}" if math.isinf(fm) else what)
    except _Exhausted:
        complete = False
    return Edge(d, u, fd, what or probe.last_problem, probe.count, complete, tuple(points))


@dataclass(frozen=True)
class Dip:
    """What a local minimum of |f| between three samples turned out to be.

    kind : "touch" (min |f| <= touch_rtol·scale without a sign change),
        "crossing" (f changes sign at ``x``: two sign changes were hidden between samples),
        "near-miss" (min |f| <= 1e-3·scale but above the touch threshold), "none",
        "undefined" (f is undefined at ``x``) or "unfinished" (budget).
    x, fx : the point reached (the minimiser, or where the sign change was seen).
    """

    kind: DipKind
    x: float
    fx: float
    scale: float
    evaluations: int
    points: tuple[tuple[float, float], ...] = ()


#: |f| minimum relative to the scale of f below which a dip is reported as a near-miss.
NEAR_MISS_RTOL = 1e-3


class _Stop(Exception):
    def __init__(self, kind: DipKind, x: float, fx: float) -> None:
        self.kind, self.x, self.fx = kind, x, fx


def _golden(fun: Callable[[float], float], a: float, b: float, xatol: float, maxiter: int) -> float:
    """Golden-section minimiser, the fallback when scipy is not installed."""
    g = (math.sqrt(5) - 1) / 2
    c, d = b - g * (b - a), a + g * (b - a)
    fc, fd = fun(c), fun(d)
    for _ in range(maxiter):
        if abs(b - a) <= xatol + 1.5e-8 * abs(c):
            break
        if fc <= fd:
            b, d, fd = d, c, fc
            c = b - g * (b - a)
            fc = fun(c)
        else:
            a, c, fc = c, d, fd
            d = a + g * (b - a)
            fd = fun(d)
    return c if fc <= fd else d


def inspect_dip(
    f: Callable[[Any], Any],
    a: float,
    c: float,
    sign: float,
    *,
    scale: float,
    touch_rtol: float = 1e-8,
    max_evals: int = 60,
    use_scipy: bool = True,
) -> Dip:
    """Minimise sign·f on [a, c] (bounded Brent, ``scipy.optimize.minimize_scalar``).

    ``sign`` is the sign f has at the samples. Rule: a **touch** when the
    minimum of |f| is at most ``touch_rtol · scale`` (``scale``: a typical
    size of |f| over the search, e.g. the median of the samples) and f never
    changed sign; a **crossing** as soon as a point with the other sign is
    seen beyond the touch threshold (a flip of sign smaller than that is rounding
    noise around a double root, and the minimiser goes on); a near-miss when
    the minimum is at most 1e-3·scale. 1e-8 is about
    the square root of machine epsilon: Brent's minimiser locates a smooth
    minimum to ~1.5e-8 relative, where a double root leaves |f| ~ 1e-16 of its
    curvature, far below the threshold, while a dip that stays 1e-8 of the
    scale away from zero is not a root at double precision anyway.

    Examples
    --------
    >>> d = inspect_dip(lambda x: (x - 1) ** 2, 0.5, 1.6, 1.0, scale=1.0)
    >>> d.kind, round(d.x, 6)
    ('touch', 1.0)
    """
    probe = _Probe(f, max_evals)
    points: list[tuple[float, float]] = []

    def objective(x: float) -> float:
        x = float(x)
        v = probe(x)
        points.append((x, v))
        if not math.isfinite(v):
            raise _Stop("undefined", x, v)
        if v == 0:
            raise _Stop("touch", x, v)
        if sign * v < -touch_rtol * scale:
            raise _Stop("crossing", x, v)
        return sign * v  # a sign flip within the touch threshold is rounding noise: keep minimising

    xatol = 1e-12 * max(abs(a), abs(c), c - a)
    try:
        if use_scipy:
            try:
                from scipy.optimize import minimize_scalar
            except ImportError:  # pragma: no cover - scipy is in every test environment
                use_scipy = False
        if use_scipy:
            res = minimize_scalar(
                objective, bounds=(a, c), method="bounded", options={"xatol": xatol, "maxiter": max_evals}
            )
            x = float(res.x)
        else:
            x = _golden(objective, a, c, xatol, max_evals)
    except _Stop as stop:
        return Dip(stop.kind, stop.x, stop.fx, scale, probe.count, tuple(points))
    except _Exhausted:
        if not points:
            return Dip("unfinished", math.nan, math.nan, scale, probe.count, ())
        x, fx = min(points, key=lambda p: abs(p[1]))
        kind: DipKind = "touch" if abs(fx) <= touch_rtol * scale else "unfinished"
        return Dip(kind, x, fx, scale, probe.count, tuple(points))
    # the minimiser's answer is one of the evaluated points; take the smallest |f| seen
    x, fx = min(points, key=lambda p: (abs(p[1]), abs(p[0] - x)))
    v = abs(fx)
    kind = "touch" if v <= touch_rtol * scale else "near-miss" if v <= NEAR_MISS_RTOL * scale else "none"
    return Dip(kind, x, fx, scale, probe.count, tuple(points))
