"""High-precision replays of runs (convdiag.core._highprec).

Check values: an independent 60-digit mpmath Newton iteration written out here (the textbook formula),
and mpmath.findroot.
"""

import math

import mpmath
import pytest

from convdiag import ParameterError, solve
from convdiag.core._highprec import replay


def test_a_float_only_user_derivative_prevents_the_replay():
    run = solve("cos(x) - x", "newton", start=1.0, fprime=lambda x: -math.sin(x) - 1)
    with pytest.raises(ParameterError, match="The run used your f', which does not compute in high precision"):
        replay(run)


def newton_60(f, df, x0, n):
    """Textbook Newton at 60 digits, written out independently of convdiag."""
    out = []
    with mpmath.workdps(60):
        x = mpmath.mpf(x0)
        for _ in range(n):
            x = x - f(x) / df(x)
            out.append(x)
    return out


def test_replay_reproduces_an_independent_60_digit_newton_iteration():
    run = solve("cos(x) - x", "newton", start=1.0)
    hp = replay(run, digits=60)
    assert hp.arithmetic == "mpmath" and hp.digits == 60 and hp.starts == (mpmath.mpf(1),)
    ref = newton_60(lambda x: mpmath.cos(x) - x, lambda x: -mpmath.sin(x) - 1, 1.0, len(hp.steps))
    with mpmath.workdps(60):
        for step, expected in zip(hp.steps, ref):
            assert abs(step.x - expected) < mpmath.mpf(10) ** -58
    assert len(hp.steps) > len(run.steps)  # more digits, more steps before the floor


def test_replay_of_a_bracketing_run_starts_from_the_same_bracket():
    run = solve("x**3 - 2*x - 5", "bisection", bracket=(2.0, 3.0))
    hp = replay(run, digits=40, max_evals=30)
    assert hp.bracket == (2, 3) and [float(s.x) for s in hp.steps[:10]] == [float(s.x) for s in run.steps[:10]]


def test_replay_of_a_callable_uses_its_mpmath_arithmetic():
    run = solve(lambda x: mpmath.exp(x) - 2 - x / 3 if not isinstance(x, float) else math.exp(x) - 2 - x / 3,
                "halley", start=1.0)
    hp = replay(run, digits=50)
    assert hp.converged and hp.arithmetic == "mpmath"
    with mpmath.workdps(50):
        r = mpmath.findroot(lambda x: mpmath.exp(x) - 2 - x / 3, 1.0)  # reference: mpmath
        assert abs(hp.root - r) < mpmath.mpf(10) ** -45


def test_replay_refuses_what_it_cannot_do():
    with pytest.raises(ParameterError, match="computes in floats inside"):
        replay(solve(lambda x: math.cos(x) - x, "newton", start=1.0))
    with pytest.raises(ParameterError, match="Only double-precision real runs"):
        replay(solve("cos(x) - x", "newton", start=1.0, digits=30))
