"""Running a sweep's chunks: one chunk solved (a pure function), and chunks run in this process.

A chunk is a pure function of its inputs (the sweep's settings, :class:`Spec`,
and the parameter values of its points), has an id, and returns one row per
point; :class:`Assembly` stores the rows by chunk id, so a chunk computed
twice (a retry after a lost worker) is stored once and no point is lost or
duplicated. The runners return True when a KeyboardInterrupt stopped them;
the rows finished by then are kept. A time budget (a wall-time deadline)
marks the points not finished by then ``timeout``. The runners that use
worker processes (a process pool, Dask) are in ``_sweep_workers``.
"""

from __future__ import annotations

import contextlib
import math
import signal
import threading
import time
from collections.abc import Callable, Iterator, Mapping, Sequence
from dataclasses import dataclass
from typing import Any, Protocol

import numpy as np
from numpy.typing import NDArray

from ..errors import ParameterError
from ._outcomes import OUTCOMES, REASONS, classify_run
from ._vector import VECTOR_METHODS, solve_many
from ._vfunctions import lane_functions

__all__ = ["FIELDS", "RESERVED", "Assembly", "ChunkInterrupted", "Deadline", "ProgressSink", "Spec", "brackets_for",
           "col_slice", "run_chunk", "run_here", "starts_for", "table_dtype"]

Arr = NDArray[Any]
#: The table's columns after ``point``, ``chunk`` and one per parameter.
FIELDS: tuple[tuple[str, str], ...] = (
    ("start", "f8"), ("root", "f8"), ("f_root", "f8"), ("evals", "i4"), ("steps", "i4"),
    ("outcome", "U13"), ("stop_reason", "U16"),
)
_HEAD: tuple[tuple[str, str], ...] = (("point", "i8"), ("chunk", "i4"))
RESERVED = {n for n, _ in (*_HEAD, *FIELDS)}
_OC = {o: i for i, o in enumerate(OUTCOMES)}
_RC = {r: i for i, r in enumerate(REASONS)}
_HYBRID_OUTCOME = {"exact-zero": "converged", "bracket-small": "converged", "max-evals": "budget",
                   "nonfinite-value": "domain-error", "function-raised": "domain-error",
                   "no-sign-change": "no-bracket"}


class ProgressSink(Protocol):
    def update(self, done: int, total: int) -> None: ...

    def close(self) -> None: ...


def table_dtype(names: Sequence[str]) -> np.dtype[Any]:
    """The sweep table's structured dtype for parameters ``names``."""
    return np.dtype([*_HEAD, *((n, "f8") for n in names), *FIELDS])


# -- one chunk (pure: the same inputs give the same rows) --------------------------------------------
@dataclass(frozen=True)
class Spec:
    """A sweep's settings: everything a chunk needs besides its points (picklable)."""

    f: Any
    method: str
    start: Any
    bracket: Any
    fprime: Any
    fprime2: Any
    xtol: float
    rtol: float | None
    ftol: float
    max_evals: int
    max_steps: int | None
    variable: str
    vectorized: bool | None


def per_point(fn: Callable[..., Any], cols: Mapping[str, Arr], n: int) -> Arr:
    """Call ``fn(**params)`` on all points at once, or point by point; NaN where it fails."""
    try:
        with np.errstate(all="ignore"):
            out = np.asarray(fn(**cols), dtype=np.float64)
        if out.shape in ((n,), ()):
            return np.broadcast_to(out, (n,)).copy()
    except Exception:  # noqa: BLE001, S110  (fall back to one call per point)
        pass
    res = np.full(n, np.nan)
    rows = {k: v.tolist() for k, v in cols.items()}
    for i in range(n):
        try:
            res[i] = float(fn(**{k: v[i] for k, v in rows.items()}))
        except Exception:  # noqa: BLE001, S110  (this point gets no start: marked bad-value)
            pass
    return res


def starts_for(spec: Spec, cols: Mapping[str, Arr], n: int, lo: int) -> Arr:
    s = spec.start
    if callable(s):
        return per_point(s, cols, n)
    if isinstance(s, np.ndarray) and s.ndim == 1:
        return s[lo:lo + n].astype(np.float64)
    return np.full(n, float(s))


