"""The bracket search over a domain and outward from a guess (convdiag.core._bracket_search).

Check values: zeros of the Bessel function J0 from scipy.special.jn_zeros; poles and roots of tan,
roots of polynomials, sqrt's domain and Kepler's equation (REFERENCES.md §5) are exact or cited inline.
"""

import math

import numpy as np
import pytest
from mpmath import mpf
from scipy.special import j0, jn_zeros

from convdiag.core._brackets import find_brackets

CUBIC_ROOT = 2.0945514815423265  # x^3 - 2x - 5: the real root, reference numpy.roots([1, 0, -2, -5])


def _inside(c, r):
    return c.lo <= r <= c.hi


def _changes_sign(f, c):
    fl, fh = float(f(c.lo)), float(f(c.hi))
    return (fl < 0 < fh) or (fh < 0 < fl) or fl == 0 or fh == 0  # no product: it can underflow to 0


# -- over a domain -------------------------------------------------------------------------------


def test_every_zero_of_bessel_j0_up_to_50_is_bracketed_once():
    zeros = jn_zeros(0, 20)  # reference: scipy.special.jn_zeros
    zeros = zeros[zeros < 50]
    found = find_brackets(j0, domain=(0.0, 50.0))
    roots = found.roots
    assert {c.kind for c in found.candidates} == {"root"}
    assert len(roots) == len(zeros) == 16
    for c in roots:
        assert sum(_inside(c, z) for z in zeros) == 1
        assert _changes_sign(j0, c)
    assert found.vectorised and found.evaluations == len(found.evals) <= found.max_evals


def test_tan_poles_are_poles_and_its_roots_are_roots():
    found = find_brackets(np.tan, domain=(0.0, 10.0))
    poles = [(2 * k + 1) * math.pi / 2 for k in range(3)]  # exact: odd multiples of pi/2 below 10
    roots = [k * math.pi for k in range(1, 4)]  # exact: multiples of pi
    pole_cands = found.of_kind("pole")
    assert len(pole_cands) == 3
    for p, c in zip(poles, pole_cands):
        assert _inside(c, p)
    for c in found.roots:
        assert not any(_inside(c, p) for p in poles)
    for r in roots:
        assert sum(_inside(c, r) for c in found.roots) == 1
    assert found.roots[0].lo == 0.0 == found.roots[0].x  # tan(0) = 0 exactly at the domain's end


def test_a_double_root_is_a_touch_and_the_simple_root_a_bracket():
    found = find_brackets("(x - 1)**2*(x + 2)", domain=(-3.0, 3.0))  # roots 1 (double) and -2 (exact)
    (touch,) = found.of_kind("touch")
    assert abs(touch.x - 1.0) < 1e-6
    (root,) = found.roots
    assert _inside(root, -2.0)
    assert math.isfinite(found.scale) and touch.evidence["min_abs_f"] <= 1e-8 * found.scale


def _sqrt_nan(x):
    with np.errstate(invalid="ignore"):
        return np.sqrt(x) - 2.0


def _sqrt_raises(x):
    return math.sqrt(x) - 2.0


@pytest.mark.parametrize("f", [_sqrt_nan, _sqrt_raises], ids=["numpy-nan", "math-raises"])
def test_a_function_undefined_below_zero_has_its_edge_found_and_its_root_bracketed(f):
    found = find_brackets(f, domain=(-3.0, 10.0))
    (edge,) = found.of_kind("domain-edge")
    assert edge.undefined_side == "left" and abs(edge.x) < 1e-7  # sqrt is defined for x >= 0 (exact)
    (root,) = found.roots
    assert _inside(root, 4.0) and root.lo < root.hi  # sqrt(x) = 2 at x = 4 (exact)
    if f is _sqrt_raises:
        assert "ValueError" in edge.reason and not found.vectorised


def test_an_infinite_sample_is_a_pole():
    def inv(x):
        with np.errstate(divide="ignore"):
            return 1.0 / np.asarray(x)

    found = find_brackets(inv, domain=(-1.0, 1.0))  # the grid of 201 points holds x = 0 exactly
    (pole,) = found.of_kind("pole")
    assert pole.x == 0.0 and not found.roots  # 1/x: pole at 0, no root (exact)


def test_a_step_is_a_jump_not_a_root():
    found = find_brackets(lambda x: np.where(np.asarray(x) < 0.3, -1.0, 1.0), domain=(0.0, 1.0))
    (jump,) = found.of_kind("jump")
    assert jump.lo < 0.3 <= jump.hi and not found.roots  # the step is at 0.3 (exact)


def test_two_roots_closer_than_the_samples_are_both_found():
    f = "(x - 1)**2 - 1e-6"  # roots 1 ± 1e-3 (exact), both between two samples 0.3 apart
    found = find_brackets(f, domain=(-3.0, 3.0), samples=21)
    assert len(found.roots) == 2
    assert sorted(sum(_inside(c, r) for c in found.roots) for r in (0.999, 1.001)) == [1, 1]


