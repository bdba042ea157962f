"""Parameter sweeps: solve f(x, **params) = 0 at every point of a grid or a sample of parameters.

:func:`sweep` splits the points into chunks and runs them with
:mod:`convdiag.core._sweep_run`: in this process (vectorised when ``f`` takes
arrays), in a process pool (when it does not), or on a Dask cluster (pass a
``dask.distributed.Client``). Each chunk is a pure function of its inputs and
the table is assembled by chunk id, so a chunk computed twice is stored once
and no point is lost or duplicated. A KeyboardInterrupt stops the sweep and
returns the finished chunks; the other points are marked ``not-run``.
"""

from __future__ import annotations

import numbers
import os
import time
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from numpy.typing import NDArray

from ..errors import ParameterError
from ._outcomes import OUTCOMES
from ._show import Showable
from ._sweep_run import (
    FIELDS,
    RESERVED,
    Assembly,
    ProgressSink,
    Spec,
    brackets_for,
    col_slice,
    run_here,
    starts_for,
    table_dtype,
)
from ._sweep_workers import run_dask, run_pool
from ._vector import VECTOR_METHODS
from ._vfunctions import lane_functions

__all__ = ["FIELDS", "ParamGrid", "SweepResult", "param_grid", "read_sweep_csv", "set_progress_factory", "sweep"]

Arr = NDArray[Any]
_Assembly = Assembly  # the former name
_PROGRESS: list[Callable[[int], ProgressSink]] = []


def set_progress_factory(factory: Callable[[int], ProgressSink] | None) -> None:
    """Set what ``sweep(progress=True)`` shows (the display layer installs a text bar on stderr)."""
    _PROGRESS.clear()
    if factory is not None:
        _PROGRESS.append(factory)


# -- the points ---------------------------------------------------------------------------------------
@dataclass(frozen=True)
class ParamGrid:
    """The Cartesian product of parameter axes (the first axis varies slowest)."""

    names: tuple[str, ...]
    axes: tuple[Arr, ...]

    @property
    def shape(self) -> tuple[int, ...]:
        return tuple(int(a.size) for a in self.axes)

    def points(self) -> dict[str, Arr]:
        """One flat array per parameter, one entry per grid point."""
        mesh = np.meshgrid(*self.axes, indexing="ij")
        return {n: m.ravel() for n, m in zip(self.names, mesh)}


def param_grid(**axes: Any) -> ParamGrid:
    """A grid of parameter points: ``param_grid(e=np.linspace(0, 0.9, 10), M=np.linspace(0, 6, 50))``.

    Examples
    --------
    >>> g = param_grid(a=[1.0, 2.0], b=[0.0, 0.5, 1.0])
    >>> g.shape, g.points()["b"].tolist()
    ((2, 3), [0.0, 0.5, 1.0, 0.0, 0.5, 1.0])
    """
    if not axes:
        raise ParameterError("param_grid needs at least one axis, e.g. param_grid(a=np.linspace(0, 1, 11)).")
    out = []
    for k, v in axes.items():
        a = np.asarray(v, dtype=np.float64).ravel()
        if a.size == 0 or not np.all(np.isfinite(a)):
            raise ParameterError.expected(k, "param_grid", "a non-empty sequence of finite numbers", v)
        out.append(a)
    return ParamGrid(tuple(axes), tuple(out))