class Deadline(BaseException):
    """The sweep's time budget ran out inside a chunk (raised by the alarm a pool worker sets)."""


class ChunkInterrupted(KeyboardInterrupt):
    """A KeyboardInterrupt that carries the rows its chunk finished before it (the rest are ``not-run``)."""

    def __init__(self, chunk: int, arrays: dict[str, Arr]) -> None:
        super().__init__(f"chunk {chunk} interrupted")
        self.chunk, self.arrays = chunk, arrays

    def __reduce__(self) -> tuple[Any, ...]:  # sent back from a worker process
        return (ChunkInterrupted, (self.chunk, self.arrays))


@contextlib.contextmanager
def _alarm(deadline: float | None, armed: bool) -> Iterator[None]:
    """In a pool worker (a child process's main thread), interrupt the user's code at the deadline.

    A function stuck in Python code (``time.sleep``, an endless loop) gets :class:`Deadline` raised inside it;
    one stuck in C code the alarm cannot reach is stopped by the parent, which kills the worker.
    """
    if deadline is None or not armed or not hasattr(signal, "setitimer") or \
            threading.current_thread() is not threading.main_thread():
        yield
        return

    def ring(signum: int, frame: Any) -> None:
        raise Deadline

    old = signal.signal(signal.SIGALRM, ring)
    signal.setitimer(signal.ITIMER_REAL, max(deadline - time.time(), 1e-3))
    try:
        yield
    finally:
        signal.setitimer(signal.ITIMER_REAL, 0)
        signal.signal(signal.SIGALRM, old)


def run_chunk(payload: Spec | bytes, chunk: int, lo: int, cols: Mapping[str, Arr], deadline: float | None = None,
              armed: bool = False) -> tuple[int, dict[str, Arr]]:
    """Solve the points of one chunk; returns (chunk id, column arrays). Pure and picklable.

    ``deadline`` (wall time, ``time.time()``) is the sweep's time budget: points not finished by then are
    marked ``timeout``. ``armed`` (pool workers only) sets an alarm that interrupts the user's code at the
    deadline. A KeyboardInterrupt in a point-by-point chunk raises :class:`ChunkInterrupted` with the rows
    finished before it.
    """
    if isinstance(payload, bytes):  # shipped with cloudpickle
        import pickle

        payload = pickle.loads(payload)
    spec: Spec = payload  # type: ignore[assignment]
    n = next(iter(cols.values())).shape[0] if cols else 0
    out: dict[str, Arr] = {
        "start": np.full(n, np.nan), "root": np.full(n, np.nan), "f_root": np.full(n, np.nan),
        "evals": np.zeros(n, np.int32), "steps": np.zeros(n, np.int32),
        "outcome": np.full(n, _OC["domain-error"], np.uint8), "reason": np.full(n, _RC["bad-value"], np.uint8),
    }
    if deadline is not None and time.time() >= deadline:
        out["outcome"][:], out["reason"][:] = _OC["timeout"], _RC["max-time"]
        return chunk, out
    ok = np.arange(0)
    try:
        with _alarm(deadline, armed):
            if spec.method in VECTOR_METHODS:
                x0 = starts_for(spec, cols, n, lo)
                out["start"] = x0
                ok = np.flatnonzero(np.isfinite(x0))
                if ok.size:
                    lanes = solve_many(
                        spec.f, spec.method,  # type: ignore[arg-type]
                        starts=x0[ok], fprime=spec.fprime, fprime2=spec.fprime2,
                        params={k: v[ok] for k, v in cols.items()}, xtol=spec.xtol, rtol=spec.rtol, ftol=spec.ftol,
                        max_evals=spec.max_evals, max_steps=spec.max_steps, variable=spec.variable,
                        vectorized=spec.vectorized,
                    )
                    out["root"][ok], out["f_root"][ok] = lanes.x, lanes.fx
                    out["evals"][ok], out["steps"][ok] = lanes.evals, lanes.steps
                    out["outcome"][ok], out["reason"][ok] = lanes.outcome_code, lanes.reason_code
                return chunk, out
            a, b = brackets_for(spec, cols, n)
            out["start"] = a
            ok = np.flatnonzero(np.isfinite(a) & np.isfinite(b) & (a != b))
            if spec.method == "hybrid" and ok.size:
                from ._vhybrid import hybrid_many

                fns = lane_functions(spec.f, None, None, list(cols), spec.variable, "sweep")
                res = hybrid_many(
                    _lane_function(fns, spec.vectorized), a[ok], b[ok], xtol=spec.xtol, rtol=spec.rtol,
                    max_evals=spec.max_evals, params={k: v[ok] for k, v in cols.items()},
                )
                status = res.status.tolist()
                out["root"][ok], out["f_root"][ok], out["evals"][ok] = res.root, res.fun, res.evaluations
                out["steps"][ok] = np.maximum(res.evaluations - 2, 0)
                out["outcome"][ok] = [_OC[sus or _HYBRID_OUTCOME.get(s, "domain-error")]  # a flat stretch or pole
                                      for s, sus in zip(status, res.suspect.tolist())]  # is not a root
                out["reason"][ok] = [_RC.get(s, _RC["bad-value"]) for s in status]
            elif ok.size and _scalar_points(spec, cols, a, b, ok, out, deadline):
                raise ChunkInterrupted(chunk, out)
    except Deadline:  # the alarm went off in a chunk solved all at once: none of its points finished
        if spec.method in VECTOR_METHODS or spec.method == "hybrid":
            out["outcome"][ok], out["reason"][ok] = _OC["timeout"], _RC["max-time"]
    return chunk, out


