"""Basin maps: where each start on a line or in a rectangle of the complex plane ends up.

:func:`basin_map` runs an open method from every point of a grid at once
(:func:`~convdiag.core._vector.solve_many`), clusters the roots found and
numbers them, and keeps per start the root reached, the evaluations used and
the outcome class. Figures: ``convdiag.report.BasinDisplay`` and
``EvaluationsDisplay``.
"""

from __future__ import annotations

import math
import numbers
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np
from numpy.typing import NDArray

from ..errors import ParameterError
from ._show import Showable
from ._vector import Lanes, VectorMethod, solve_many

__all__ = ["BasinMap", "basin_map", "cluster_roots"]

Arr = NDArray[Any]


def cluster_roots(x: Arr, fx: Arr, converged: Arr, *, tol: float = 1e-6) -> tuple[Arr, NDArray[np.int32]]:
    """Group converged lanes whose roots agree within ``tol·max(1, max|root|)`` and number the groups.

    Returns the roots (one per group: the member with the smallest |f|, ordered by real then
    imaginary part) and, per lane, the group number (-1 where the lane did not converge). The
    grouping is greedy in lane order: the first lane not yet grouped starts a group, which takes
    every later lane within the tolerance of it that no earlier group took. Lanes are compared
    block by block (basins have few roots); past 64 groups the rest are grouped by rounding to
    the tolerance.

    Examples
    --------
    >>> import numpy as np
    >>> x = np.array([1.0, -1.0, 1.0 + 1e-12, np.nan])
    >>> roots, ids = cluster_roots(x, np.zeros(4), np.array([True, True, True, False]))
    >>> roots.tolist(), ids.tolist()
    ([-1.0, 1.0], [1, 0, 1, -1])
    """
    x, fx, converged = np.ravel(x), np.ravel(fx), np.ravel(converged)
    ids = np.full(x.shape, -1, np.int32)
    at = np.flatnonzero(converged & np.isfinite(x))
    if not at.size:
        return x[:0].copy(), ids
    whole = at.size == x.size
    xs, fs = (x, fx) if whole else (x[at], fx[at])
    q = tol * max(1.0, float(np.max(np.abs(xs))))
    label = np.full(at.size, -1, np.int64)
    seeds: list[Any] = []  # each group's first lane's root
    best: list[int] = []  # each group's member with the smallest |f| (the first such)
    least: list[float] = []
    over: list[Arr] = []  # lanes left when 64 groups exist
    for lo in range(0, xs.size, _CLUSTER_BLOCK):
        xb, fb = xs[lo:lo + _CLUSTER_BLOCK], fs[lo:lo + _CLUSTER_BLOCK]
        rest: Arr | None = None  # None: every lane of the block is still unassigned
        j = 0
        while rest is None or rest.size:
            cand = xb if rest is None else xb.take(rest)
            if j == len(seeds):
                if j == 64:
                    break
                seeds.append(cand[0])
                best.append(-1)
                least.append(np.inf)
            near = np.abs(cand - seeds[j]) <= q
            members = np.flatnonzero(near)
            if members.size:
                if rest is not None:
                    members = rest.take(members)
                label[lo + members] = j
                af = np.abs(fb.take(members))
                k = int(np.argmin(af))
                if af[k] < least[j]:
                    best[j], least[j] = lo + int(members[k]), float(af[k])
                rest = np.flatnonzero(~near) if rest is None else rest[~near]
            j += 1
        if rest is not None and rest.size:
            over.append(lo + rest)
        elif rest is None:
            over.append(lo + np.arange(xb.size))
    if over:  # many distinct roots: cells of the tolerance grid
        _cells(xs, fs, q, np.concatenate(over), label, best)
    roots = xs[np.asarray(best, dtype=np.int64)]
    rank = np.lexsort((roots.imag, roots.real)) if roots.dtype.kind == "c" else np.argsort(roots, kind="stable")
    number = np.empty_like(rank)
    number[rank] = np.arange(rank.size)
    ids[at] = number[label]
    return roots[rank], ids


_CLUSTER_BLOCK = 65536


