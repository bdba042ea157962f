"""One sign change judged root / pole / jump (convdiag.core._signchange)."""

import math

import numpy as np
import pytest
from hypothesis import example, given, settings
from hypothesis import strategies as st

from convdiag.core._signchange import classify_sign_change, judge_refinement
from convdiag.core._step import Halt
from convdiag.errors import BracketError


def test_a_simple_root_is_called_a_root_with_exponent_near_one():
    sc = classify_sign_change(lambda x: x * x - 2, 1.0, 2.0)
    assert sc.kind == "root" and sc.complete
    assert sc.lo < math.sqrt(2) < sc.hi  # reference: math.sqrt
    assert abs(sc.exponent - 1) < 0.2  # |f| ~ |f'(r)|·width at a simple root
    assert (sc.f_lo < 0 < sc.f_hi) and sc.evaluations == 12  # two ends + 10 halvings


def test_tan_across_half_pi_is_a_pole_not_a_root():
    # REFERENCES.md §4: bisection on tan over [1, 2] closes on pi/2 with |f| ~ 6e15 (a pole) [CP rule].
    sc = classify_sign_change(math.tan, 1.0, 2.0)
    assert sc.kind == "pole"
    assert sc.lo < math.pi / 2 < sc.hi
    assert sc.exponent < -0.5  # tan(x) ~ -1/(x - pi/2): |f| ~ width^-1


@pytest.mark.parametrize(
    "f, kind, q",
    [
        (lambda x: (x - 0.3) ** 3, "root", 3.0),  # triple root: |f| = |x - r|^3 (exact)
        (lambda x: float(np.cbrt(x - 0.3)), "root", 1 / 3),  # |f| = |x - r|^(1/3) (exact)
        (lambda x: 1 / (x - 0.3), "pole", -1.0),  # simple pole (exact)
        (lambda x: 1 / (x - 0.3) ** 3, "pole", -3.0),  # pole of order 3 (exact)
    ],
)
def test_the_exponent_of_the_power_law_tells_multiplicity_and_pole_order(f, kind, q):
    sc = classify_sign_change(f, 0.0, 1.0)
    assert sc.kind == kind
    assert abs(sc.exponent - q) < 0.2 * max(1.0, abs(q))


def test_a_step_function_is_a_jump_located_to_a_few_ulps():
    sc = classify_sign_change(lambda x: -1.0 if x < 0.3 else 1.0, 0.0, 1.0)
    assert sc.kind == "jump"
    assert sc.lo < 0.3 <= sc.hi and sc.hi - sc.lo <= 4 * math.ulp(0.3)  # 0.3: where the step is (exact)


def test_a_logarithmic_pole_keeps_growing_and_is_called_a_pole():
    # sign(x - r)·(-log|x - r|) grows without bound, slower than any power
    sc = classify_sign_change(lambda x: math.copysign(-math.log(abs(x - 0.3)), x - 0.3), 0.0, 1.0)
    assert sc.kind == "pole" and sc.lo < 0.3 < sc.hi


def test_a_single_undefined_point_is_stepped_around():
    # 1/(x - 1) - 1/2 raises ZeroDivisionError at exactly x = 1, the midpoint of [0.9, 1.1]
    sc = classify_sign_change(lambda x: 1 / (x - 1) - 0.5, 0.9, 1.1)
    assert sc.kind == "pole" and sc.lo < 1.0 < sc.hi
    assert any("undefined at 1.0" in n for n in sc.notes)


def test_a_gap_where_f_is_undefined_is_reported_not_judged():
    f = lambda x: math.copysign(math.sqrt(x * x - 0.01), x)
    sc = classify_sign_change(f, -1.0, 1.3)
    assert sc.kind == "undefined" and -0.1 < sc.x_undefined < 0.1


def test_an_exact_zero_at_a_midpoint_ends_the_refinement():
    sc = classify_sign_change(lambda x: x - 0.5, 0.0, 1.0)
    assert sc.kind == "root" and sc.exact_zero and sc.x == 0.5 and sc.evaluations == 3


def test_no_sign_change_is_refused_with_the_values():
    with pytest.raises(BracketError, match=r"does not change sign strictly across \[1.0, 2.0\]"):
        classify_sign_change(lambda x: x * x, 1.0, 2.0)


def test_budget_exhaustion_returns_an_unfinished_verdict():
    sc = classify_sign_change(lambda x: x - 0.123, 0.0, 1.0, f_lo=-0.123, f_hi=0.877, max_evals=2)
    assert sc.kind == "unclassified" and not sc.complete and sc.evaluations == 2


def test_a_budget_halt_from_the_callers_evaluator_stops_the_refinement():
    calls = []

    def f(x):
        if len(calls) >= 8:
            raise Halt("max-evals", "budget")
        calls.append(x)
        return x * x - 2

    sc = classify_sign_change(f, 1.0, 2.0)
    assert not sc.complete and len(calls) == 8
    assert sc.kind == "root"  # 6 halvings already show |f| shrinking like width^1


def test_judge_refinement_waits_when_the_evidence_is_flat():
    kind, *_ = judge_refinement([1.0, 0.5, 0.25], [1.0, 1.0, 1.0], [1.0, 1.0, 1.0])
    assert kind is None
    kind, *_ = judge_refinement([1.0, 0.5, 0.25], [1.0, 1.0, 1.0], [1.0, 1.0, 1.0], at_resolution=True)
    assert kind == "jump"


@settings(max_examples=40, deadline=None)
@given(
    p=st.floats(min_value=0.5, max_value=4.0),
    r=st.floats(min_value=0.05, max_value=0.95),
    pole=st.booleans(),
)
@example(p=1.0, r=0.5, pole=False)  # the root sits on the first midpoint
@example(p=2.0, r=0.25, pole=True)  # an even pole with a sign change (sign(x - r)/(x - r)^2)
def test_power_laws_are_judged_by_their_exponent(p, r, pole):
    q = -p if pole else p
    def f(x):
        if x == r:
            return math.inf if pole else 0.0
        return math.copysign(abs(x - r) ** q, x - r)

    sc = classify_sign_change(f, 0.0, 1.0)
    assert sc.kind == ("pole" if pole else "root")
    assert sc.lo <= r <= sc.hi
    if math.isfinite(sc.exponent):
        assert abs(sc.exponent - q) <= 0.2 * max(1.0, abs(q))  # error bound ln2/ln64 = 1/6 per unit of |q|
