"""Sweeps on a Dask cluster (convdiag.core._sweep with a dask.distributed.Client).

A LocalCluster on loopback with two single-threaded worker processes. Reference: the same sweep
run in this process (every field must be equal, every point present exactly once); Kepler roots
are checked against scipy.optimize.brentq on [0, 2π] in tests/core/test_sweep.py.
"""

import math
import os
import signal
import time

import numpy as np
import pytest

from convdiag.core._sweep import param_grid, sweep

distributed = pytest.importorskip("distributed")
pytestmark = [pytest.mark.slow, pytest.mark.timeout(120)]

TIGHT = {"xtol": 1e-12, "rtol": 0.0}


def kepler(E, M, e):
    return E - e * np.sin(E) - M


def kepler_prime(E, M, e):
    return 1 - e * np.cos(E)


def kepler_scalar(E, M, e):
    return E - e * math.sin(E) - M


def slow_kepler(E, M, e):
    time.sleep(0.02)  # keeps each chunk on a worker long enough to lose it mid-way
    return E - e * np.sin(E) - M


@pytest.fixture(scope="module")
def client():
    cluster = distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True, host="127.0.0.1",
                                       dashboard_address=":0")
    c = distributed.Client(cluster)
    yield c
    c.close()
    cluster.close()


def _same_tables(a, b):
    assert a.dtype == b.dtype
    for name in a.dtype.names:
        if a.dtype[name].kind == "f":
            np.testing.assert_array_equal(a[name], b[name])
        else:
            assert np.array_equal(a[name], b[name]), name


def _points(n, seed=3):
    rng = np.random.default_rng(seed)
    return {"M": rng.uniform(0, 2 * np.pi, n), "e": rng.uniform(0.0, 0.99, n)}


def test_a_vectorised_sweep_on_the_cluster_equals_the_local_sweep(client):
    pts = _points(40_000)
    kw = dict(start=lambda M, e: M, fprime=kepler_prime, chunk_size=6000, **TIGHT)
    remote = sweep(kepler, pts, client=client, **kw)
    local = sweep(kepler, pts, **kw)
    assert remote.runner == "dask" and not remote.interrupted and remote.chunks_done == remote.chunks == 7
    _same_tables(remote.table, local.table)
    assert np.array_equal(remote.table["point"], np.arange(40_000))  # every point exactly once, in order
    assert "divergence" in remote.counts()  # the naive start loses some lanes at high e


def test_a_scalar_function_on_the_cluster_equals_the_local_sweep(client):
    grid = param_grid(M=np.linspace(0.0, 6.2, 30), e=np.linspace(0.0, 0.95, 20))
    kw = dict(start=lambda M, e: M + e * np.sin(M), chunk_size=100, **TIGHT)
    remote = sweep(kepler_scalar, grid, client=client, **kw)
    local = sweep(kepler_scalar, grid, processes=1, **kw)
    _same_tables(remote.table, local.table)
    assert remote.counts() == {"converged": 600}


def test_an_interrupted_cluster_sweep_returns_the_finished_chunks(client):
    pts = _points(20_000, seed=5)
    kw = dict(start=math.pi, fprime=kepler_prime, chunk_size=1000, **TIGHT)
    local = sweep(kepler, pts, **kw)
    calls = []

    def progress(done, total):
        calls.append(done)
        if len(calls) == 3:
            raise KeyboardInterrupt

    cut = sweep(kepler, pts, client=client, progress=progress, **kw)
    assert cut.interrupted and cut.chunks_done == 3
    done = cut.table["outcome"] != "not-run"
    assert np.count_nonzero(done) == 3000
    _same_tables(cut.table[done], local.table[done])
    assert not cut.table["evals"][~done].any()


def test_a_worker_killed_mid_sweep_loses_and_duplicates_no_point(client):
    pts = _points(4000, seed=7)
    kw = dict(start=math.pi, fprime=kepler_prime, chunk_size=500, **TIGHT)
    local = sweep(kepler, pts, **kw)
    killed = []

    def kill_one_worker(done, total):
        if not killed:  # after the first chunk: end one worker process abruptly (its nanny restarts it)
            busy = [w for w, tasks in client.processing().items() if tasks]
            pids = client.run(os.getpid)
            target = busy[0] if busy else next(iter(pids))
            os.kill(pids[target], signal.SIGKILL)
            killed.append(target)

    remote = sweep(slow_kepler, pts, client=client, progress=kill_one_worker, **kw)
    assert killed and not remote.interrupted and remote.chunks_done == remote.chunks == 8
    _same_tables(remote.table, local.table)
    client.wait_for_workers(2, timeout=60)