# -- the result ---------------------------------------------------------------------------------------
@dataclass(frozen=True, repr=False)
class SweepResult(Showable):
    """One row per parameter point: the start, the root, evaluations, outcome and stop reason.

    Attributes
    ----------
    table : numpy structured array with fields ``point``, ``chunk``, one per parameter, ``start``,
        ``root``, ``f_root``, ``evals``, ``steps``, ``outcome``, ``stop_reason`` (see
        :data:`~convdiag.core._vector.OUTCOMES`; ``not-run`` marks points never computed).
    params : the parameter names.
    method, label : the method and the function's label.
    grid : the :class:`ParamGrid` when the points form one (rows are in grid order), else None.
    interrupted : the sweep was stopped by a KeyboardInterrupt before every point was computed (the points
        not reached are ``not-run``).
    chunks, chunks_done : chunks in the sweep and chunks finished.
    runner : where the chunks ran ("vectorized", "lane-by-lane", "process-pool", "dask", "scalar").
    seconds : wall time.
    notes : anything worth knowing (failed chunks, lane-by-lane calls, ...).
    timed_out : the time budget (``max_time``) ran out; the points not finished are ``timeout``.
    settings : what the sweep was asked to do (the function, start or bracket rule, derivatives, tolerances,
        budgets; a :class:`~convdiag.core._sweep_run.Spec`), so a report can say how to run it again; None for a
        result built by hand.
    max_time : the wall-time budget in seconds (None: none).
    """

    table: Arr
    params: tuple[str, ...]
    method: str
    label: str
    grid: ParamGrid | None
    interrupted: bool
    chunks: int
    chunks_done: int
    runner: str
    seconds: float
    notes: tuple[str, ...] = field(default=())
    timed_out: bool = False
    settings: Spec | None = None
    max_time: float | None = None

    def __len__(self) -> int:
        return int(self.table.shape[0])

    @property
    def outcome(self) -> Arr:
        return self.table["outcome"]

    def counts(self) -> dict[str, int]:
        """Points per outcome, in the order of the outcome classes (absent ones left out)."""
        names, k = np.unique(self.table["outcome"], return_counts=True)
        got = dict(zip(names.tolist(), k.tolist()))
        return {o: int(got[o]) for o in OUTCOMES if o in got}

    def failures(self) -> Arr:
        """The rows that did not converge (not-run rows included)."""
        return self.table[self.table["outcome"] != "converged"]  # type: ignore[no-any-return]

    def on_grid(self, name: str) -> Arr:
        """A field reshaped to the grid's shape (for a sweep over a :class:`ParamGrid`)."""
        if self.grid is None:
            raise ParameterError("This sweep's points are not a grid; use result.table[name].")
        return self.table[name].reshape(self.grid.shape)

    def to_csv(self, path: str | os.PathLike[str]) -> None:
        """Write the table as CSV (floats with 17 significant digits, so they reload exactly)."""
        fmt = ["%d", "%d", *(["%.17g"] * (len(self.params) + 3)), "%d", "%d", "%s", "%s"]
        np.savetxt(path, self.table, fmt=fmt, delimiter=",", header=",".join(self.table.dtype.names or ()),
                   comments="", encoding="utf-8")

    def __repr__(self) -> str:
        parts = ", ".join(f"{k} {v}" for k, v in self.counts().items())
        cut = ", interrupted" if self.interrupted else ", time budget ran out" if self.timed_out else ""
        return f"<SweepResult {self.method}: {len(self)} points ({parts}){cut}>"


def read_sweep_csv(path: str | os.PathLike[str]) -> Arr:
    """Read a table written by :meth:`SweepResult.to_csv` back as a structured array (same dtype).

    Examples
    --------
    >>> import os, tempfile
    >>> res = sweep("x**2 - a", param_grid(a=[1.0, 4.0]), start=3.0)
    >>> path = os.path.join(tempfile.mkdtemp(), "s.csv")
    >>> res.to_csv(path)
    >>> back = read_sweep_csv(path)
    >>> back["root"].tolist(), back.dtype == res.table.dtype
    ([1.0, 2.0], True)
    """
    with open(path, encoding="utf-8") as fh:
        names = fh.readline().strip().split(",")
    params = [n for n in names if n not in RESERVED]
    dt = table_dtype(params)
    if list(dt.names or ()) != names:
        raise ParameterError(f"{os.fspath(path)!r} is not a sweep table: its columns are {names}.")
    return np.loadtxt(path, dtype=dt, delimiter=",", skiprows=1, encoding="utf-8", comments=None, ndmin=1)


class _Callback:
    def __init__(self, fn: Callable[[int, int], None]) -> None:
        self.fn = fn

    def update(self, done: int, total: int) -> None:
        self.fn(done, total)

    def close(self) -> None:
        return None


def _sink(progress: Any, n: int, chunks: int) -> ProgressSink | None:
    if progress is False or (progress is None and chunks < 2):
        return None
    if callable(progress):
        return _Callback(progress)
    return _PROGRESS[0](n) if _PROGRESS else None


# -- the sweep ----------------------------------------------------------------------------------------
def _points(params: Any, owner: str) -> tuple[dict[str, Arr], ParamGrid | None]:
    if isinstance(params, ParamGrid):
        return params.points(), params
    if not isinstance(params, Mapping) or not params:
        raise ParameterError.expected("params", owner, "a ParamGrid or a mapping of names to 1-D arrays", params)
    cols = {str(k): np.asarray(v, dtype=np.float64).ravel() for k, v in params.items()}
    sizes = {k: v.size for k, v in cols.items()}
    if len(set(sizes.values())) != 1:
        raise ParameterError(f"The parameter arrays of {owner} must have one value per point; got sizes {sizes}.")
    return cols, None