def _cells(xs: Arr, fs: Arr, q: float, rest: Arr, label: Arr, best: list[int]) -> None:
    """Group the lanes ``rest`` by rounding their roots to multiples of ``q`` (new groups after ``best``)."""
    af = np.abs(fs)
    v = xs[rest]
    keys = np.stack([np.round(v.real / q), np.round(v.imag / q)], axis=1) if v.dtype.kind == "c" else \
        np.round(v / q)[:, None]
    _, cell = np.unique(keys, axis=0, return_inverse=True)
    cell = cell.ravel()
    order = np.lexsort((af[rest], cell))
    first = order[np.r_[True, cell[order][1:] != cell[order][:-1]]]
    label[rest] = len(best) + cell
    best += rest[first].tolist()


@dataclass(frozen=True, repr=False)
class BasinMap(Showable):
    """Where each start of a grid ends up.

    Attributes
    ----------
    method : the method's name.
    label : the function's label.
    starts : the grid of starts (1-D real, or 2-D complex with rows along the imaginary axis).
    kind : "interval", "rectangle" or "points".
    extent : (a, b) for an interval, (re_lo, re_hi, im_lo, im_hi) for a rectangle, else None.
    roots : the roots found, numbered 0, 1, ... in order of real then imaginary part.
    root_id : per start, the number of the root reached (-1 where the lane did not converge).
    lanes : the per-start record (:class:`~convdiag.core._vector.Lanes`: evaluations, outcome, ...).
    """

    method: str
    label: str
    starts: Arr
    kind: str
    extent: tuple[float, ...] | None
    roots: Arr
    root_id: NDArray[np.int32]
    lanes: Lanes

    @property
    def evals(self) -> NDArray[np.int32]:
        return self.lanes.evals

    @property
    def outcome(self) -> NDArray[np.str_]:
        return self.lanes.outcome

    @property
    def shape(self) -> tuple[int, ...]:
        return tuple(self.starts.shape)

    def counts(self) -> dict[str, int]:
        """Starts per outcome class."""
        return self.lanes.counts()

    def root_counts(self) -> NDArray[np.int64]:
        """Starts that reached each root (in the order of :attr:`roots`)."""
        ids = self.root_id.ravel()
        return np.bincount(ids[ids >= 0], minlength=self.roots.size)

    def __repr__(self) -> str:
        n = int(self.starts.size)
        conv = self.counts().get("converged", 0)
        return (f"<BasinMap {self.method} on {self.label}: {n} starts, {self.roots.size} roots, "
                f"{conv / n:.1%} converged>" if n else f"<BasinMap {self.method}: empty>")


def _grid(interval: Any, rectangle: Any, shape: Any, starts: Any) -> tuple[Arr, str, tuple[float, ...] | None]:
    owner = "basin_map"
    given = [v is not None for v in (interval, rectangle, starts)]
    if sum(given) != 1:
        raise ParameterError(
            "basin_map needs exactly one of interval=(a, b), rectangle=((re_lo, re_hi), (im_lo, im_hi)) or "
            f"starts=array; got {sum(given)}."
        )
    if starts is not None:
        a = np.asarray(starts)
        return a, "points", None
    if interval is not None:
        lo, hi = _pair(interval, "interval", owner)
        n = 1001 if shape is None else shape
        if not isinstance(n, numbers.Integral) or isinstance(n, bool) or int(n) < 2:
            raise ParameterError.expected("shape", owner, "an int >= 2 for an interval", shape)
        return np.linspace(lo, hi, int(n)), "interval", (lo, hi)
    try:
        (r0, r1), (i0, i1) = rectangle
    except (TypeError, ValueError):
        raise ParameterError.expected("rectangle", owner, "((re_lo, re_hi), (im_lo, im_hi))", rectangle) from None
    r0, r1 = _pair((r0, r1), "rectangle", owner)
    i0, i1 = _pair((i0, i1), "rectangle", owner)
    try:
        ny, nx = (401, 401) if shape is None else shape
    except (TypeError, ValueError):  # an int, or not two numbers
        raise ParameterError.expected("shape", owner, "(rows, columns), each an int >= 2", shape) from None
    if not all(isinstance(k, numbers.Integral) and int(k) >= 2 for k in (ny, nx)):
        raise ParameterError.expected("shape", owner, "(rows, columns), each an int >= 2", shape)
    grid = np.empty((int(ny), int(nx)), np.complex128)
    grid.real = np.linspace(r0, r1, int(nx))[None, :]
    grid.imag = np.linspace(i0, i1, int(ny))[:, None]
    return grid, "rectangle", (r0, r1, i0, i1)


