"""Domain edges and dips of |f| (convdiag.core._edges)."""

import itertools
import math

import numpy as np
import pytest

from convdiag.core._edges import inspect_dip, locate_edge


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
