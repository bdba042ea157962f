"""The window rules of the order estimate (convdiag/core/_window.py), through estimate_order.

Theory values (shared/REFERENCES.md §1): bisection and fixed-point iteration converge linearly (rate 1/2,
and |g'(r)| at the fixed point); regula falsi's rate is 1 − f'(r)(b − r)/f(b) for the end b that stays.
Rounding floors, NaNs and drifts must not be read as convergence.
"""

import math

import pytest

from convdiag import solve
from convdiag.core._order import estimate_order, order_json


# -- linear convergence -----------------------------------------------------------------------------
@pytest.mark.parametrize("text, bracket", [("cos(x) - x", (0.0, 1.0)), ("sin(x) - x/2", (math.pi / 2, math.pi)),
                                           ("x**3 - 2*x - 5", (2.0, 3.0))])
def test_bisection_rate_is_one_half(text, bracket):
    # Bisection halves the bracket (Burden & Faires Thm 2.1, from memory); REFERENCES §1: rate 1/2.
    run = solve(text, "bisection", bracket=bracket)
    est = estimate_order(run)
    assert est.label == "linear" and abs(est.rate - 0.5) <= 0.02
    own = est.in_run
    assert own is not None and own.label == "linear" and abs(own.rate - 0.5) <= 0.02  # in double precision too


def test_regula_falsi_rate_matches_the_fixed_end_formula():
    # REFERENCES §1 [V]: rate 1 − f'(r)(b − r)/f(b) for the end b that stays fixed; on cos x − x over
    # [0, 1] the end b = 1 stays (f is concave): 1 − (−sin r − 1)(1 − r)/(cos 1 − 1).
    r = 0.7390851332151607  # mpmath.findroot
    expected = 1 - (-math.sin(r) - 1) * (1 - r) / (math.cos(1) - 1)
    est = estimate_order(solve("cos(x) - x", "regula-falsi", bracket=(0.0, 1.0)))
    assert est.label == "linear" and est.rate == pytest.approx(expected, rel=0.01)


def test_fixed_point_iteration_rate_is_the_derivative_at_the_fixed_point():
    # x = cos x: e+ ≈ g'(r) e with |g'(r)| = sin r (REFERENCES §1, fixed point row).
    xs = [1.0]
    for _ in range(80):
        xs.append(math.cos(xs[-1]))
    r = 0.7390851332151607  # mpmath.findroot(cos(x) - x)
    est = estimate_order(xs, root=r)
    assert est.label == "linear" and est.rate == pytest.approx(math.sin(r), abs=0.005)


def test_iterating_sine_is_sublinear():
    # x_{k+1} = sin x_k → 0 like sqrt(3/k) (de Bruijn, Asymptotic Methods in Analysis §8.4, from memory).
    xs = [1.0]
    for _ in range(3000):
        xs.append(math.sin(xs[-1]))
    assert xs[-1] * math.sqrt(3000 / 3) == pytest.approx(1.0, abs=0.02)  # the cited asymptotics hold here
    est = estimate_order(xs, root=0.0)
    assert est.label == "sublinear"


# -- honesty -------------------------------------------------------------------------------------------
def test_a_run_stopped_before_the_asymptotic_regime_says_not_enough_points():
    run = solve("x**2 - 2", "newton", start=1.0, max_steps=2)
    est = estimate_order(run)  # the replay keeps the run's two steps, so it cannot invent more
    assert est.label == "not enough points" and math.isnan(est.value) and est.window is None
    assert "an order needs at least 2" in est.notes[-1]
    assert order_json(est)["order"]["value"] is None


def test_a_run_stuck_at_the_rounding_floor_is_not_called_sublinear():
    # rtol=0 keeps Newton stepping between neighbouring doubles until the budget runs out.
    run = solve("x**2 - 2", "newton", start=1.0, rtol=0.0, max_evals=60)
    assert run.stop_reason == "max-evals"
    for est in (estimate_order(run), estimate_order(run, replay=False), estimate_order(list(run.iterates),
                                                                                        root=math.sqrt(2))):
        assert est.label == "quadratic", est
        assert any("rounding floor" in n for n in est.notes)


def test_a_sequence_that_only_wanders_at_the_floor_is_not_called_sublinear():
    r = math.sqrt(2)
    xs = [r, math.nextafter(r, 2), r, math.nextafter(r, 0), math.nextafter(r, 2)] * 4
    est = estimate_order(xs, root=r)
    assert est.label == "not enough points" and "every error is at the rounding floor" in est.notes[0]


def test_a_slow_drift_to_infinity_is_not_called_convergence():
    # Newton on x·e^(−x) from 2: x+ = x²/(x − 1) runs off to infinity while f → 0 (REFERENCES §4).
    run = solve("x*exp(-x)", "newton", start=2.0)
    est = estimate_order(run)
    assert est.label == "not converging" and est.window is None


def test_a_nan_in_a_log_only_cuts_off_what_comes_before_it():
    est = estimate_order([1.0, float("nan"), 0.5, 0.25, 0.125, 0.0625, 0.03125], root=0.0)
    assert est.label == "linear" and est.rate == pytest.approx(0.5) and "entry k = 1 is not a finite" in est.notes[0]


@pytest.mark.parametrize(("text", "bracket"), [
    ("x - 0.99*sin(x) - 0.1", (0.0, 2.0)),  # Kepler's equation at e = 0.99, M = 0.1
    ("x**3 - 2*x - 5", (2.0, 3.0)),  # Wallis's cubic
    ("cos(x) - x", (0.0, 1.0)),
])
def test_the_illinois_method_is_measured_over_its_three_step_pattern(text, bracket):
    # The Illinois method repeats a pattern of three steps whose errors multiply to e^3 per cycle: order
    # 3^(1/3) = 1.442 per step (Dowell & Jarratt, BIT 11 (1971) 168-174, from memory); single-step orders
    # cycle and never settle, so the estimate must come from 3-step blocks
    est = estimate_order(solve(text, "illinois", bracket=bracket))
    assert est.label == "superlinear" and est.value == pytest.approx(3 ** (1 / 3), abs=0.03)
    assert est.block == 3 and "3-step block" in est.centre


@pytest.mark.parametrize("method", ["bisection", "regula-falsi"])
def test_linear_methods_are_not_mistaken_for_a_block_pattern(method):
    # bisection halves the bracket (rate 1/2, any numerical analysis text); regula falsi keeps one end and
    # converges linearly (Burden & Faires, from memory): neither may be labelled superlinear
    est = estimate_order(solve("x**3 - 2*x - 5", method, bracket=(2.0, 3.0)))
    assert est.label == "linear"
