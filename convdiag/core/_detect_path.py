"""Detectors that read the shape of the path: cycle, divergence, domain error.

Each detector takes the :class:`~convdiag.core._detect_trace.Trace` and the
shared :class:`Context` and returns a :class:`~convdiag.core._findings.Finding`
or None. Rules and thresholds (basis in brackets):

cycle
    For the smallest period p in 2..8: over the last 2p iterates every
    |x_k − x_(k−p)| ≤ 1e-3·S, where S (the spread of the last p iterates) is
    above 1e3·eps·max|x| [common practice, no source: a repetition to three
    digits of the cycle's own size, twice in full, is not chance; points closer
    than 1000 ulps are one converged point].
divergence
    (a) a non-finite iterate or an ``iterate-overflow`` stop; (b) growth: over
    the last 4 steps both |x| and the step grow, and |x| reached 1e3·max(1, |x_0|);
    (c) drift: the last max(6, half) steps all go the same way without
    shrinking (median ratio of successive steps ≥ 0.95, i.e. slower than any
    linear rate below 0.95) and |x_L − x_0| ≥ 10·|x_1 − x_0|; confirmed by f at
    3 points ahead having the same sign and no larger |f| (without f: ratio ≥ 0.98
    and |x_L| ≥ 10·max(|x_0|, |x_1 − x_0|)) [common practice, no source].
domain-error
    Any evaluation that raised or returned NaN or a non-real value; the edge of
    the domain is bisected between the first undefined point and the nearest defined
    one: an iterate, else a point the probes found defined (a bracket searched for the
    remedy), else the first of up to 8 probes stepping out from the failed point by
    max(1, |x|)/2·4^j on either side [common practice, no source].
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from ._detect_trace import EPS, Prober, Trace
from ._findings import Evidence, Finding, Remedy

__all__ = ["Context", "detect_cycle", "detect_divergence", "detect_domain_error", "g"]

CYCLE_MAX_PERIOD = 8
CYCLE_MATCH = 1e-3
CYCLE_MIN_SPREAD = 1e3 * EPS
GROWTH_STEPS = 4
GROWTH_FACTOR = 1e3
DRIFT_MIN_STEPS = 6
DRIFT_RATIO = 0.95
DRIFT_RATIO_BLIND = 0.98
DRIFT_DISTANCE = 10.0
#: probes stepping out from a failed start to find where f is defined (module docstring)
EDGE_LOOKS = 8


def g(v: Any, digits: int = 6) -> str:
    """A number for a sentence."""
    try:
        f = float(v)
    except (TypeError, ValueError, OverflowError):
        return str(v)
    if math.isnan(f):
        return "NaN"
    if math.isinf(f):
        return "∞" if f > 0 else "−∞"
    return f"{f:.{digits}g}"


@dataclass
class Context:
    """What every detector shares: the prober, the order estimate and results other detectors left."""

    prober: Prober
    order_fn: Callable[[], Any] | None = None
    root: float | None = None
    bracket: tuple[float, float] | None = None
    cache: dict[str, Any] = field(default_factory=dict)
    notes: list[str] = field(default_factory=list)
    #: an order estimate the caller made (with its high-precision replay), shown instead of :attr:`order`
    shown_order: Any = None

    @property
    def order(self) -> Any:
        """The observed order of convergence, measured on first use (None if it could not be)."""
        if "order" not in self.cache:
            self.cache["order"] = self.order_fn() if self.order_fn is not None else None
        return self.cache["order"]

    @property
    def order_to_show(self) -> Any:
        """The caller's order estimate if one was given, else the diagnosis's own."""
        return self.shown_order if self.shown_order is not None else self.order

    @property
    def order_if_measured(self) -> Any:
        return self.cache.get("order")

    def bracket_remedy(self, t: Trace, near: float | None, why: str) -> Remedy:
        """Hybrid on a root bracket found near ``near`` (or searched when the remedy is applied)."""
        from ._detect_advice import bracket_remedy

        return bracket_remedy(self, t, near, why)


def _finite_prefix(t: Trace) -> np.ndarray[Any, np.dtype[np.float64]]:
    xs = t.xs
    bad = np.flatnonzero(~np.isfinite(xs))
    return xs[: int(bad[0])] if len(bad) else xs


def _start(t: Trace) -> float | None:
    if t.starts:
        return t.starts[0]
    return float(t.xs[0]) if t.n and math.isfinite(float(t.xs[0])) else None


def detect_cycle(t: Trace, ctx: Context) -> Finding | None:
    xs = _finite_prefix(t)
    n = len(xs)
    for p in range(2, CYCLE_MAX_PERIOD + 1):
        if n < 3 * p:
            break
        tail = xs[n - p :]
        spread = float(np.ptp(tail))
        if not spread > CYCLE_MIN_SPREAD * float(np.max(np.abs(xs[n - 3 * p :]))):
            continue
        dev = np.abs(xs[n - 2 * p :] - xs[n - 3 * p : n - p])
        if float(np.max(dev)) > CYCLE_MATCH * spread:
            continue
        k0 = n - 2 * p
        while k0 - 1 >= p and abs(xs[k0 - 1] - xs[k0 - 1 - p]) <= CYCLE_MATCH * spread:
            k0 -= 1
        repeats = (n - k0) / p + 1
        ev: list[Evidence] = [
            ("period", p, "the iterates repeat every p steps"),
            ("cycle points", tuple(float(v) for v in tail), "the last p iterates"),
            ("repetitions", round(repeats, 1), f"full periods seen since iterate {k0 - p}"),
            ("largest mismatch", float(np.max(dev)), f"|x_k − x_(k−{p})| over the last {2 * p} iterates"),
            ("cycle width", spread, "max − min of the cycle points"),
        ]
        if t.fs is not None and len(t.fs) >= n:
            fmin = float(np.min(np.abs(t.fs[n - p : n])))
            ev.append(("smallest |f| on the cycle", fmin, "a root would give 0"))
        what = t.method or "the solver"
        x0 = _start(t)
        remedy = ctx.bracket_remedy(t, x0, "a bracketing method cannot cycle")
        return Finding(
            "cycle",
            f"{what} is caught in a cycle of period {p} between "
            + ", ".join(g(v) for v in tail)
            + f"; it repeated {repeats:.0f} times and gets no closer to a root.",
            tuple(ev),
            "Another start may escape the cycle, but a method that keeps a bracket cannot cycle: use "
            + remedy.describe() + ".",
            remedy,
            tuple(range(max(k0 - p, 0), n)),
            tag=f"period {p}",
        )
    return None


def _probe_ahead(t: Trace, ctx: Context, xs: np.ndarray[Any, np.dtype[np.float64]], w: int) -> tuple[bool, str] | None:
    """Is there no root ahead in the direction of travel? (True, evidence) / (False, why) / None: no f."""
    pr = ctx.prober
    if not pr.available or pr.remaining < 4:
        return None
    x_l = float(xs[-1])
    d = x_l - float(xs[-1 - w])
    try:
        f_l = pr(x_l)
        vals = [(x_l + j * d, pr(x_l + j * d)) for j in (1.0, 4.0, 16.0)]
    except Exception:  # noqa: BLE001 - budget
        return None
    if not math.isfinite(f_l) or f_l == 0:
        return None
    prev = abs(f_l)
    for x, v in vals:
        if not math.isfinite(v):
            continue
        if (v < 0) != (f_l < 0) and v != 0:
            return False, f"f changes sign ahead, between {g(x_l)} and {g(x)}"
        if abs(v) > 1.5 * prev:
            return False, f"|f| grows ahead (|f({g(x)})| = {g(abs(v), 3)})"
        prev = max(abs(v), 0.0)
    far = vals[-1]
    return True, (f"f keeps its sign and |f| does not grow at {len(vals)} points up to {g(far[0])} "
                  f"(|f| = {g(abs(far[1]), 3)}): no root ahead")


def detect_divergence(t: Trace, ctx: Context) -> Finding | None:
    xs = _finite_prefix(t)
    n = len(xs)
    ev: list[Evidence] = []
    why = ""
    iters: tuple[int, ...] = ()
    if n < t.n or t.stop_reason == "iterate-overflow":
        why = "an iterate overflowed (it is not a finite number)"
        ev.append(("last finite iterate", float(xs[-1]) if n else math.nan, f"iterate {n - 1}"))
        iters = tuple(range(max(n - 4, 0), n))
    steps = np.diff(xs)
    if not why and n >= GROWTH_STEPS + 2:
        a = np.abs(xs[-GROWTH_STEPS - 1 :])
        s = np.abs(steps[-GROWTH_STEPS:])
        if np.all(np.diff(a) > 0) and np.all(np.diff(s) >= 0) and a[-1] >= GROWTH_FACTOR * max(1.0, abs(xs[0])):
            why = f"|x| grew from {g(abs(xs[0]), 4)} to {g(a[-1], 4)}, with every step longer than the one before"
            iters = tuple(range(n - GROWTH_STEPS - 1, n))
    if not why and n - 1 >= DRIFT_MIN_STEPS:
        w = max(DRIFT_MIN_STEPS, (n - 1) // 2)
        s = steps[-w:]
        with np.errstate(all="ignore"):
            ratio = float(np.median(np.abs(s[1:] / s[:-1])))
        same = bool(np.all(s > 0) or np.all(s < 0))
        far = abs(xs[-1] - xs[0]) >= DRIFT_DISTANCE * abs(steps[0])
        if same and far and ratio >= DRIFT_RATIO:
            ahead = _probe_ahead(t, ctx, xs, w)
            blind = ratio >= DRIFT_RATIO_BLIND and abs(xs[-1]) >= DRIFT_DISTANCE * max(abs(xs[0]), abs(steps[0]))
            if (ahead is not None and ahead[0]) or (ahead is None and blind):
                why = (f"the last {w} steps all went the same way without shrinking (median ratio of successive "
                       f"steps {ratio:.4f}), from {g(xs[-w - 1])} to {g(xs[-1])}")
                ev.append(("step ratio", ratio, f"median |s_(k+1)/s_k| over the last {w} steps; < 1 would converge"))
                if ahead is not None:
                    ev.append(("ahead", ahead[1], f"{3} probe evaluations beyond the last iterate"))
                iters = tuple(range(n - w - 1, n))
            elif ahead is not None and not ahead[0]:
                ctx.notes.append(f"the iterates drift slowly, but {ahead[1]}: slow convergence, not divergence")
    if not why:
        return None
    ev.insert(0, ("start", float(xs[0]) if n else math.nan, ""))
    if n:
        ev.insert(1, ("last iterate", float(xs[-1]), f"iterate {n - 1}"))
    if t.fs is not None and n >= 2 and math.isfinite(float(t.fs[0])) and math.isfinite(float(t.fs[n - 1])):
        f0, fl = abs(float(t.fs[0])), abs(float(t.fs[n - 1]))
        ev.append(("|f| first → last", (f0, fl), "smaller |f| far away is not a root: f decays there"
                   if fl < f0 else ""))
    false_conv = bool(t.converged_own)
    summary = ("The iterates ran away: " + why + "." + (
        f" The run stopped as converged ({t.stop_reason}), but that is false convergence: f is small only "
        "because it decays far from the start, not near a root." if false_conv else ""))
    x0 = _start(t)
    remedy = ctx.bracket_remedy(t, x0, "a bracketing method stays inside its bracket")
    return Finding("divergence", summary, tuple(ev),
                   "Start closer to the root, or use a method that keeps a bracket: " + remedy.describe() + ".",
                   remedy, iters, tag="false convergence" if false_conv else "")


def _defined_points(ctx: Context, remedy: Remedy, x_u: float) -> list[float]:
    """Points where f is defined, for a path on which no evaluation succeeded.

    First what the probes already saw (the ends of a bracket found for the remedy, any finite probe
    value); else up to ``EDGE_LOOKS`` probes stepping out from the failed point on both sides,
    d·4^j with d = max(1, |x_u|)/2, until f is defined at one of them.
    """
    seen = [x for x, v in ctx.prober.points if math.isfinite(v)]
    for pair in (remedy.bracket, remedy.start):
        if pair is not None:
            seen.extend(float(v) for v in pair if math.isfinite(float(v)))
    if seen:
        return seen
    pr = ctx.prober
    d = max(1.0, abs(x_u)) / 2
    for j in range(EDGE_LOOKS // 2):
        for s in (1.0, -1.0):
            x = x_u + s * d * 4.0**j
            if pr.remaining < 9:  # keep a few for the bisection
                return []
            try:
                v = pr(x)
            except Exception:  # noqa: BLE001 - budget
                return []
            if math.isfinite(v):
                return [x]
    return []


def detect_domain_error(t: Trace, ctx: Context) -> Finding | None:
    from ._signchange import locate_edge

    fails = list(t.failures)
    if t.failure is not None and t.failure.reason in ("function-raised", "nonfinite-value", "bad-value") \
            and t.failure.x is not None and not any(x == t.failure.x for x, _, _ in fails):
        fails.append((float(t.failure.x), t.failure.reason, t.failure.message))
    if not fails:
        return None
    x_u, status, note = fails[0]
    xs = _finite_prefix(t)
    good = [float(x) for x, v in zip(xs, t.fs if t.fs is not None else xs) if math.isfinite(float(v))]
    ev: list[Evidence] = [("failed evaluations", len(fails), "raised, NaN or not a real number"),
                          ("first failure at x", x_u, (note if note.startswith(status) else f"{status}: {note}")[:160])]
    advice_where = ""
    what = t.method or "the solver"
    x0 = _start(t)
    why = "a bracket inside the domain keeps every iterate where f is defined"
    remedy = None
    pr = ctx.prober
    if not good and math.isfinite(x_u):  # no evaluation along the path succeeded: the bracket search shows where
        remedy = ctx.bracket_remedy(t, x0, why)  # f is defined; else a few probes stepping out
        good = _defined_points(ctx, remedy, x_u)
    if good and math.isfinite(x_u):
        x_d = min(good, key=lambda v: abs(v - x_u))
        ev.append(("nearest defined point", x_d, "f evaluated there without trouble"))
        if pr.available and pr.remaining >= 8:
            edge = locate_edge(pr, x_d, x_u, xtol=1e-9 * max(1.0, abs(x_d)), max_evals=min(40, pr.remaining))
            side = "below" if edge.undefined_side == "left" else "above"
            ev.append(("domain edge", (edge.x_defined, edge.x_undefined),
                       f"f is defined at the first and not at the second ({edge.evaluations} probes"
                       + ("" if edge.complete else "; the probe budget ended the bisection") + ")"))
            advice_where = f" f is not defined just {side} x ≈ {g(edge.x_defined, 10)}."
    if remedy is None:
        remedy = ctx.bracket_remedy(t, x0, why)
    return Finding(
        "domain-error",
        f"{what} evaluated f where it is not defined: at x = {g(x_u, 10)} f {note or status}."[:300]
        + advice_where,
        tuple(ev),
        "Keep the iterates where f is defined: " + remedy.describe()
        + " (or start closer to the root, on the defined side).",
        remedy, (), tag=f"at x = {g(x_u, 4)}",
    )
