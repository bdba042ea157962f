"""Modified Newton x − m·f/f' and Newton on f/f': quadratic again at a multiple root.

Check values (shared/REFERENCES.md §1, recomputed there [V]): at a root of multiplicity m,
plain Newton is linear with rate (m−1)/m, while the modified step x − m·f/f' is quadratic with
error constant C = f^(m+1)(r)/(m(m+1) f^(m)(r)), and Newton on u = f/f' is quadratic (Ralston &
Rabinowitz 1978, from memory). Reference iterations are independent 50-digit mpmath loops of the
textbook formulas; the reference root 1 is exact.
"""

import math

import mpmath
import pytest

from convdiag import ParameterError, solve
from convdiag.core._modified import ModifiedNewton
from convdiag.core._order import estimate_order


def mp_modified_newton(m, x0, n):
    """x − m f/f' for f = (x − 1)^m e^x at 50 digits (f/f' = (x − 1)/(m + x − 1) by hand)."""
    out = []
    with mpmath.workdps(50):
        x = mpmath.mpf(x0)
        for _ in range(n):
            x = x - m * (x - 1) / (m + (x - 1))
            out.append(x)
    return out


def mp_newton_ratio(m, x0, n):
    """Newton on u = f/f' with f, f', f'' of (x − 1)^m e^x from mpmath.diff at 50 digits."""
    out = []
    with mpmath.workdps(50):
        f = lambda x: (x - 1) ** m * mpmath.exp(x)
        x = mpmath.mpf(x0)
        for _ in range(n):
            d0, d1, d2 = (mpmath.diff(f, x, k) for k in range(3))
            x = x - d0 * d1 / (d1 * d1 - d0 * d2)
            out.append(x)
    return out


@pytest.mark.parametrize("m", [2, 3, 4, 5])
def test_modified_newton_iterates_match_a_50_digit_reference(m):
    run = solve(f"(x - 1)**{m}*exp(x)", ModifiedNewton(multiplicity=m), start=2.0)
    ref = mp_modified_newton(m, 2.0, len(run.steps))
    for x, r in zip(run.iterates[1:], ref):
        if abs(r - 1) < 1e-7:
            break
        assert x == pytest.approx(float(r), rel=1e-12)
    assert run.converged and abs(run.root - 1.0) <= 1e-7


@pytest.mark.parametrize("m", [2, 3, 4, 5])
def test_newton_on_f_over_fprime_iterates_match_a_50_digit_reference(m):
    run = solve(f"(x - 1)**{m}*exp(x)", "newton-ratio", start=2.0)
    ref = mp_newton_ratio(m, 2.0, len(run.steps))
    for x, r in zip(run.iterates[1:], ref):
        if abs(r - 1) < 1e-7:
            break
        assert x == pytest.approx(float(r), rel=1e-10)
    assert run.converged and abs(run.root - 1.0) <= 1e-7


@pytest.mark.parametrize("m", [2, 3, 5])
def test_modified_newton_is_quadratic_where_plain_newton_is_linear(m):
    plain = estimate_order(solve(f"(x - 1)**{m}*exp(x)", "newton", start=2.0, max_evals=300))
    # measured on a 60-digit run of its own (a replay by method name would lose the multiplicity setting)
    cured = estimate_order(solve(f"(x - 1)**{m}*exp(x)", ModifiedNewton(multiplicity=m), start=2.0, digits=60))
    assert plain.label == "linear" and plain.rate == pytest.approx((m - 1) / m, abs=0.02)  # REFERENCES §1
    assert cured.label == "quadratic", cured


def test_modified_newton_error_constant_matches_the_textbook_formula():
    # C = f^(m+1)(r)/(m(m+1) f^(m)(r)) (REFERENCES §1). For f = (x − 1)^3 e^x at r = 1:
    # f^(3)(1) = 3!·e and f^(4)(1) = 4·3!·e (Leibniz rule), so C = 4/(3·4) = 1/3.
    run = solve("(x - 1)**3*exp(x)", ModifiedNewton(multiplicity=3), start=1.1, digits=60)
    xs = run.iterates_exact
    with mpmath.workdps(60):
        ratios = [(xs[k + 1] - 1) / (xs[k] - 1) ** 2 for k in range(2, 4)]
    assert float(ratios[-1]) == pytest.approx(1 / 3, rel=1e-3)


def test_each_step_draws_the_power_law_it_followed():
    run = solve("(x - 1)**3*exp(x)", ModifiedNewton(multiplicity=3), start=2.0)
    for s in run.steps:
        assert s.model.kind == "power-law" and s.model.m == 3
        assert s.model.predict() == pytest.approx(s.x, rel=1e-14)
    ratio = solve("(x - 1)**3*exp(x)", "newton-ratio", start=1.5)
    # μ = f'²/(f'² − f f'') tends to the multiplicity (here 3) as the iterates close in
    assert ratio.steps[-2].model.m == pytest.approx(3.0, abs=0.01)


def test_multiplicity_one_is_plain_newton():
    a = solve("cos(x) - x", ModifiedNewton(multiplicity=1), start=1.0)
    b = solve("cos(x) - x", "newton", start=1.0)
    assert a.iterates.tolist() == b.iterates.tolist()


def test_complex_and_high_precision_runs_work():
    z = solve("x**2 + 1", ModifiedNewton(multiplicity=1), start=1 + 1j)
    assert z.converged and abs(z.root - 1j) < 1e-12  # the roots of x² + 1 are ±i
    hp = solve("(x - 1)**2*exp(x)", "newton-ratio", start=2.0, digits=40)
    assert hp.converged and abs(hp.root - 1) < mpmath.mpf(10) ** -30


def test_a_bad_multiplicity_is_refused_with_the_template_message():
    with pytest.raises(ParameterError, match=r"The 'multiplicity' parameter of newton-m must be an int >= 1. Got 0"):
        ModifiedNewton(multiplicity=0)
    with pytest.raises(ParameterError, match="must be an int >= 1. Got 2.5"):
        ModifiedNewton(multiplicity=2.5)  # type: ignore[arg-type]


def test_a_zero_slope_halts_with_advice():
    run = solve("x**2 + 1", "newton-ratio", start=0.0)
    assert run.stop_reason == "zero-derivative" and "hybrid" in run.failure.advice
    assert math.isfinite(run.failure.x)
