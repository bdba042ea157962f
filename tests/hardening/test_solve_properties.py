"""Every method, through ``convdiag.solve`` and ``start_session``, on hostile functions and hostile input.

Properties (from the issue; no check values: these are invariants):

- the only exceptions out are the documented ones, each with a message; ParameterError and ExpressionError
  come before any evaluation; a BracketError carries the evaluations it made;
- otherwise a Run comes back with a known stop reason, at most ``max_evals`` evaluations, every call into the
  user's code in its log (and no other), and text, HTML and JSON forms that render;
- a session stepped forward and back in any order agrees with itself and with its run.
"""

from __future__ import annotations

import math

import pytest
from checks import check_refusal, check_run, outcome
from hypothesis import event, example, given, settings
from hypothesis import strategies as st
from strategies import Fault, Hostile, brackets, budgets, floats, hostile_functions, starts, tolerances

import convdiag
from convdiag import METHODS

METHOD_NAMES = sorted(METHODS)
N_SOLVE = 400  # examples per method
N_SESSION = 150  # examples per method

good_bracket = st.tuples(st.floats(-10, 0), st.floats(0.01, 10))


def good_starts(n):
    return st.one_of(st.floats(-10, 10), st.lists(st.floats(-10, 10), min_size=1, max_size=n, unique=True))


good_start = good_starts(3)
derivatives = st.one_of(st.none(), st.none(), hostile_functions(max_faults=1, vector=False))


def _kwargs(method, data):
    """The arguments of one solve: plausible ones, with any of them replaced by anything in a third of the cases."""
    wild = data.draw(st.sampled_from([False, False, True]), label="wild input")

    def pick(label, good, bad):
        use_bad = wild and data.draw(st.sampled_from([False, False, True]), label=f"{label} wild")
        return data.draw(bad if use_bad else good, label=label)

    kw = {
        "start": pick("start", good_starts(METHODS[method].n_starts), starts()),
        "bracket": pick("bracket", st.one_of(good_bracket, st.none()), brackets()),
        "xtol": pick("xtol", st.sampled_from([0.0, 1e-12]), tolerances()),
        "rtol": pick("rtol", st.none(), st.one_of(st.none(), tolerances())),
        "ftol": pick("ftol", st.sampled_from([0.0, 1e-14]), tolerances()),
        "max_evals": pick("max_evals", st.integers(1, 40), budgets()),
        "max_steps": pick("max_steps", st.one_of(st.none(), st.integers(1, 15)), st.integers(-1, 0)),
        "max_time": pick("max_time", st.sampled_from([None, 30.0]), st.sampled_from([-1.0, math.nan, math.inf, 0.0])),
        "digits": pick("digits", st.sampled_from([None] * 9 + [20]), st.sampled_from([15, 10_001, 20.0, True])),
    }
    if METHODS[method].needs_bracket and kw["bracket"] is None and not wild:
        kw["bracket"] = data.draw(good_bracket, label="bracket")
    return kw


@pytest.mark.parametrize("method", METHOD_NAMES)
@settings(max_examples=N_SOLVE)
@given(f=hostile_functions(), fprime=derivatives, fprime2=derivatives, data=st.data())
@example(f=Hostile("two-cycle", ()), fprime=None, fprime2=None, data=None)  # Newton 2-cycle from 0
@example(f=Hostile("double", ()), fprime=None, fprime2=None, data=None)  # double root at 1
@example(f=Hostile("bump", ()), fprime=None, fprime2=None, data=None)  # no root, zero slope far out
@example(f=Hostile("cubic", (Fault("after", 3, 0.0, "raise", "ZeroDivisionError"),)), fprime=None, fprime2=None,
         data=None)
def test_solve_returns_the_history_or_a_documented_error(method, f, fprime, fprime2, data):
    f.fresh()
    if data is None:  # a pinned classic: plausible settings
        kw = {"start": 0.0, "bracket": (-3.0, 2.0), "max_evals": 40}
        if METHODS[method].needs_bracket:
            kw.pop("start")
    else:
        kw = _kwargs(method, data)
    run, err = outcome(lambda: convdiag.solve(f, method, fprime=fprime, fprime2=fprime2, **kw))
    calls = f.calls + (fprime.calls if fprime is not None else 0) + (fprime2.calls if fprime2 is not None else 0)
    event(type(err).__name__ if err is not None else run.stop_reason)
    if err is not None:
        check_refusal(err, calls)
        return
    check_run(run, kw.get("max_evals"), calls)
    if isinstance(kw.get("max_steps"), int) and kw["max_steps"] >= 1:
        assert len(run.steps) <= kw["max_steps"]
    if run.stop_reason in ("function-raised", "nonfinite-value", "bad-value"):
        with pytest.raises(convdiag.EvaluationError, match=r"\S") as info:
            run.raise_for_failure()
        assert info.value.run is run


ops = st.lists(st.sampled_from(["forward", "forward", "forward", "back", "reset", "run_to_end", "run"]), max_size=25)


@pytest.mark.parametrize("method", METHOD_NAMES)
@settings(max_examples=N_SESSION)
@given(f=hostile_functions(), start=st.lists(st.floats(-10, 10), min_size=1, max_size=3, unique=True),
       bracket=good_bracket, max_evals=st.integers(1, 30),
       sequence=ops)
def test_a_session_stepped_in_any_order_keeps_every_step(method, f, start, bracket, max_evals, sequence):
    kw = {"bracket": bracket} if METHODS[method].needs_bracket else {"start": start[: METHODS[method].n_starts]}
    session, err = outcome(lambda: convdiag.start_session(f, method, max_evals=max_evals, **kw))
    if err is not None:
        check_refusal(err, f.calls)
        return
    seen = []
    for op in sequence:
        before = list(session.steps)
        result = session.run if op == "run" else getattr(session, op)()
        assert session.steps[: len(before)] == before  # computed steps are never thrown away or changed
        assert 0 <= session.position <= len(session.steps)
        if op == "forward" and result is not None:
            assert result is session.steps[session.position - 1]
        if op == "run_to_end":
            assert session.finished and session.position == len(session.steps)
        seen.append(len(session.steps))
        run = session.run
        check_run(run, max_evals, f.calls, in_progress=True)
        assert run.steps == tuple(session.steps)
        assert (run.stop_reason == "in-progress") == (not session.finished)
    assert seen == sorted(seen)


@settings(max_examples=300)
@given(f=hostile_functions(), start=floats(), max_evals=budgets())
def test_a_complex_start_runs_in_complex_arithmetic_or_is_refused(f, start, max_evals):
    z = complex(start, 0.5) if math.isfinite(start) else complex(start, math.nan)
    run, err = outcome(lambda: convdiag.solve(f, "newton", start=z, max_evals=max_evals))
    if err is not None:
        check_refusal(err, f.calls)
        return
    assert run.arithmetic == "complex"
    check_run(run, max_evals, f.calls)
