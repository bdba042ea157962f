"""The hybrid bracketing method: our copy of the test sets, roots, the worst-case bound, order, models, reasons.

Sources: Alefeld, Potra and Shi, ACM TOMS 21(3) (1995), Table I and Chandrupatla, Adv. Eng. Softw.
28(3) (1997), Table 1, through scipy's copy (``scipy.optimize._tstutils``); scipy's ``brentq`` and
``bisect`` as reference solvers; mpmath at 50-60 digits for reference roots.
"""

import importlib.util
import math
import statistics
import sys
from pathlib import Path

import mpmath
import numpy as np
import pytest
from hypothesis import example, given, settings
from hypothesis import strategies as st

import convdiag.core._hybrid as hybrid_module  # registers "hybrid"
from convdiag import METHODS, BracketError, solve
from convdiag.core._hybrid import FREE_STEPS, Hybrid, zero_in_wide_bracket
from convdiag.core._models import model_from_dict

EPS = 2.220446049250313e-16
TIGHT = dict(xtol=1e-15, rtol=4 * EPS)


def _load_test_sets():
    path = Path(__file__).resolve().parents[2] / "bench" / "_aps.py"
    spec = importlib.util.spec_from_file_location("_aps_testsets", path)
    module = importlib.util.module_from_spec(spec)
    sys.modules[spec.name] = module  # dataclasses look their module up while it loads
    spec.loader.exec_module(module)
    return module


SETS = _load_test_sets()


def bound(n_bisection):
    """The bound stated in Hybrid's docstring: 1.2·N + 4 (FREE_STEPS = 2 free steps, plus rounding)."""
    return 1.2 * n_bisection + FREE_STEPS + 2


def bisection_evaluations(f, bracket, **kw):
    return solve(f, "bisection", bracket=bracket, max_evals=5000, **kw).evaluations


# -- our copy of the test sets --------------------------------------------------------
def test_our_aps_problems_match_scipys_copy():
    from scipy.optimize import _tstutils as T  # scipy's copy of Alefeld-Potra-Shi (1995), Table I

    ours, theirs = SETS.APS, T._APS_TESTS_DICTS
    assert len(ours) == len(theirs) == 154  # 15 problems, 154 instances (the paper's count)
    rng = np.random.default_rng(0)
    for inst, d in zip(ours, theirs):
        assert inst.id == d["ID"] and tuple(inst.args) == tuple(d["args"])
        assert list(inst.bracket) == list(d["bracket"])
        if inst.root is not None:
            assert inst.root == pytest.approx(d["root"], rel=1e-15, abs=1e-300)
        a, b = inst.bracket
        for x in [*np.linspace(a, b, 41), *rng.uniform(a, b, 20), d["root"]]:
            mine, ref = inst(float(x)), d["f"](float(x), *d["args"])
            # equal up to rounding: 1e-13 relative, or 1e-15 absolute where terms of size ~1 cancel
            assert abs(mine - ref) <= 1e-13 * max(abs(mine), abs(ref)) + 1e-15, (inst.id, x, mine, ref)
        for x in np.linspace(a, b, 7):  # the mpmath form (used for 50-digit references) is the same function
            with mpmath.workdps(30):
                high = float(inst.mp(mpmath.mpf(float(x))))
            # a slip in our copy would show as an O(1) difference; 1e-9 allows the double
            # form's cancellation (e.g. Chandrupatla's 9th function near 2e-4: terms of size 2.5e5)
            assert abs(high - inst(float(x))) <= 1e-9 * abs(high) + 1e-12, (inst.id, x)


def test_our_chandrupatla_problems_match_scipys_copy():
    from scipy.optimize import _tstutils as T  # scipy's copy of Chandrupatla (1997), Table 1

    ours, theirs = SETS.CHANDRUPATLA, T._CHANDRUPATLA_TESTS_DICTS
    assert len(ours) == len(theirs) == 45
    for inst, d in zip(ours, theirs):
        assert list(inst.bracket) == list(d["bracket"])
        if inst.root is not None:
            assert inst.root == d["root"]
        a, b = inst.bracket
        for x in np.linspace(a, b, 41):
            mine, ref = inst(float(x)), d["f"](float(x))
            assert abs(mine - ref) <= 1e-13 * max(abs(mine), abs(ref)) + 1e-15, (inst.id, x, mine, ref)
            with mpmath.workdps(30):
                high = float(inst.mp(mpmath.mpf(float(x))))
            assert abs(high - mine) <= 1e-9 * abs(high) + 1e-12, (inst.id, x)  # as above


