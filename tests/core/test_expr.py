"""The safe expression language: values against Python's math, derivatives against sympy, hostile text refused."""

import math
import re
import subprocess
import sys
import time
import warnings

import mpmath
import numpy as np
import pytest
import sympy
from hypothesis import example, given
from hypothesis import strategies as st

from convdiag.core._expr import FUNCTIONS, Expression, parse_expression, sympy_to_text
from convdiag.errors import ParameterError

# (text, params, x, reference value computed with Python's math module)
VALUES = [
    ("x**3 - 2*x + 2", {}, 1.3, 1.3**3 - 2 * 1.3 + 2),
    ("x**3 = 2*x - 2", {}, 1.3, 1.3**3 - (2 * 1.3 - 2)),
    ("cos(x) = x", {}, 0.5, math.cos(0.5) - 0.5),
    ("exp(-0.5*x) - 0.1", {}, 2.0, math.exp(-0.5 * 2.0) - 0.1),
    ("sin(x)*e + pi", {}, 0.3, math.sin(0.3) * math.e + math.pi),
    ("log(x) + ln(x) + log10(x)", {}, 7.0, 2 * math.log(7.0) + math.log10(7.0)),
    ("sqrt(x) + cbrt(x)", {}, 27.0, math.sqrt(27.0) + 3.0),
    ("abs(x - 3) + sign(x - 3)", {}, 1.0, abs(1.0 - 3) + math.copysign(1.0, 1.0 - 3)),
    ("tan(x) + atan(x) + asin(x/2) + acos(x/2)", {}, 0.7,
     math.tan(0.7) + math.atan(0.7) + math.asin(0.35) + math.acos(0.35)),
    ("sinh(x) + cosh(x) + tanh(x) + asinh(x) + acosh(x + 1) + atanh(x/2)", {}, 0.4,
     math.sinh(0.4) + math.cosh(0.4) + math.tanh(0.4) + math.asinh(0.4) + math.acosh(1.4) + math.atanh(0.2)),
    ("a*x**2 + b = c*x", {"a": 2.0, "b": -1.5, "c": 0.25}, 1.1, 2.0 * 1.1**2 - 1.5 - 0.25 * 1.1),
    ("2**-x + -x**2", {}, 1.5, 2**-1.5 - 1.5**2),  # Python precedence: -x**2 == -(x**2)
    ("x/3/2 - 2**3**2", {}, 6.0, 6.0 / 3 / 2 - 2**9),  # / is left-, ** right-associative
    ("1e-3*x + 1_000", {}, 5.0, 1e-3 * 5.0 + 1000),
    ("(x + 1)**(1/3)", {}, 7.0, 2.0),
    ("k*cos(x)\n  - x", {"k": 3.0}, 0.2, 3.0 * math.cos(0.2) - 0.2),
]


@pytest.mark.parametrize(("text", "params", "x", "expected"), VALUES)
def test_expression_values_match_python_math(text, params, x, expected):
    # reference: Python math module (column "expected" above)
    f = parse_expression(text).numeric(params)
    assert f(x) == pytest.approx(expected, rel=1e-13, abs=1e-14)
    assert isinstance(f(x), float)


def test_real_cube_root_of_negative_numbers_is_negative():
    f = parse_expression("cbrt(x)")
    assert f.numeric()(-8.0) == pytest.approx(-2.0, rel=1e-15)  # reference: (-2)**3 == -8
    assert f.mpmath()(mpmath.mpf(-27)) == pytest.approx(-3.0, rel=1e-15)  # reference: (-3)**3 == -27
    assert parse_expression("cbrt(-8)").sympy == -2  # reference: exact arithmetic


def test_parameters_are_listed_sorted_and_constants_are_not_parameters():
    f = parse_expression("zeta*x + alpha*e - pi + x2")
    assert f.params == ("alpha", "x2", "zeta")
    assert f.variable == "x"
    assert str(f) == f.text == "zeta*x + alpha*e - pi + x2"


def test_other_variable_name_is_used():
    f = parse_expression("t**2 - x", variable="t")
    assert f.params == ("x",)
    assert f.numeric({"x": 2.0})(3.0) == 7.0  # reference: 3**2 - 2


def test_complex_step_derivative_matches_symbolic_derivative():
    for text in ("x**3 - 2*x + 2", "exp(x)*sin(x) - cos(x)/x", "atan(x) + sqrt(x)"):
        f = parse_expression(text)
        h = 1e-20
        complex_step = f.numeric()(1.0 + h * 1j).imag / h
        assert complex_step == pytest.approx(float(f.diff().numeric()(1.0)), rel=1e-13)  # reference: sympy diff()
    assert parse_expression("x**3 - 2*x + 2").diff().numeric()(1.0) == 1.0  # reference: 3*1**2 - 2


X, A = sympy.symbols("x a", real=True)


