"""The flat findings: a zero slope, a long throw from a small slope, a stationary point, no sign change.

Rules and thresholds (basis in brackets):

flat
    (a) the method stopped on a zero derivative or equal values of f; (b) repeated
    throws: at least 3 steps each taken with a slope |g_k| ≤ 0.1·max|g| (g_k =
    −f_k/(x_(k+1) − x_k), the slope the step used) after which |f| grew 10-fold or more
    (the tangent was at least ten times flatter than f over the step), while f takes both
    signs over the iterates: they are thrown about around a root instead of settling on
    it (Newton on Kepler's equation at e = 0.99 from E0 = M; without a sign change (d)
    says more) [Newton's step f/f' is long exactly where |f'| is small; the factors are
    common practice, no source]; (b') one throw: the longest step is at least 3 times
    every other step and was taken with a slope |g_k| ≤ 0.1·max|g| — not when the run
    then crawls back at an exponential-like pace (``_detect_crawl``): the long step is
    then the tangent overshooting from the flat side of an exponential, and the crawl,
    reported as slow, is what stalls the run;
    (c) the last 6 iterates settled within 1 % of the distance travelled, |f| over
    them changed by at most 1e-3 relative and stayed above 1e-3 × |f| at the start
    with one sign, and |f/f'| is at least 100 times their spread: a stationary point
    of f (a local minimum of |f|), not a root [common practice, no source]; (d) after at
    least 8 iterates f kept one sign everywhere and the smallest |f| is above 0.1 × |f| at
    the start: the iterates circle a minimum of |f| that does not reach zero (then a
    bracket search near the start says whether a sign change exists at all).
    Checked in the order (a), (b), (b'), (c), (d). (b), (b') and (d) are not judged when your
    derivative disagrees with the slope of f (``_detect_slope``): the flat tangents are
    then your derivative's, and the wrong-derivative finding explains the throws; and Newton
    with a wrong slope creeps up on a root from one side at a linear rate (REFERENCES §1),
    so iterates of one sign say nothing about a missing root.
"""

from __future__ import annotations

import math

import numpy as np
from numpy.typing import NDArray

from ._detect_path import Context, _start, g
from ._detect_trace import Trace, trace_converged
from ._findings import Evidence, Finding, Remedy

__all__ = ["detect_flat"]

THROW_STEP = 3.0
THROW_SLOPE = 0.1
THROW_GROWTH = 10.0
REPEAT_THROWS = 3
NO_SIGN_STEPS = 8
NO_PROGRESS = 0.1
SETTLED_POINTS = 6
SETTLED_SPAN = 0.01
SETTLED_F = 1e-3
STATIONARY = 100.0


def detect_flat(t: Trace, ctx: Context) -> Finding | None:
    x0 = _start(t)
    if t.stop_reason in ("zero-derivative", "flat-secant") and t.failure is not None:
        x = t.failure.x
        k = t.best_index()
        fx = float(t.fs[t.n - 1]) if t.fs is not None and t.n else math.nan
        remedy = ctx.bracket_remedy(t, x0, "a bracket does not need a slope")
        return Finding(
            "flat", f"The step is undefined: {t.failure.message}",
            (("where", x if x is not None else math.nan, ""), ("f there", fx, "not zero: this is not a root")),
            "A horizontal tangent or chord gives no step. Start elsewhere, or use " + remedy.describe() + ".",
            remedy, (k,), tag="zero slope")
    wrong = bool(ctx.cache.get("derivative", {}).get("bad"))  # the slopes used are your derivative's, not f's
    if t.slopes is not None and t.n >= 3 and not wrong:
        steps = np.abs(np.diff(t.xs))
        gk = np.abs(t.slopes[:-1])
        ok = np.isfinite(steps) & np.isfinite(gk)
        noise = ctx.cache.get("noise")
        if noise is not None and noise.status == "ok" and t.fs is not None:
            clear = np.abs(t.fs) > 100 * noise.level  # slopes of chords across noise say nothing about f
            ok &= clear[:-1] & np.concatenate([[True], clear[:-2]])
        if np.sum(ok) >= 2:
            idx = np.flatnonzero(ok)
            gmax = float(np.max(gk[idx]))
            repeated = _repeated_throws(t, ctx, x0, idx, gk, steps, gmax)
            if repeated is not None:
                return repeated
            k = int(idx[np.argmax(steps[idx])])
            others = np.delete(steps[idx], int(np.argmax(steps[idx])))
            crawl = ctx.cache.get("crawl") is not None
            if not crawl and steps[k] >= THROW_STEP * float(np.max(others)) and gk[k] <= THROW_SLOPE * gmax \
                    and gmax > 0:
                remedy = ctx.bracket_remedy(t, x0, "a bracket keeps a flat stretch from throwing the iterate away")
                return Finding(
                    "flat",
                    f"At x = {g(t.xs[k])} the slope the step used was only {g(gk[k], 3)} (the largest on the run is "
                    f"{g(gmax, 3)}), so the step threw the iterate {g(steps[k], 4)} away, to {g(t.xs[k + 1])}.",
                    (("from x", float(t.xs[k]), f"iterate {k}"), ("slope used", float(t.slopes[k]), "−f/step"),
                     ("largest slope on the run", gmax, ""), ("step length", float(steps[k]),
                     f"{steps[k] / max(float(np.max(others)), 1e-300):.3g} × the next longest")),
                    "Where f' is small (near a stationary point, or on the flat side of a steep rise) the tangent is "
                    "nearly flat and sends the next iterate far away. Start elsewhere, or use " + remedy.describe()
                    + ".",
                    remedy, (k, k + 1), tag="small slope")
    return _stationary(t, ctx, x0) or (None if wrong else _no_sign_change(t, ctx, x0))


