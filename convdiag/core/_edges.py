"""Where f stops being defined, and what a dip of |f| between three samples is.

:func:`locate_edge` bisects between a point where f is finite and one where
it is not; :func:`inspect_dip` minimises s·f (s the common sign) to tell a
touch of zero from a crossing, a near miss or nothing; :func:`inspect_infinite`
tells a pole sampled exactly (f = ±inf at one point, finite and growing on
both sides) from overflow (f = ±inf from some x on). Like
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

__all__ = ["Dip", "Edge", "Infinity", "inspect_dip", "inspect_infinite", "locate_edge"]

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
        self.exhausted = False

    def __call__(self, x: float) -> float:
        if self.count >= self.max_evals:
            self.exhausted = True
            raise _Exhausted
        self.count += 1
        try:
            y = self.f(x)
        except Halt as h:
            if h.reason in ("max-evals", "max-time", "interrupted"):
                self.count -= 1
                self.exhausted = True
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
#: f of the other sign at the minimum of a dip counts as two roots when |f| there exceeds this many times the
#: noise of f measured around it (Moré–Wild, ``_noise.estimate_noise``). Over 1299 expanded polynomials
#: (x - r)^m, m = 2..8, the most negative rounding value a minimisation met reached 20 times the measured
#: level; 100 leaves a margin (a rule of thumb).
FLIP_OVER_NOISE = 100.0


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
    seen beyond the touch threshold, or when f has the other sign at the
    located minimum and that is not rounding noise (the minimiser goes on
    through smaller flips; at the end, |f| there must exceed 100 times the
    noise of f measured around it, see :func:`_flip_is_real`): two simple
    roots closer than the samples, such as (x - 1)^2 - 1e-12, are a
    crossing, while the rounding noise of an expanded double root is not; a
    near-miss when the minimum is at most 1e-3·scale. 1e-8 is about
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
        return sign * v  # a flip within the touch threshold may be rounding noise: checked at the end

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
        flipped = any(sign * v < 0 for _, v in points)  # a flip no budget is left to check: no verdict
        kind: DipKind = "touch" if abs(fx) <= touch_rtol * scale and not flipped else "unfinished"
        return Dip(kind, x, fx, scale, probe.count, tuple(points))
    # the extremum: the least sign·f seen. Of the other sign there, f crosses zero twice unless that is noise.
    xe, fe = min(points, key=lambda p: (sign * p[1], abs(p[0] - x)))
    if sign * fe < 0:
        real = _flip_is_real(probe, xe, fe, sign)
        if real is None:
            return Dip("unfinished", xe, fe, scale, probe.count, tuple(points))
        if real:
            return Dip("crossing", xe, fe, scale, probe.count, tuple(points))
    # the minimiser's answer is one of the evaluated points; take the smallest |f| seen
    x, fx = min(points, key=lambda p: (abs(p[1]), abs(p[0] - x)))
    v = abs(fx)
    kind = "touch" if v <= touch_rtol * scale else "near-miss" if v <= NEAR_MISS_RTOL * scale else "none"
    return Dip(kind, x, fx, scale, probe.count, tuple(points))


def _flip_is_real(probe: _Probe, x: float, fx: float, sign: float) -> bool | None:
    """Whether f(x) of the sign opposite to ``sign`` is a real dip below zero, not rounding noise.

    The noise of f is measured around x (``_noise.estimate_noise``, Moré and Wild's difference tables,
    through ``probe`` so every call counts). Real when every point of that sample has the opposite sign
    too and |f(x)| exceeds ``FLIP_OVER_NOISE`` times the noise level (or, when no level was found, the
    spread of the sample). None when the budget ran out first.
    """
    from ._noise import estimate_noise

    est = estimate_noise(None, x, evaluate=probe, n_points=7, max_attempts=4)  # it turns _Exhausted into "failed"
    if probe.exhausted:
        return None
    values = [v for _, v in est.samples]
    if len(values) < 4 or not all(sign * v < 0 for v in values):
        return False
    level = est.level if est.found else max(values) - min(values)
    return abs(fx) > FLIP_OVER_NOISE * level


#: |f| must grow at least this much toward an infinite sample, on each side, for a pole (a rule of thumb).
POLE_GROWTH = 2.0

InfinityKind = Literal["pole", "overflow", "infinite"]


@dataclass(frozen=True)
class Infinity:
    """What a run of samples where f = ±inf is.

    kind : "pole" (f finite on both sides within ``xtol`` of the infinite samples, and |f|
        growing toward them from both sides), "overflow" (f finite on one side only: it stays
        infinite to the end of what was searched) or "infinite" (finite on both sides, but infinite
        over a wider interval, or without growing toward it).
    x : the infinite sample (the middle one of a run) for a pole; the edge otherwise.
    value : the infinite value seen (``inf`` or ``-inf``).
    left, right : the edge located from the finite neighbour on each side (None where there is none).
    growth : |f| at the point found nearest the infinite samples over |f| at the finite neighbour,
        left and right (NaN where not measured).
    exponent : q in |f| ~ distance^q toward a pole (the mean over both sides); NaN otherwise.
    """

    kind: InfinityKind
    x: float
    value: float
    left: Edge | None
    right: Edge | None
    growth: tuple[float, float]
    exponent: float
    evaluations: int


def _growth(e: Edge | None, x: float) -> tuple[float, float]:
    """(growth of |f| toward x, exponent q of |f| ~ |x - t|^q) along the points met on the way to the edge."""
    if e is None or len(e.defined_points) < 2:
        return math.nan, math.nan
    (t0, f0), (t1, f1) = e.defined_points[0], e.defined_points[-1]
    if not (f0 != 0 and f1 != 0):
        return math.nan, math.nan
    g = abs(f1) / abs(f0)
    d0, d1 = abs(x - t0), abs(x - t1)
    q = math.log(g) / math.log(d1 / d0) if 0 < d1 < d0 else math.nan
    return g, q


def inspect_infinite(
    f: Callable[[Any], Any],
    x_first: float,
    x_last: float,
    value: float,
    *,
    left: tuple[float, float] | None,
    right: tuple[float, float] | None,
    xtol: float,
    max_evals: int = 120,
) -> Infinity:
    """Tell a pole hit exactly by a sample from overflow, for samples ``x_first <= x_last`` where f = ±inf.

    ``left`` and ``right`` are the nearest samples (x, f) with f finite on each side, None where the
    infinite samples reach the end of what was searched. Each side's boundary is bisected
    (:func:`locate_edge` to ``xtol``). Rule: a **pole** when both boundaries close in on the
    infinite samples (the finite points found on the two sides are at most ``3·xtol``, or a few ulps,
    apart beyond the run's own width) and |f| grew toward them at least ``POLE_GROWTH``-fold on
    each side; **overflow** when one side has no finite neighbour (f = exp(x) for x > 709.78, the
    logarithm of the largest double, numpy.log(numpy.finfo(float).max)); otherwise **infinite**
    (f is ±inf over an interval, or does not grow toward the point).

    Examples
    --------
    >>> import math
    >>> inspect_infinite(lambda x: 1 / x if x else math.inf, 0.0, 0.0, math.inf, left=(-0.5, -2.0),
    ...                  right=(0.5, 2.0), xtol=1e-9).kind
    'pole'
    >>> inf = inspect_infinite(lambda x: math.exp(x) if x < 709.8 else math.inf, 720.0, 1000.0, math.inf,
    ...                        left=(700.0, math.exp(700.0)), right=None, xtol=1e-9)
    >>> inf.kind, round(inf.x, 6)
    ('overflow', 709.782713)
    """
    count = 0
    edges: list[Edge | None] = []
    for near in (left, right):
        if near is None:
            edges.append(None)
            continue
        target = x_first if near[0] < x_first else x_last
        e = locate_edge(f, near[0], target, f_defined=near[1], xtol=xtol, max_evals=max(0, max_evals - count))
        count += e.evaluations
        edges.append(e)
    el, er = edges
    x = x_first + (x_last - x_first) / 2
    if el is None or er is None:
        one = el or er
        assert one is not None
        return Infinity("overflow", one.x_defined, value, el, er, (math.nan, math.nan), math.nan, count)
    (gl, ql), (gr, qr) = _growth(el, x), _growth(er, x)
    slack = max(3 * xtol, 16 * math.ulp(max(abs(el.x_defined), abs(er.x_defined))))
    close = er.x_defined - el.x_defined <= (x_last - x_first) + slack
    if close and gl >= POLE_GROWTH and gr >= POLE_GROWTH:
        return Infinity("pole", x, value, el, er, (gl, gr), (ql + qr) / 2, count)
    return Infinity("infinite", x, value, el, er, (gl, gr), math.nan, count)
