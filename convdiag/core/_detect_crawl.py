"""The exponential-like crawl: equal steps while |f| falls by a constant factor per step.

Far from its root, Newton on f = A·e^(x/λ) − B moves by −f/f' ≈ −λ per step (one
e-folding length) and |f| falls by a factor e per step: progress is linear in x, however
good the method is near the root. A diode's current Is·(e^(V/(n·Vt)) − 1) is the classic
case: from a start past the operating point Newton crawls back n·Vt ≈ 26 mV per step.

Rule and thresholds (basis in brackets):

slow (exponential-like)
    An open method that has not converged, whose last w ≥ 6 steps (the longest such
    tail) all go the same way with lengths within 10 % of their median s, while |f| falls
    at every one of them by a factor q = |f_(k+1)/f_k| whose logarithms lie within 25 % of
    their median, q ≤ 0.9. Then log|f| falls linearly in x: f is exponential-like along the
    path, with e-folding length λ = s / ln(1/q) [log|f| linear in x is what "exponential"
    means; the tolerances allow the few-percent drift as the crawl nears the root; common
    practice, no source]. A root must lie ahead: an earlier iterate where f has the other
    sign, or a sign change found by probing ahead at x_L + j·s, j = 1, 2, 4, … (then bisected
    to the step; an exact 0 counts, and is reported as such: it may be where f underflows).
    Steps still needed: the number of steps of length s to that sign change
    (from iterates only: ln(|f_L|/|f_o|)/ln(1/q), f_o the value at the opposite-sign
    iterate, where the exponential part no longer dominates).
"""

from __future__ import annotations

import math

import numpy as np

from ._detect_advice import expected_bracket
from ._detect_path import Context, g
from ._detect_trace import Trace, trace_converged
from ._findings import Evidence, Finding, Remedy

__all__ = ["detect_crawl"]

CRAWL_STEPS = 6
STEP_SPREAD = 1.1
LOG_SPREAD = 0.25
CRAWL_RATIO = 0.9
#: probes ahead: j doubles up to this many steps
AHEAD_MAX = 2**20


def _crawl_tail(xs: np.ndarray, fs: np.ndarray) -> int:
    """The longest w ≥ CRAWL_STEPS such that the last w steps crawl (module docstring); 0 if none."""
    n = len(xs)
    steps = np.diff(xs)
    with np.errstate(all="ignore"):
        logq = np.log(np.abs(fs[1:]) / np.abs(fs[:-1]))
    best = 0
    for w in range(CRAWL_STEPS, n):
        s, lq = steps[-w:], logq[-w:]
        if not (np.all(np.isfinite(s)) and np.all(np.isfinite(lq))):
            break
        if not (np.all(s > 0) or np.all(s < 0)):
            break
        a = np.abs(s)
        med = float(np.median(a))
        if not (float(np.max(a)) <= STEP_SPREAD * med and float(np.min(a)) * STEP_SPREAD >= med):
            break
        mlq = float(np.median(lq))
        if not (mlq <= math.log(CRAWL_RATIO) and np.all(np.abs(lq - mlq) <= LOG_SPREAD * abs(mlq))):
            break
        best = w
    return best


def _ahead(ctx: Context, x_l: float, f_l: float, d: float) -> tuple[float, float, int, bool] | None:
    """(lo, hi, steps, zero) around the first sign change (or exact 0) at x_l + j·d, j = 1, 2, 4, … (bisected in j).

    ``zero``: f is exactly 0 at the far end (a root, or where f underflows), not of the other sign. None if none.
    """
    pr = ctx.prober

    def changed(v: float) -> bool:
        return v == 0 or (v < 0) != (f_l < 0)

    j_lo, j = 0, 1
    prev = abs(f_l)
    last = math.nan
    try:
        while True:
            if j > AHEAD_MAX or not pr.available:
                return None
            v = pr(x_l + j * d)
            if not math.isfinite(v) or (not changed(v) and abs(v) > 1.5 * prev):
                return None  # undefined, or |f| grows ahead: no root that way
            if changed(v):
                last = v
                break
            prev, j_lo, j = abs(v), j, 2 * j
    except Exception:  # noqa: BLE001 - budget ran out before a sign change was seen
        return None
    try:
        while j - j_lo > 1 and pr.available:
            mid = (j + j_lo) // 2
            v = pr(x_l + mid * d)
            if not math.isfinite(v):
                break
            if changed(v):
                j, last = mid, v
            else:
                j_lo = mid
    except Exception:  # noqa: BLE001, S110 - budget ran out while narrowing: the bracket found so far stands
        pass
    a, b = x_l + j_lo * d, x_l + j * d
    return min(a, b), max(a, b), j, last == 0