# -- roots ----------------------------------------------------------------------------------------
def attainable(f, r):
    """Accuracy the double-precision f allows near r: its rounding noise over |f'(r)|.

    Wilkinson's bound for a simple root (shared/REFERENCES.md §3). Noise and slope come from a
    least-squares line through f at 33 equally spaced points around r, after Moré and Wild
    (2011): the spacing starts at one ulp and doubles until the line explains the change
    (f rounded in doubles is a staircase; over a window this short f itself is straight).
    """
    for k in range(40):
        xs = r + (2**k * math.ulp(r)) * np.arange(-16, 17)
        ys = np.array([f(float(x)) for x in xs])
        slope, icept = np.polyfit(xs - r, ys, 1)
        noise = np.max(np.abs(ys - (icept + slope * (xs - r))))
        if slope != 0 and noise <= 0.25 * abs(slope) * (xs[-1] - r):
            return float(noise / abs(slope))
    raise AssertionError(f"f is not resolvable near {r}")


def test_every_aps_instance_converges_to_the_root_brentq_finds():
    from scipy.optimize import brentq  # reference solver

    for inst in SETS.APS:
        run = solve(inst, "hybrid", bracket=inst.bracket, max_evals=200, **TIGHT)
        assert run.converged, (inst.id, run.stop_reason)
        ref = brentq(inst, *inst.bracket, **TIGHT)
        if inst.flat:
            # x·exp(-1/x²) is exactly 0 in doubles for |x| < 0.037: both stop on some zero of it
            # (checked in the next test); the root 0 is not resolvable there.
            assert inst(run.root) == 0 and inst(ref) == 0
            continue
        tol = TIGHT["xtol"] + TIGHT["rtol"] * abs(ref)
        assert abs(run.root - ref) <= 2 * (tol + attainable(inst, ref)), (inst.id, run.root, ref)


def test_flat_problem_13_stops_on_an_exact_zero_and_says_f_may_be_flat():
    from scipy.optimize import brentq

    inst = next(i for i in SETS.APS if i.flat)
    run = solve(inst, "hybrid", bracket=inst.bracket, **TIGHT)
    last = run.steps[-1]
    assert run.stop_reason == "exact-zero" and last.fx == 0
    assert "may be flat (underflow), not at a root" in last.reason
    lo, hi = zero_in_wide_bracket(run)
    assert lo < run.root < hi and hi - lo > 1e-3  # far wider than the tolerance
    # brentq (scipy) also stops on a zero of the underflowed function, well away from the root 0
    x = brentq(inst, *inst.bracket, **TIGHT)
    assert inst(x) == 0 and abs(x) > 1e-3


def test_a_converged_run_stops_at_the_first_bracket_within_xtol_plus_rtol_best():
    # The width rule of brentq and elementwise.find_root (scipy 1.17 sources; see bench/bracketing.py).
    f = lambda x: math.exp(x) - 2 - x / 3
    for xtol in (1e-4, 1e-9, 1e-15):
        run = solve(f, "hybrid", bracket=(0.0, 2.0), xtol=xtol)
        assert run.stop_reason == "bracket-small"
        widths = [(s.bracket[1] - s.bracket[0], s.best) for s in run.steps]
        w, best = widths[-1]
        assert w <= xtol + run.settings.rtol * abs(best)
        assert all(w > xtol + run.settings.rtol * abs(b) for w, b in widths[:-1])


# -- the worst-case bound ------------------------------------------------------------------------
ADVERSARIAL = {
    # a jump inside the bracket (no root: the sign change is a discontinuity)
    "step with a jump": (lambda x: -1.0 if x < 0.3 else 2.0, (0.0, 1.0)),
    "step with a small jump": (lambda x: -3.0 if x < 1 / 3 else 1e-3, (-7.0, 13.0)),
    # flat near both ends of the bracket, all the change in the middle
    "flat near the ends": (lambda x: math.tanh(50 * (x - 0.7)), (-10.0, 10.0)),
    "steep arctan": (lambda x: math.atan(1e6 * (x - 0.2)), (-1.0, 3.0)),
    # a pole inside the bracket
    "pole 1/(x - 0.4)": (lambda x: 1 / (x - 0.4), (0.0, 1.0)),
    "pole of tan": (math.tan, (1.0, 2.0)),
    # roots of multiplicity 3, 5, 7
    "(x - 1/3)^3": (lambda x: (x - 1 / 3) ** 3, (0.0, 1.0)),
    "(x - 1/3)^5": (lambda x: (x - 1 / 3) ** 5, (0.0, 1.0)),
    "(x - 1/3)^7": (lambda x: (x - 1 / 3) ** 7, (0.0, 1.0)),
    "(x - 1)^3 e^x": (lambda x: (x - 1) ** 3 * math.exp(x), (0.0, 3.0)),
    "sin(x)^5": (lambda x: math.sin(x) ** 5, (2.0, 4.0)),
    # slower than linear at the root (cube root): no model fits well
    "cube root": (lambda x: math.copysign(abs(x - 0.1) ** (1 / 3), x - 0.1), (-1.0, 2.0)),
}


