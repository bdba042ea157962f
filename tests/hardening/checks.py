"""Checks shared by the hardening tests: what every result and every refusal must satisfy."""

from __future__ import annotations

import contextlib
import json
import math
import signal
from collections.abc import Callable, Iterator
from typing import Any

from convdiag import STOP_REASONS
from convdiag.core import CONVERGED, EvalLog, Run
from convdiag.errors import (
    BracketError,
    ConvdiagError,
    EvaluationError,
    ExpressionError,
    InputFileError,
    ParameterError,
)

#: The only exceptions allowed out of an entry point (convdiag.errors documents them).
DOCUMENTED = (ParameterError, ExpressionError, BracketError, InputFileError, EvaluationError)


def renders(result: Any) -> None:
    """Text, HTML, repr and (where there is one) the JSON form render without error."""
    assert isinstance(repr(result), str) and repr(result)
    text = result.to_text()
    assert isinstance(text, str) and text
    html = result.to_html()
    assert isinstance(html, str) and html
    if hasattr(result, "to_dict"):
        json.dumps(result.to_dict(), allow_nan=False)


def check_run(run: Any, max_evals: Any, calls: int | None, *, in_progress: bool = False) -> None:
    """A run kept everything: a known stop reason, the budget held, every call into user code logged."""
    assert isinstance(run, Run)
    assert run.stop_reason in STOP_REASONS or (in_progress and run.stop_reason == "in-progress"), run.stop_reason
    assert run.converged == (run.stop_reason in CONVERGED)
    assert isinstance(run.evals, EvalLog)
    assert len(run.evals) == run.evaluations
    if isinstance(max_evals, int) and not isinstance(max_evals, bool):
        assert run.evaluations <= max_evals
    if calls is not None:
        assert run.evaluations == calls  # every call into the user's code is in the log, none invented
    assert len(run.iterates) == len(run.values) == len(run.evals_at_iterates) == len(run.starts) + len(run.steps)
    assert all(1 <= s.evals <= run.evaluations for s in run.steps)
    if run.converged:
        assert abs(complex(run.root)) < math.inf
    if run.failure is not None:
        assert run.failure.message
    assert run.message
    renders(run)
    json.dumps(run.evals.to_dict(), allow_nan=False)
    run.evals.to_csv()


def check_refusal(exc: BaseException, calls: int) -> None:
    """A documented error, with a message; input errors come before any evaluation, a BracketError keeps its log."""
    assert isinstance(exc, DOCUMENTED), f"{type(exc).__name__}: {exc}"
    assert str(exc).strip()
    if isinstance(exc, BracketError):
        assert isinstance(exc.evals, EvalLog) and len(exc.evals) == calls
    elif isinstance(exc, (ParameterError, ExpressionError)):
        assert calls == 0, f"{type(exc).__name__} after {calls} evaluations: {exc}"


def outcome(call: Callable[[], Any]) -> tuple[Any, BaseException | None]:
    """(result, None) or (None, the documented error); anything else fails the test."""
    try:
        return call(), None
    except ConvdiagError as exc:
        return None, exc


class Alarm(Exception):
    """The per-example guard went off: something ran far longer than it should."""


@contextlib.contextmanager
def alarm(seconds: int) -> Iterator[None]:
    """Fail (raise :class:`Alarm`) when the block runs longer than ``seconds``: a guard, not a timing check."""

    def ring(signum: int, frame: Any) -> None:
        raise Alarm(f"still running after {seconds} s")

    old = signal.signal(signal.SIGALRM, ring)
    signal.alarm(seconds)
    try:
        yield
    finally:
        signal.alarm(0)
        signal.signal(signal.SIGALRM, old)
