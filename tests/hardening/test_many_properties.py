"""``solve_many``, ``basin_map`` and ``sweep`` on hostile functions (array-taking or not) and hostile settings.

Properties: only documented errors escape; every lane or parameter point comes back exactly once, in place,
with a known outcome and stop reason and at most ``max_evals`` evaluations; the text and HTML forms render;
a sweep's CSV reads back to the same table.
"""

from __future__ import annotations

import math

import numpy as np
from checks import check_refusal, outcome, renders
from hypothesis import event, example, given, settings
from hypothesis import strategies as st
from hypothesis.extra import numpy as hnp
from strategies import Fault, Hostile, floats, hostile_functions, tolerances

import convdiag
from convdiag import OUTCOMES
from convdiag.core._outcomes import REASONS

N_LANES = 500
N_BASIN = 300
N_SWEEP = 400

VECTOR = ["newton", "secant", "steffensen", "halley"]


def mostly(good, bad):
    """``good`` four times in five, ``bad`` (invalid input) otherwise."""
    return st.tuples(st.sampled_from([True, True, True, True, False]), good, bad).map(lambda t: t[1] if t[0] else t[2])


lane_starts = mostly(
    hnp.arrays(np.float64, hnp.array_shapes(max_dims=2, max_side=6), elements=st.floats(-5, 5)),
    st.one_of(hnp.arrays(np.float64, st.integers(0, 4), elements=floats()), st.sampled_from([[], "1", [None], 3.0])),
)


def check_lanes(lanes, shape, max_evals):
    assert lanes.x.shape == lanes.evals.shape == lanes.outcome.shape == tuple(shape)
    assert set(np.unique(lanes.outcome).tolist()) <= set(OUTCOMES)
    assert set(np.unique(lanes.stop_reason).tolist()) <= set(REASONS)
    assert np.all(lanes.evals <= max_evals) and np.all(lanes.evals >= 0)
    conv = lanes.converged
    assert np.all(np.isfinite(lanes.x[conv]))
    renders(lanes)


@settings(max_examples=N_LANES)
@given(f=hostile_functions(), method=mostly(st.sampled_from(VECTOR), st.sampled_from(["bisection", "nope"])),
       starts=lane_starts, xtol=mostly(st.just(0.0), tolerances()), max_evals=mostly(st.integers(1, 30), st.just(0)),
       vectorized=st.sampled_from([None, None, False]),
       fprime=st.one_of(st.none(), hostile_functions(max_faults=1)))
@example(f=Hostile("two-cycle", ()), method="newton", starts=np.array([0.0, -2.0, 0.5]), xtol=0.0, max_evals=40,
         vectorized=None, fprime=None)  # the 2-cycle lane and two converging lanes
def test_lanes_come_back_one_per_start_whatever_the_function_does(f, method, starts, xtol, max_evals, vectorized,
                                                                  fprime):
    lanes, err = outcome(lambda: convdiag.solve_many(f, method, starts=starts, xtol=xtol, max_evals=max_evals,
                                                     vectorized=vectorized, fprime=fprime))
    event(type(err).__name__ if err is not None else "lanes")
    if err is not None:
        check_refusal(err, f.calls)
        return
    check_lanes(lanes, np.shape(starts), max_evals)


basin_where = mostly(
    st.one_of(
        st.builds(lambda a, w, n: {"interval": (a, a + w), "shape": n}, st.floats(-5, 5), st.floats(0.1, 10),
                  st.integers(2, 40)),
        st.builds(lambda a, w, n: {"rectangle": ((a, a + w), (-1.0, 1.0)), "shape": (n, n)}, st.floats(-5, 5),
                  st.floats(0.1, 10), st.integers(2, 8)),
    ),
    st.sampled_from([{}, {"interval": (1.0, 0.0)}, {"interval": (0.0, math.inf)}, {"interval": (0.0, 1.0), "shape": 1},
                     {"rectangle": ((0, 1), (0, 1)), "shape": 5}, {"rectangle": (0, 1)},
                     {"interval": (0, 1), "rectangle": ((0, 1), (0, 1))}, {"interval": (0.0, 1.0), "shape": 2.5},
                     {"rectangle": ((0, 1), (0, 1)), "shape": (3,)}]),
)


@settings(max_examples=N_BASIN)
@given(f=hostile_functions(), method=st.sampled_from(VECTOR), where=basin_where, max_evals=st.integers(1, 25))
def test_a_basin_map_has_one_outcome_per_start_whatever_the_function_does(f, method, where, max_evals):
    bm, err = outcome(lambda: convdiag.basin_map(f, method, max_evals=max_evals, **where))
    event(type(err).__name__ if err is not None else "map")
    if err is not None:
        check_refusal(err, f.calls)
        return
    check_lanes(bm.lanes, bm.starts.shape, max_evals)
    assert bm.root_id.shape == bm.starts.shape and np.all(bm.root_id < max(bm.roots.size, 1))
    assert np.all((bm.root_id >= 0) == bm.lanes.converged)
    assert int(bm.root_counts().sum()) == bm.counts().get("converged", 0)


sweep_methods = st.sampled_from(["newton", "secant", "hybrid", "bisection", "illinois", "halley"])


@settings(max_examples=N_SWEEP)
@given(f=hostile_functions(), method=sweep_methods, n=st.integers(1, 12), chunk=st.one_of(st.none(), st.integers(1, 5)),
       start=mostly(st.one_of(st.floats(-3, 3), st.just("callable")), st.sampled_from([math.nan, None, "x", [1.0]])),
       bracket=mostly(st.one_of(st.tuples(st.floats(-3, 0), st.floats(0.1, 3)), st.just("callable")),
                      st.sampled_from([None, (1.0, 1.0), (math.nan, 1.0), "ab"])),
       max_evals=st.integers(1, 25), vectorized=st.sampled_from([None, False]))
@example(f=Hostile("cubic", (Fault("above", 0, 2.2, "raise", "ValueError"),)), method="newton", n=6, chunk=2,
         start=3.0, bracket=(0.0, 3.0), max_evals=20, vectorized=None)
def test_a_sweep_returns_every_point_exactly_once_whatever_the_function_does(tmp_path_factory, f, method, n, chunk,
                                                                             start, bracket, max_evals, vectorized):
    pts = {"a": np.linspace(0.5, 2.0, n)}
    if start == "callable":
        start = lambda a: a  # one start per point
    if bracket == "callable":
        bracket = lambda a: (-a, 2 * a)
    res, err = outcome(lambda: convdiag.sweep(f, pts, method=method, start=start, bracket=bracket, max_evals=max_evals,
                                              chunk_size=chunk, processes=1, vectorized=vectorized, progress=False))
    event(type(err).__name__ if err is not None else res.runner)
    if err is not None:
        check_refusal(err, f.calls)
        return
    t = res.table
    assert len(res) == n and np.array_equal(t["point"], np.arange(n))  # every point, once, in order
    np.testing.assert_array_equal(t["a"], pts["a"])
    assert set(t["outcome"].tolist()) <= set(OUTCOMES) and set(t["stop_reason"].tolist()) <= set(REASONS)
    assert np.all(t["evals"] <= max_evals)
    assert not res.interrupted and res.chunks_done == res.chunks
    renders(res)
    path = tmp_path_factory.mktemp("sweep") / "s.csv"
    res.to_csv(path)
    back = convdiag.read_sweep_csv(path)
    for name in t.dtype.names:
        if t.dtype[name].kind == "f":
            np.testing.assert_array_equal(back[name], t[name])
        else:
            assert back[name].tolist() == t[name].tolist()