def detect_crawl(t: Trace, ctx: Context) -> Finding | None:
    if t.brackets is not None or t.fs is None or not t.fs_signed or t.n < CRAWL_STEPS + 1 or trace_converged(t):
        return None
    xs, fs = t.xs, t.fs
    w = _crawl_tail(xs, fs)
    if not w:
        return None
    n = t.n
    steps = np.diff(xs)[-w:]
    s = float(np.median(np.abs(steps)))
    d = s if steps[-1] > 0 else -s
    with np.errstate(all="ignore"):
        mlq = float(np.median(np.log(np.abs(fs[-w:]) / np.abs(fs[-w - 1:-1]))))
    q = math.exp(mlq)
    lam = s / -mlq
    x_l, f_l = float(xs[-1]), float(fs[-1])
    other = [k for k in range(n - 1) if math.isfinite(float(fs[k])) and fs[k] != 0 and (fs[k] < 0) != (f_l < 0)]
    k_o = other[-1] if other else None
    found = _ahead(ctx, x_l, f_l, d) if ctx.prober.available else None
    ev: list[Evidence] = [
        ("step length", s, f"median over the last {w} steps, all the same way, within {STEP_SPREAD - 1:.0%} of it"),
        ("|f| ratio per step", q, "about constant: log|f| falls linearly in x"),
        ("e-folding length of f", lam, "step / ln(1/ratio): |f| changes by a factor e over this distance"),
        ("crawling steps", w, f"iterates {n - w - 1}…{n - 1}"),
    ]
    need: int | None = None
    bracket: tuple[float, float] | None = None
    if found is not None:
        lo, hi, j, zero = found
        need, bracket = j, (lo, hi)
        if zero:
            ev.append(("f = 0 ahead", (lo, hi),
                       f"probes at x_L + j·step: f is exactly 0 after {j} more steps (a root, or where f underflows)"))
        else:
            ev.append(("sign change ahead", (lo, hi), f"probes at x_L + j·step: f changes sign after {j} more steps"))
    elif k_o is not None:
        x_o, f_o = float(xs[k_o]), float(fs[k_o])
        bracket = (min(x_o, x_l), max(x_o, x_l))
        need = max(1, math.ceil(math.log(abs(f_l) / abs(f_o)) / -mlq)) if abs(f_l) > abs(f_o) else 1
        ev.append(("sign change behind", bracket, f"f has the other sign at iterate {k_o} ({g(f_o, 3)})"))
    else:
        return None  # no root in sight: the divergence and flat checks speak for this path
    ev.append(("steps still needed", need, "to the sign change at this step length, then a few quadratic steps"))
    if t.total_evals is not None:
        ev.append(("evaluations used", t.total_evals, f"stop: {t.stop_reason}" if t.stop_reason else ""))
    user = expected_bracket(ctx, t)
    if user is not None:
        remedy = Remedy("hybrid", bracket=user, note="the bracket you expected the root in (f changes sign across it)")
    else:
        remedy = Remedy("hybrid", bracket=bracket, note="a bracket around the sign change the iterates crawl towards")
    what = t.method or "the solver"
    return Finding(
        "slow",
        f"Each step moves about the same distance (≈ {g(s, 3)}) while |f| falls by a factor ≈ {g(1 / q, 3)} per "
        f"step: f is exponential-like there (e-folding length ≈ {g(lam, 3)}), so {what} gains only about "
        f"{g(s / lam, 2)} e-folding length per step; it needs ~{need} more steps to reach the root.",
        tuple(ev),
        "Far from its root, the tangent (or chord) of an exponential-like f reaches zero about one e-folding length "
        "away, whatever the method's order. Use a bracket and a method that keeps it: " + remedy.describe()
        + "; or solve the log-transformed residual (for f = A·e^(x/λ) − B, solve x/λ + ln A − ln B = 0, which is "
        "nearly linear), on which Newton converges from far away.",
        remedy, tuple(range(n - w - 1, n)), tag="exponential-like")