def _repeated_throws(t: Trace, ctx: Context, x0: float | None, idx: NDArray[np.intp], gk: NDArray[np.float64],
                     steps: NDArray[np.float64], gmax: float) -> Finding | None:
    """(b) at least REPEAT_THROWS steps from a small slope after which |f| grew THROW_GROWTH-fold or more."""
    if t.fs is None or not t.fs_signed or not gmax > 0:
        return None
    fin = t.fs[np.isfinite(t.fs)]
    if not (np.any(fin > 0) and np.any(fin < 0)):
        return None  # no sign change: rule (d) speaks for a function that may have no root here
    fa = np.abs(t.fs)
    throws = [int(k) for k in idx if gk[k] <= THROW_SLOPE * gmax and math.isfinite(float(fa[k + 1]))
              and fa[k + 1] >= THROW_GROWTH * fa[k]]
    if len(throws) < REPEAT_THROWS:
        return None
    xs = t.xs[np.isfinite(t.xs)]
    far = float(xs[int(np.argmax(np.abs(xs)))])
    k1 = min(throws, key=lambda k: float(gk[k]))
    growth = [float(fa[k + 1] / fa[k]) if fa[k] > 0 else math.inf for k in throws]
    remedy = ctx.bracket_remedy(t, x0, "a bracket cannot be thrown away by a flat tangent")
    outcome = ("before they closed in on the root, which cost most of the evaluations" if trace_converged(t)
               else "instead of closing in on a root")
    listed = ", ".join(str(k) for k in throws[:8]) + (" …" if len(throws) > 8 else "")
    return Finding(
        "flat",
        f"{len(throws)} of the {t.n - 1} steps started where the slope was small (at most {g(THROW_SLOPE * gmax, 3)}, "
        f"a tenth of the largest on the run) and threw the iterate far away, |f| growing {g(min(growth), 3)}-fold "
        f"or more each time: the iterates wandered (|x| reached {g(abs(far), 3)}) {outcome}.",
        (("throws", len(throws), f"steps {listed}: slope ≤ {THROW_SLOPE:g} × the largest, then |f| up ≥ "
          + f"{THROW_GROWTH:g}-fold"),
         ("flattest throw", (float(t.xs[k1]), float(gk[k1])), f"x and the slope used there (iterate {k1})"),
         ("largest slope on the run", gmax, ""),
         ("farthest iterate", far, f"the start was {g(x0)}"),
         ("largest step", float(np.max(steps[np.isfinite(steps)])), "")),
        "Near a point where f' is small the tangent is nearly flat and sends the next iterate far away; here that "
        "happened again and again. A bracket cannot be thrown: use " + remedy.describe() + "; or start where the "
        "slope of f is not small.",
        remedy, tuple(throws), tag="repeated throws")