def test_a_near_miss_is_noted_but_not_called_a_touch():
    found = find_brackets("(x - 1)**2 + 1e-4", domain=(-3.0, 3.0))
    assert not found.candidates
    assert any("near miss" in n for n in found.notes)


def test_a_grid_too_coarse_for_the_oscillation_is_flagged():
    found = find_brackets("sin(x)", domain=(0.0, 1000.0))  # zeros k·pi, about 1.6 per sample interval
    assert any("Raise samples" in n for n in found.notes)
    fine = find_brackets("sin(x)", domain=(0.0, 1000.0), samples=1001, max_evals=6000)
    assert len(fine.roots) == 319 and not fine.notes  # k·pi <= 1000 for k = 0..318 (exact)


# -- from a guess -------------------------------------------------------------------------------


def test_from_a_guess_the_nearest_sign_change_comes_first():
    zeros = jn_zeros(0, 3)  # reference: scipy.special.jn_zeros; 5.5201 is nearer 7 than 8.6537
    found = find_brackets(j0, near=7.0)
    assert _inside(found.roots[0], zeros[1]) and found.roots[0].rank == 1
    assert found.evaluations < 40


def test_from_a_guess_the_cubic_root_is_bracketed():
    for x0 in (0.0, -3.0, 100.0):
        found = find_brackets("x**3 - 2*x - 5", near=x0)
        assert _inside(found.roots[0], CUBIC_ROOT)


def test_expanding_past_a_pole_goes_on_to_the_root():
    found = find_brackets(lambda x: 1 / (x - 1) - 0.5, near=0.5)  # pole at 1, root at 3 (exact)
    assert _inside(found.roots[0], 3.0)
    assert any(_inside(c, 1.0) for c in found.of_kind("pole"))


def test_kepler_with_parameters_from_the_mean_anomaly():
    # REFERENCES.md §5: E - e sin E = M, M = 1, e = 0.5 -> E = 1.49870113351785
    found = find_brackets("x - ecc*sin(x) - M", near=1.0, params={"M": 1.0, "ecc": 0.5})
    assert _inside(found.roots[0], 1.49870113351785)


def test_the_outward_search_gives_up_after_sixty_doublings():
    found = find_brackets("x**2 + 1", near=0.0)  # no real root (exact)
    assert not found.candidates and not found.budget_exhausted
    assert found.evaluations == 1 + 2 * 61  # the guess, then both sides for 61 distances
    assert any("Stopped after 60 doublings" in n for n in found.notes)


# -- infinite samples: a pole only when f is finite and growing on both sides -------------------

LOG_MAX = 709.782712893384  # reference: numpy.log(numpy.finfo(float).max), where exp overflows


def test_exp_overflow_from_a_guess_is_one_edge_not_dozens_of_poles():
    found = find_brackets("exp(x) + 1", near=0.0)  # exp(x) + 1 > 0: no root
    assert np.log(np.finfo(float).max) == LOG_MAX  # reference: numpy
    assert not found.of_kind("pole") and not found.roots
    (edge,) = found.of_kind("domain-edge")
    assert edge.undefined_side == "right" and edge.evidence["overflow"] == 1.0
    assert abs(edge.x - LOG_MAX) < 1e-6 and "overflows beyond ≈ 709.783" in edge.reason
    # the right side stopped at the first point past the overflow (2 x 819.2), the left went on
    assert max(found.evals.x) == 1638.4 and min(found.evals.x) < -1e17


def test_exp_overflow_with_a_small_budget_is_still_not_a_pole():
    found = find_brackets("exp(x) + 1", near=0.0, max_evals=50)
    assert not found.of_kind("pole") and found.budget_exhausted
    assert [c.kind for c in found.candidates] == ["domain-edge"]
    assert abs(found.candidates[0].x - LOG_MAX) < 1.0  # located roughly before the budget ran out


def test_exp_overflow_over_a_domain_is_one_edge_and_the_root_is_bracketed():
    found = find_brackets("exp(x) - 2", domain=(-1000.0, 1000.0))  # samples 710, 720, ..., 1000 overflow
    assert not found.of_kind("pole")
    (edge,) = found.of_kind("domain-edge")
    assert abs(edge.x - LOG_MAX) < 1e-6 and edge.undefined_side == "right"  # numpy.log(finfo.max)
    (root,) = found.roots
    assert _inside(root, math.log(2.0))  # exp(x) = 2 at ln 2 (exact)


