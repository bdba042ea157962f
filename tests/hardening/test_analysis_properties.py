"""``estimate_order``, ``diagnose`` and ``find_brackets`` on hostile functions, hostile runs and hostile sequences.

Properties: only documented errors escape, each with a message; a bracket search stays inside its budget,
logs every call into the user's code, and returns only candidates that say what they are (a root bracket has a
sign change or an exact zero at an end); every result renders as text, HTML and JSON.
"""

from __future__ import annotations

import contextlib
import json
import math
import warnings

import pytest
from checks import check_refusal, outcome, renders
from hypothesis import event, example, given, settings
from hypothesis import strategies as st
from strategies import Fault, Hostile, floats, hostile_functions

import convdiag
from convdiag import METHODS
from convdiag.core import order_json

N_ORDER = 300
N_ORDER_SEQ = 400
N_DIAGNOSE = 300
N_DIAGNOSE_SEQ = 300
N_BRACKETS = 700

OPEN = ["newton", "secant", "steffensen", "halley", "iqi"]


@contextlib.contextmanager
def quiet_numpy():
    with warnings.catch_warnings():
        warnings.filterwarnings("ignore", category=RuntimeWarning, message=".*encountered in")
        yield


def _run(f, method, start):
    kw = {"bracket": (-2.0, 3.0)} if METHODS[method].needs_bracket else {"start": start}
    run, err = outcome(lambda: convdiag.solve(f, method, max_evals=30, **kw))
    return run, err


sequences = st.one_of(
    st.lists(floats(), max_size=30),
    st.lists(st.floats(-1e3, 1e3), min_size=3, max_size=40),
    st.builds(lambda r, q, n: [1.0 + r * q**k for k in range(n)], st.floats(-1, 1), st.floats(0, 1.5),
              st.integers(0, 40)),  # linear, from slow to diverging
    st.builds(lambda e, n: [2.0 + e ** (2**k) for k in range(n)], st.floats(0, 0.9), st.integers(0, 12)),  # quadratic
    st.sampled_from([[], [1.0], [math.nan] * 5, [1.0] * 10, [1e308, -1e308, 1e308], "1 2 3", None, [[1.0, 2.0]],
                     {"x": [1.0, 2.0, 3.0]}, {"f": [1.0, 0.1, 0.01]}, {"x": [1.0], "f": [1.0, 2.0]}, [True, False]]),
)


@settings(max_examples=N_ORDER)
@given(f=hostile_functions(max_faults=1), method=st.sampled_from(OPEN + ["illinois", "hybrid"]),
       start=st.floats(-5, 5), root=st.one_of(st.none(), floats()))
@example(f=Hostile("cubic", ()), method="secant", start=2.0, root=None)  # order 1.618 (the README's example)
@example(f=Hostile("double", ()), method="newton", start=3.0, root=1.0)  # linear, rate 1/2
def test_the_order_of_any_run_is_measured_or_refused_with_a_documented_error(f, method, start, root):
    f.fresh()
    run, err = _run(f, method, start)
    if err is not None:
        return
    est, err = outcome(lambda: convdiag.estimate_order(run, root=root, digits=30))
    event(type(err).__name__ if err is not None else str(est.label))
    if err is not None:
        check_refusal(err, 0)
        return
    renders(est)
    json.dumps(order_json(est), allow_nan=False)


@settings(max_examples=N_ORDER_SEQ)
@given(seq=sequences, kind=st.sampled_from(["auto", "iterates", "residuals"]),
       method=st.sampled_from([None, "newton", "secant", "bisection", "nonsense"]), root=st.one_of(st.none(), floats()))
def test_the_order_of_any_sequence_is_measured_or_refused_with_a_documented_error(seq, kind, method, root):
    est, err = outcome(lambda: convdiag.estimate_order(seq, kind=kind, method=method, root=root))
    event(type(err).__name__ if err is not None else str(est.label))
    if err is not None:
        check_refusal(err, 0)
        return
    renders(est)
    json.dumps(order_json(est), allow_nan=False)


@settings(max_examples=N_DIAGNOSE)
@given(f=hostile_functions(max_faults=1), method=st.sampled_from(sorted(METHODS)), start=st.floats(-5, 5),
       probe=st.booleans())
@example(f=Hostile("two-cycle", ()), method="newton", start=0.0, probe=True)  # the classic 2-cycle
@example(f=Hostile("cubic", (Fault("above", 0, 2.5, "raise", "ValueError"),)), method="newton", start=3.0, probe=True)
def test_any_run_is_diagnosed_and_the_diagnosis_renders(f, method, start, probe):
    f.fresh()
    run, err = _run(f, method, start)
    if err is not None:
        return
    with quiet_numpy():  # the diagnosis's numpy warnings are pinned in test_diagnosis_warnings below
        d, err = outcome(lambda: convdiag.diagnose(run, probe=probe, max_probe_evals=20))
    event(type(err).__name__ if err is not None else d.verdict)
    if err is not None:
        check_refusal(err, 0)
        return
    renders(d)


