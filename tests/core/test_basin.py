"""Basin maps (convdiag.core._basin): roots, their numbering, the symmetries of Newton on z^3 - 1.

Sources: the roots of z^3 - 1 are exp(2πik/3) (exact; also numpy.roots). Newton's map of z^3 - 1,
N(z) = z - (z^3 - 1)/(3z^2), satisfies N(ωz) = ωN(z) for ω = exp(2πi/3) and N(conj z) = conj N(z)
(algebra), so rotating the starts by 2π/3 permutes the basins and mirroring them in the real axis
swaps the two complex roots. Floating-point conjugation is exact, so that mirror holds point by
point; a rotation is not exact in floating point, so it is checked on a grid built with the
symmetry. REFERENCES §4 for x^3 - 2x + 2.
"""

import mpmath
import numpy as np
import pytest

from convdiag import ParameterError, solve
from convdiag.core._basin import basin_map, cluster_roots
from convdiag.core._outcomes import classify_run

CUBE_ROOTS = np.exp(2j * np.pi * np.arange(3) / 3)


def _cube_minus_one(z):
    return z**3 - 1


def test_newton_on_z_cubed_minus_one_finds_the_three_cube_roots_of_unity():
    bm = basin_map(_cube_minus_one, rectangle=((-2, 2), (-2, 2)), shape=(81, 81), max_evals=200)
    assert bm.roots.size == 3
    # exact roots exp(2πik/3) from mpmath; attainable accuracy is a few ulp (rounding noise of
    # z^3 - 1 over |f'| = 3, REFERENCES §3), so 8·eps; numpy.roots agrees to a few ulp as well
    exact = [mpmath.exp(2j * mpmath.pi * k / 3) for k in range(3)]
    for r in exact:
        assert min(abs(mpmath.mpc(complex(b)) - r) for b in bm.roots) < 8 * 2.220446049250313e-16
    for r in np.roots([1, 0, 0, -1]):
        assert np.min(np.abs(bm.roots - r)) < 16 * 2.220446049250313e-16
    assert bm.root_counts().sum() == bm.counts()["converged"]
    assert bm.root_counts().min() > 0.3 * bm.starts.size  # three basins of comparable area


def test_each_sampled_start_reaches_the_root_the_scalar_driver_reaches_with_the_same_evaluations():
    # the requirement: lane by lane the map's outcome (root, evaluations, class) is that of
    # convdiag.solve; 201 x 201 starts run in several blocks, so lanes are set aside and merged
    bm = basin_map(_cube_minus_one, rectangle=((-2, 2), (-2, 2)), shape=(201, 201), max_evals=150)
    pick = np.random.default_rng(12).choice(bm.starts.size, 150, replace=False)
    for i in pick.tolist():
        z0 = complex(bm.starts.ravel()[i])
        run = solve(_cube_minus_one, "newton", start=z0, max_evals=150)
        rid = int(np.argmin(np.abs(bm.roots - run.root))) if run.converged else -1
        assert (rid, run.evaluations, classify_run(run)) == \
            (bm.root_id.ravel()[i], bm.evals.ravel()[i], bm.outcome.ravel()[i]), z0
        if run.converged:
            assert bm.lanes.x.ravel()[i] == run.root, z0  # z^3 - 1 gives arrays what it gives scalars: bit for bit


def test_rotating_the_starts_by_a_third_of_a_turn_permutes_the_basins():
    m, rings = 90, 30
    theta = 2 * np.pi * np.arange(3 * m) / (3 * m) + 0.0123
    starts = np.linspace(0.05, 2.0, rings)[:, None] * np.exp(1j * theta)[None, :]
    bm = basin_map(_cube_minus_one, starts=starts, fprime=lambda z: 3 * z * z, max_steps=60, max_evals=1000)
    ids = bm.root_id
    # expected permutation: the root reached from ω·z0 is ω times the root reached from z0
    perm = np.array([np.argmin(np.abs(bm.roots - CUBE_ROOTS[1] * r)) for r in bm.roots])
    assert sorted(perm.tolist()) == [0, 1, 2] and not np.array_equal(perm, np.arange(3))
    rotated = np.roll(ids, -m, axis=1)  # column k + m is the start rotated by 2π/3
    conv = (ids >= 0) & (rotated >= 0)
    agree = np.mean(rotated[conv] == perm[ids[conv]])
    assert conv.mean() > 0.99 and agree > 0.999


