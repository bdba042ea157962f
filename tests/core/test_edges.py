"""Domain edges and dips of |f| (convdiag.core._edges)."""

import itertools
import math

import numpy as np
import pytest

from convdiag.core._edges import inspect_dip, inspect_infinite, locate_edge


def test_an_edge_of_sqrt_is_located_at_zero():
    e = locate_edge(lambda x: math.sqrt(x) - 2, 1.0, -1.0, xtol=1e-10)
    assert e.undefined_side == "left" and 0 <= e.x_defined < 1e-10 and e.x_undefined < 0  # sqrt: defined for x >= 0
    assert "ValueError" in e.what and e.complete


def test_an_edge_on_the_right_is_reported_on_the_right():
    with np.errstate(invalid="ignore"):
        e = locate_edge(lambda x: float(np.sqrt(2.0 - x)), 0.0, 5.0, xtol=1e-9)
    assert e.undefined_side == "right" and abs(e.x_defined - 2.0) < 1e-9  # sqrt(2 - x): defined for x <= 2


def test_the_points_met_on_the_way_to_an_edge_are_kept():
    e = locate_edge(lambda x: math.log(x) + 5, 1.0, -1.0, xtol=1e-12)
    xs = [p for p, _ in e.defined_points]
    assert xs[0] == 1.0 and all(a > b for a, b in itertools.pairwise(xs))
    # log(x) + 5 changes sign at exp(-5) (exact): the kept points show it
    assert any((fa > 0) != (fb > 0) for (_, fa), (_, fb) in zip(e.defined_points, e.defined_points[1:]))


@pytest.mark.parametrize("use_scipy", [True, False])
def test_a_double_root_is_a_touch(use_scipy):
    d = inspect_dip(lambda x: (x - 1) ** 2 * (x + 2), 0.5, 1.6, 1.0, scale=1.0, use_scipy=use_scipy)
    assert d.kind == "touch" and abs(d.x - 1) < 1e-6  # (x-1)^2(x+2): double root at 1 (exact)


def test_two_roots_hidden_between_samples_are_a_crossing():
    d = inspect_dip(lambda x: (x - 1) ** 2 - 1e-4, 0.5, 1.6, 1.0, scale=1.0)
    assert d.kind == "crossing" and d.fx < 0  # roots at 1 ± 0.01 (exact)


def test_a_dip_that_stays_away_from_zero_is_a_near_miss_or_nothing():
    assert inspect_dip(lambda x: (x - 1) ** 2 + 1e-4, 0.5, 1.6, 1.0, scale=1.0).kind == "near-miss"
    assert inspect_dip(lambda x: 2 + math.sin(x), 3.5, 5.5, 1.0, scale=2.0).kind == "none"


def test_a_dip_into_an_undefined_region_says_so():
    d = inspect_dip(lambda x: math.sqrt(abs(x - 1) - 0.01) + 0.5, 0.5, 1.6, 1.0, scale=1.0)
    assert d.kind == "undefined" and abs(d.x - 1) < 0.01


def test_a_dip_just_below_zero_is_a_crossing_between_two_close_roots():
    d = inspect_dip(lambda x: (x - 1) ** 2 - 1e-12, 0.5, 1.6, 1.0, scale=1.0)
    r1, r2 = sorted(np.roots([1.0, -2.0, 1.0 - 1e-12]).real)  # 1 ± 1e-6, reference numpy.roots
    assert d.kind == "crossing" and d.fx < 0 and r1 < d.x < r2
    assert abs(r2 - r1 - 2e-6) < 1e-9


def test_a_flip_the_budget_leaves_unchecked_is_no_touch():
    d = inspect_dip(lambda x: (x - 1) ** 2 - 1e-12, 0.5, 1.6, 1.0, scale=1.0, max_evals=12)
    assert d.kind == "unfinished" and any(v < 0 for _, v in d.points)  # 1 ± 1e-6 (exact): f < 0 between


def test_an_exact_hit_on_a_pole_is_a_pole_and_its_order_is_measured():
    def f(x):
        return 1 / (x - 2) if x != 2 else math.inf  # simple pole at 2 (exact)

    inf = inspect_infinite(f, 2.0, 2.0, math.inf, left=(1.5, -2.0), right=(2.5, 2.0), xtol=1e-10)
    assert inf.kind == "pole" and inf.x == 2.0
    assert inf.left.x_defined < 2.0 < inf.right.x_defined and abs(inf.exponent + 1) < 0.01  # |f| ~ d^-1
    assert min(inf.growth) > 1e8


def test_overflow_to_the_end_is_located_at_the_log_of_the_largest_double():
    def f(x):
        with np.errstate(over="ignore"):
            return float(np.exp(x))  # inf past the largest double

    inf = inspect_infinite(f, 800.0, 800.0, math.inf, left=(600.0, math.exp(600.0)), right=None, xtol=1e-9)
    assert inf.kind == "overflow" and inf.right is None and inf.left.undefined_side == "right"
    assert abs(inf.x - float(np.log(np.finfo(float).max))) < 1e-8  # reference: numpy.log(numpy.finfo(float).max)


def test_infinite_over_a_stretch_is_not_a_pole():
    def f(x):
        return math.inf if abs(x) < 0.25 else x  # infinite on (-0.25, 0.25), finite and flat outside (exact)

    inf = inspect_infinite(f, -0.2, 0.2, math.inf, left=(-0.5, -0.5), right=(0.5, 0.5), xtol=1e-9)
    assert inf.kind == "infinite"
    assert abs(inf.left.x_defined + 0.25) < 1e-8 and abs(inf.right.x_defined - 0.25) < 1e-8
