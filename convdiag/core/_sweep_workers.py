"""Running a sweep's chunks in worker processes: a local process pool, or a Dask cluster.

Both keep every finished chunk and store each chunk once (by its id, in the
:class:`~convdiag.core._sweep_run.Assembly`). A worker that dies takes its
chunks with it: the pool is started again for the chunks not stored, and Dask
reruns them (``retries``). With a time budget each chunk gets the deadline:
points not finished by then come back marked ``timeout``; a pool worker's
alarm interrupts the user's code at the deadline, and a worker still busy
``GRACE`` seconds later (stuck where the alarm cannot reach) is killed and
its chunk's points are marked ``timeout``. Dask workers cannot be killed from
here: their chunks still running at the deadline are abandoned (cancelled)
and marked ``timeout``. A KeyboardInterrupt stops the workers and returns.
"""

from __future__ import annotations

import time
import uuid
from collections.abc import Mapping
from typing import Any

from ._sweep_run import Arr, Assembly, ChunkInterrupted, Deadline, ProgressSink, Spec, _report, col_slice, run_chunk

__all__ = ["GRACE", "dumps", "run_dask", "run_pool", "stop_workers"]

#: Seconds a pool worker may stay busy past the deadline (its alarm should have stopped it) before it is killed.
GRACE = 0.5


def dumps(spec: Spec) -> bytes:
    try:
        import cloudpickle

        return cloudpickle.dumps(spec)  # type: ignore[no-any-return]
    except ImportError:
        import pickle

        return pickle.dumps(spec)


def stop_workers(pool: Any) -> None:
    """Kill a process pool's workers (stuck ones too): ``kill_workers`` where Python has it (3.14), else each."""
    kill = getattr(pool, "kill_workers", None)
    if callable(kill):
        kill()
        return
    for proc in list((getattr(pool, "_processes", None) or {}).values()):
        try:
            proc.kill()
        except Exception:  # noqa: BLE001, S110  (already gone)
            pass


def run_pool(spec: Spec, cols: Mapping[str, Arr], asm: Assembly, sink: ProgressSink | None,
             notes: list[str], workers: int, deadline: float | None = None) -> bool:
    """Run the chunks on ``workers`` local processes; True when a KeyboardInterrupt stopped it."""
    from concurrent.futures import FIRST_COMPLETED, ProcessPoolExecutor, wait
    from concurrent.futures.process import BrokenProcessPool

    payload = dumps(spec)
    todo = set(range(len(asm.bounds)))
    for _attempt in range(3):  # a lost worker breaks the pool: start a new one for the chunks not stored
        if not todo:
            break
        pool = ProcessPoolExecutor(max_workers=workers)
        futures = {pool.submit(run_chunk, payload, c, asm.bounds[c][0], col_slice(cols, *asm.bounds[c]), deadline,
                               True): c for c in sorted(todo)}
        pending, broken = set(futures), False
        try:
            while pending and not broken:
                budget = None if deadline is None else max(0.0, deadline + GRACE - time.time())
                done, pending = wait(pending, timeout=budget, return_when=FIRST_COMPLETED)
                if not done:  # the budget ran out and these chunks are still running: stop their workers
                    stop_workers(pool)
                    for fut in pending:
                        asm.time_out(futures[fut])
                    notes.append(f"the time budget ran out with {len(pending)} chunk(s) still running; their worker "
                                 "processes were stopped and their points marked timeout")
                    return False
                for fut in done:
                    c = futures[fut]
                    try:
                        cid, arrays = fut.result()
                    except BrokenProcessPool:
                        notes.append("a worker process died; its chunks were run again")
                        broken = True
                        break
                    except Deadline:  # the alarm went off as the chunk was finishing
                        asm.time_out(c)
                        todo.discard(c)
                        continue
                    except ChunkInterrupted as exc:
                        asm.add(c, exc.arrays, complete=False)
                        raise KeyboardInterrupt from None
                    except Exception as exc:  # noqa: BLE001
                        notes.append(f"chunk {c} failed: {type(exc).__name__}: {exc}")
                        todo.discard(c)
                        continue
                    todo.discard(cid)
                    if asm.add(cid, arrays):
                        _report(asm, sink)
        except KeyboardInterrupt:
            stop_workers(pool)
            return True
        finally:
            pool.shutdown(wait=False, cancel_futures=True)
    return False


def run_dask(client: Any, spec: Spec, cols: Mapping[str, Arr], asm: Assembly, sink: ProgressSink | None,
             notes: list[str], deadline: float | None = None) -> bool:
    """Run the chunks on a Dask cluster; True when a KeyboardInterrupt stopped it."""
    from distributed import as_completed

    token = uuid.uuid4().hex[:12]
    payload = client.scatter(dumps(spec), broadcast=True, hash=False)
    futures = [
        client.submit(run_chunk, payload, c, lo, col_slice(cols, lo, hi), deadline, key=f"convdiag-sweep-{token}-{c}",
                      retries=2)
        for c, (lo, hi) in enumerate(asm.bounds)
    ]
    chunk_of = {fut.key: c for c, fut in enumerate(futures)}
    back: set[int] = set()
    budget = None if deadline is None else max(0.0, deadline + GRACE - time.time())
    try:
        for fut in as_completed(futures, timeout=budget):  # type: ignore[no-untyped-call]
            back.add(chunk_of[fut.key])
            try:
                cid, arrays = fut.result()
            except Exception as exc:  # noqa: BLE001  (its points stay not-run)
                notes.append(f"{fut.key} failed: {type(exc).__name__}: {exc}")
                continue
            if asm.add(cid, arrays):
                _report(asm, sink)
    except TimeoutError:  # chunks still running at the deadline: abandoned, their points marked timeout
        late = [fut for fut in futures if chunk_of[fut.key] not in back]
        client.cancel(late)
        for fut in late:
            asm.time_out(chunk_of[fut.key])
        notes.append(f"the time budget ran out with {len(late)} chunk(s) still running on the cluster; they were "
                     "cancelled and their points marked timeout")
    except KeyboardInterrupt:
        client.cancel(futures)
        return True
    return False
