"""High-precision reference roots and the rounding floor (convdiag.core._reference).

Check values: exact roots (1 for (x−1)^m e^x) and mpmath.findroot at 80 digits for simple roots. The
replays are tested in test_highprec.py.
"""

import itertools
import math

import mpmath
import pytest

from convdiag import ParameterError, as_problem, solve
from convdiag.core._reference import high_precision, reference_root, replay, rounding_floor


def test_a_triple_root_is_right_to_50_digits_where_plain_findroot_is_not():
    # f = (x − 1)^3 e^x has the exact root 1 (multiplicity 3). Start from where a double-precision
    # Newton run stopped (it crawls linearly at a triple root).
    run = solve("(x - 1)**3*exp(x)", "newton", start=2.0)
    near = float(run.root)
    assert 1e-12 < abs(near - 1) < 1e-4
    ref = reference_root("(x - 1)**3*exp(x)", near, digits=60)
    with mpmath.workdps(120):
        ours = abs(mpmath.mpf(ref.value) - 1)
    assert ref.confirmed and ref.multiplicity == 3 and ref.derivative_order == 3
    assert ours < mpmath.mpf(10) ** -50
    # Plain mpmath.findroot (default secant solver, and Newton) polishing the same double-precision start:
    with mpmath.workdps(60):
        f = lambda x: (x - 1) ** 3 * mpmath.exp(x)
        for solver in ("secant", "newton"):
            try:
                plain = mpmath.findroot(f, mpmath.mpf(near), solver=solver)
            except ValueError:  # "Could not find root within given tolerance" is also a failure to get 50 digits
                continue
            assert abs(plain - 1) > mpmath.mpf(10) ** -50, solver


@pytest.mark.parametrize("m", [1, 2, 3, 4, 5])
def test_the_multiplicity_and_the_first_nonvanishing_derivative_agree(m):
    ref = reference_root(f"(x - 1)**{m}*exp(x)", 1.001)
    assert ref.confirmed and ref.multiplicity == m and ref.derivative_order == m
    assert abs(ref.multiplicity_estimate - m) < 1e-6
    with mpmath.workdps(80):
        assert abs(mpmath.mpf(ref.value) - 1) < mpmath.mpf(10) ** -55
    # f^(m)(1) = m! e for (x−1)^m e^x (Leibniz rule): the derivative that does not vanish
    assert ref.derivative(m) == pytest.approx(math.factorial(m) * math.e, rel=1e-12)


def test_an_expanded_triple_root_is_found_despite_cancellation():
    # x^3 − 3x^2 + 3x − 1 = (x − 1)^3 evaluated in expanded form loses about 2/3 of the digits near 1.
    ref = reference_root("x**3 - 3*x**2 + 3*x - 1", 1.00001)
    assert ref.confirmed and ref.multiplicity == 3
    assert abs(float(ref.value) - 1.0) == 0.0


@pytest.mark.parametrize("text, mp_f, x0", [
    ("cos(x) - x", lambda x: mpmath.cos(x) - x, 0.74),
    ("exp(x) - 2 - x/3", lambda x: mpmath.exp(x) - 2 - x / 3, 1.0),
    ("-40*x*exp(-x)", lambda x: -40 * x * mpmath.exp(-x), 1e-3),  # APS problem 3, root 0
])
def test_simple_roots_agree_with_mpmath_findroot_at_80_digits(text, mp_f, x0):
    ref = reference_root(text, x0, digits=60)
    with mpmath.workdps(80):
        expected = mpmath.findroot(mp_f, mpmath.mpf(x0))  # reference: mpmath
        scale = max(abs(expected), 1)
        assert abs(mpmath.mpf(ref.value) - expected) / scale < mpmath.mpf(10) ** -59
    assert ref.confirmed and ref.multiplicity == 1 and ref.digits == 60


def test_a_callable_computing_in_mpmath_is_accepted_and_a_float_one_is_refused():
    ok = reference_root(lambda x: mpmath.cos(x) - x, 0.74)
    assert ok.confirmed and abs(float(ok.value) - 0.7390851332151607) < 1e-16  # mpmath.findroot
    with pytest.raises(ParameterError, match="computes in floats inside"):
        reference_root(lambda x: math.cos(x) - x, 0.74)
    with pytest.raises(ParameterError, match="raised TypeError for an mpmath argument"):
        import numpy as np

        high_precision(lambda x: np.cos(x) - x, near=0.74)


def test_a_wrong_user_derivative_does_not_touch_the_reference_but_is_replayed():
    # Newton with g = 2 f' converges linearly with rate |1 − f'(r)/g(r)| = 1/2 (REFERENCES §1 [V]).
    f = lambda x: mpmath.cos(x) - x
    g = lambda x: 2 * (-mpmath.sin(x) - 1)
    run = solve(f, "newton", start=1.0, fprime=g)
    ref = reference_root(run.source, float(run.root))
    assert ref.confirmed and ref.multiplicity == 1  # derived from f alone, not from the wrong g
    hp = replay(run, digits=40)
    with mpmath.workdps(40):
        r = mpmath.mpf(ref.value)
        e = [abs(s.x - r) for s in hp.steps[5:9]]
        assert all(abs(b / a - mpmath.mpf(1) / 2) < 1e-3 for a, b in itertools.pairwise(e))  # the same (wrong) iteration


@pytest.mark.parametrize("bad", [float("nan"), "x"])
def test_reference_root_refuses_a_bad_start(bad):
    with pytest.raises(ParameterError, match="'near' parameter of reference_root"):
        reference_root("x**2 - 2", bad)


def test_the_rounding_floor_scales_with_the_condition_of_the_root():
    # Attainable accuracy (m!·ε_f/|f^(m)(r)|)^(1/m) (REFERENCES §3, [CP]); for the expanded cubic ε_f ≈ eps.
    simple = rounding_floor(as_problem("x**2 - 2"), reference_root("x**2 - 2", 1.4))[0]
    assert 4 * 2.2e-16 * math.sqrt(2) <= simple <= 1e-14  # a few ulps of sqrt(2)
    triple = rounding_floor(as_problem("x**3 - 3*x**2 + 3*x - 1"), reference_root("x**3 - 3*x**2 + 3*x - 1", 1.001))
    assert 1e-6 < triple[0] < 1e-4  # about eps^(1/3) = 6e-6
    factored = rounding_floor(as_problem("(x - 1)**3*exp(x)"), reference_root("(x - 1)**3*exp(x)", 1.001))
    assert factored[0] < 1e-14  # the factored form is evaluated accurately near the root
