"""When an iteration counts as converged, and the tolerance it is measured against.

A run says itself whether it met its rule. A recording or a sequence does not: it
counts as converged when its last step is within the tolerance (the one given, else
1e-6·max(1, |x|), the loosest default among common solvers: scipy's ``newton`` uses
1.48e-8 absolute, ``fsolve`` 1.49e-8 relative) while its steps still shrink, or
when f is exactly 0, or when the step it would take next (extrapolated at least
linearly from the last two) is within the tolerance: a solver that stops on its
step computes that step but does not evaluate f there.
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING

import numpy as np

if TYPE_CHECKING:
    from ._detect_trace import Trace

__all__ = ["SEQ_TOL", "tolerance", "trace_converged"]

EPS = 2.220446049250313e-16
#: step tolerance assumed for a recording or sequence when none is given (see the module docstring)
SEQ_TOL = 1e-6


def tolerance(t: Trace, x: float) -> tuple[float, str]:
    """The step/bracket tolerance the run asked for, or a stand-in."""
    if t.xtol is not None:
        return t.xtol + (t.rtol or 0.0) * abs(x), "requested"
    if t.kind == "run":
        return 4 * EPS * abs(x), "default"
    return SEQ_TOL * max(1.0, abs(x)), f"assumed {SEQ_TOL:g}·max(1, |x|) (no tolerance given)"


def _shrinking(t: Trace, k: int = 3) -> bool:
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
    s = np.abs(np.diff(t.xs[-3:]))
    if not (math.isfinite(x) and len(s) == 2 and np.all(np.isfinite(s))):
        return False
    if s[-1] <= tol and (t.n < 4 or _shrinking(t, 2) or s[-1] == 0 or s[-1] <= 1e3 * EPS * max(abs(x), 1e-300)):
        return True
    # a solver that stops on its step computes the last step but does not evaluate f there: its next step,
    # extrapolated (at least linearly) from the last two, is within the tolerance
    return bool(t.kind != "run" and s[0] > 0 and s[-1] < s[0] / 4 and s[-1] * (s[-1] / s[0]) <= tol)
