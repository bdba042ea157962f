"""The bracket search over a domain and outward from a guess (convdiag.core._bracket_search).

Check values: zeros of the Bessel function J0 from scipy.special.jn_zeros; poles and roots of tan,
roots of polynomials, sqrt's domain and Kepler's equation (REFERENCES.md §5) are exact or cited inline.
"""

import math

import numpy as np
import pytest
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
