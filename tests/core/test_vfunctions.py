"""The user's functions on lanes (convdiag.core._vfunctions): values checked per lane as the scalar
evaluator checks them, derivatives of expressions, functions that take only scalars.

References: the scalar evaluator (core/_evaluate.py) is what each lane's checks must reproduce:
NaN or infinity -> "nonfinite-value", a non-real value in real arithmetic -> "bad-value", an
exception -> "function-raised" (compared through convdiag.solve below); derivatives against sympy's
``diff``; finiteness against numpy.isfinite.
"""

import math

import numpy as np
import pytest
import sympy

from convdiag import ParameterError, solve
from convdiag.core._outcomes import REASONS
from convdiag.core._vfunctions import all_finite, check_array, lane_functions


def test_bad_values_get_the_scalar_drivers_stop_reasons_lane_by_lane():
    y = np.array([1.0, np.nan, 2.0 + 3.0j, np.inf, 4.0 + 0.0j])
    vals, codes = check_array(y, cplx=False)
    assert [REASONS[c] if c else "ok" for c in codes] == ["ok", "nonfinite-value", "bad-value", "nonfinite-value", "ok"]
    assert vals[0] == 1.0 and vals[4] == 4.0 and vals.dtype == np.float64
    # the same values from scalar runs (one evaluation at the start)
    for value, want in ((math.nan, "nonfinite-value"), (2.0 + 3.0j, "bad-value"), (math.inf, "nonfinite-value")):
        assert solve(lambda x, v=value: v, "newton", start=0.0, fprime=lambda x: 1.0).stop_reason == want
    _, ok = check_array(np.array([1.0 + 2.0j, -3.0j]), cplx=True)
    assert ok is None


def test_finiteness_is_found_even_when_the_quick_sum_overflows():
    big = np.full(4, 1e308 + 1e308j)
    assert all_finite(big) == bool(np.isfinite(big).all()) is True
    for bad in (np.nan, np.inf, complex(0, -np.inf)):
        y = np.array([1.0, 2.0, bad, 3.0], dtype=complex)
        assert all_finite(y) is False and all_finite(y.real) == bool(np.isfinite(y.real).all())


def test_expression_derivatives_are_sympys():
    fns = lane_functions("a*sin(x)*exp(x/2)", None, None, ["a"], "x", "test")
    x = np.linspace(-2.0, 3.0, 11)
    s, a = sympy.Symbol("x"), sympy.Symbol("a")
    expr = a * sympy.sin(s) * sympy.exp(s / 2)
    for k in (1, 2):
        ref = sympy.lambdify((s, a), sympy.diff(expr, s, k), "numpy")(x, 1.5)
        got, codes = fns.call(k, x, {"a": 1.5}, False)
        np.testing.assert_allclose(got, ref, rtol=1e-14)
        assert codes is None
    assert fns.source == "symbolic"


def test_parameters_must_match_the_expression():
    with pytest.raises(ParameterError, match=r"The parameters of 'a\*x - b' are \['a', 'b'\]"):
        lane_functions("a*x - b", None, None, ["a"], "x", "solve_many")


def test_a_function_that_takes_only_scalars_is_called_lane_by_lane_and_says_so():
    fns = lane_functions(lambda x: math.cos(x) - x, None, None, [], "x", "test")
    x = np.array([0.0, 0.5, 1.0])
    got, codes = fns.call(0, x, {}, False)
    assert got.tolist() == [math.cos(v) - v for v in x.tolist()] and codes is None
    assert fns.vectorized is False and any("lane by lane" in n for n in fns.notes)