def _probe(spec: Spec, cols: Mapping[str, Arr]) -> bool:
    """Does f take arrays? (One call on the first few points.)"""
    if isinstance(spec.f, str) or type(spec.f).__module__.startswith("sympy"):
        return True
    k = min(4, next(iter(cols.values())).size)
    sub = col_slice(cols, 0, k)
    x = starts_for(spec, sub, k, 0) if spec.method in VECTOR_METHODS else brackets_for(spec, sub, k)[0]
    x = np.where(np.isfinite(x), x, 0.0)
    try:
        with np.errstate(all="ignore"):
            y = np.asarray(spec.f(x, **sub))
    except Exception:  # noqa: BLE001
        return False
    return y.shape == x.shape and y.dtype.kind in "fciub"


def _check_bracket(bracket: Any, owner: str) -> None:
    """One bracket for every point: two finite, different numbers (in either order)."""
    what = "a pair (a, b) of finite, different numbers, or a callable bracket(**params) -> (a, b)"
    try:
        a, b = (float(v) for v in bracket)
    except (TypeError, ValueError):
        raise ParameterError.expected("bracket", owner, what, bracket) from None
    if not (np.isfinite(a) and np.isfinite(b) and a != b):
        raise ParameterError.expected("bracket", owner, what, bracket)


