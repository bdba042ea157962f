"""Budgets, interrupts and hangs: every method, the bracket search and the sweep stop when told, keep what they
finished, and say so.

- evaluation budgets hold exactly (the property tests check every method on every hostile function; here each
  method on a function that never converges);
- a wall-time budget stops a slow function within ``max_time`` plus one evaluation (margins are generous: the
  machines are shared, so a late stop is only a failure when it is late by seconds);
- a KeyboardInterrupt raised inside the user's function after N calls, or sent by a timer thread
  (``_thread.interrupt_main``, ``signal.raise_signal``), ends a run, a bracket search or a sweep with what was
  finished, marked as interrupted;
- a function that hangs in a process-pool worker (``time.sleep(3600)``, an endless loop, a hang where no signal
  reaches) is stopped at the sweep's time budget; its points are marked ``timeout`` and every other point is
  kept, equal to an undisturbed run.
"""

from __future__ import annotations

import _thread
import math
import signal
import threading
import time

import numpy as np
import pytest

import convdiag
from convdiag import METHODS

MARGIN = 2.0  # seconds of slack on shared machines; a hang would overshoot by an hour


def _bracket_or_start(method, *, start=0.3, bracket=(-1.0, 2.0)):
    return {"bracket": bracket} if METHODS[method].needs_bracket else {"start": start}


def _no_root(x):
    return x * x + 1  # open methods wander forever (no real root)


def _pole(x):
    return 1 / (x - 0.3) if x != 0.3 else math.inf  # bracketing methods close in on the pole at 0.3, slowly


# -- evaluation and time budgets -----------------------------------------------------------------------
@pytest.mark.parametrize("method", sorted(METHODS))
def test_the_evaluation_budget_holds_exactly_on_a_function_that_never_converges(method):
    calls = []

    def f(x):
        calls.append(x)
        return _pole(x) if METHODS[method].needs_bracket else _no_root(x)

    for budget in (1, 2, 3, 7, 50):
        calls.clear()
        run = convdiag.solve(f, method, max_evals=budget, **_bracket_or_start(method))
        assert run.evaluations == len(calls) <= budget
        assert run.stop_reason in ("max-evals", "bracket-small", "zero-derivative", "flat-secant") or run.converged


@pytest.mark.parametrize("method", sorted(METHODS))
def test_a_slow_function_stops_at_the_time_budget_plus_one_evaluation(method):
    pause, budget = 0.05, 0.25

    def slow(x):
        time.sleep(pause)
        return _pole(x) if METHODS[method].needs_bracket else _no_root(x)

    t0 = time.perf_counter()
    run = convdiag.solve(slow, method, max_evals=10**6, max_time=budget, **_bracket_or_start(method))
    elapsed = time.perf_counter() - t0
    assert run.stop_reason == "max-time" and not run.converged
    assert elapsed <= budget + pause + MARGIN
    assert 1 <= run.evaluations <= budget / pause + 2  # it did not run on
    assert "time budget" in run.message


def test_a_bracket_search_stops_at_its_time_budget_with_what_it_found():
    pause, budget = 0.01, 0.3

    def slow(x):
        time.sleep(pause)
        return math.sin(x)

    t0 = time.perf_counter()
    found = convdiag.find_brackets(slow, domain=(0.5, 40.0), samples=201, max_time=budget)
    elapsed = time.perf_counter() - t0
    assert found.budget_exhausted and not found.interrupted
    assert any("time budget" in n for n in found.notes)
    assert elapsed <= budget + pause + MARGIN
    assert found.evaluations == len(found.evals) <= budget / pause + 5


def test_a_bracket_search_refuses_a_bad_time_budget():
    for bad in (0.0, -1.0, math.nan, math.inf, "1"):
        with pytest.raises(convdiag.ParameterError, match="'max_time' parameter of find_brackets"):
            convdiag.find_brackets("x - 1", near=0.0, max_time=bad)


def slow_scalar(x, a):
    time.sleep(0.01)
    return x * x - a


