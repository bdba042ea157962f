"""The observed order of convergence as the diagnosis uses it, and when a rate may be read from it.

:func:`order_estimate` measures the order of the diagnosed iteration (never raising: a
failure becomes a note). :func:`rate_order` is what the rate-based detectors (multiple
root, wrong derivative, slow, budget) read. Rule (basis in brackets):

asymptotic window
    A linear or sublinear estimate of an open method (no bracket) is read only when the
    errors over its window never grow 2-fold or more from one step to the next
    (e_(k+1) ≥ 2·e_k). A window that does reaches back into the phase where the iterates
    were still wandering or being thrown about (Newton on Kepler's equation at e = 0.99
    from E0 = M wanders for 35 steps, then converges quadratically in 6): the "rate" over it
    describes the path, not the convergence near the root, and no finding rests on it
    [common practice, no source: near a root an open method's error shrinks step by step,
    and noise or rounding, which may double it, is already kept out of the window by the
    order estimate's rounding floor]. Nor is it read when the contraction ratios
    e_(k+1)/e_k inside the window differ by more than a factor ``WINDOW_SPREAD`` (4): a
    linear rate is one ratio, repeated (at a multiple root, or with a wrong slope, it changes
    only slowly as the iterates close in), while ratios of 0.11 and 0.72 in one window
    (Newton on Kepler's equation at e = 0.99, M = 0.225, still wandering with shrinking steps)
    are a path, not a rate [common practice, no source]. Bracketing methods are exempt: their
    midpoints' errors go up and down by design.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from ._detect_path import Context
from ._detect_trace import Trace

__all__ = ["WINDOW_GROWTH", "WINDOW_SPREAD", "order_estimate", "rate_order", "window_note"]

#: an error that grows by this factor from one step to the next inside the window marks a non-asymptotic window
WINDOW_GROWTH = 2.0
#: contraction ratios inside a linear window that differ by more than this factor are no settled rate
WINDOW_SPREAD = 4.0


def _reference(t: Trace, notes: list[str]) -> Any:
    """A high-precision root for a recording whose function computes in mpmath (else None)."""
    from ._reference import reference_root

    try:
        ref = reference_root(t.problem, float(t.xs[t.best_index()]))
    except Exception:  # noqa: BLE001 - the callable does not compute in mpmath: no reference, no loss
        return None
    if ref.confirmed and abs(ref.float_value - float(t.xs[t.best_index()])) <= 1e-6 * max(1.0, abs(ref.float_value)):
        notes.append(f"high-precision reference root {ref.summary}")
        return ref
    return None


def order_estimate(t: Trace, root: float | None, probe: bool, notes: list[str]) -> Any:
    """The observed order (never raises: a failure becomes a note)."""
    from ._order import estimate_order
    from ._sequence import IterationSequence

    try:
        if t.kind == "run":
            # no high-precision replay: the detectors read linear rates and the run's own errors, which the run
            # has in plenty; a replay costs up to three more runs at 60-540 digits
            return estimate_order(t.order_source, root=root, replay=False)
        if t.kind == "recording":
            ref: Any = root
            if ref is None and probe and t.problem is not None and t.n:
                ref = _reference(t, notes)
            seq = IterationSequence(t.xs, t.fs, t.evals, method=t.method if not t.method_inferred or
                                    t.brackets is None else None, label=t.label)
            return estimate_order(seq, root=ref, evals_per_step=None)
        seq = t.order_source
        if t.n == 0 and t.fs is not None:
            return estimate_order(seq, root=root, method=t.method, reference="residuals")
        xs = np.asarray(t.xs)
        if not np.all(np.isfinite(xs)):
            keep = int(np.argmax(~np.isfinite(xs)))
            if keep < 3:
                notes.append("too few finite iterates for an order of convergence")
                return None
            seq = IterationSequence(xs[:keep], None if t.fs is None else t.fs[:keep], None if t.evals is None
                                    else t.evals[:keep], method=t.method, label=t.label)
        return estimate_order(seq, root=root, method=t.method)
    except Exception as exc:  # noqa: BLE001 - the order is evidence, not a requirement
        notes.append(f"no order of convergence: {type(exc).__name__}: {str(exc)[:160]}")
        return None


def _window_ratios(t: Trace, est: Any) -> tuple[int, Any] | None:
    """(first k, e_(k+1)/e_k over a linear window of an open method's estimate), else None."""
    if est is None or est.window is None or t.brackets is not None or est.label not in ("linear", "sublinear"):
        return None
    lo, hi = est.window
    e = np.asarray(est.errors, dtype=np.float64)
    seg = e[max(lo, 0): min(hi + 2, len(e))]
    with np.errstate(all="ignore"):
        return max(lo, 0), seg[1:] / seg[:-1]


def _growth(t: Trace, est: Any) -> tuple[int, float] | None:
    """(k, e_(k+1)/e_k) of the largest error growth ≥ WINDOW_GROWTH inside a linear window, else None."""
    got = _window_ratios(t, est)
    if got is None or len(got[1]) < 1:
        return None
    first, ratio = got
    ratio = np.where(np.isfinite(ratio), ratio, 0.0)
    k = int(np.argmax(ratio))
    if ratio[k] >= WINDOW_GROWTH:
        return first + k, float(ratio[k])
    return None


def _ratios(t: Trace, est: Any) -> tuple[float, float] | None:
    """(smallest, largest) contraction ratio inside a linear window when they differ by more than WINDOW_SPREAD."""
    got = _window_ratios(t, est)
    if got is None:
        return None
    ratio = got[1][np.isfinite(got[1]) & (got[1] > 0)]
    if len(ratio) < 2:
        return None
    q_lo, q_hi = float(np.min(ratio)), float(np.max(ratio))
    return (q_lo, q_hi) if q_hi > WINDOW_SPREAD * q_lo else None


def window_note(t: Trace, ctx: Context) -> str:
    """Why the order estimate's rate is not read (empty when it is)."""
    est = ctx.order
    grown = _growth(t, est)
    if grown is None:
        spread = _ratios(t, est)
        if spread is None:
            return ""
        return (f"the order estimate's window (k = {est.window[0]}…{est.window[1]}) has contraction ratios from "
                f"{spread[0]:.3g} to {spread[1]:.3g}: the iterates were still wandering, so its rate describes the "
                "path, not the convergence near the root")
    k, r = grown
    return (f"the order estimate's window (k = {est.window[0]}…{est.window[1]}) reaches back to where the iterates "
            f"were still wandering (the error grew {r:.3g}-fold at k = {k}): its rate describes the path, not the "
            "convergence near the root")


def rate_order(t: Trace, ctx: Context) -> Any:
    """The order estimate when a rate may be read from it (module docstring), else None."""
    if "rate-order" not in ctx.cache:
        note = window_note(t, ctx)
        if note:
            ctx.notes.append(note + "; no rate-based finding rests on it")
        ctx.cache["rate-order"] = None if note else ctx.order
    return ctx.cache["rate-order"]