@pytest.mark.parametrize("name", list(ADVERSARIAL))
def test_worst_case_bound_holds_on_adversarial_functions(name):
    f, bracket = ADVERSARIAL[name]
    run = solve(f, "hybrid", bracket=bracket, max_evals=1000, **TIGHT)
    n = bisection_evaluations(f, bracket, **TIGHT)  # convdiag's bisection, same stopping rule
    assert run.converged, run.stop_reason
    assert run.evaluations <= bound(n), (run.evaluations, n)


@pytest.mark.parametrize("k", [3, 5, 7])
def test_roots_of_multiplicity_three_and_more_cost_at_most_1_2_bisections(k):
    # (x - 1/3)^k in the form the brief names; no additive constant allowed here.
    f = lambda x: (x - 1 / 3) ** k
    run = solve(f, "hybrid", bracket=(0.0, 1.0), **TIGHT)
    assert run.evaluations <= 1.2 * bisection_evaluations(f, (0.0, 1.0), **TIGHT)
    assert abs(run.root - 1 / 3) <= 2 * (1e-15 + 4 * EPS / 3)


FAMILY = st.tuples(
    st.sampled_from(["power", "wavy power", "tanh", "step"]),
    st.floats(-1, 1),  # root
    st.sampled_from([0.3, 0.5, 1.0, 1.0, 2.5, 3.0, 5.0, 7.0, 9.0]),  # exponent
    st.floats(-6, 6),  # log10 of the scale of f
    st.floats(-3, 5),  # log10 of the distance to the left end
    st.floats(-3, 5),  # log10 of the distance to the right end
)


def _family(kind, r, p, c):
    if kind == "power":
        return lambda x: c * math.copysign(abs(x - r) ** p, x - r)
    if kind == "wavy power":
        return lambda x: c * math.copysign(abs(x - r) ** p, x - r) * (1 + 0.5 * math.sin(3 * x))
    if kind == "tanh":
        return lambda x: c * math.tanh((x - r) * 10**p)
    return lambda x: -c if x < r else c * 1e-3


@settings(max_examples=80, deadline=None)
@given(FAMILY)
@example(("step", 0.3, 1.0, 0.0, 0.0, 0.0))  # a jump
@example(("power", 1 / 3, 3.0, 0.0, 0.0, 0.0))  # a triple root
@example(("power", 1 / 3, 0.3, 0.0, 2.0, -2.0))  # root much closer to one end; f steep there
@example(("tanh", 0.7, 2.0, 0.0, 1.0, 1.0))  # flat near both ends
def test_hybrid_never_needs_more_than_1_2_bisections_plus_the_constant(case):
    kind, r, p, logc, left, right = case
    f = _family(kind, r, p, 10**logc)
    bracket = (r - 10**left, r + 10**right)
    run = solve(f, "hybrid", bracket=bracket, max_evals=2000, **TIGHT)
    assert run.converged
    lo, hi = run.steps[-1].bracket if run.stop_reason == "bracket-small" else (run.root, run.root)
    assert lo <= r <= hi or abs(run.root - r) <= 1e-12 * max(1, abs(r))
    assert run.evaluations <= bound(bisection_evaluations(f, bracket, **TIGHT))


def test_a_bracket_without_a_sign_change_is_refused():
    with pytest.raises(BracketError, match="same sign at both ends"):
        solve(lambda x: x * x + 1, "hybrid", bracket=(-1.0, 1.0))


# -- order, models, reasons --------------------------------------------------------------------
def test_observed_order_on_a_smooth_simple_root_is_superlinear():
    # Local order ln(e+/e)/ln(e/e-) over interpolation steps, errors against a 60-digit
    # mpmath.findroot root; the inverse quadratic's order is 1.839 (REFERENCES.md §1).
    def f(x):
        return mpmath.exp(x) - 2 - x / 3

    with mpmath.workdps(60):
        root = mpmath.findroot(f, 1)
    run = solve(f, "hybrid", bracket=(0.0, 2.0), digits=50)
    assert run.converged
    with mpmath.workdps(60):
        errs = [abs(s.x - root) for s in run.steps]
        kinds = [s.model.kind for s in run.steps]
        orders = []
        for i in range(2, len(errs)):
            if all(k == "inverse-polynomial" for k in kinds[i - 2 : i + 1]) and errs[i] > mpmath.mpf(10) ** -45:
                orders.append(float(mpmath.log(errs[i] / errs[i - 1]) / mpmath.log(errs[i - 1] / errs[i - 2])))
    assert len(orders) >= 3
    assert statistics.median(orders) >= 1.6, orders


