"""Flat spots of f: a zero slope, a long throw from a small slope, no sign change at all.

Closed forms in the comments: f = x³ − 2x + 2 has f' = 0 at √(2/3), where f = 2 − (4/3)√(2/3);
Newton's first step from 1.5 on sin x has length tan 1.5 and slope cos 1.5; x² + 1 > 0 everywhere.
"""

import math

import pytest

from convdiag import solve
from convdiag.core._diagnose import diagnose


def test_a_zero_slope_stop_is_flat_with_the_point():
    # f'(x) = 3x² − 2 vanishes at √(2/3); f there is 2 − (4/3)√(2/3) = 0.91134 (not a root)
    d = diagnose(solve("x**3 - 2*x + 2", "newton", start=math.sqrt(2 / 3)))
    assert d.verdict == "flat" and d.primary.tag == "zero slope"
    assert d.primary.value("f there") == pytest.approx(2 - 4 / 3 * math.sqrt(2 / 3), rel=1e-12)


def test_a_small_slope_throw_names_the_slope_and_the_step():
    d = diagnose(solve("sin(x)", "newton", start=1.5))
    f = d.finding("flat")
    assert f.value("slope used") == pytest.approx(math.cos(1.5), rel=1e-12)  # Newton's slope is f'(1.5)
    assert f.value("step length") == pytest.approx(math.tan(1.5), rel=1e-12)  # |f/f'| = tan 1.5 = 14.1


@pytest.mark.parametrize("method", ["newton", "secant"])
def test_a_function_without_a_real_root_is_flat_with_no_sign_change(method):
    # x² + 1 > 0 everywhere: Newton and the secant method wander around its minimum at 0, where |f| = 1
    d = diagnose(solve("x**2 + 1", method, start=0.5))
    assert d.verdict == "flat" and d.primary.tag == "no sign change"
    assert d.primary.value("sign of f") == "+" and d.primary.value("smallest |f|") >= 1.0
    assert d.primary.value("bracket search") == "no sign change" and d.remedy is None
    assert "no real root" in d.primary.summary