@pytest.mark.parametrize(
    ("text", "reference"),
    [
        ("x**3 - 2*x + 2", X**3 - 2 * X + 2),
        ("exp(-a*x)*sin(x)", sympy.exp(-A * X) * sympy.sin(X)),
        ("log10(x) + ln(x**2)", sympy.log(X) / sympy.log(10) + sympy.log(X**2)),
        ("x**x", X**X),
        ("atanh(x/2) - acosh(x + 2)", sympy.atanh(X / 2) - sympy.acosh(X + 2)),
        ("abs(x)*x", sympy.Abs(X) * X),
        ("sqrt(1 + x**2) = a", sympy.sqrt(1 + X**2) - A),
    ],
)
def test_derivatives_match_sympy(text, reference):
    f = parse_expression(text)
    for n in (1, 2, 3):
        d = f.diff(n)
        # reference: sympy.diff, with DiracDelta terms dropped as Expression.diff documents
        expected = sympy.diff(reference, X, n).replace(sympy.DiracDelta, lambda *args: 0)
        assert sympy.simplify(d.sympy - expected) == 0
        assert d.params == f.params and d.variable == "x"
        assert sympy.simplify(parse_expression(d.text).sympy - d.sympy) == 0  # the derivative's text reads back


def test_derivative_of_cube_root_is_finite_away_from_zero():
    d = parse_expression("cbrt(x)").diff()
    assert d.numeric()(-8.0) == pytest.approx(1 / 12, rel=1e-14)  # reference: 1/(3*cbrt(-8)**2)
    assert "DiracDelta" not in str(d.sympy)
    assert parse_expression("x").diff(0).text == "x"


def test_derivative_of_abs_uses_real_analysis_for_any_argument():
    d = parse_expression("abs(sqrt(x) - 1)").diff()
    # reference: by hand, d/dx |sqrt(x) - 1| = sign(sqrt(x) - 1) / (2*sqrt(x))
    assert d.numeric()(4.0) == 0.25 and d.numeric()(0.25) == -1.0
    assert "re(" not in d.text and "im(" not in d.text


def test_derivative_text_keeps_every_digit_of_float_constants():
    d = parse_expression("x**0.3333333333333333").diff()
    assert "0.3333333333333333" in d.text and "0.6666666666666667" in d.text  # not sympy's 15-digit display
    # reference: the derivative itself (x**-c and 1/x**c may differ in the last bit)
    assert parse_expression(d.text).numeric()(2.0) == pytest.approx(d.numeric()(2.0), rel=1e-15)


def test_large_exact_exponents_of_the_variable_become_floats():
    # sympy's polynomial code would expand x**(3333333333333333/10**16) to that degree
    assert float(parse_expression("(1 + x)**100000").sympy.exp) == 1e5
    assert parse_expression("x**0.3333333333333333").sympy.exp.is_Float
    assert parse_expression("x**2.5 + x**(1/3)").sympy.has(sympy.Rational(5, 2), sympy.Rational(1, 3))
    assert parse_expression("(1 + x)**100000").numeric()(0.0) == 1.0  # reference: 1**n == 1
    assert parse_expression("x**2.5 + x**(1/3)").numeric()(8.0) == pytest.approx(8**2.5 + 2)  # reference: math


def test_decimal_constants_stay_exact_inside_functions():
    # exp((x + 10)/0.013335) must not become exp(749.9)*exp(75*x): exp(749.9) overflows doubles
    f = parse_expression("((x + 10)/0.013335 - 1)**2*exp((x + 10)/0.013335)")
    u = (-9.98 + 10) / 0.013335
    assert f.numeric()(-9.98) == pytest.approx((u - 1) ** 2 * math.exp(u), rel=1e-13)  # reference: Python math


def test_functions_of_the_variable_are_not_simplified_by_sympy():
    # sympy's automatic simplification of log(sinh(...)) with fractional powers expands polynomials of
    # degree 3333333333333333 (it runs out of memory); the functions are kept unevaluated instead.
    start = time.perf_counter()
    f = parse_expression("log(sinh((2*x)**0.3333333333333333 + cbrt(x)))")
    f.diff(2)
    assert time.perf_counter() - start < 2.0
    u = (2 * 1.5) ** 0.3333333333333333 + 1.5 ** (1 / 3)
    assert f.numeric()(1.5) == pytest.approx(math.log(math.sinh(u)), rel=1e-14)  # reference: Python math module


def test_mpmath_replay_of_huge_arguments_gives_nan_quickly():
    f = parse_expression("exp(exp(exp(x)))").mpmath()
    start = time.perf_counter()
    assert mpmath.isnan(f(10))  # exp(exp(22026.5)): mpmath's range reduction would run for hours
    assert time.perf_counter() - start < 0.5
    assert f(0) == pytest.approx(math.exp(math.exp(1)), rel=1e-15)  # reference: Python math module


def test_huge_integer_constants_evaluate_as_floats_in_numpy():
    assert parse_expression("sin(10**300) + x").numeric()(0.0) == math.sin(1e300)  # reference: Python math module
    assert parse_expression("x**10000").diff(3).numeric()(1.0) == 10000 * 9999 * 9998  # reference: by hand