def test_a_sweep_in_this_process_stops_at_its_time_budget_and_keeps_the_finished_points():
    pts = {"a": np.linspace(1.0, 4.0, 40)}
    budget = 0.4
    t0 = time.perf_counter()
    res = convdiag.sweep(slow_scalar, pts, method="bisection", bracket=(0.0, 3.0), max_time=budget, processes=1,
                         chunk_size=8, progress=False, xtol=1e-6)
    elapsed = time.perf_counter() - t0
    t = res.table
    assert res.timed_out and elapsed <= budget + 0.5 + MARGIN  # one point takes about 0.25 s (about 25 evaluations)
    late = t["outcome"] == "timeout"
    assert late.any() and (~late).any()
    assert np.array_equal(t["point"], np.arange(40))
    assert set(t["stop_reason"][late].tolist()) == {"max-time"}
    done = t["outcome"] == "converged"
    np.testing.assert_allclose(t["root"][done], np.sqrt(pts["a"][done]), atol=1e-6)  # reference: numpy.sqrt
    assert "timeout" in res.to_text()


def test_a_sweep_refuses_a_bad_time_budget():
    with pytest.raises(convdiag.ParameterError, match="'max_time' parameter of sweep"):
        convdiag.sweep("x - a", {"a": [1.0]}, start=0.0, max_time=-1.0)


# -- KeyboardInterrupt from inside the user's function ----------------------------------------------------
def _interrupting(f, after):
    calls = []

    def g(x, **params):
        calls.append(x)
        if len(calls) == after:
            raise KeyboardInterrupt
        return f(x, **params)

    return g, calls


@pytest.mark.parametrize("method", sorted(METHODS))
def test_an_interrupt_inside_the_function_ends_the_run_with_every_step_before_it(method):
    full = convdiag.solve(lambda x: _pole(x) if METHODS[method].needs_bracket else _no_root(x), method, max_evals=30,
                          **_bracket_or_start(method))
    after = 9
    g, calls = _interrupting(lambda x: _pole(x) if METHODS[method].needs_bracket else _no_root(x), after)
    run = convdiag.solve(g, method, max_evals=30, **_bracket_or_start(method))
    assert run.stop_reason == "interrupted" and not run.converged
    assert run.evaluations == len(calls) == after and run.evals.status[-1] == "raised"
    assert "KeyboardInterrupt" in run.evals.failures()[-1][3]
    kept = [s.x for s in run.steps]
    assert kept == [s.x for s in full.steps[: len(kept)]]  # the steps before it, unchanged
    assert all(s.evals < after for s in run.steps)


def test_an_interrupt_while_stepping_a_session_keeps_the_steps_and_the_cursor():
    g, calls = _interrupting(lambda x: x**3 - 2 * x + 2, 6)
    session = convdiag.start_session(g, "secant", start=[0.0, 0.1])
    steps = [session.forward() for _ in range(10)]
    assert steps[-1] is None and session.finished
    assert session.run.stop_reason == "interrupted" and session.run.evaluations == len(calls) == 6
    assert session.position == len(session.steps) == 3  # two starts, three steps, then the interrupt
    assert session.back() is session.steps[1]


def test_an_interrupt_inside_the_function_ends_a_bracket_search_with_what_it_found():
    f = lambda x: math.tan(x) - 2  # roots and poles; reference below: the same search, uninterrupted
    full = convdiag.find_brackets(f, domain=(0.0, 10.0), samples=41, max_evals=2000)
    g, calls = _interrupting(lambda x: f(x), 70)  # the full search judges a sign change every 10 evaluations
    cut = convdiag.find_brackets(g, domain=(0.0, 10.0), samples=41, max_evals=2000)
    assert cut.interrupted and not full.interrupted
    assert cut.evaluations == sum(np.size(c) for c in calls) == len(cut.evals)  # f was tried once on an array
    assert len(calls) == 70
    assert any("Interrupted" in n for n in cut.notes)
    kinds = [c.kind for c in cut.candidates]
    assert "unclassified" in kinds and ("root" in kinds or "pole" in kinds)
    for c in cut.candidates:  # what it judged (the last one perhaps on fewer halvings), it judged as the full search
        if c.kind != "unclassified":
            assert any(d.kind == c.kind and c.lo <= d.x <= c.hi for d in full.candidates)
    assert len(cut.candidates) == len(full.candidates)  # every sign change of the grid is listed, none lost
    assert cut.to_dict()["interrupted"] is True and "Interrupted" in cut.to_text()


