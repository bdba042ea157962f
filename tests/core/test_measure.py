"""Multiplicity, error constant and efficiency of the order estimate (convdiag/core/_measure.py).

Theory values (shared/REFERENCES.md §1): at a root of multiplicity m Newton's rate is (m−1)/m, Halley's
(m−1)/(m+1), the secant's the root of t^m + t^(m−1) = 1; the asymptotic error constants at a simple root;
Ostrowski's efficiency index order^(1/evaluations per step).
"""

import math

import mpmath
import pytest

from convdiag import solve
from convdiag.core._order import estimate_order

GOLDEN = (1 + 5**0.5) / 2
TRIBONACCI = 1.8392867552141612  # real root of t^3 = t^2 + t + 1 (REFERENCES §1; numpy.roots gives the same)


@pytest.mark.parametrize("m", [2, 3, 4, 5])
def test_newton_at_a_root_of_multiplicity_m_has_rate_m_minus_1_over_m_and_names_m(m):
    # REFERENCES §1 [V]: f = (x−1)^m e^x, Newton linear with rate (m−1)/m.
    run = solve(f"(x - 1)**{m}*exp(x)", "newton", start=2.0, max_evals=200)
    est = estimate_order(run)
    assert est.label == "linear" and abs(est.rate - (m - 1) / m) <= 0.02, est
    assert est.multiplicity == m, est.multiplicity_note
    assert f"m = {m}" in est.multiplicity_note and f"order {m}" in est.multiplicity_note  # derivative cross-check


@pytest.mark.parametrize("method, m, rate", [
    ("halley", 3, 0.5),  # (m−1)/(m+1), REFERENCES §1
    ("secant", 2, 0.6180340),  # root of t^2 + t = 1, REFERENCES §1
    ("secant", 3, 0.7548777),  # root of t^3 + t^2 = 1, REFERENCES §1
])
def test_halley_and_secant_rates_at_multiple_roots_imply_the_multiplicity(method, m, rate):
    run = solve(f"(x - 1)**{m}*exp(x)", method, start=2.0, max_evals=300)
    est = estimate_order(run)
    assert est.label == "linear" and abs(est.rate - rate) <= 0.02 and est.multiplicity == m, est


def test_a_callable_computing_in_mpmath_gets_the_same_multiplicity_as_its_expression():
    f = lambda x: (x - 1) ** 3 * mpmath.exp(x) if not isinstance(x, float) else (x - 1) ** 3 * math.exp(x)
    est = estimate_order(solve(f, "newton", start=2.0, max_evals=200))
    assert est.reference == "high-precision root" and est.multiplicity == 3 and abs(est.rate - 2 / 3) <= 0.02


def test_newton_with_a_wrong_derivative_is_linear_and_the_function_keeps_multiplicity_1():
    # REFERENCES §1 [V]: Newton with g ≠ f' converges linearly with rate |1 − f'(r)/g(r)|; here g = 2 f'.
    f = lambda x: mpmath.cos(x) - x  # computes in mpmath, so the replay uses the same g
    est = estimate_order(solve(f, "newton", start=1.0, fprime=lambda x: 2 * (-mpmath.sin(x) - 1)))
    assert est.label == "linear" and abs(est.rate - 0.5) <= 0.01 and est.basis == "replay"
    assert est.multiplicity == 1 and "the rate suggests m = 2 but the function has m = 1" in est.multiplicity_note
    assert any("check the derivative" in n for n in est.notes)


# -- constants and efficiency --------------------------------------------------------------------------
@pytest.mark.parametrize("method", ["newton", "secant", "iqi", "halley", "steffensen"])
def test_observed_error_constant_matches_its_theoretical_value(method):
    # REFERENCES §1 [V]: constants reproduced on f = exp(x) − 2 − x/3.
    est = estimate_order(solve("exp(x) - 2 - x/3", method, start=1.0))
    assert est.error_constant_theory is not None
    assert est.error_constant == pytest.approx(est.error_constant_theory, rel=0.05), (est.error_constant_note,)
    c2 = 0.0  # independent check of Newton's |f''/(2f')| at the root, with mpmath
    if method == "newton":
        with mpmath.workdps(30):
            r = mpmath.findroot(lambda x: mpmath.exp(x) - 2 - x / 3, 1.0)
            c2 = float(abs(mpmath.exp(r) / (2 * (mpmath.exp(r) - mpmath.mpf(1) / 3))))
        assert est.error_constant_theory == pytest.approx(c2, rel=1e-9)


@pytest.mark.parametrize("method, index", [("newton", 2**0.5), ("secant", GOLDEN), ("iqi", TRIBONACCI),
                                           ("halley", 3 ** (1 / 3)), ("steffensen", 2**0.5)])
def test_efficiency_index_is_order_to_the_one_over_evaluations_per_step(method, index):
    # Ostrowski (1960), from memory; values in REFERENCES §1.
    est = estimate_order(solve("cos(x) - x", method, start=1.0))
    assert est.efficiency == pytest.approx(index, abs=0.02)
    assert est.efficiency_theory == pytest.approx(index, abs=1e-9)


def test_a_linear_newton_run_without_a_reference_reads_its_rate_as_a_multiplicity_before_blaming_f_prime():
    # (x - 1)**3 e^x has a triple root at 1; Newton's rate there is (m - 1)/m = 2/3 (Ostrowski 1966; any text on
    # multiple roots). The function uses math.exp, so no high-precision reference can confirm the root is simple.
    import math

    import convdiag

    f = lambda x: (x - 1) ** 3 * math.exp(x)  # noqa: E731
    fp = lambda x: (3 * (x - 1) ** 2 + (x - 1) ** 3) * math.exp(x)  # noqa: E731
    est = convdiag.estimate_order(convdiag.solve(f, "newton", start=2.0, fprime=fp))
    assert est.label == "linear" and est.multiplicity == 3 and est.rate == pytest.approx(2 / 3, abs=0.02)
    assert any("multiplicity 3, or a wrong f'" in n for n in est.notes)
    assert not any("at a simple root" in n for n in est.notes)