def _pair(v: Any, name: str, owner: str) -> tuple[float, float]:
    try:
        a, b = (float(t) for t in v)
    except (TypeError, ValueError):
        raise ParameterError.expected(name, owner, "a pair of finite numbers (lo, hi) with lo < hi", v) from None
    if not (math.isfinite(a) and math.isfinite(b) and a < b):
        raise ParameterError.expected(name, owner, "a pair of finite numbers (lo, hi) with lo < hi", v)
    return a, b


def basin_map(
    f: Any,
    method: VectorMethod = "newton",
    *,
    interval: tuple[float, float] | None = None,
    rectangle: tuple[tuple[float, float], tuple[float, float]] | None = None,
    shape: int | tuple[int, int] | None = None,
    starts: Any = None,
    fprime: Any = None,
    fprime2: Any = None,
    params: Mapping[str, float] | None = None,
    xtol: float = 0.0,
    rtol: float | None = None,
    ftol: float = 0.0,
    max_evals: int = 100,
    max_steps: int | None = None,
    variable: str = "x",
    root_tol: float = 1e-6,
) -> BasinMap:
    """Run a method from every start of a grid and map where each one ends up.

    Parameters
    ----------
    f : callable, str or sympy expression
        ``f(x)`` or ``f(x, **params)`` that takes numpy arrays (complex ones for a rectangle).
    method : {"newton", "secant", "steffensen", "halley"}
    interval : (a, b), optional
        Real starts: ``shape`` (default 1001) evenly spaced points from a to b.
    rectangle : ((re_lo, re_hi), (im_lo, im_hi)), optional
        Complex starts: a grid of ``shape = (rows, columns)`` (default (401, 401)); row i has
        imaginary part im_lo + i·(im_hi - im_lo)/(rows - 1).
    starts : array_like, optional
        Any array of starts instead of a grid.
    fprime, fprime2, params, xtol, rtol, ftol, max_evals, max_steps, variable
        As for :func:`~convdiag.core._vector.solve_many` (and :func:`convdiag.solve`).
    root_tol : float
        Roots within ``root_tol·max(1, max|root|)`` of each other are the same root.

    Returns
    -------
    BasinMap
        Per start: the root reached (numbered), evaluations, outcome class.

    Raises
    ------
    ParameterError
        Not exactly one of interval, rectangle, starts; a bad grid; bad settings.

    Examples
    --------
    >>> bm = basin_map("z**3 - 1", rectangle=((-1.5, 1.5), (-1.5, 1.5)), shape=(31, 31), variable="z")
    >>> bm.roots.size, bm.root_counts().sum() == bm.counts()["converged"]
    (3, np.True_)
    >>> bm = basin_map("x**3 - 2*x + 2", interval=(-3, 3), shape=61, max_evals=40)
    >>> sorted(bm.counts())
    ['budget', 'converged', 'cycle', 'slow']
    """
    if not isinstance(root_tol, numbers.Real) or not (0 < root_tol < 1):
        raise ParameterError.expected("root_tol", "basin_map", "a float in (0, 1)", root_tol)
    grid, kind, extent = _grid(interval, rectangle, shape, starts)
    lanes = solve_many(
        f, method, starts=grid, fprime=fprime, fprime2=fprime2, params=params, xtol=xtol, rtol=rtol, ftol=ftol,
        max_evals=max_evals, max_steps=max_steps, variable=variable,
    )
    roots, ids = cluster_roots(lanes.x, lanes.fx, lanes.converged, tol=float(root_tol))
    label = f if isinstance(f, str) else getattr(f, "__name__", type(f).__name__)
    return BasinMap(
        method=method,
        label=str(label),
        starts=lanes.starts,
        kind=kind,
        extent=extent,
        roots=roots,
        root_id=ids.reshape(lanes.starts.shape),
        lanes=lanes,
    )