def test_diff_order_is_validated():
    with pytest.raises(ParameterError, match="'n' parameter of Expression.diff"):
        parse_expression("x").diff(-1)
    with pytest.raises(ParameterError, match="Got 11 instead"):
        parse_expression("x").diff(11)


def test_invalid_points_give_nan_without_warnings():
    f = parse_expression("sqrt(x) + log(x)").numeric()
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        assert math.isnan(f(-1.0))
        out = f(np.array([1.0, -1.0, 4.0]))
    assert out[0] == 1.0 and math.isnan(out[1]) and out[2] == pytest.approx(2 + math.log(4))  # reference: math


def test_arrays_are_evaluated_elementwise_also_for_constant_expressions():
    xs = np.linspace(-2, 2, 9)
    np.testing.assert_allclose(parse_expression("x**2 - 1").numeric()(xs), xs**2 - 1, rtol=1e-15)  # reference: numpy
    const = parse_expression("3").numeric()
    assert const(xs).shape == (9,) and np.all(const(xs) == 3.0)
    assert isinstance(const(2.0), float) and const(2.0) == 3.0
    np.testing.assert_array_equal(parse_expression("x*2").numeric()([1, 2]), [2.0, 4.0])  # ints -> floats


def test_mpmath_replay_keeps_decimal_constants_exact():
    with mpmath.workdps(60):
        f = parse_expression("x - 0.1").mpmath()
        assert f(mpmath.mpf(1) / 10) == 0  # 0.1 is read as 1/10 exactly, not the nearest double
        g = parse_expression("x**2 = a").mpmath({"a": 2})
        assert abs(g(mpmath.sqrt(2))) < mpmath.mpf(10) ** -58  # reference: mpmath.sqrt at 60 digits


def test_missing_parameter_says_how_to_pass_it():
    f = parse_expression("a*x - b")
    with pytest.raises(ParameterError, match=re.escape("params={'a': ..., 'b': ...}")) as info:
        f.numeric()
    assert "--param a=VALUE --param b=VALUE" in str(info.value)
    with pytest.raises(ParameterError, match=re.escape("params={'b': ...}")):
        f.mpmath({"a": 1.0})


def test_unknown_parameter_lists_the_known_ones():
    with pytest.raises(ParameterError, match=r"Unknown parameter\(s\) 'c'.*'a', 'b'"):
        parse_expression("a*x - b").numeric({"a": 1, "b": 2, "c": 3})
    with pytest.raises(ParameterError, match="parameters are: none"):
        parse_expression("x").numeric({"c": 3})
    with pytest.raises(ParameterError, match="'a' parameter"):
        parse_expression("a*x").numeric({"a": "1"})


def test_parameter_values_are_passed_per_call_not_baked_into_a_cache():
    f = parse_expression("a*x")
    assert f.numeric({"a": 1.0})(2.0) == 2.0 and f.numeric({"a": 3.0})(2.0) == 6.0  # reference: a*x by hand


@pytest.mark.parametrize("variable", ["", "1x", "_x", "sin", "e", "pi", "x y", 3])
def test_invalid_variable_names_are_refused(variable):
    with pytest.raises(ParameterError, match="'variable' parameter of parse_expression"):
        parse_expression("1", variable=variable)


def test_functions_table_lists_each_name_with_its_arity():
    assert set(FUNCTIONS) >= {"sin", "cos", "exp", "log", "ln", "log10", "sqrt", "abs", "sign", "cbrt"}
    assert all(arity == 1 for arity, _ in FUNCTIONS.values())
    assert sympy_to_text(sympy.Abs(X) * sympy.E) == "e*abs(x)"


def test_importing_the_module_does_not_import_sympy():
    code = "import convdiag.core._expr, sys; assert 'sympy' not in sys.modules, 'sympy imported'"
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=60, check=False)
    assert done.returncode == 0, done.stderr


def test_expression_repr_is_one_line():
    assert repr(parse_expression("a*x = 1")) == "<Expression 'a*x = 1' in x, params a>"
    assert isinstance(parse_expression("x"), Expression)


coefficients = st.floats(min_value=-1e6, max_value=1e6, allow_nan=False, allow_infinity=False)


@example(a=1.0, b=-2.0, c=1.0, x=1.0)  # double root at 1
@example(a=0.1, b=0.2, c=-0.3, x=1.0)  # decimals that are not exact in binary
@example(a=-0.0, b=5e-324, c=1e-300, x=-3.5)
@given(a=coefficients, b=coefficients, c=coefficients, x=st.floats(min_value=-1e3, max_value=1e3))
def test_quadratic_text_evaluates_like_python_arithmetic(a, b, c, x):
    f = parse_expression(f"{a}*x**2 + {b}*x + {c}").numeric()
    expected = a * x * x + b * x + c  # reference: direct Python arithmetic
    # Relative 1e-12 of the terms' size: sympy may add the terms in another order.
    assert abs(f(x) - expected) <= 1e-12 * (abs(a * x * x) + abs(b * x) + abs(c))
