"""Outcome classes of scalar runs (convdiag.core._outcomes.classify_run) on published pathologies.

Sources: REFERENCES §4 (x^3 - 2x + 2: Newton's 2-cycle from 0 and the real root -1.76929...;
arctan: Newton converges inside |x0| < 1.3917452002707349 and diverges outside, [V]); REFERENCES
§1 (Newton's linear rate (m-1)/m at a root of multiplicity m, [V]); f'(0) = 0 for x^2 - 1 (algebra);
log x - 1: the tangent at 8 meets zero at 8 - 8(log 8 - 1) < 0, where log is undefined (algebra).
"""

import math

import numpy as np
import pytest

from convdiag import solve
from convdiag.core._outcomes import OUTCOME_MEANING, OUTCOMES, REASONS, classify_run
from convdiag.core._run import STOP_REASONS


def test_every_stop_reason_and_outcome_has_a_code_and_every_outcome_a_meaning():
    assert set(STOP_REASONS) <= set(REASONS) and len(set(REASONS)) == len(REASONS)
    assert list(OUTCOME_MEANING) == list(OUTCOMES)


def test_newton_from_zero_on_the_cubic_is_a_cycle_and_from_minus_two_converges():
    assert classify_run(solve("x**3 - 2*x + 2", "newton", start=0.0, max_evals=40)) == "cycle"
    run = solve("x**3 - 2*x + 2", "newton", start=-2.0)
    assert classify_run(run) == "converged" and run.root == pytest.approx(-1.7692923542386314, abs=4e-16)


@pytest.mark.parametrize("start, outcome", [(1.3, "converged"), (1.45, "divergence"), (-3.0, "divergence")])
def test_newton_on_arctan_diverges_outside_the_critical_start(start, outcome):
    run = solve(np.arctan, "newton", start=start, fprime=lambda x: 1 / (1 + x * x))
    assert classify_run(run) == outcome


def test_a_zero_derivative_is_flat_and_a_double_root_out_of_budget_is_a_multiple_root():
    assert classify_run(solve("x**2 - 1", "newton", start=0.0)) == "flat"
    run = solve("(x - 1)**2*exp(x)", "newton", start=3.0, max_evals=40)  # rate 1/2 (m = 2)
    assert run.stop_reason == "max-evals" and classify_run(run) == "multiple-root"


def test_a_step_into_the_functions_undefined_region_is_a_domain_error():
    run = solve(lambda x: math.log(x) - 1, "newton", start=8.0, fprime=lambda x: 1 / x)
    assert run.stop_reason == "function-raised" and classify_run(run) == "domain-error"


def test_complex_runs_are_classified_like_real_ones():
    run = solve(lambda z: z**3 - 1, "newton", start=-1.0 + 0.5j)
    assert classify_run(run) == "converged" and abs(run.root**3 - 1) < 1e-15
    flat = solve(lambda z: z**3 - 1, "newton", start=0j, fprime=lambda z: 3 * z * z)
    assert classify_run(flat) == "flat"


def _classified(xs, fs, reason="max-evals"):
    """Outcome of a made-up path through the rolling record (the engine's own bookkeeping)."""
    from convdiag.core._outcomes import R, classify, track_init, track_start, track_step

    a = lambda v: np.array([v], dtype=float)  # noqa: E731
    t = {}
    track_init(t, a(xs[0]), np.float64)
    track_start(t, a(xs[0]), a(fs[0]))
    for xp, xn, fn in zip(xs, xs[1:], fs[1:]):
        track_step(t, a(xp), a(xn), a(fn))
    return OUTCOMES[int(classify(np.array([R[reason]], np.uint8), t, "newton")[0])]


def test_a_path_that_repeats_with_period_three_is_a_cycle_and_one_that_wanders_is_out_of_budget():
    # a period-3 orbit 0.2 -> 1.7 -> -0.9 -> 0.2 ... (made-up numbers: the rule reads only the repetition)
    xs = [0.2, 1.7, -0.9] * 4
    fs = [0.5, -2.0, 1.25] * 4
    assert _classified(xs, fs) == "cycle"
    # the same points in an order that never repeats: no period shows, so it is the budget, not a cycle
    rng = np.random.default_rng(7)
    xs = rng.uniform(-3, 3, 12).tolist()
    assert _classified(xs, [x**3 - 2 * x + 2 for x in xs]) == "budget"


def test_newton_on_z_cubed_minus_one_has_no_cycles_only_starts_that_need_more_evaluations():
    # Every attracting cycle of a rational map attracts a critical point (Fatou; e.g. Milnor, Dynamics in One
    # Complex Variable, from memory); the critical points of Newton's map for z^3 - 1 are the three roots and
    # 0 (which maps to infinity), so no start can end in a cycle: starts left over by the budget are "budget".
    from convdiag import basin_map

    bm = basin_map("z**3 - 1", rectangle=((-2.0, 2.0), (-2.0, 2.0)), shape=(120, 120), max_evals=40, variable="z")
    assert "cycle" not in set(bm.outcome.ravel().tolist())
    left = np.flatnonzero(bm.outcome.ravel() == "budget")
    assert left.size > 0
    for k in left[:: max(1, left.size // 5)]:  # given more evaluations, they reach a root
        run = solve("x**3 - 1", "newton", start=complex(bm.starts.ravel()[k]), max_evals=400)
        assert run.converged and abs(complex(run.root) ** 3 - 1) < 1e-12
