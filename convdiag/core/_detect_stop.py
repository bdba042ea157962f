"""When an iteration counts as converged, and the tolerance it is measured against.

A run says itself whether it met its rule. A recording or a sequence does not: it
counts as converged when its last step is within the tolerance (the one given, else
1e-6·max(1, |x|), the loosest default among common solvers: scipy's ``newton`` uses
1.48e-8 absolute, ``fsolve`` 1.49e-8 relative) while its steps still shrink, or
when f is exactly 0, or when the step it would take next (extrapolated at least
linearly from the last two) is within the tolerance: a solver that stops on its
step computes that step but does not evaluate f there.

An iteration has *stalled* (:func:`stalled_tail`) when its last min(8, n) iterates
lie within a spread S ≤ 1e-2 × the distance it travelled to get there (the largest
|x_k − x_best| over the run) and S ≤ 1e-2·max(1, |x_best|) [common practice, no
source: a hundredth of the way and of the size of x]; or, for an open method, when
a shorter tail of at least 4 iterates does and has stopped converging (its last step
is no shorter than the one before, or its last |f| no smaller than an earlier one in
the tail): a solver that gives up after a few steps at a floor. Only a stalled iteration
says something about the floor of f (noise or rounding); iterates still thrown
about are not sampled for it.
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING

import numpy as np

if TYPE_CHECKING:
    from ._detect_trace import Trace

__all__ = ["SEQ_TOL", "SHORT_TAIL", "STALL_SPAN", "STALL_TAIL", "stalled_tail", "tolerance", "tolerance_assumed",
           "trace_converged"]

EPS = 2.220446049250313e-16
#: step tolerance assumed for a recording or sequence when none is given (see the module docstring)
SEQ_TOL = 1e-6
#: iterates that count as the tail of a stalled iteration, and the spread they must stay within (module docstring)
STALL_TAIL = 8
STALL_SPAN = 1e-2
#: the shortest tail that counts as stalled, when its iterates stopped converging (module docstring)
SHORT_TAIL = 4


def tolerance(t: Trace, x: float) -> tuple[float, str]:
    """The step/bracket tolerance the run asked for, or a stand-in."""
    if t.xtol is not None:
        return t.xtol + (t.rtol or 0.0) * abs(x), "requested"
    if t.kind == "run":
        return 4 * EPS * abs(x), "default"
    return SEQ_TOL * max(1.0, abs(x)), f"assumed {SEQ_TOL:g}·max(1, |x|) (no tolerance given)"


def tolerance_assumed(t: Trace) -> bool:
    """No step tolerance is known: a recording or sequence diagnosed without ``xtol``."""
    return t.xtol is None and t.kind != "run"


def _shrinking(t: Trace, k: int = 3) -> bool:
    with np.errstate(over="ignore", invalid="ignore"):  # iterates near the float limit: inf steps, no warning
        s = np.abs(np.diff(t.xs[-k - 1:]))
    return bool(len(s) == k and np.all(np.isfinite(s)) and np.all(s[1:] < s[:-1]))


def trace_converged(t: Trace) -> bool:
    """The run met its own rule; a recording or sequence ended with a step within the tolerance or f = 0."""
    if t.converged_own is not None:
        return t.converged_own
    if t.n == 0:
        if t.fs is not None and len(t.fs) >= 3:
            r0, r1 = abs(float(t.fs[0])), abs(float(t.fs[-1]))
            return bool(r1 == 0 or r1 <= (t.ftol if t.ftol else 1e-12 * max(r0, 1e-300)))
        return False
    if t.fs is not None and np.any(t.fs == 0):
        return True
    x = float(t.xs[-1])
    tol, _ = tolerance(t, x)
    with np.errstate(over="ignore", invalid="ignore"):
        s = np.abs(np.diff(t.xs[-3:]))
    if not (math.isfinite(x) and len(s) == 2 and np.all(np.isfinite(s))):
        return False
    if s[-1] <= tol and (t.n < 4 or _shrinking(t, 2) or s[-1] == 0 or s[-1] <= 1e3 * EPS * max(abs(x), 1e-300)):
        return True
    # a solver that stops on its step computes the last step but does not evaluate f there: its next step,
    # extrapolated (at least linearly) from the last two, is within the tolerance
    return bool(t.kind != "run" and s[0] > 0 and s[-1] < s[0] / 4 and s[-1] * (s[-1] / s[0]) <= tol)


def _stopped_converging(t: Trace, k0: int) -> bool:
    """Over the iterates from k0 on, the last step is no shorter than the one before, or |f| stopped falling."""
    with np.errstate(over="ignore", invalid="ignore"):
        s = np.abs(np.diff(t.xs[k0:]))
    if len(s) >= 2 and s[-1] >= s[-2]:
        return True
    if t.fs is None or len(t.fs) < t.n:
        return False
    r = np.abs(t.fs[k0:t.n])
    return bool(np.all(np.isfinite(r)) and r[-1] >= np.min(r[:-1]))


def stalled_tail(t: Trace) -> tuple[int, float, float] | None:
    """(first index of the tail, spread S of the tail, distance travelled) when the iterates stalled, else None.

    The tail is the last min(8, n) iterates; when they do not qualify, the shortest tail of
    ``SHORT_TAIL`` (4) or more iterates of an open method that qualifies and has stopped
    converging (its last step is no shorter than the one before, or its last |f| is no smaller
    than an earlier one of the tail: a converging iteration shortens its steps and lowers |f| at
    every step), so that a solver that gave up after a few steps at a floor counts as stalled.
    """
    n = t.n
    if n < SHORT_TAIL:
        return None
    best = float(t.xs[t.best_index()])
    xs = t.xs[np.isfinite(t.xs)]
    if not len(xs) or not math.isfinite(best):
        return None
    travelled = float(np.max(np.abs(xs - best)))
    full = min(STALL_TAIL, n)
    short = [] if t.brackets is not None else list(range(SHORT_TAIL, full))
    for size in [full, *short]:  # a bracketing method's |f| goes up and down by design: only the long tail
        k0 = n - size
        tail = t.xs[k0:]
        if not np.all(np.isfinite(tail)):
            return None
        spread = float(np.ptp(tail))
        within = spread <= STALL_SPAN * travelled and spread <= STALL_SPAN * max(1.0, abs(best))
        if within and (size == full or _stopped_converging(t, k0)):
            return k0, spread, travelled
    return None
