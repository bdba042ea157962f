"""The engine (convdiag.core._vengine): lanes run in blocks, the slow ones set aside and merged, and no
lane's result depends on how the lanes were blocked.

Reference: convdiag.solve, lane by lane (the scalar driver each lane must reproduce), with lanes
run in blocks of a few lanes so that every block is set aside and merged many times; and the
same lanes run as one block.
"""

import numpy as np
import pytest

from convdiag import solve
from convdiag.core._outcomes import REASONS, TRACK
from convdiag.core._vengine import Engine
from convdiag.core._vfunctions import lane_functions

EPS = 2.220446049250313e-16


def _cubic(x):
    return x * x * x - 2 * x + 2  # REFERENCES §4: Newton from 0 cycles 0 -> 1 -> 0


def _cube_minus_one(z):
    return z**3 - 1


def _engine(f, method, cplx, block, max_evals=40, fprime=None):
    fns = lane_functions(f, fprime, None, [], "x", "test")
    return Engine(method, fns, cplx, 0.0, 4 * EPS, 0.0, max_evals, None, block=block)


def _starts(method, x0):
    if method == "secant":  # the driver's second start: x0 + 1e-4·max(1, |x0|)
        return [x0, x0 + 1e-4 * np.maximum(1.0, np.abs(x0) if x0.dtype.kind != "c" else np.hypot(x0.real, x0.imag))]
    return [x0]


@pytest.mark.parametrize("method", ["newton", "secant", "steffensen", "halley"])
def test_lanes_in_tiny_blocks_equal_the_scalar_driver(method):
    x0 = np.random.default_rng(21).uniform(-3, 3, 90)
    out = _engine(_cubic, method, False, block=8).run(_starts(method, x0), {}, track=False)
    for i, s in enumerate(x0.tolist()):
        run = solve(_cubic, method, start=s, max_evals=40)
        assert REASONS[out.reason[i]] == run.stop_reason and out.evals[i] == run.evaluations, (i, s)
        assert out.steps[i] == len(run.steps), (i, s)
        if run.converged:
            assert out.x[i] == run.root, (i, s)


@pytest.mark.parametrize("track", [False, True])
def test_blocking_changes_no_lane_of_a_complex_grid_or_its_rolling_record(track):
    side = np.linspace(-2, 2, 23)
    x0 = (side[None, :] + 1j * side[:, None]).ravel()
    one = _engine(_cube_minus_one, "secant", True, block=None).run(_starts("secant", x0), {}, track=track)
    for block in (5, 16, 100):
        out = _engine(_cube_minus_one, "secant", True, block=block).run(_starts("secant", x0), {}, track=track)
        for name in ("x", "fx", "evals", "steps", "reason"):
            np.testing.assert_array_equal(getattr(out, name), getattr(one, name))
        if track:
            for key in TRACK:
                np.testing.assert_array_equal(out.track[key], one.track[key])
    assert len(set(one.reason.tolist())) >= 2  # converged lanes and others


def test_a_derivative_source_chosen_per_lane_survives_blocking_and_merging():
    # |x - 1| is not complex-analytic: lanes whose complex step disagrees with a central difference
    # fall back to central differences (two groups per block, merged separately), as solve() does
    def f(x):
        return np.abs(x - 1) + x * x * x - 3

    x0 = np.random.default_rng(4).uniform(-3, 3, 70)
    out = _engine(f, "newton", False, block=6, max_evals=100).run([x0], {}, track=False)
    for i, s in enumerate(x0.tolist()):
        run = solve(f, "newton", start=s, max_evals=100)
        assert REASONS[out.reason[i]] == run.stop_reason and out.evals[i] == run.evaluations, (i, s)
        if run.converged:
            assert out.x[i] == run.root, (i, s)


def test_per_lane_parameters_follow_their_lanes_through_blocks_and_merges():
    rng = np.random.default_rng(6)
    M, e = rng.uniform(0, 2 * np.pi, 120), rng.uniform(0.9, 0.99, 120)
    fns = lane_functions(lambda E, M, e: E - e * np.sin(E) - M, lambda E, M, e: 1 - e * np.cos(E), None, ["M", "e"],
                         "x", "test")
    out = Engine("newton", fns, False, 1e-12, 0.0, 0.0, 100, None, block=7).run([M.copy()], {"M": M, "e": e}, False)
    for i in range(M.size):
        run = solve(lambda E, M, e: E - e * np.sin(E) - M, "newton", start=float(M[i]),
                    fprime=lambda E, M, e: 1 - e * np.cos(E), params={"M": float(M[i]), "e": float(e[i])},
                    xtol=1e-12, rtol=0.0)
        assert out.evals[i] == run.evaluations and out.x[i] == run.root, i
