"""Faults at scale: a Dask worker killed mid-sweep loses and duplicates no point; a hung chunk is abandoned.

A LocalCluster on loopback (processes, two single-threaded workers, the HTTP server on a free port). The
worker is killed for real (SIGKILL to the pid that ``client.run(os.getpid)`` reports) while it has chunks in
flight, checked from the scheduler's ``processing()`` at that moment. Reference: the same sweep run in this
process, field by field (tests/slow/test_sweep_dask.py checks cluster and local sweeps agree without faults).
"""

from __future__ import annotations

import math
import os
import signal
import time

import numpy as np
import pytest

import convdiag

distributed = pytest.importorskip("distributed")
pytestmark = [pytest.mark.slow, pytest.mark.timeout(240)]


def slow_kepler(E, M, e):
    time.sleep(0.02)  # keeps each chunk on its worker long enough to be in flight when the worker dies
    return E - e * np.sin(E) - M


def slow_kepler_scalar(E, M, e):
    time.sleep(0.001)
    return E - e * math.sin(E) - M


def kepler_prime(E, M, e):
    return 1 - e * np.cos(E)


def _cluster():
    # dashboard_address=None would still bind the scheduler's HTTP server to port 8787 (distributed 2026.8), and
    # warn (an error here) when another cluster on the machine holds it: ":0" takes any free port.
    cluster = distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True, host="127.0.0.1",
                                       dashboard_address=":0")
    return cluster, distributed.Client(cluster)


@pytest.fixture(scope="module")
def client():
    cluster, c = _cluster()
    yield c
    c.close()
    cluster.close()


def _points(n, seed):
    rng = np.random.default_rng(seed)
    return {"M": rng.uniform(0, 2 * np.pi, n), "e": rng.uniform(0.0, 0.9, n)}


def _same_tables(a, b):
    assert a.dtype == b.dtype
    for name in a.dtype.names:
        if a.dtype[name].kind == "f":
            np.testing.assert_array_equal(a[name], b[name], err_msg=name)
        else:
            assert a[name].tolist() == b[name].tolist(), name


def _killer(client, log):
    """A progress callback that SIGKILLs a worker which has chunks in flight, once."""

    def progress(done, total):
        if log:
            return
        busy = {w: tasks for w, tasks in client.processing().items() if tasks}
        if not busy:
            return  # nothing in flight right now: try again after the next chunk
        target, in_flight = next(iter(busy.items()))
        pid = client.run(os.getpid, workers=[target])[target]
        os.kill(pid, signal.SIGKILL)
        log.append((target, pid, tuple(in_flight)))

    return progress


@pytest.mark.parametrize(("f", "kw"), [
    (slow_kepler, {"fprime": kepler_prime, "chunk_size": 500}),
    (slow_kepler_scalar, {"chunk_size": 30, "vectorized": False}),
], ids=["vectorised", "point-by-point"])
def test_a_worker_killed_with_chunks_in_flight_loses_and_duplicates_no_point(client, f, kw):
    pts = _points(4000 if f is slow_kepler else 240, seed=11)
    common = {"start": math.pi, "xtol": 1e-12, "rtol": 0.0, **kw}
    local = convdiag.sweep(f, pts, processes=1, **common)
    log = []
    remote = convdiag.sweep(f, pts, client=client, progress=_killer(client, log), **common)
    assert log, "no worker had a chunk in flight to kill"
    _, pid, in_flight = log[0]
    assert in_flight and all(str(key).startswith("convdiag-sweep-") for key in in_flight)
    assert not remote.interrupted and remote.chunks_done == remote.chunks
    assert np.array_equal(remote.table["point"], np.arange(len(local)))  # every point exactly once, in order
    assert np.bincount(remote.table["chunk"]).tolist() == np.bincount(local.table["chunk"]).tolist()
    _same_tables(remote.table, local.table)
    client.wait_for_workers(2, timeout=60)  # the nanny restarted the killed worker
    assert pid not in client.run(os.getpid).values()


def hangs_at_one_point(E, M, e):
    if M == 3.0:
        time.sleep(20)  # far beyond the budget; the cluster is closed after the test
    return E - e * math.sin(E) - M


def test_a_chunk_hung_on_the_cluster_is_abandoned_at_the_time_budget_and_the_rest_kept():
    cluster, c = _cluster()
    try:
        pts = {"M": np.array([1.0, 2.0, 3.0, 4.0, 5.0, 6.0]), "e": np.full(6, 0.5)}
        kw = {"start": math.pi, "chunk_size": 1, "xtol": 1e-12, "rtol": 0.0, "vectorized": False}
        t0 = time.perf_counter()
        res = convdiag.sweep(hangs_at_one_point, pts, client=c, max_time=4.0, **kw)
        assert time.perf_counter() - t0 < 4.0 + 8.0  # the budget, the grace, generous slack; never the 20 s hang
        local = convdiag.sweep(lambda E, M, e: E - e * math.sin(E) - M, pts, processes=1, **kw).table
    finally:
        c.close()
        cluster.close()
    t = res.table
    hung = t["M"] == 3.0
    assert res.timed_out and t["outcome"][hung].tolist() == ["timeout"]
    for name in ("root", "evals", "outcome"):
        assert t[name][~hung].tolist() == local[name][~hung].tolist()
