"""When a recording or a sequence counts as converged (it carries no stop reason of its own).

scipy's secant (``optimize.newton`` without fprime) stops when the step it computed is below its
tolerance 1.48e-8, without evaluating f at that last point (scipy's source); the recording then ends
one step early, and the extrapolated next step tells that it converged.
"""

import math

import pytest

from convdiag import record
from convdiag.core._detect_stop import SEQ_TOL, tolerance, trace_converged
from convdiag.core._detect_trace import build_trace

so = pytest.importorskip("scipy.optimize")


def test_a_recording_of_scipys_secant_that_converged_counts_as_converged():
    rf = record(math.atan)
    root = so.newton(rf, 1.5)
    t = build_trace(rf)
    assert abs(root) < 1e-12 and abs(t.xs[-1]) > 1e-12  # scipy returned a point it never evaluated
    assert trace_converged(t)


def test_a_sequence_stopped_with_a_large_step_has_not_converged():
    t = build_trace([0.0, 0.1, 0.9524187341792846, 0.7018087356591474, 0.7374863510569974])  # secant on cos x − x
    assert not trace_converged(t)
    assert tolerance(t, 0.7374863510569974) == (SEQ_TOL, "assumed 1e-06·max(1, |x|) (no tolerance given)")


def test_a_tolerance_given_overrides_the_assumed_one():
    xs = [1.0, 0.5, 0.25, 0.125, 0.0625, 0.03125]
    assert not trace_converged(build_trace(xs))
    assert trace_converged(build_trace(xs, xtol=0.05))


def test_a_run_says_itself():
    from convdiag import solve

    run = solve("x**2 - 2", "newton", start=1.0, max_evals=5)
    assert trace_converged(build_trace(run)) is run.converged is False