def test_mirroring_the_starts_in_the_real_axis_swaps_the_complex_basins_point_by_point():
    half = np.linspace(0.0, 1.7, 61)
    im = np.concatenate([-half[::-1], half[1:]])  # exact negatives
    starts = np.linspace(-1.7, 1.7, 91)[None, :] + 1j * im[:, None]
    bm = basin_map(_cube_minus_one, starts=starts, max_evals=200)
    ids = bm.root_id
    swap = np.array([np.argmin(np.abs(bm.roots - np.conj(r))) for r in bm.roots])
    assert sorted(swap.tolist()) == [0, 1, 2]
    mirrored = ids[::-1, :]
    assert np.array_equal(np.where(ids >= 0, swap[np.maximum(ids, 0)], -1), mirrored)
    np.testing.assert_array_equal(bm.evals, bm.evals[::-1, :])


def test_an_interval_of_the_real_cubic_shows_its_one_root_and_the_cycle_around_zero():
    bm = basin_map("x**3 - 2*x + 2", interval=(-3, 3), shape=601, max_evals=60)
    assert bm.roots.tolist() == [-1.7692923542386314]  # REFERENCES §4 [V]
    x = bm.starts
    assert set(bm.outcome[x < -1.0]) == {"converged"}  # Newton converges monotonically left of the root's basin edge
    assert bm.outcome[np.argmin(np.abs(x))] == "cycle"  # 0 -> 1 -> 0 (REFERENCES §4)
    assert bm.extent == (-3.0, 3.0) and bm.kind == "interval"


def test_symmetric_roots_have_basins_of_equal_size_on_a_symmetric_interval():
    bm = basin_map("x**2 - 1", interval=(-3, 3), shape=601)  # x^2 - 1 is even: basins mirror
    assert bm.roots.tolist() == [-1.0, 1.0]
    assert bm.root_counts().tolist() == [300, 300]
    assert bm.outcome[300] == "flat"  # f'(0) = 0 at the middle start


def test_roots_that_differ_by_rounding_are_one_root():
    x = np.array([1.0, 1.0 + 2e-16, 1.0 - 2e-16, -3.0, 5e-7 + 1.0, np.nan])
    roots, ids = cluster_roots(x, np.zeros(6), np.array([True] * 5 + [False]), tol=1e-6)
    assert roots.tolist() == [-3.0, 1.0] and ids.tolist() == [1, 1, 1, 0, 1, -1]


def test_basin_map_needs_exactly_one_kind_of_grid():
    with pytest.raises(ParameterError, match="needs exactly one of interval"):
        basin_map("x - 1", interval=(0, 1), rectangle=((0, 1), (0, 1)))
    with pytest.raises(ParameterError, match="'interval' parameter of basin_map must be a pair"):
        basin_map("x - 1", interval=(1, 0))
    with pytest.raises(ParameterError, match="'shape' parameter of basin_map"):
        basin_map("x - 1", rectangle=((0, 1), (0, 1)), shape=(1, 5))


def test_many_roots_are_clustered_and_numbered_in_order():
    # sin x = 0 at kπ (exact): over [-300, 300] Newton reaches about 190 of them, past the
    # one-pass-per-root grouping (64) into the rounding cells
    bm = basin_map("sin(x)", interval=(-300, 300), shape=4001)
    k = np.round(bm.roots / np.pi)
    assert bm.roots.size > 64 and np.all(np.diff(bm.roots) > 0)
    np.testing.assert_allclose(bm.roots, k * np.pi, rtol=0, atol=1e-12)
    assert np.unique(k).size == bm.roots.size
    ids = bm.root_id
    conv = ids >= 0
    np.testing.assert_allclose(bm.lanes.x[conv], bm.roots[ids[conv]], rtol=0, atol=1e-12)