def test_a_stretch_of_overflow_between_finite_values_is_two_edges():
    def f(x):
        with np.errstate(over="ignore"):
            return np.exp(1e5 * (0.01 - np.asarray(x) ** 2)) - 2

    found = find_brackets(f, domain=(-1.0, 1.0))
    # f = inf where 1e5 (0.01 - x^2) > log(max double): |x| < sqrt(0.01 - 709.7827/1e5) (numpy.log(finfo.max))
    edge_x = math.sqrt(0.01 - LOG_MAX / 1e5)
    root_x = math.sqrt(0.01 - math.log(2.0) / 1e5)  # f = 0 where exp(...) = 2 (exact)
    assert not found.of_kind("pole")
    left, right = found.of_kind("domain-edge")
    assert abs(left.x + edge_x) < 1e-8 and left.undefined_side == "right"
    assert abs(right.x - edge_x) < 1e-8 and right.undefined_side == "left"
    assert sorted(sum(_inside(c, r) for c in found.roots) for r in (-root_x, root_x)) == [1, 1]


def test_a_sample_exactly_on_a_pole_is_a_pole_with_its_order():
    def f(x):
        with np.errstate(divide="ignore"):
            return 1.0 / np.asarray(x) ** 2 - 1.0

    found = find_brackets(f, domain=(-1.0, 1.0))  # the grid holds x = 0; double pole there (exact)
    (pole,) = found.of_kind("pole")
    assert pole.x == 0.0 and pole.lo < 0 < pole.hi and pole.hi - pole.lo < 1e-8
    assert abs(pole.evidence["exponent"] + 2) < 0.01  # 1/x^2: |f| ~ distance^-2 (exact)


def test_the_outward_search_meeting_a_pole_exactly_goes_on_past_it():
    # step 0.25 from 0.5 lands on x = 1 (0.5 + 2 x 0.25): the pole of 1/(x - 1), exact; the root is 3
    found = find_brackets("1/(x - 1) - 1/2", near=0.5, step=0.25)
    (pole,) = found.of_kind("pole")
    assert pole.x == 1.0 and _inside(pole, 1.0)
    assert _inside(found.roots[0], 3.0) and not found.of_kind("domain-edge")


# -- dips that go below zero: two roots, not a touch --------------------------------------------


def _mp_real_roots(coefficients):
    import mpmath

    with mpmath.workdps(40):  # reference: mpmath.polyroots at 40 digits
        return sorted(float(r.real) for r in mpmath.polyroots(coefficients, maxsteps=200, extraprec=200)
                      if abs(r.imag) < 1e-30)


@pytest.mark.parametrize(
    "text, coefficients",
    [
        ("(x - 1.234567)**2 - 1e-12", lambda c: [1, -2 * c, c**2 - mpf(1e-12)]),
        ("(x - 1.234567)**4 - 1e-10", lambda c: [1, -4 * c, 6 * c**2, -4 * c**3, c**4 - mpf(1e-10)]),
    ],
)
@pytest.mark.parametrize("where", [{"domain": (0.0, 3.0)}, {"domain": (-10.0, 10.0)}, {"near": 0.0}])
def test_two_close_simple_roots_are_two_brackets_not_a_touch(text, coefficients, where):
    found = find_brackets(text, **where)
    roots = _mp_real_roots(coefficients(mpf(1.234567)))  # 1.234567 ± 1e-6, and ± 10^-2.5 (mpmath.polyroots)
    assert len(roots) == 2 and not found.of_kind("touch")
    assert len(found.roots) == 2
    for c, r in zip(sorted(found.roots, key=lambda c: c.x), roots):
        assert _inside(c, r) and c.lo < c.hi
        assert c.newton is not None and c.secant is not None  # each with its recommended starts


def test_the_rounding_noise_of_an_expanded_quadruple_root_stays_a_touch():
    coefficients = np.poly([1.4] * 4)  # (x - 1.4)^4 expanded: a quadruple root at 1.4 (numpy.poly)

    found = find_brackets(lambda x: np.polyval(coefficients, x), domain=(-3.0, 3.0))
    (touch,) = found.candidates
    assert touch.kind == "touch" and abs(touch.x - 1.4) < 1e-3
    assert np.nanmin(found.evals.value) < 0  # f did dip below zero: rounding noise, too small to be two roots


def test_a_guess_on_a_pole_or_in_the_overflow_is_judged_from_the_finite_side():
    at_pole = find_brackets("1/x", near=0.0)  # 1/x: pole at 0 (exact), no root
    (pole,) = at_pole.candidates
    assert pole.kind == "pole" and pole.x == 0.0 and abs(pole.evidence["exponent"] + 1) < 0.01
    beyond = find_brackets("exp(x) - 2", near=1000.0)  # the guess is past the overflow
    (edge,) = beyond.of_kind("domain-edge")
    assert abs(edge.x - LOG_MAX) < 1e-6 and edge.undefined_side == "right"  # numpy.log(finfo.max)
    assert _inside(beyond.roots[0], math.log(2.0)) and not beyond.of_kind("pole")  # exp(x) = 2 at ln 2