def _stationary(t: Trace, ctx: Context, x0: float | None) -> Finding | None:
    """(c) settled where f ≠ 0 and f' ≈ 0: a local minimum of |f|."""
    pr = ctx.prober
    if t.fs is None or t.n < SETTLED_POINTS + 1 or not pr.available or pr.remaining < 2 or t.converged_own:
        return None
    xs, fs = t.xs[-SETTLED_POINTS:], t.fs[-SETTLED_POINTS:]
    if not (np.all(np.isfinite(xs)) and np.all(np.isfinite(fs))):
        return None
    span = float(np.ptp(xs))
    travelled = float(np.max(np.abs(t.xs[: t.n - SETTLED_POINTS + 1] - xs[-1])))
    fmax, fmin = float(np.max(np.abs(fs))), float(np.min(np.abs(fs)))
    f0 = abs(float(t.fs[0]))
    settled = span <= SETTLED_SPAN * travelled and fmax - fmin <= SETTLED_F * fmax
    if not (settled and fmin >= SETTLED_F * f0 and (fs[0] > 0) == (fs[-1] > 0)):
        return None
    k_l = t.n - SETTLED_POINTS + int(np.argmin(np.abs(fs)))  # where it settled, not the best point of the run
    x_l, f_l = float(t.xs[k_l]), float(t.fs[k_l])
    h = max(span, 1e-6 * max(1.0, abs(x_l)))
    try:
        d = (pr(x_l + h) - pr(x_l - h)) / (2 * h)
    except Exception:  # noqa: BLE001 - budget
        return None
    if not (math.isfinite(d) and abs(f_l) >= STATIONARY * h * abs(d)):
        return None
    remedy = ctx.bracket_remedy(t, x0, "a sign change, not a small |f|, guides a bracketing method")
    return Finding(
        "flat",
        f"The iterates settled at x ≈ {g(x_l)} where f = {g(f_l, 4)} is not zero and f' ≈ {g(d, 3)}: a stationary "
        "point of f (a local minimum of |f|), not a root.",
        (("settled at", x_l, f"last {SETTLED_POINTS} iterates within {g(span, 3)}"),
         ("|f| there", (fmin, fmax), f"changed by {(fmax - fmin) / fmax:.2g} relative; started at {g(f0, 3)}"),
         ("f' there", d, f"central difference over ±{h:.2g}, 2 probes"),
         ("|f/f'|", abs(f_l / d) if d else math.inf, "how far the tangent says a root is")),
        "The solver minimised |f| instead of finding a sign change. Use " + remedy.describe() + ".",
        remedy, tuple(range(t.n - SETTLED_POINTS, t.n)), tag="stationary point")


def _no_sign_change(t: Trace, ctx: Context, x0: float | None) -> Finding | None:
    """(d) f kept one sign at every iterate and |f| never fell much: the iterates circle a minimum of |f|."""
    if t.fs is None or not t.fs_signed or t.n < NO_SIGN_STEPS or trace_converged(t):
        return None
    fs = t.fs[np.isfinite(t.fs)]
    if len(fs) < NO_SIGN_STEPS or not (np.all(fs > 0) or np.all(fs < 0)):
        return None
    k = int(np.argmin(np.where(np.isfinite(t.fs), np.abs(t.fs), np.inf)))
    fmin, f0 = abs(float(t.fs[k])), abs(float(fs[0]))
    if fmin < NO_PROGRESS * f0:
        return None
    searched = ctx.prober.available
    remedy: Remedy | None = ctx.bracket_remedy(t, x0, "a sign change is what a root needs")
    found = remedy is not None and (remedy.bracket is not None or remedy.start is not None)
    ev: list[Evidence] = [("sign of f", "+" if fs[0] > 0 else "−", f"at all {len(fs)} iterates"),
                          ("smallest |f|", fmin, f"at x = {g(t.xs[k], 10)} (iterate {k})"),
                          ("|f| at the start", f0, "")]
    if found and remedy is not None:
        tail = f" A bracket search near the start found a sign change: use {remedy.describe()}."
        advice = "The iterates will not find a root where f does not change sign. Use " + remedy.describe() + "."
    elif searched:
        ev.append(("bracket search", "no sign change", f"{ctx.prober.count} probes near {g(x0)}"))
        tail = " A bracket search near the start found no sign change either: f may have no real root here."
        advice = ("Check the model (a parameter may put the root out of reach), or search a wider interval for a sign "
                  "change with convdiag.find_brackets(f, domain=(lo, hi)).")
        remedy = None
    else:
        tail = ""
        advice = "Look for a sign change of f (convdiag.find_brackets) and use a bracketing method on it."
    return Finding(
        "flat",
        f"f kept one sign at every iterate and |f| never fell below {g(fmin, 4)} (it started at {g(f0, 4)}): the "
        f"iterates wander around a minimum of |f| near x ≈ {g(t.xs[k])}, which does not reach zero.{tail}",
        tuple(ev), advice, remedy, (k,), tag="no sign change")