def sweep(
    f: Any,
    params: ParamGrid | Mapping[str, Any],
    *,
    method: str = "newton",
    start: Any = None,
    bracket: Any = None,
    fprime: Any = None,
    fprime2: Any = None,
    xtol: float = 0.0,
    rtol: float | None = None,
    ftol: float = 0.0,
    max_evals: int = 100,
    max_steps: int | None = None,
    max_time: float | None = None,
    variable: str = "x",
    vectorized: bool | None = None,
    chunk_size: int | None = None,
    client: Any = None,
    processes: int | None = None,
    progress: bool | Callable[[int, int], None] | None = None,
) -> SweepResult:
    """Solve ``f(x, **params) = 0`` at every parameter point and tabulate how each one went.

    Parameters
    ----------
    f : callable, str or sympy expression
        ``f(x, **params)``; vectorised (numpy) code runs whole chunks at once.
    params : ParamGrid or mapping of str to 1-D array_like
        A grid (:func:`param_grid`) or a sample: one array per parameter, one entry per point.
    method : str
        An open method of :func:`~convdiag.core._vector.solve_many` (vectorised), ``"hybrid"``
        (vectorised bracketing), or any method of :func:`convdiag.solve` (point by point).
    start : float, callable or 1-D array, optional
        For open methods: one start for all points, ``start(**params)`` per point (e.g. Kepler's
        ``lambda M, e: M + e*np.sin(M)``), or one value per point.
    bracket : (a, b) or callable, optional
        For bracketing methods: one bracket, or ``bracket(**params) -> (a, b)`` per point.
    fprime, fprime2, xtol, rtol, ftol, max_evals, max_steps, variable, vectorized
        As for :func:`~convdiag.core._vector.solve_many`, per point.
    max_time : float, optional
        Wall-time budget of the whole sweep, in seconds. When it runs out the sweep returns: every point
        finished is kept, the others are marked ``timeout`` (stop reason ``max-time``). In a process pool
        (``processes`` >= 2) a function that hangs is interrupted in its worker at the deadline, and a worker
        still busy half a second later is killed; on Dask the chunks still running are abandoned. In this
        process (the vectorised runner, ``processes=1``) the budget is checked between chunks and between
        the points of a point-by-point chunk, so it cannot stop a call that never returns (nor the one
        probe call on the first points, which ``vectorized=False`` skips).
    chunk_size : int, optional
        Points per chunk (default 65536 vectorised, 1024 point by point).
    client : dask.distributed.Client, optional
        Run the chunks on this cluster.
    processes : int, optional
        Worker processes for a function that does not take arrays (default: one per CPU when there
        is more than one chunk; 1 runs here).
    progress : bool or callable, optional
        ``progress(done, total)`` after each chunk (points), True for the text bar on stderr, False
        for nothing; by default the bar shows for sweeps of several chunks that take over a second.

    Returns
    -------
    SweepResult
        The table (a structured array; ``to_csv``), counts per outcome, and whether it was
        interrupted or ran out of time. Never raises because of the user's function. A
        KeyboardInterrupt returns what was finished (the rest ``not-run``).

    Raises
    ------
    ParameterError
        Bad points, settings, start or bracket.

    Examples
    --------
    >>> import numpy as np
    >>> kepler = lambda E, M, e: E - e * np.sin(E) - M
    >>> grid = param_grid(e=[0.1, 0.5, 0.9], M=[0.5, 1.0, 2.0])
    >>> res = sweep(kepler, grid, start=lambda M, e: M + e * np.sin(M), fprime=lambda E, M, e: 1 - e * np.cos(E))
    >>> res.counts()
    {'converged': 9}
    >>> round(float(res.on_grid("root")[1, 1]), 12)  # M = 1, e = 0.5 (REFERENCES §5: 1.49870113351785)
    1.498701133518
    """
    from ._methods import METHODS
    from ._problem import _callable_name
    from ._session import _validate_settings

    owner = "sweep"
    t0 = time.perf_counter()
    cols, grid = _points(params, owner)
    clash = sorted(set(cols) & RESERVED)
    if clash:
        raise ParameterError(f"Parameter names {clash} clash with the sweep table's columns; rename them.")
    n = next(iter(cols.values())).size
    _validate_settings(xtol, 0.0 if rtol is None else rtol, ftol, max_evals, max_time, max_steps, owner)
    deadline = None if max_time is None else time.time() + max_time
    vector = method in VECTOR_METHODS
    if not vector and method != "hybrid" and method not in METHODS:
        raise ParameterError.expected("method", owner, f"one of {', '.join(sorted({*METHODS, *VECTOR_METHODS}))}",
                                      method)
    bracketing = method == "hybrid" or (not vector and METHODS[method].needs_bracket)
    if bracketing and bracket is None:
        raise ParameterError(f"{method} needs a bracket: pass bracket=(a, b) or bracket=lambda **params: (a, b).")
    if not bracketing and not vector:
        raise ParameterError(f"Sweeps run open methods vectorised: use one of {', '.join(VECTOR_METHODS)}, or a "
                             f"bracketing method with bracket=...; got {method!r}.")
    if vector and start is None:
        raise ParameterError("Open methods need a start: pass start=x0, start=lambda **params: x0, or an array.")
    if vector and not callable(start):
        try:
            s = np.asarray(start, dtype=np.float64)
        except (TypeError, ValueError):
            s = np.full(2 * n + 1, np.nan)  # not numbers: refused below
        if not (s.ndim == 0 or s.shape == (n,)) or not np.all(np.isfinite(s)):
            raise ParameterError.expected("start", owner, f"a finite number, a callable or {n} finite numbers", start)
        start = float(s) if s.ndim == 0 else s
    if bracketing and not callable(bracket):
        _check_bracket(bracket, owner)
    if method == "hybrid" and max_evals < 2:
        raise ParameterError.expected("max_evals", owner, "an int >= 2 for hybrid (it evaluates both ends first)",
                                      max_evals)
    if chunk_size is not None and (not isinstance(chunk_size, numbers.Integral) or chunk_size < 1):
        raise ParameterError.expected("chunk_size", owner, "an int >= 1", chunk_size)
    lane_functions(f, fprime, fprime2, list(cols), variable, owner)  # unknown parameters fail here, not per chunk
    spec = Spec(f, method, start, bracket, fprime, fprime2, float(xtol), rtol, float(ftol), int(max_evals),
                 max_steps, variable, vectorized)
    fast = vectorized is not False and (vector or method == "hybrid") and n > 0 and _probe(spec, cols)
    size = int(chunk_size or (65536 if fast else 1024))
    bounds = [(lo, min(lo + size, n)) for lo in range(0, n, size)]
    asm = Assembly(cols, bounds)
    sink = _sink(progress, n, len(bounds))
    notes: list[str] = []
    workers = processes if processes is not None else (os.cpu_count() or 1) if len(bounds) > 1 else 1
    try:
        if client is not None:
            runner = "dask"
            stopped = run_dask(client, spec, cols, asm, sink, notes, deadline)
        elif fast or workers <= 1:
            runner = "vectorized" if fast else ("lane-by-lane" if vector else "scalar")
            stopped = run_here(spec, cols, asm, sink, notes, deadline)
        else:
            runner = "process-pool"
            stopped = run_pool(spec, cols, asm, sink, notes, workers, deadline)
    finally:
        if sink is not None:
            sink.close()
    sym = type(f).__module__.startswith("sympy")
    label = f if isinstance(f, str) else str(f) if sym else _callable_name(f)  # a lambda: "function" (reports show it)
    late = int(np.count_nonzero(asm.table["outcome"] == "timeout"))
    if late:
        notes.append(f"the time budget of {max_time:g} s ran out: {late} point(s) not finished are marked timeout")
    return SweepResult(
        table=asm.table, params=tuple(cols), method=method, label=str(label), grid=grid,
        interrupted=bool(stopped) and bool(np.any(asm.table["outcome"] == "not-run")), chunks=len(bounds),
        chunks_done=len(asm.done), runner=runner, seconds=time.perf_counter() - t0, notes=tuple(notes),
        timed_out=bool(late), settings=spec, max_time=max_time,
    )