def test_an_interrupt_inside_a_point_by_point_sweep_keeps_every_point_finished():
    pts = {"a": np.linspace(1.0, 4.0, 30)}
    kw = {"method": "illinois", "bracket": (0.0, 3.0), "processes": 1, "chunk_size": 7, "progress": False}
    full = convdiag.sweep(lambda x, a: x * x - a, pts, **kw)
    g, calls = _interrupting(lambda x, a: x * x - a, 200)
    cut = convdiag.sweep(g, pts, **kw)
    t = cut.table
    assert len(calls) == 200 and cut.interrupted and np.array_equal(t["point"], np.arange(30))
    done = t["outcome"] != "not-run"
    assert 0 < done.sum() < 30 and (t["outcome"][~done] == "not-run").all()
    assert cut.chunks_done < cut.chunks
    for name in ("root", "evals", "outcome", "stop_reason"):
        assert t[name][done].tolist() == full.table[name][done].tolist()  # the finished points, undisturbed
    assert done.sum() > 7 * cut.chunks_done  # the interrupted chunk's finished points are kept too


# -- KeyboardInterrupt sent by another thread, as Ctrl-C would -----------------------------------------------
def _within_interrupt(call, send, after):
    timer = threading.Timer(after, send)
    timer.start()
    try:
        return call()
    except KeyboardInterrupt:  # it must not escape: that would stop the test session
        pytest.fail("the KeyboardInterrupt escaped")
    finally:
        timer.cancel()
        timer.join()


def test_ctrl_c_from_another_thread_interrupts_a_run_and_keeps_its_steps():
    def slow(x):
        time.sleep(0.005)
        return x * x + 1

    run = _within_interrupt(lambda: convdiag.solve(slow, "newton", start=0.3, max_evals=10**6, max_time=60.0),
                            _thread.interrupt_main, 0.5)
    assert run.stop_reason == "interrupted" and len(run.steps) >= 5
    assert run.evaluations == len(run.evals) and run.evals_at_iterates[-1] <= run.evaluations


def test_sigint_from_another_thread_interrupts_a_bracket_search_and_keeps_what_it_found():
    def slow(x):
        time.sleep(0.002)
        return math.sin(x)

    found = _within_interrupt(lambda: convdiag.find_brackets(slow, domain=(0.5, 200.0), samples=2001, max_evals=10**5,
                                                             max_time=60.0),
                              lambda: signal.raise_signal(signal.SIGINT), 0.5)
    assert found.interrupted and 0 < found.evaluations < 2001
    assert found.evaluations == len(found.evals)


# -- hangs in worker processes ---------------------------------------------------------------------------
HANG_AT = 2.5


def hangs_by_sleeping(x, a):
    if a == HANG_AT:
        time.sleep(3600)
    return x * x - a


def hangs_in_a_loop(x, a):
    while a == HANG_AT:
        pass
    return x * x - a


def hangs_out_of_reach(x, a):
    if a == HANG_AT:  # no signal reaches it: only killing the worker stops it
        signal.pthread_sigmask(signal.SIG_BLOCK, {signal.SIGALRM})
        time.sleep(3600)
    return x * x - a


@pytest.mark.parametrize("hang", [hangs_by_sleeping, hangs_in_a_loop, hangs_out_of_reach],
                         ids=["sleep", "loop", "unreachable"])
def test_a_hanging_function_in_a_worker_is_stopped_at_the_budget_and_every_other_point_is_kept(hang):
    pts = {"a": np.array([1.0, 1.5, 2.0, HANG_AT, 3.0, 3.5, 4.0, 4.5])}
    kw = {"method": "illinois", "bracket": (0.0, 3.0), "chunk_size": 2, "progress": False, "xtol": 1e-10}
    budget = 3.0
    t0 = time.perf_counter()
    res = convdiag.sweep(hang, pts, processes=2, max_time=budget, **kw)
    elapsed = time.perf_counter() - t0
    assert res.runner == "process-pool" and res.timed_out and not res.interrupted
    assert elapsed <= budget + MARGIN + 2.0  # the pool's start-up, the grace period, the kill
    t = res.table
    assert np.array_equal(t["point"], np.arange(8))  # every point exactly once
    hung = t["a"] == HANG_AT
    assert t["outcome"][hung].tolist() == ["timeout"] and t["stop_reason"][hung].tolist() == ["max-time"]
    undisturbed = convdiag.sweep(lambda x, a: x * x - a, pts, processes=1, **kw).table
    same_chunk = t["chunk"] == t["chunk"][hung][0]
    if hang is not hangs_out_of_reach:  # the alarm stopped it: the point before it in its chunk is kept too
        same_chunk = hung
    keep = ~same_chunk
    for name in ("root", "evals", "outcome", "stop_reason"):
        assert t[name][keep].tolist() == undisturbed[name][keep].tolist()
    assert set(t["outcome"][same_chunk].tolist()) <= {"timeout", "converged"}
    assert any("timeout" in n for n in res.notes)
