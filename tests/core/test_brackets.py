"""Bracket search over a domain and from a guess, with recommended starts (convdiag.core._brackets)."""

import itertools
import math

import numpy as np
import pytest
from hypothesis import example, given, settings
from hypothesis import strategies as st
from scipy.optimize import brentq
from scipy.special import j0, jn_zeros

from convdiag import ParameterError, solve
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


def test_scalar_and_vectorised_evaluation_find_the_same_brackets():
    vec = find_brackets(lambda x: np.exp(x) - 2 - x / 3, domain=(-8.0, 3.0))
    sca = find_brackets(lambda x: math.exp(x) - 2 - x / 3, domain=(-8.0, 3.0))
    assert vec.vectorised and not sca.vectorised
    assert [(c.lo, c.hi) for c in vec.roots] == [(c.lo, c.hi) for c in sca.roots]
    assert sca.evaluations == vec.evaluations + 2  # the two-point array probe, then point by point


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


def test_budget_exhaustion_returns_what_was_found_with_a_message():
    found = find_brackets(lambda x: x * x + 1, near=1.0, max_evals=30)  # no real root (exact)
    assert found.budget_exhausted and not found.candidates
    assert found.evaluations == len(found.evals) <= 30
    assert any("budget of 30 ran out" in n for n in found.notes)


def test_budget_exhaustion_over_a_domain_leaves_sign_changes_unclassified():
    found = find_brackets(j0, domain=(0.0, 50.0), max_evals=150)
    assert found.budget_exhausted and found.evaluations <= 150
    zeros = jn_zeros(0, 16)  # reference: scipy.special.jn_zeros
    assert found.of_kind("unclassified")
    for c in found.roots + found.of_kind("unclassified"):
        assert sum(_inside(c, z) for z in zeros) == 1


# -- recommended starts -----------------------------------------------------------------------


def _j0(x):
    return float(j0(x))


def test_newton_secant_and_iqi_from_the_recommended_starts_reach_the_root_in_the_bracket():
    zeros = jn_zeros(0, 16)  # reference: scipy.special.jn_zeros
    for c in find_brackets(j0, domain=(0.0, 50.0)).roots:
        (z,) = [z for z in zeros if _inside(c, z)]
        for method, start in (("newton", c.newton), ("secant", list(c.secant)), ("iqi", list(c.iqi))):
            run = solve(_j0, method, start=start)
            assert run.converged and abs(run.root - z) < 1e-12 * max(1.0, z), (method, z)


def test_recommended_newton_starts_converge_on_an_expression_with_a_symbolic_derivative():
    f = "exp(x) - 2 - x/3"
    found = find_brackets(f, domain=(-8.0, 3.0))
    assert len(found.roots) == 2
    for c in found.roots:
        ref = brentq(lambda x: math.exp(x) - 2 - x / 3, c.lo, c.hi, xtol=1e-15)  # reference: scipy brentq
        run = solve(f, "newton", start=c.newton)
        assert run.converged and abs(run.root - ref) < 1e-13
        assert any("symbolic" in t for t in c.checks)
    assert found.evals.count_kind("df") >= 2


def test_a_given_derivative_is_used_to_check_the_newton_start():
    found = find_brackets(lambda x: x**3 - 2 * x - 5, near=0.0, fprime=lambda x: 3 * x**2 - 2)
    c = found.roots[0]
    assert any("from the problem (user)" in t for t in c.checks)
    assert abs(solve(lambda x: x**3 - 2 * x - 5, "newton", start=c.newton).root - CUBIC_ROOT) < 1e-14


# -- property: a root bracket always changes sign --------------------------------------------------


@settings(max_examples=30, deadline=None)
@given(
    roots=st.lists(st.floats(min_value=-4.5, max_value=4.5), min_size=1, max_size=5),
    scale=st.floats(min_value=1e-3, max_value=1e3),
    extra=st.floats(min_value=0.1, max_value=4.0),
)
@example(roots=[0.0, 1.0, 2.0], scale=1.0, extra=1.0)  # roots on grid points: exact zeros
@example(roots=[1.0, 1.0, -2.0], scale=1.0, extra=1.0)  # a double root: a touch, no bracket
@example(roots=[2.2250738585e-313], scale=0.001, extra=0.25)  # a subnormal root: f(0) is subnormal too
def test_a_root_bracket_always_changes_sign_and_holds_a_known_root(roots, scale, extra):
    # Evaluated as a product of factors, so the computed sign is the true sign (each x - r keeps its sign).
    def f(x):
        x = np.asarray(x, dtype=float)
        return scale * np.prod([x - r for r in roots], axis=0) * (x * x + extra)  # x^2 + extra: no real roots
    found = find_brackets(f, domain=(-6.0, 6.0))
    for c in found.roots:
        assert _changes_sign(f, c)
        assert any(c.lo <= r <= c.hi for r in roots)  # known roots, the polynomial's factors
    distinct = sorted(set(roots))
    simple = [r for r in distinct if roots.count(r) % 2 == 1]
    if all(b - a > 0.3 for a, b in itertools.pairwise(distinct)):
        for r in simple:  # well-separated odd-multiplicity roots are all bracketed
            assert any(_inside(c, r) for c in found.roots)


# -- bad input ----------------------------------------------------------------------------------


def test_give_exactly_one_of_domain_and_near():
    with pytest.raises(ParameterError, match=r"The 'domain' parameter of find_brackets must be a pair"):
        find_brackets("x - 1")
    with pytest.raises(ParameterError, match=r"The 'near' parameter of find_brackets must be None"):
        find_brackets("x - 1", domain=(0, 2), near=1.0)


@pytest.mark.parametrize(
    "kwargs, match",
    [
        ({"domain": (2.0, 1.0)}, r"The 'domain' parameter of find_brackets must be a pair of finite floats"),
        ({"domain": (0.0, math.inf)}, r"'domain' parameter .* Got inf instead"),
        ({"near": math.nan}, r"The 'near' parameter of find_brackets must be a finite float. Got nan"),
        ({"near": 0.0, "max_evals": 2}, r"The 'max_evals' parameter of find_brackets must be an int >= 3. Got 2"),
        ({"near": 0.0, "step": -1.0}, r"The 'step' parameter of find_brackets must be a finite float > 0"),
    ],
)
def test_bad_values_are_refused_with_the_template_message(kwargs, match):
    with pytest.raises(ParameterError, match=match):
        find_brackets("x - 1", **kwargs)


def test_the_result_serialises_to_plain_json():
    import json

    found = find_brackets(np.tan, domain=(1.0, 4.0))
    d = json.loads(json.dumps(found.to_dict(), allow_nan=False))
    assert d["evaluations"] == found.evaluations
    assert [b["kind"] for b in d["brackets"]] == [c.kind for c in found.candidates]
    assert "<BracketSearch tan over [1, 4]: 1 root, 1 pole;" in repr(found)
    assert "2 roots" in repr(find_brackets("x**2 - 2", domain=(-2, 2)))
