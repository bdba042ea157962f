"""The converged finding, and the check for a root nearer the start than the one found.

Rules and thresholds:

converged
    The run met its own rule (a recording or sequence: its last step is at most the
    tolerance, or f = 0). Another root is reported when f changes sign between 11
    points spaced evenly over [x_0 − d, x_0 + d], d = |root − x_0|, closer to x_0 than
    the root found. A root outside the bracket you expected (``diagnose(...,
    bracket=...)``) is reported; when f changes sign across that bracket the remedy is
    hybrid on it (also when a nearer root was jumped over: the bracket says which root
    you want); otherwise the remedy is the nearer root, or a bracket searched near the
    middle of yours.
"""

from __future__ import annotations

import itertools
import math

import numpy as np

from ._detect_advice import expected_bracket
from ._detect_order import window_note
from ._detect_path import Context, g
from ._detect_trace import EPS, Trace, tolerance, trace_converged
from ._findings import Evidence, Finding, Remedy

__all__ = ["detect_converged"]

OTHER_ROOT_POINTS = 11


def _other_root(t: Trace, ctx: Context, root: float) -> tuple[float, float, float] | None:
    """A sign change of f closer to the start than the root found: (lo, hi, distance)."""
    pr = ctx.prober
    if not t.starts or t.brackets is not None or not pr.available or pr.remaining < OTHER_ROOT_POINTS + 1:
        return None
    x0 = t.starts[0]
    d = abs(root - x0)
    tol, _ = tolerance(t, root)
    if not d > 1e3 * max(tol, EPS * max(abs(root), 1.0)):
        return None
    f0 = float(t.fs[0]) if t.fs is not None and math.isfinite(float(t.fs[0])) else pr(x0)
    pts = [(x0 + d * s, None) for s in np.linspace(-1.0, 1.0, OTHER_ROOT_POINTS + 2)[1:-1] if s != 0]
    try:
        vals = sorted([(x, pr(x)) for x, _ in pts] + [(x0, f0)])
    except Exception:  # noqa: BLE001 - budget
        return None
    best = None
    for (a, fa), (b, fb) in itertools.pairwise(vals):
        if math.isfinite(fa) and math.isfinite(fb) and ((fa < 0 < fb) or (fb < 0 < fa) or fa == 0 or fb == 0):
            if lo_hi_contains(a, b, root):
                continue
            c = a if fa == 0 else b if fb == 0 else a - fa * (b - a) / (fb - fa)  # false position: where it is
            dist = abs(c - x0)
            if dist < d and (best is None or dist < best[2]):
                best = (float(a), float(b), dist)
    return best


def lo_hi_contains(a: float, b: float, x: float) -> bool:
    return min(a, b) <= x <= max(a, b)


def detect_converged(t: Trace, ctx: Context) -> Finding | None:
    if not trace_converged(t):
        return None
    if t.n == 0:
        if t.fs is None:
            return None
        r0, r1 = abs(float(t.fs[0])), abs(float(t.fs[-1]))
        est = ctx.order_to_show
        ev0: list[Evidence] = [("|f| first → last", (r0, r1), f"{len(t.fs)} residuals")]
        if est is not None:
            ev0.append(("convergence", est.label_text, est.reference))
        return Finding("converged", f"The residuals fell from {g(r0, 3)} to {g(r1, 3)}: converged.", tuple(ev0),
                       "Nothing to change (with residuals only, the accuracy in x is |f|/|f'| at the root).",
                       None, (), tag="")
    k = t.best_index()
    x = float(t.xs[k])
    est = ctx.order_to_show
    ev: list[Evidence] = [("root", x, f"iterate {k}")]
    if t.fs is not None:
        ev.append(("|f(root)|", abs(float(t.fs[k])), ""))
    if t.total_evals is not None:
        ev.append(("evaluations", t.total_evals, ""))
    if est is not None:
        wandered = window_note(t, ctx) if est is ctx.order else ""
        ev.append(("convergence", est.label_text, est.reference + ("; over a window that includes the wandering "
                                                                   "before the final approach" if wandered else "")))
    if t.stop_reason:
        ev.append(("stop", t.stop_reason, ""))
    if t.complex_root is not None:
        ev[0] = ("root", t.complex_root, "complex")
    summary = f"Converged to x = {g(x, 12) if t.complex_root is None else t.complex_root}"
    advice = "Nothing to change."
    remedy = None
    if ctx.bracket is not None and not lo_hi_contains(*ctx.bracket, x):
        user = expected_bracket(ctx, t)
        values = ctx.cache.get("expected values")
        ev.append(("expected bracket", ctx.bracket, "the root found lies outside it"
                   + ("; f changes sign across it" if user is not None and values is not None else "")))
        summary += f", which lies outside the bracket [{g(ctx.bracket[0])}, {g(ctx.bracket[1])}] you expected"
        if user is not None:
            remedy = Remedy("hybrid", bracket=user, note="a bracketing method stays inside the bracket you expected")
            advice = "To get the root inside the bracket you expected, use " + remedy.describe() + "."
        elif values is not None:
            ev.append(("f at its ends", values, "the same sign: the bracket you expected holds no sign change"))
    other = _other_root(t, ctx, x)
    if other is not None:
        a, b, dist = other
        note = (f"about {dist:.3g} from the start (false position); the root found is "
                f"{abs(x - t.starts[0]):.3g} away")
        ev.append(("nearer sign change", (a, b), note))
        summary += (f", but f changes sign in [{g(a, 8)}, {g(b, 8)}], closer to the start {g(t.starts[0])}: "
                    "the iteration jumped over a nearer root")
        if remedy is None:
            remedy = Remedy("hybrid", bracket=(min(a, b), max(a, b)), note="the root nearest the start")
            advice = "If you wanted the root nearest the start, use " + remedy.describe() + "."
        else:
            advice += f" (f also changes sign nearer the start, in [{g(a, 10)}, {g(b, 10)}].)"
    if remedy is None and ctx.bracket is not None and not lo_hi_contains(*ctx.bracket, x):
        remedy = ctx.bracket_remedy(t, (ctx.bracket[0] + ctx.bracket[1]) / 2,
                                    "a bracket searched near the middle of the one you expected")
        advice = ("f does not change sign across the bracket you expected; to look for a root near it, use "
                  + remedy.describe() + ".")
    return Finding("converged", summary + ".", tuple(ev), advice, remedy, (k,),
                   tag="another root nearer the start" if other is not None else "")
