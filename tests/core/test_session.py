"""The driver: stopping rules, budgets, stepping back and forth, and bad input that keeps history."""

import math
import time

import numpy as np
import pytest

from convdiag import BracketError, EvaluationError, solve, start_session


def cos_minus_x(x):
    return math.cos(x) - x  # root 0.7390851332151607 (reference: mpmath.findroot, see test_methods)


ROOT = 0.7390851332151607


def test_session_steps_forward_and_back_without_recomputing():
    s = start_session(cos_minus_x, "secant", start=[1.0, 0.5])
    first = s.forward()
    second = s.forward()
    evals = s.ev.count
    assert s.back() is first and s.position == 1
    assert s.forward() is second and s.ev.count == evals  # replayed, not recomputed
    s.reset()
    assert s.position == 0 and s.current is None
    run = s.run_to_end()
    assert run.converged and s.at_end and run.steps[:2] == (first, second)


@pytest.mark.parametrize(
    "rule, kwargs",
    [
        ("step-small", {"method": "newton", "start": 1.0, "xtol": 1e-3, "fprime": lambda x: -math.sin(x) - 1}),
        ("residual-small", {"method": "newton", "start": 1.0, "ftol": 1e-3}),
        ("bracket-small", {"method": "bisection", "bracket": (0.0, 1.0), "xtol": 1e-3}),
        ("max-evals", {"method": "bisection", "bracket": (0.0, 1.0), "max_evals": 7}),
        ("max-steps", {"method": "bisection", "bracket": (0.0, 1.0), "max_steps": 3}),
    ],
)
def test_the_record_names_the_rule_that_stopped_the_run(rule, kwargs):
    run = solve(cos_minus_x, **kwargs)
    assert run.stop_reason == rule
    if rule == "max-evals":
        assert run.evaluations == 7  # the budget holds exactly
    if rule == "max-steps":
        assert len(run.steps) == 3
    if rule == "bracket-small":
        lo, hi = run.steps[-1].bracket
        assert hi - lo <= 1e-3 and lo <= ROOT <= hi


def test_time_budget_stops_a_slow_function():
    def slow(x):
        time.sleep(0.02)
        return x**10 - 1

    run = solve(slow, "regula-falsi", bracket=(0.0, 1.3), max_time=0.15, max_evals=10_000)
    assert run.stop_reason == "max-time" and 3 <= run.evaluations <= 12


def test_interrupt_returns_what_was_finished():
    calls = []

    def f(x):
        calls.append(x)
        if len(calls) == 6:
            raise KeyboardInterrupt
        return cos_minus_x(x)

    run = solve(f, "bisection", bracket=(0.0, 1.0))
    assert run.stop_reason == "interrupted" and not run.converged
    assert len(run.steps) == 3  # steps 1-3 finished; step 4 was interrupted
    assert run.evals.status.tolist().count("raised") == 1


BAD_VALUES = [
    ("raises", lambda x: 1 / 0 if x > 0.5 else x - 0.75, "function-raised", "ZeroDivisionError"),
    ("nan", lambda x: math.nan if x > 0.5 else x - 0.75, "nonfinite-value", "NaN"),
    ("inf", lambda x: math.inf if x > 0.5 else x - 0.75, "nonfinite-value", "inf"),
    ("complex", lambda x: 1j if x > 0.5 else x - 0.75, "bad-value", "complex"),
    ("none", lambda x: None if x > 0.5 else x - 0.75, "bad-value", "None"),
    ("string", lambda x: "0.1" if x > 0.5 else x - 0.75, "bad-value", "str"),
    ("array", lambda x: np.ones(3) if x > 0.5 else x - 0.75, "bad-value", r"shape \(3,\)"),
]


@pytest.mark.parametrize("name, f, reason, text", BAD_VALUES, ids=[b[0] for b in BAD_VALUES])
def test_bad_values_stop_the_run_with_a_message_and_keep_the_history(name, f, reason, text):
    # Starts at 0.1 and 0.2 are fine; the secant step lands beyond 0.5 where f misbehaves.
    run = solve(f, "secant", start=[0.1, 0.2], max_evals=20)
    assert run.stop_reason == reason and not run.converged
    assert run.failure is not None and run.failure.evaluation == run.evaluations
    import re

    assert re.search(text, run.failure.message), run.failure.message
    assert "at evaluation" in run.failure.message and "x = " in run.failure.message
    assert run.failure.advice
    assert run.starts == (0.1, 0.2) and len(run.evals) == run.evaluations  # history kept
    with pytest.raises(EvaluationError, match="at evaluation") as info:
        run.raise_for_failure()
    assert info.value.run is run


def test_zero_derivative_stops_newton_with_advice():
    run = solve(lambda x: x * x - 1, "newton", start=0.0, fprime=lambda x: 2 * x)
    assert run.stop_reason == "zero-derivative"
    assert "tangent is horizontal" in run.message and "bracketing" in run.failure.advice


def test_overflowing_iterates_are_reported_not_raised():
    run = solve(lambda x: math.exp(x) - 1e300, "newton", start=-50.0, fprime=math.exp)
    assert not run.converged and run.stop_reason in ("iterate-overflow", "nonfinite-value", "function-raised")
    assert run.failure.message


def test_bracket_without_sign_change_names_both_values_and_keeps_them():
    with pytest.raises(BracketError, match=r"same sign at both ends of \[1.0, 2.0\].*find_brackets") as info:
        solve(lambda x: x * x + 1, "bisection", bracket=(1.0, 2.0))
    assert info.value.evals.value.tolist() == [2.0, 5.0]



def test_complex_start_runs_newton_in_complex_arithmetic():
    # z^3 - 1 from 1+1j converges to a cube root of unity (reference: numpy.roots of z^3 - 1).
    run = solve(lambda z: z**3 - 1, "newton", start=1 + 1j, fprime=lambda z: 3 * z**2)
    roots = np.roots([1, 0, 0, -1])
    assert run.converged and run.arithmetic == "complex"
    assert np.min(np.abs(roots - run.root)) < 1e-14


def test_json_dict_has_the_stable_keys_and_no_nan():
    import json

    run = solve(lambda x: math.sqrt(x) - 2 if x >= 0 else math.nan, "newton", start=-1.0)
    d = run.to_dict()
    for key in ("method", "evaluations", "iterates", "values", "stop_reason", "root"):
        assert key in d
    json.dumps(d, allow_nan=False)