def brackets_for(spec: Spec, cols: Mapping[str, Arr], n: int) -> tuple[Arr, Arr]:
    br = spec.bracket
    if callable(br):
        pair: list[Arr] = []
        for j in range(2):
            pair.append(per_point(lambda _j=j, **p: br(**p)[_j], cols, n))
        return pair[0], pair[1]
    return np.full(n, float(br[0])), np.full(n, float(br[1]))


def _lane_function(fns: Any, vectorized: bool | None) -> Callable[..., Any]:
    def f(x: Arr, **p: Any) -> Arr:
        y, _ = fns.call(0, x, p, False)
        return y  # type: ignore[no-any-return]

    if vectorized is False:
        fns.vectorized = False
    return f


def _scalar_points(spec: Spec, cols: Mapping[str, Arr], a: Arr, b: Arr, ok: Arr, out: dict[str, Arr],
                   deadline: float | None = None) -> bool:
    """Any registered method, one point at a time with the scalar driver. True when a KeyboardInterrupt
    stopped it (the points not reached are marked ``not-run``); points not finished by the deadline are
    marked ``timeout``."""
    from ..errors import BracketError
    from ._session import solve

    rows = {k: v.tolist() for k, v in cols.items()}
    todo = ok.tolist()
    for j, i in enumerate(todo):
        kw = {"xtol": spec.xtol, "rtol": spec.rtol, "ftol": spec.ftol, "max_evals": spec.max_evals,
              "max_steps": spec.max_steps}
        if deadline is not None:
            left = deadline - time.time()
            if left <= 0:
                out["outcome"][todo[j:]], out["reason"][todo[j:]] = _OC["timeout"], _RC["max-time"]
                return False
            kw["max_time"] = left
        try:
            with np.errstate(all="ignore"):
                run = solve(spec.f, spec.method, bracket=(float(a[i]), float(b[i])),
                            params={k: v[i] for k, v in rows.items()} or None, **kw)  # type: ignore[arg-type]
        except BracketError:
            out["outcome"][i], out["reason"][i] = _OC["no-bracket"], _RC["no-sign-change"]
            out["evals"][i] = 2
            continue
        except ParameterError:
            continue
        except Deadline:
            out["outcome"][todo[j:]], out["reason"][todo[j:]] = _OC["timeout"], _RC["max-time"]
            return False
        out["root"][i] = float(run.root) if run.root is not None else math.nan
        vals = run.values
        out["f_root"][i] = vals[np.nanargmin(np.abs(vals))] if np.isfinite(vals).any() else math.nan
        out["evals"][i], out["steps"][i] = run.evaluations, len(run.steps)
        out["outcome"][i], out["reason"][i] = _OC[classify_run(run)], _RC.get(run.stop_reason, _RC["not-run"])
        if run.stop_reason == "max-time":  # only the sweep's deadline sets a time budget here
            out["outcome"][i] = _OC["timeout"]
        if run.stop_reason == "interrupted":  # Ctrl-C: this point and the rest were not finished
            out["outcome"][todo[j:]], out["reason"][todo[j:]] = _OC["not-run"], _RC["not-run"]
            return True
    return False