@settings(max_examples=N_DIAGNOSE_SEQ)
@given(seq=sequences, f=st.one_of(st.none(), hostile_functions(max_faults=1, vector=False)),
       xtol=st.one_of(st.none(), st.floats(0, 1e-3)), method=st.sampled_from([None, "newton", "secant"]))
def test_any_sequence_is_diagnosed_or_refused_and_the_diagnosis_renders(seq, f, xtol, method):
    with quiet_numpy():  # the diagnosis's numpy warnings are pinned in test_diagnosis_warnings below
        d, err = outcome(lambda: convdiag.diagnose(seq, f=f, xtol=xtol, method=method, max_probe_evals=20))
    event(type(err).__name__ if err is not None else d.verdict)
    if err is not None:
        check_refusal(err, 0)
        return
    renders(d)
    if f is not None:
        assert f.calls <= 20 + 3  # the probes' budget (and the derivative check's few calls)


def mostly(good, bad):
    """``good`` four times in five, ``bad`` (invalid input) otherwise."""
    return st.tuples(st.sampled_from([True, True, True, True, False]), good, bad).map(lambda t: t[1] if t[0] else t[2])


search_where = mostly(
    st.one_of(st.builds(lambda a, w: {"domain": (a, a + w)}, st.floats(-20, 20), st.floats(1e-6, 40)),
              st.builds(lambda x: {"near": x}, st.floats(-20, 20))),
    st.one_of(st.builds(lambda a, b: {"domain": (a, b)}, floats(), floats()),  # reversed, equal, non-finite
              st.builds(lambda x: {"near": x}, floats()),
              st.sampled_from([{}, {"domain": (0.0, 1.0), "near": 0.5}, {"domain": (1.0,)}, {"domain": "0 1"},
                               {"near": "1"}])),
)


@settings(max_examples=N_BRACKETS)
@given(f=hostile_functions(), where=search_where, max_evals=mostly(st.integers(3, 300), st.sampled_from([0, 2, -5])),
       samples=mostly(st.integers(3, 60), st.sampled_from([2, 0, 10.5])),
       step=mostly(st.one_of(st.none(), st.floats(1e-3, 10)), st.sampled_from([0.0, -1.0, math.nan])),
       fprime=st.one_of(st.none(), hostile_functions(max_faults=1, vector=False)))
def test_a_bracket_search_stays_in_budget_and_keeps_every_evaluation(f, where, max_evals, samples, step, fprime):
    f.fresh()
    if fprime is not None:
        fprime.fresh()
    found, err = outcome(lambda: convdiag.find_brackets(f, max_evals=max_evals, samples=samples, step=step,
                                                        fprime=fprime, **where))
    points = f.points + (fprime.points if fprime is not None else 0)
    event(type(err).__name__ if err is not None else f"{len(found.roots)} roots")
    if err is not None:
        check_refusal(err, points)
        return
    assert found.evaluations <= max_evals
    assert found.evaluations == len(found.evals) == points  # every point the user's code saw, and no other
    for c in found.candidates:
        assert c.kind in ("root", "pole", "jump", "touch", "domain-edge", "unclassified")
        assert c.lo <= c.hi and c.reason and c.recommend
        if c.kind == "root" and c.lo < c.hi:
            assert c.f_lo == 0 or c.f_hi == 0 or (c.f_lo < 0) != (c.f_hi < 0)
    renders(found)


@pytest.mark.parametrize("method", OPEN[:4])
@settings(max_examples=100)
@given(f=hostile_functions(max_faults=1), start=st.floats(-5, 5))
def test_a_run_interrupted_by_its_budget_is_still_measured(method, f, start):
    run, err = outcome(lambda: convdiag.solve(f, method, start=start, max_evals=3))
    if err is not None:
        return
    est, err = outcome(lambda: convdiag.estimate_order(run, replay=False))
    if err is not None:
        check_refusal(err, 0)
        return
    renders(est)


# Iterates near the float limit once made trace_converged's np.diff overflow with a numpy warning: an exception
# wherever warnings are errors (this suite, and users who run with -W error).
def test_diagnosing_iterates_near_the_float_limit_emits_no_numpy_warning():
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        d = convdiag.diagnose([1e308, -1e308, 1e308], max_probe_evals=20)
    assert d.verdict != "converged"  # steps of 2e308 (inf in floats) are no convergence
