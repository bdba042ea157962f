"""Derivative sources: given, symbolic, complex step (checked), central difference — and parameters."""

import math

import numpy as np
import pytest

from convdiag import ParameterError, as_problem, solve


def test_derivative_source_is_user_when_given():
    run = solve(lambda x: x * x - 2, "newton", start=1.0, fprime=lambda x: 2 * x)
    assert run.derivative_source == "user"
    assert abs(run.root - math.sqrt(2)) < 1e-15  # reference: math.sqrt


def test_expression_strings_get_symbolic_derivatives():
    p = as_problem("exp(x) - 2 - x/3")
    assert p.derivative_source == "symbolic"
    # reference: d/dx (e^x - 2 - x/3) = e^x - 1/3 (calculus), evaluated with math.exp
    assert float(p.fprime(0.7)) == pytest.approx(math.exp(0.7) - 1 / 3, rel=1e-15)
    assert float(p.fprime2(0.7)) == pytest.approx(math.exp(0.7), rel=1e-15)


def test_sympy_expressions_are_accepted():
    sympy = pytest.importorskip("sympy")
    x = sympy.Symbol("x")
    run = solve(x**3 - 2 * x - 5, "newton", start=2.0)
    assert run.derivative_source == "symbolic"
    assert abs(run.root - 2.0945514815423265) < 1e-15  # reference: scipy brentq (tests/core/test_record.py)


def test_complex_analytic_callable_uses_the_complex_step():
    run = solve(lambda x: np.exp(x) - 2 - x / 3, "newton", start=1.0)
    assert run.derivative_source == "complex-step"
    d = run.evals.derivative[run.evals.kind == "df"]
    x = run.evals.x[run.evals.kind == "df"]
    # reference: analytic derivative e^x - 1/3
    assert np.allclose(d, np.exp(x) - 1 / 3, rtol=1e-14)


def test_abs_breaks_the_complex_step_so_convdiag_falls_back_to_differences():
    # abs() of a complex number is the modulus, so the complex step gives a wrong slope;
    # the one-time check against a central difference catches it (common practice, no source).
    run = solve(lambda x: abs(x) ** 3 - 2, "newton", start=1.0)
    assert run.derivative_source == "central-difference"
    assert any("disagreed" in n for n in run.notes)
    assert abs(run.root - 2 ** (1 / 3)) < 1e-12  # reference: exact cube root of 2


def test_math_module_callable_falls_back_to_central_difference():
    run = solve(lambda x: math.cos(x) - x, "newton", start=1.0)
    assert run.derivative_source == "central-difference"
    assert abs(run.root - 0.7390851332151607) < 1e-15  # reference: mpmath.findroot (test_methods)


def test_halley_second_derivative_by_difference_still_converges_fast():
    run = solve(lambda x: math.cos(x) - x, "halley", start=1.0)
    assert run.second_derivative_source == "central-difference"
    assert run.converged and abs(run.root - 0.7390851332151607) < 1e-15


def test_model_parameters_are_passed_as_keywords():
    def friction(f, Re, rel):
        return 1 / math.sqrt(f) + 2 * math.log10(rel / 3.7 + 2.51 / (Re * math.sqrt(f)))

    run = solve(friction, "bisection", bracket=(0.005, 0.1), params={"Re": 1e5, "rel": 1e-4})
    # reference: shared/REFERENCES.md §5, Colebrook f = 0.0185138660775 at Re 1e5, eps/D 1e-4
    assert abs(run.root - 0.0185138660775) < 1e-12
    assert run.params == {"Re": 1e5, "rel": 1e-4}


def test_unknown_parameter_is_named():
    with pytest.raises(ParameterError, match=r"has no parameter 'Rey'"):
        as_problem(lambda f, Re: f - Re, params={"Rey": 1.0})


def test_expression_parameters_and_with_params():
    p = as_problem("x**2 - a", params={"a": 2.0})
    assert solve(p, "newton", start=1.0).root == pytest.approx(math.sqrt(2), rel=1e-15)
    q = p.with_params(a=3.0)
    assert solve(q, "newton", start=1.0).root == pytest.approx(math.sqrt(3), rel=1e-15)


def test_non_callable_is_refused_with_a_hint():
    with pytest.raises(ParameterError, match="must be a callable, an expression string or a sympy expression"):
        as_problem(42)


def test_sympy_abs_and_euler_e_survive_the_round_trip_through_text():
    sympy = pytest.importorskip("sympy")
    x = sympy.Symbol("x")
    p = as_problem(sympy.Abs(x) - sympy.E)
    assert p.expression.params == ()  # E is Euler's number, not a parameter
    # reference: |x| - e is zero at x = e (math.e)
    assert solve(p, "bisection", bracket=(1.0, 4.0)).root == pytest.approx(math.e, rel=1e-15)


def test_a_sympy_symbol_named_like_a_constant_is_refused_with_the_way_out():
    import sympy

    import convdiag
    from convdiag import ParameterError

    E, e, M = sympy.symbols("E e M")  # an eccentricity called e would silently become Euler's number
    with pytest.raises(ParameterError, match=r"sympy symbol 'e' has the name of the constant 'e'.*Rename"):
        convdiag.as_problem(E - e * sympy.sin(E) - M, params={"e": 0.5, "M": 1.0}, variable="E")
    ecc = sympy.Symbol("ecc")
    p = convdiag.as_problem(E - ecc * sympy.sin(E) - M, params={"ecc": 0.5, "M": 1.0}, variable="E")
    assert p.f(1.0) == pytest.approx(1.0 - 0.5 * math.sin(1.0) - 1.0, rel=1e-15)  # reference: math.sin