# -- assembling rows by chunk id ----------------------------------------------------------------------
class Assembly:
    """The table, filled chunk by chunk; a chunk that arrives twice is stored once."""

    def __init__(self, cols: Mapping[str, Arr], bounds: list[tuple[int, int]]) -> None:
        n = bounds[-1][1] if bounds else 0
        t = np.zeros(n, table_dtype(list(cols)))
        t["point"] = np.arange(n)
        for cid, (lo, hi) in enumerate(bounds):
            t["chunk"][lo:hi] = cid
        for k, v in cols.items():
            t[k] = v
        for k in ("start", "root", "f_root"):
            t[k] = np.nan
        t["outcome"], t["stop_reason"] = "not-run", "not-run"
        self.table, self.bounds, self.done = t, bounds, set[int]()
        self.timed_out = set[int]()

    def add(self, chunk: int, arrays: Mapping[str, Arr], *, complete: bool = True) -> bool:
        """Store a chunk's rows (``complete=False``: the rows an interrupted chunk finished)."""
        if chunk in self.done:
            return False
        lo, hi = self.bounds[chunk]
        t = self.table[lo:hi]
        for k in ("start", "root", "f_root", "evals", "steps"):
            t[k] = arrays[k]
        t["outcome"] = np.asarray(OUTCOMES)[arrays["outcome"]]
        t["stop_reason"] = np.asarray(REASONS)[arrays["reason"]]
        if complete:
            self.done.add(chunk)
        if np.any(arrays["outcome"] == _OC["timeout"]):
            self.timed_out.add(chunk)
        return True

    def time_out(self, chunk: int) -> None:
        """The budget ran out before the chunk came back: its points are marked ``timeout``."""
        if chunk in self.done:
            return
        lo, hi = self.bounds[chunk]
        t = self.table[lo:hi]
        t["outcome"], t["stop_reason"] = "timeout", "max-time"
        self.timed_out.add(chunk)

    @property
    def points_done(self) -> int:
        return sum(self.bounds[c][1] - self.bounds[c][0] for c in self.done)


# -- runners ------------------------------------------------------------------------------------------
def col_slice(cols: Mapping[str, Arr], lo: int, hi: int) -> dict[str, Arr]:
    return {k: v[lo:hi] for k, v in cols.items()}


def _report(asm: Assembly, sink: ProgressSink | None) -> None:  # also used by _sweep_workers
    if sink is not None:
        sink.update(asm.points_done, asm.table.shape[0])


def run_here(spec: Spec, cols: Mapping[str, Arr], asm: Assembly, sink: ProgressSink | None,
             notes: list[str], deadline: float | None = None) -> bool:
    """Run the chunks in this process; True when a KeyboardInterrupt stopped it (finished rows are kept)."""
    for cid, (lo, hi) in enumerate(asm.bounds):
        if deadline is not None and time.time() >= deadline:
            for c in range(cid, len(asm.bounds)):
                asm.time_out(c)
            return False
        try:
            _, arrays = run_chunk(spec, cid, lo, col_slice(cols, lo, hi), deadline)
        except ChunkInterrupted as exc:
            asm.add(cid, exc.arrays, complete=False)
            return True
        except KeyboardInterrupt:
            return True
        except Exception as exc:  # noqa: BLE001  (its points stay not-run; the others go on)
            notes.append(f"chunk {cid} (points {lo}..{hi - 1}) failed: {type(exc).__name__}: {exc}")
            continue
        asm.add(cid, arrays)
        try:
            _report(asm, sink)
        except KeyboardInterrupt:
            return True
    return False