def test_hybrid_runs_in_50_digit_arithmetic():
    def f(x):
        return mpmath.exp(x) - 2 - x / 3

    run = solve(f, "hybrid", bracket=(0.0, 2.0), digits=50, max_evals=200)
    with mpmath.workdps(50):
        root = mpmath.findroot(f, 1)  # reference: mpmath
        assert run.converged and abs(run.root - root) < mpmath.mpf(10) ** -40


def test_steps_carry_models_that_reproduce_the_step_and_reasons_for_every_fallback():
    kinds = set()
    for inst in SETS.APS + SETS.CHANDRUPATLA:
        run = solve(inst, "hybrid", bracket=inst.bracket, max_evals=200, **TIGHT)
        for s in run.steps:
            kinds.add(s.model.kind)
            assert s.model.predict() == s.x, (inst.id, s.index, s.model)  # exactly: same arithmetic
            assert model_from_dict(s.model.to_dict()) == s.model
            lo, hi = s.bracket
            assert s.bracket_before[0] <= lo < hi <= s.bracket_before[1] or s.fx == 0
            if s.model.kind == "midpoint":
                assert s.reason.startswith("bisection: ") and len(s.reason) > len("bisection: ") + 10
            else:
                assert s.reason.startswith(("accepted", "chord", "Anderson")), s.reason
    assert kinds == {"midpoint", "inverse-polynomial", "power-law", "chord"}


def test_weighted_chord_scales_the_kept_end_as_anderson_bjorck():
    # Anderson and Björck, BIT 13 (1973) (from memory; rule restated in REFERENCES.md §1): when the
    # same end is kept again, its value is scaled by m = 1 - f(new)/f(old), or 1/2 when m <= 0.
    # f repeats -1 left of 0, so m = 0 and the kept right end's value halves at every chord step.
    def f(x):
        return -1.0 if x <= 0 else x / 1.5 + math.sin(x) - 1

    run = solve(f, "hybrid", bracket=(-1000.0, math.pi / 2))
    pairs = [(s.model, t.model) for s, t in zip(run.steps, run.steps[1:]) if s.model.kind == t.model.kind == "chord"]
    kept = [(m.yb, n.yb) for m, n in pairs if n.xb == m.xb]  # the right end kept again
    assert len(kept) >= 2
    assert all(new == old / 2 for old, new in kept)
    assert run.evaluations < bisection_evaluations(f, (-1000.0, math.pi / 2)) / 2


def test_power_law_model_recovers_the_multiplicity():
    # (x - 1)^3 e^x has a root of multiplicity 3 at 1 (e^1 != 0): the fitted m tends to 3.
    def f(x):
        return (x - 1) ** 3 * math.exp(x)

    run = solve(f, "hybrid", bracket=(0.0, 3.0), **TIGHT)
    ms = [s.model.m for s in run.steps if s.model.kind == "power-law"]
    assert ms and abs(ms[-1] - 3) < 0.01, ms
    assert abs(run.root - 1) <= 2 * (1e-15 + 4 * EPS)
    assert run.evaluations < bisection_evaluations(f, (0.0, 3.0), **TIGHT) / 2


def test_a_pole_inside_the_bracket_converges_on_the_sign_change_and_says_pole():
    # tan on [1, 2]: the sign change is the pole at pi/2 (REFERENCES.md §4, common practice).
    run = solve(math.tan, "hybrid", bracket=(1.0, 2.0), **TIGHT)
    assert run.stop_reason == "bracket-small"
    assert abs(run.root - math.pi / 2) <= 2 * (1e-15 + 4 * EPS * 2)
    assert abs(math.tan(run.root)) > 1e14
    flagged = ["a pole, not a root, may be inside" in s.reason for s in run.steps]
    assert sum(flagged) >= len(flagged) // 2 and any(flagged[-5:])


def test_hybrid_is_registered_with_the_width_rule_only():
    assert METHODS["hybrid"] is Hybrid and Hybrid.needs_bracket and not Hybrid.stops_on_step
    assert hybrid_module.__all__ == ["FREE_STEPS", "Hybrid", "power_fit", "zero_in_wide_bracket"]
