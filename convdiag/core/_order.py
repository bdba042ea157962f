"""The observed order of convergence, linear rate, multiplicity and efficiency of an iteration.

With errors e_k = |x_k − r|, the single-step order is
q_k = log(e_{k+1}/e_k) / log(e_k/e_{k−1}) (uses e_{k−1}, e_k, e_{k+1}) and the
single-step rate is ρ_k = e_{k+1}/e_k. :func:`estimate_order` measures them on
a run, a recorder's log or any plain sequence, picks the window where they
have settled, and names the regime.

Reference (what r is), chosen in this order unless ``reference`` says otherwise:
``given`` (``root=``), ``high-precision`` (a root computed and confirmed with
mpmath, see :mod:`convdiag.core._reference`), ``best-iterate`` (the run's own
best iterate, for runs that converged by their own rule; its own error,
estimated as a Newton step from it with the last secant slope, biases the
errors measured against it, so errors below 100 × that are dropped),
``differences`` (successive differences d_k = |x_{k+1} − x_k| in place of
errors: the approximated computational order of convergence, ACOC, of Cordero
and Torregrosa, 2007) and ``residuals`` (|f(x_k)| in place of errors: near a
simple root e_k ≈ |f(x_k)|/|f'(r)|, Grau-Sánchez et al., 2010).

Window rules (:func:`_analyse`):

1. Usable errors: finite and above 10 × the rounding floor, which is the larger
   of the problem's floor (4 ulps of |r|, or the evaluation noise of f turned
   into an error of x, see :func:`~convdiag.core._reference.rounding_floor`)
   and 4 units of |x_(k−1)| (the rounding of the step itself; it matters at a
   root at 0). The first unusable error ends the usable part; so does the
   smallest error (nothing after it improved).
2. Superlinear: the longest run of single-step orders at the end of the usable
   part that all lie within max(0.1, 0.05·median) of their median, the errors
   decreasing throughout. With at least ``min_points`` values (4 when the
   errors go up and down, as bisection midpoints do) and a median ≥ 1.2, the
   order is the median of the later half of that run (the values nearest the
   asymptotic regime; methods with memory oscillate, so a median, not the last
   value): "quadratic" within 0.1 of 2, "cubic" within 0.15 of 3, else
   "superlinear". When the floor is unknown and the last single-step order
   drops out of line, the last error is taken as rounding-limited and dropped.
3. Linear: the longest run of steady single-step rates at the end (log-ratios
   within 15 % + 0.01 of their median), at least 4 of them; the rate is the
   median of the later half. With at least 8 usable errors whose single-step
   values scatter: if |log(e_(k+1)/e_k)| grows steadily by ≥ 1.15 per step
   (Illinois-type cycles) the order is that growth; otherwise the rate is the
   slope of a robust straight-line fit (Theil–Sen) of log e_k against k over
   the last two thirds (bisection), unless the trend is steeper than a factor
   10 per step (then too few points to tell). "Sublinear" when the rate is
   ≥ 0.9 and 1 − rate shrinks by a third or more from the window's first half
   to its second.
4. Anything else: "not enough points" (no number is invented), or "not
   converging" when no later error is smaller than the first usable one.

For a double-precision run of a function that computes in mpmath, the same
method is replayed from the same starts at ``digits`` digits (3× and 9× that
when the window still has fewer than 4 settled values); the label rests on the
replay when it gives an estimate, and both estimates are kept.
"""

from __future__ import annotations

import itertools
import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field, replace
from typing import Any, Literal

import numpy as np
from numpy.typing import NDArray

from ..errors import ParameterError
from ._show import Showable

__all__ = ["Comparison", "MethodResult", "OrderEstimate", "compare_methods", "estimate_order", "order_json"]

EPS = 2.220446049250313e-16
GOLDEN = (1 + 5**0.5) / 2
Reference = Literal["auto", "high-precision", "best-iterate", "differences", "residuals"]
LABELS = ("quadratic", "cubic", "superlinear", "linear", "sublinear", "not enough points", "not converging")


@dataclass(frozen=True, repr=False)
class OrderEstimate(Showable):
    """The observed order of convergence of one iteration, with how sure it is.

    Attributes
    ----------
    value : observed order (see ``centre``; NaN with too few points)
    spread : half the range of the single-step orders over the window
    window : (first, last) index k of the single-step values used (q_k for a superlinear
        label, ρ_k = e_{k+1}/e_k for a linear one), or None
    points : how many single-step values the estimate rests on
    label : quadratic, cubic, superlinear, linear, sublinear, not enough points, not converging
    reference : given root, high-precision root, best iterate, successive differences, residuals
    reference_note : a sentence on the reference: its value, how sure, its bias
    root : the reference root as a float (None for differences and residuals)
    rate, rate_spread : the linear rate lim e_{k+1}/e_k and its spread (linear labels only)
    multiplicity, multiplicity_note : the multiplicity the evidence implies, and the evidence
    error_constant, error_constant_theory, error_constant_note : observed e_{k+1}/e_k^p (median
        over the window, p the method's order) against its theoretical value at the root
    evals_per_step : evaluations per step observed over the window
    efficiency, efficiency_theory : observed order^(1/evals_per_step) and the method's
        nominal order^(1/nominal evaluations per step) (Ostrowski's efficiency index)
    method, nominal_order : the method, when known, and its theoretical order
    centre : how the window was summarised
    errors, log_errors : e_k (float; may underflow to 0) and log10 e_k as measured
    orders : single-step orders q_k aligned with ``errors`` (NaN where undefined)
    evals : cumulative evaluations at each entry, when known
    floor, floor_note : rounding floor of the errors (errors ≤ 10·floor are not used) and what set it
    digits : working digits of the arithmetic (None for double precision)
    basis : "run", "replay" (high-precision replay of the run) or "sequence"
    alternative : the other estimate (the run's own when basis is "replay", the replay's
        when basis is "run"), or None
    notes : anything the reader should know
    source : what was measured
    """

    value: float
    spread: float
    window: tuple[int, int] | None
    points: int
    label: str
    reference: str
    reference_note: str = ""
    root: float | None = None
    rate: float | None = None
    rate_spread: float | None = None
    multiplicity: int | None = None
    multiplicity_note: str = ""
    error_constant: float | None = None
    error_constant_theory: float | None = None
    error_constant_note: str = ""
    evals_per_step: float | None = None
    efficiency: float | None = None
    efficiency_theory: float | None = None
    method: str | None = None
    nominal_order: float | None = None
    centre: str = ""
    errors: tuple[float, ...] = ()
    log_errors: tuple[float, ...] = ()
    orders: tuple[float, ...] = ()
    evals: tuple[int, ...] | None = None
    floor: float = 0.0
    floor_note: str = ""
    digits: int | None = None
    basis: str = "sequence"
    alternative: OrderEstimate | None = field(default=None, compare=False)
    notes: tuple[str, ...] = ()
    source: str = ""

    @property
    def label_text(self) -> str:
        """The label with its number: ``superlinear (order 1.62)``, ``linear (rate 0.500)``."""
        if self.label == "superlinear":
            return f"superlinear (order {self.value:.3g})"
        if self.label == "linear" and self.rate is not None:
            return f"linear (rate {self.rate:.3g})"
        if self.label == "sublinear":
            return "sublinear (single-step rates creep up to 1)"
        return self.label

    @property
    def converged_estimate(self) -> bool:
        """A number was measured (the label is neither 'not enough points' nor 'not converging')."""
        return self.label not in ("not enough points", "not converging")

    @property
    def replay(self) -> OrderEstimate | None:
        """The estimate on the high-precision replay, if there was one."""
        if self.basis == "replay":
            return self
        return self.alternative if self.alternative is not None and self.alternative.basis == "replay" else None

    @property
    def in_run(self) -> OrderEstimate | None:
        """The estimate on the run's own iterates (None for plain sequences)."""
        if self.basis == "run":
            return self
        return self.alternative if self.alternative is not None and self.alternative.basis == "run" else None

    def __repr__(self) -> str:
        where = f"window {self.window[0]}–{self.window[1]}, " if self.window else ""
        pts = f"{self.points} point{'s' if self.points != 1 else ''}"
        head = self.label if not self.converged_estimate else f"{self.value:.3f} {self.label_text}"
        return f"<OrderEstimate {head} ({where}{pts}, reference: {self.reference})>"


# -- the engine on log-errors ------------------------------------------------------------
@dataclass
class _Analysis:
    value: float = math.nan
    spread: float = math.nan
    window: tuple[int, int] | None = None
    points: int = 0
    label: str = "not enough points"
    rate: float | None = None
    rate_spread: float | None = None
    centre: str = ""
    orders: NDArray[np.float64] = field(default_factory=lambda: np.zeros(0))
    notes: list[str] = field(default_factory=list)
    drop: float = math.nan  # factor by which the errors fell over a linear window


def _theil_sen(y: NDArray[np.float64]) -> float:
    """Median of the pairwise slopes of y against its index (robust straight-line fit)."""
    y = y[-400:]
    i, j = np.triu_indices(len(y), k=1)
    return float(np.median((y[j] - y[i]) / (j - i))) if len(i) else math.nan


def _settled(values: Sequence[float], tol: Any) -> int:
    """Length of the longest suffix whose values all lie within tol(median) of their median."""
    n = 0
    for k in range(len(values) - 1, -1, -1):
        cand = np.asarray(values[k:], dtype=np.float64)
        if not np.all(np.isfinite(cand)):
            break
        med = float(np.median(cand))
        if np.max(np.abs(cand - med)) > tol(med):
            break
        n = len(cand)
    return n


def _single_orders(L: NDArray[np.float64]) -> NDArray[np.float64]:
    q = np.full(len(L), np.nan)
    with np.errstate(all="ignore"):
        for k in range(1, len(L) - 1):
            den = L[k] - L[k - 1]
            if np.isfinite(den) and abs(den) > 1e-12 and np.isfinite(L[k + 1]):
                q[k] = (L[k + 1] - L[k]) / den
    return q


def _analyse(L: NDArray[np.float64], log_floor: NDArray[np.float64], min_points: int) -> _Analysis:
    """Window, value, spread and label from log10 errors and log10 rounding floors (see the module notes)."""
    a = _Analysis(orders=_single_orders(L))
    a = _analyse_inner(L, log_floor, min_points, a)
    if a.label == "not enough points":
        have = [f"q_{k} = {a.orders[k]:.3g}" for k in range(len(L)) if np.isfinite(a.orders[k])]
        usable = int(np.sum(np.isfinite(L) & (L > log_floor + 1.0)))
        a.notes.append(
            f"{usable} usable error{'s' if usable != 1 else ''} above the rounding floor"
            + (f" (single-step orders {', '.join(have[-4:])})" if have else "")
            + f"; an order needs at least {min_points} single-step orders that agree, a linear rate at least 4 "
            "steady single-step rates"
        )
    return a


def _analyse_inner(L: NDArray[np.float64], log_floor: NDArray[np.float64], min_points: int, a: _Analysis) -> _Analysis:
    valid = np.isfinite(L) & (L > log_floor + 1.0)
    at_floor = np.flatnonzero((L == -np.inf) | (np.isfinite(L) & ~valid))
    end = int(at_floor[0]) if len(at_floor) else len(L)
    broken = np.flatnonzero(~np.isfinite(L[:end]))  # NaN or overflow before the floor: keep what follows it
    start = int(broken[-1]) + 1 if len(broken) else 0
    if start >= end:
        a.notes.append("every error is at the rounding floor or not finite")
        return a
    if end < len(L):
        a.notes.append(f"errors from k = {end} on are at the rounding floor and are not used")
    if start > 0:
        a.notes.append(f"entry k = {start - 1} is not a finite number; only what follows it is used")
    j = start + int(np.argmin(L[start:end]))
    if j < end - 1:
        if j == start and end - start >= 3:
            a.label = "not converging"
            a.notes.append(f"the errors did not decrease below the first usable one (k = {start})")
            return a
        a.notes.append(f"after k = {j} the error did not decrease further; the rest is not used")
        end = j + 1
    if end - start < 3:
        return a
    ell = np.diff(L[start:end])  # log10 single-step rates, ell[i] = log10(e_{start+i+1}/e_{start+i})
    late = ell[len(ell) // 3 :]
    erratic = int(np.sum(late > 0.01)) >= max(3, 0.15 * len(late))  # errors go up and down (bisection)
    # superlinear: settled single-step orders at the end (q_k for k = start+1 .. end-2)
    ks = list(range(start + 1, end - 1))
    qs = [a.orders[k] if (L[k + 1] < L[k] < L[k - 1]) else math.nan for k in ks]

    def tol(med: float) -> float:
        return max(0.1, 0.05 * abs(med))

    n = _settled(qs, tol)
    need = max(min_points, 4) if erratic else min_points
    if n < need and len(qs) >= 3 and qs[-1] < qs[-2] - tol(qs[-2]) and _settled(qs[:-1], tol) >= need:
        # an unknown floor (residuals, a user's sequence): the last error stagnated, so its order dropped
        a.notes.append(f"the last error looks limited by rounding (its single-step order falls from {qs[-2]:.3g} "
                       f"to {qs[-1]:.3g}); it is not used")
        ks, qs, end = ks[:-1], qs[:-1], end - 1
        n = _settled(qs, tol)
    if n >= need and float(np.median(qs[-n:])) >= 1.2:
        win = np.asarray(qs[-n:])
        a.value, a.spread = float(np.median(win[n // 2 :])), float((win.max() - win.min()) / 2)
        a.window, a.points = (ks[-n], ks[-1]), n
        a.label = "quadratic" if abs(a.value - 2) <= 0.1 else "cubic" if abs(a.value - 3) <= 0.15 else "superlinear"
        a.centre = (f"median of the last {n - n // 2} of {n} settled single-step orders" if n > 1
                    else "the one settled single-step order")
        return a
    # linear: steady single-step rates at the end
    n = _settled(list(ell), lambda med: 0.15 * abs(med) + 0.01)
    if n >= 4 and float(np.median(ell[-n:])) < 0:
        w = ell[-n:]
        rates = 10.0**w
        a.rate, a.rate_spread = float(np.median(rates[n // 2 :])), float((rates.max() - rates.min()) / 2)
        a.window, a.points = (end - 1 - n, end - 2), n
        qwin = a.orders[end - n : end - 1]
        qwin = qwin[np.isfinite(qwin)]
        a.value = float(np.median(qwin)) if len(qwin) else 1.0
        a.spread = float((qwin.max() - qwin.min()) / 2) if len(qwin) else math.nan
        a.centre = f"median of the last {n - n // 2} of {n} steady single-step rates"
        half = n // 2
        c1, c2 = float(np.median(rates[:half])), float(np.median(rates[half:]))
    elif end - start >= 8:
        if _growth(L, start, end, a):
            return a
        first = end - max(4, (2 * (end - start)) // 3)
        y = L[first:end]
        a.window, a.points = (first, end - 2), end - 1 - first
        slope = _theil_sen(y)
        if not slope < 0:
            a.label = "not converging"
            a.notes.append("the errors show no downward trend")
            return a
        half = len(y) // 2
        c1, c2 = 10.0 ** _theil_sen(y[: half + 1]), 10.0 ** _theil_sen(y[half:])
        if c2 < 0.1 * c1 and c2 < 0.1:
            a.window, a.points = None, 0
            a.notes.append("the single-step rates are still shrinking fast: superlinear convergence that has not "
                           "settled into its asymptotic order within the usable errors")
            return a
        if slope < -1:
            a.window, a.points = None, 0
            a.notes.append("single-step rates scatter and the trend is steeper than a factor 10 per step: more "
                           "points are needed to tell a fast linear rate from superlinear convergence")
            return a
        a.rate = float(10.0**slope)
        a.rate_spread = float(abs(c1 - c2) / 2)
        a.value, a.spread = 1.0, math.nan
        a.centre = "robust straight-line fit (Theil–Sen) of log e_k against k"
        a.notes.append(
            "single-step rates scatter (as bisection midpoints do); the rate is the slope of a robust straight-line "
            "fit (Theil–Sen) of log e_k against k over the window"
        )
    else:
        return a
    assert a.window is not None
    drop = 10.0 ** (L[a.window[0]] - L[min(a.window[1] + 1, end - 1)])
    if drop < 3:
        a.label, a.value, a.spread, a.rate, a.rate_spread = "not converging", math.nan, math.nan, None, None
        a.notes.append(f"the errors fell by only a factor {drop:.3g} over k = {a.window[0]} … {a.window[1] + 1}")
        a.window, a.points = None, 0
        return a
    sub = a.rate >= 0.9 and c2 > c1 and (1 - c2) <= (2 / 3) * (1 - c1)
    a.label = "sublinear" if sub or a.rate >= 1.0 else "linear"
    a.drop = float(drop)
    return a


def _growth(L: NDArray[np.float64], start: int, end: int, a: _Analysis) -> bool:
    """Superlinear with cycling single-step orders (Illinois-type): |log(e_(k+1)/e_k)| grows geometrically.

    Tries suffixes of the usable errors from the longest down to 6 steps and takes the longest on
    which the growth per step is steady (its two halves agree within 35 %) and at least 1.15.
    """
    n = end - start
    for length in sorted({max(7, int(n * f)) for f in (1.0, 0.8, 0.6, 0.45, 0.3, 0.2)}, reverse=True):
        first = end - length
        if first < start:
            continue
        steps = np.diff(L[first:end])
        if not np.all(steps < 0):
            continue
        g = np.log10(-steps)
        h = len(g) // 2
        growth, g1, g2 = _theil_sen(g), _theil_sen(g[: h + 1]), _theil_sen(g[h:])
        if growth >= math.log10(1.15) and abs(g1 - g2) <= 0.35 * growth:
            a.value = float(10.0**growth)
            a.spread = float(abs(10.0**g1 - 10.0**g2) / 2)
            a.window, a.points = (first, end - 2), end - 1 - first
            a.label = "quadratic" if abs(a.value - 2) <= 0.1 else "cubic" if abs(a.value - 3) <= 0.15 else "superlinear"
            a.centre = "growth per step of |log(e_(k+1)/e_k)| (Theil–Sen fit against k)"
            a.notes.append("single-step orders do not settle (they cycle, as with Illinois-type methods); the order is "
                           "the average growth per step of |log(e_(k+1)/e_k)| over the window")
            return True
    return False


# -- the public entry point ----------------------------------------------------------------
def estimate_order(
    source: Any,
    *,
    root: Any = None,
    method: str | None = None,
    replay: bool = True,
    reference: Reference = "auto",
    kind: Literal["auto", "iterates", "residuals"] = "auto",
    digits: int = 60,
    floor: float | None = None,
    min_points: int = 2,
    evals_per_step: float | None = None,
) -> OrderEstimate:
    """Measure the order of convergence of a run or of any sequence of iterates or residuals.

    Parameters
    ----------
    source : Run, Recorder, EvalLog, IterationSequence, list, numpy array or mapping
        What to measure. A list or array holds iterates (residuals with ``kind="residuals"``);
        a recorder's iterates are its evaluation points (right for secant-like solvers that
        evaluate f once per step; see :func:`~convdiag.core._sequence.as_sequence`).
    root : float or ReferenceRoot, optional
        The true root, if known. For a run whose function computes in mpmath the given root
        is also polished to ``digits`` digits for the replay.
    method : str, optional
        The method that produced a plain sequence (for the multiplicity a linear rate implies,
        the error constant and the efficiency); a run names its own.
    replay : bool
        For a double-precision run of an expression (or of a callable that computes in
        mpmath), also replay the method from the same starts at ``digits`` digits (deepened to
        3× and 9× when too few points settle; a run stopped by a budget is replayed for the same
        number of steps) and measure the order there. The label rests on the replay whenever it
        gives an estimate; the run's own estimate is kept in ``alternative``.
    reference : "auto", "high-precision", "best-iterate", "differences" or "residuals"
        Force a reference instead of the automatic choice (see the module notes).
    kind : "auto", "iterates" or "residuals"
        How to read a single-column sequence.
    digits : int
        Digits of the high-precision reference root and replay (16–2000).
    floor : float, optional
        Rounding floor of the errors (default: measured, see :func:`~convdiag.core._reference.rounding_floor`).
    min_points : int
        Fewest single-step orders a superlinear estimate may rest on (default 2).
    evals_per_step : float, optional
        Evaluations per step of a plain sequence without an ``evals`` column.

    Returns
    -------
    OrderEstimate

    Raises
    ------
    ParameterError
        A bad argument, or a sequence with fewer than 3 entries.

    References
    ----------
    Weerakoon & Fernando, Appl. Math. Lett. 13(8) (2000) 87-93 (COC); Cordero & Torregrosa,
    Appl. Math. Comput. 190 (2007) 686-698 (ACOC); Grau-Sánchez, Noguera & Gutiérrez, Appl. Math.
    Lett. 23 (2010) 472-478 (residual-based orders); Ostrowski (1960), efficiency index.

    Examples
    --------
    >>> from convdiag import solve
    >>> est = estimate_order(solve("x**2 - 2", "newton", start=1.0))
    >>> est.label, round(est.value, 2), est.reference, est.basis
    ('quadratic', 2.0, 'high-precision root', 'replay')
    >>> estimate_order([1.0, 0.5, 0.25, 0.125, 0.0625, 0.03125], root=0.0).label_text
    'linear (rate 0.5)'
    """
    from ._run import Run

    _check_options(reference, kind, digits, floor, min_points, evals_per_step, method)
    opts = _Options(reference, digits, floor, min_points, evals_per_step)
    if isinstance(source, Run):
        return _measure_run(source, root, replay, opts)
    return _measure_sequence(source, root, method, kind, opts)


def order_json(estimate: OrderEstimate) -> dict[str, Any]:
    """A JSON-ready dict with the keys ``order``, ``rate``, ``multiplicity``, ``efficiency`` (plus extras).

    ``order`` holds ``value``, ``spread``, ``window``, ``points``, ``label`` and ``reference``;
    NaN becomes None.

    Examples
    --------
    >>> est = estimate_order([1.0, 0.5, 0.25, 0.125, 0.0625, 0.03125], root=0.0)
    >>> d = order_json(est)
    >>> sorted(d["order"]), round(d["rate"], 3)
    (['label', 'label_text', 'points', 'reference', 'spread', 'value', 'window'], 0.5)
    """

    def num(v: Any) -> Any:
        if v is None:
            return None
        f = float(v)
        return f if math.isfinite(f) else None

    e = estimate
    out: dict[str, Any] = {
        "order": {
            "value": num(e.value),
            "spread": num(e.spread),
            "window": list(e.window) if e.window else None,
            "points": e.points,
            "label": e.label,
            "label_text": e.label_text,
            "reference": e.reference,
        },
        "rate": num(e.rate),
        "multiplicity": e.multiplicity,
        "efficiency": {
            "index": num(e.efficiency),
            "evals_per_step": num(e.evals_per_step),
            "theory": num(e.efficiency_theory),
        },
        "rate_spread": num(e.rate_spread),
        "multiplicity_note": e.multiplicity_note,
        "reference_note": e.reference_note,
        "root": num(e.root),
        "error_constant": {"observed": num(e.error_constant), "theory": num(e.error_constant_theory),
                           "note": e.error_constant_note},
        "method": e.method,
        "nominal_order": num(e.nominal_order),
        "basis": e.basis,
        "digits": e.digits,
        "centre": e.centre,
        "floor": num(e.floor),
        "notes": list(e.notes),
    }
    if e.alternative is not None:
        alt = order_json(replace(e.alternative, alternative=None))
        out[e.alternative.basis] = {k: alt[k] for k in ("order", "rate", "multiplicity", "efficiency", "digits")}
    return out


# -- measuring runs and sequences ------------------------------------------------------------
@dataclass(frozen=True)
class _Options:
    reference: str
    digits: int
    floor: float | None
    min_points: int
    evals_per_step: float | None


def _check_options(reference: Any, kind: Any, digits: Any, floor: Any, min_points: Any, eps: Any, method: Any) -> None:
    from ._methods import METHODS

    owner = "estimate_order"
    if reference not in ("auto", "high-precision", "best-iterate", "differences", "residuals"):
        raise ParameterError.expected(
            "reference", owner, "'auto', 'high-precision', 'best-iterate', 'differences' or 'residuals'", reference
        )
    if kind not in ("auto", "iterates", "residuals"):
        raise ParameterError.expected("kind", owner, "'auto', 'iterates' or 'residuals'", kind)
    if not isinstance(digits, int) or isinstance(digits, bool) or not 16 <= digits <= 2000:
        raise ParameterError.expected("digits", owner, "an int between 16 and 2000", digits)
    if floor is not None and (isinstance(floor, bool) or not isinstance(floor, (int, float)) or not floor >= 0):
        raise ParameterError.expected("floor", owner, "a float >= 0 or None", floor)
    if not isinstance(min_points, int) or isinstance(min_points, bool) or min_points < 1:
        raise ParameterError.expected("min_points", owner, "an int >= 1", min_points)
    if eps is not None and (isinstance(eps, bool) or not isinstance(eps, (int, float)) or not eps > 0):
        raise ParameterError.expected("evals_per_step", owner, "a float > 0 or None", eps)
    if method is not None and method not in METHODS:
        raise ParameterError.expected("method", owner, f"one of {', '.join(sorted(METHODS))} or None", method)


@dataclass
class _Ref:
    kind: str  # given, high-precision, best-iterate, differences, residuals
    value: Any = None
    hp: Any = None  # ReferenceRoot with derivatives, when one was computed and trusted
    note: str = ""
    floor: float = 0.0
    floor_hp: float = 0.0
    floor_note: str = ""

    @property
    def label(self) -> str:
        return {"given": "given root", "high-precision": "high-precision root", "best-iterate": "best iterate",
                "differences": "successive differences", "residuals": "residuals"}[self.kind]


def _log_abs(values: Sequence[Any]) -> NDArray[np.float64]:
    out = np.full(len(values), np.nan)
    for i, v in enumerate(values):
        try:
            a = abs(v)
            if a == 0:
                out[i] = -np.inf
                continue
            f = float(a)
            out[i] = math.log10(f) if 0 < f < math.inf else float(__import__("mpmath").log10(a))
        except (TypeError, ValueError, OverflowError, ArithmeticError):
            continue
    return out


def _log_errors(xs: Sequence[Any], ref: _Ref, residuals: Sequence[Any] | None) -> NDArray[np.float64]:
    if ref.kind == "residuals":
        return _log_abs(residuals or [])
    if ref.kind == "differences":
        return _log_abs([b - a for a, b in itertools.pairwise(xs)])
    r = ref.value
    if isinstance(r, float) and all(isinstance(x, float) for x in xs):
        return _log_abs([x - r for x in xs])
    import mpmath

    return _log_abs([mpmath.mpmathify(x) - r for x in xs])


def _point_floors(xs: Sequence[Any], kind: str, log_unit: float, opts: _Options) -> NDArray[np.float64] | None:
    """log10 of the rounding of each error by the arithmetic that produced it: 4 units of |x_(k−1)|
    (of max(|x_k|, |x_(k+1)|) for differences). This matters where |r| is far below the iterates (a root at 0)."""
    if opts.floor is not None or kind == "residuals":
        return None
    lx = _log_abs(list(xs)) + math.log10(4) + log_unit
    if kind == "differences":
        return np.maximum(lx[:-1], lx[1:])
    return np.concatenate([lx[:1], lx[:-1]])


def _finite_or_nan(xs: Sequence[Any]) -> list[float]:
    out = []
    for x in xs:
        try:
            out.append(float(x))
        except (TypeError, ValueError, OverflowError):
            out.append(math.nan)
    return out


def _finite_floats(xs: Sequence[Any]) -> list[float]:
    out = []
    for x in xs:
        try:
            v = float(x)
        except (TypeError, ValueError, OverflowError):
            continue
        if math.isfinite(v):
            out.append(v)
    return out


def _best_iterate_bias(xs: Sequence[Any], residuals: Sequence[Any] | None, k: int) -> tuple[float, str]:
    """How far iterate k itself is from the root: |f|/|secant slope| there, else its last step (in the
    iterates' own number type, so an exact sequence keeps its digits)."""
    j = next((i for i in range(k - 1, -1, -1) if _finite_or_nan([xs[i]])[0] == _finite_or_nan([xs[i]])[0]
              and xs[i] != xs[k]), None)
    if j is None:
        return 0.0, "unknown"
    step = abs(xs[k] - xs[j])
    if residuals is not None and len(residuals) == len(xs):
        fr = _finite_or_nan([residuals[k], residuals[j]])
        if all(math.isfinite(v) for v in fr) and fr[0] != fr[1]:
            return float(abs(fr[0]) * step / abs(fr[0] - fr[1])), "a Newton step from it, with the last secant slope"
    return float(step), "its last step"


def _choose_reference(
    problem: Any, xs: Sequence[Any], root: Any, opts: _Options, *, converged: bool, best: Any,
    has_residuals: bool, unit: float, notes: list[str], residuals: Sequence[Any] | None = None,
) -> _Ref:
    """Pick the reference (see the module notes) and its rounding floor."""
    from ._reference import ReferenceRoot, reference_root, rounding_floor

    fx = _finite_floats(xs)
    if opts.reference == "residuals" or (not fx and has_residuals):
        return _Ref("residuals", note="orders from residuals |f(x_k)| in place of errors: near a simple root "
                    "e_k ≈ |f(x_k)|/|f'(r)| (Grau-Sánchez et al. 2010); at a root of multiplicity m, "
                    "|f| ∝ e^m, so a linear rate shows as rate^m",
                    floor_note="not known for residuals; a rounding-limited last value is recognised in the data")
    if not fx:
        raise ParameterError("estimate_order needs iterates (or residuals with kind='residuals'); got neither.")
    best_exact = best if best is not None and _finite_floats([best]) else xs[-1]
    near = float(best_exact)
    scale = max((abs(x - near) for x in fx), default=0.0) or max(abs(near), 1.0)
    ref: _Ref | None = None
    if isinstance(root, ReferenceRoot):
        ref = _Ref(root.source, root.value, root if root.source == "high-precision" else None, root.summary)
    elif root is not None:
        try:
            rv = float(root)
        except (TypeError, ValueError):
            raise ParameterError.expected("root", "estimate_order", "a finite number or a ReferenceRoot", root) from None
        if not math.isfinite(rv):
            raise ParameterError.expected("root", "estimate_order", "a finite number or a ReferenceRoot", root)
        exact_root = root if type(root).__module__.startswith("mpmath") else rv
        ref = _Ref("given", exact_root, note=f"the root you gave, {rv:.17g}")
        if problem is not None:
            try:
                cand = reference_root(problem, rv, digits=opts.digits, scale=scale)
            except ParameterError as exc:
                notes.append(f"no high-precision polish of the given root: {exc}")
            else:
                gap = abs(cand.float_value - rv)
                if cand.confirmed and gap <= 1e-12 * max(abs(rv), scale):
                    ref.hp = cand
                    ref.note += f", which agrees with the high-precision root {cand.summary} to within {gap:.2g}"
                else:
                    notes.append(f"the high-precision root nearest the given root is {cand.float_value:.17g}, "
                                 f"{gap:.3g} away; the given root is used as it is")
    elif opts.reference in ("auto", "high-precision") and problem is not None:
        try:
            cand = reference_root(problem, near, digits=opts.digits, scale=scale)
        except ParameterError as exc:
            notes.append(f"no high-precision root: {exc}")
        else:
            far = abs(cand.float_value - near)
            if not cand.confirmed:
                notes.append("the high-precision root was not confirmed (" + "; ".join(cand.notes) + "), so it is not used")
            elif far > 0.5 * scale and far > 1e-8 * max(abs(near), 1.0):
                notes.append(f"the high-precision root nearest the best iterate is {cand.float_value:.6g}, farther "
                             "than the iterates moved, so it is not their limit and is not used")
            else:
                ref = _Ref("high-precision", cand.value, cand, cand.summary)
    if ref is None:
        if opts.reference == "best-iterate" or (opts.reference in ("auto", "high-precision") and converged):
            gaps = [abs(x - best_exact) if _finite_floats([x]) else math.inf for x in xs]
            k = max(i for i, g in enumerate(gaps) if g == min(gaps))  # the last of equally good iterates
            bias, how = _best_iterate_bias(xs, residuals, k)
            own = f"about {bias:.2g} ({how})" if bias > 0 else "at the rounding level (f is exactly 0 there)"
            ref = _Ref("best-iterate", xs[k], note=(
                f"the run's own best iterate {near:.17g}; its own error, {own}, biases the errors measured "
                "against it, so errors below 100 × that (and 40 ulps) are not used"))
            ref.floor = max(4 * unit * abs(near), 10 * bias)
            ref.floor_note = "10 × the best iterate's own error, at least 4 ulps"
        else:
            ref = _Ref("differences", note="no trusted root: successive differences |x_{k+1} − x_k| stand in for the "
                       "errors (ACOC, Cordero & Torregrosa 2007); index k refers to the difference x_{k+1} − x_k")
            ref.floor = 4 * unit * max((abs(x) for x in fx[-max(3, len(fx) // 4):]), default=0.0)
            ref.floor_note = "4 ulps of the last iterates"
        return ref
    r = float(ref.value)
    ref.floor = ref.floor_hp = 4 * unit * abs(r)
    ref.floor_note = "4 ulps of |r|"
    if ref.hp is not None and problem is not None:
        ref.floor, ref.floor_hp, ref.floor_note = rounding_floor(problem, ref.hp, digits=opts.digits)
        ref.floor = max(ref.floor, 4 * unit * abs(r)) if unit != EPS else ref.floor
    return ref


def _complex_reference(xs: Sequence[Any], root: Any, opts: _Options) -> _Ref:
    if opts.reference == "residuals":
        return _Ref("residuals", note="orders from residuals |f(x_k)| in place of errors (Grau-Sánchez et al. 2010)")
    if root is not None and opts.reference == "auto":
        try:
            r = complex(root)
        except (TypeError, ValueError):
            raise ParameterError.expected("root", "estimate_order", "a finite number", root) from None
        ref = _Ref("given", r, note=f"the root you gave, {r}")
        ref.floor, ref.floor_note = 4 * EPS * abs(r), "4 ulps of |r|"
        return ref
    ref = _Ref("differences", note="complex run without a given root: successive differences |x_{k+1} − x_k| "
               "(ACOC, Cordero & Torregrosa 2007)")
    ref.floor = 4 * EPS * max((abs(complex(x)) for x in xs[-3:]), default=0.0)
    ref.floor_note = "4 ulps of the last iterates"
    return ref


def _secant_rate(m: int) -> float:
    """The positive root of t^m + t^(m−1) = 1 (secant at a root of multiplicity m)."""
    roots = np.roots([1.0, 1.0] + [0.0] * (m - 2) + [-1.0])
    return float(max(r.real for r in roots if abs(r.imag) < 1e-12 and r.real > 0))


_RATE_FORMULAS: dict[str, tuple[str, Callable[[int], float]]] = {
    "newton": ("(m−1)/m", lambda m: (m - 1) / m),
    "steffensen": ("(m−1)/m", lambda m: (m - 1) / m),
    "halley": ("(m−1)/(m+1)", lambda m: (m - 1) / (m + 1)),
    "secant": ("the root of t^m + t^(m−1) = 1", _secant_rate),
}


def _multiplicity_from_rate(method: str | None, rate: float) -> tuple[int | None, str]:
    if method not in _RATE_FORMULAS:
        return None, ""
    text, g = _RATE_FORMULAS[method]
    vals = {m: g(m) for m in range(2, 21)}
    m = min(vals, key=lambda k: abs(vals[k] - rate))
    gap = min(abs(vals[m] - vals[k]) for k in (m - 1, m + 1) if k in vals)
    if abs(vals[m] - rate) <= min(0.02, gap / 2):
        return m, f"the rate {rate:.4g} of {method} implies m = {m} (rate {text} = {vals[m]:.4g})"
    return None, f"the rate {rate:.4g} matches no multiplicity of {method} (rate {text})"


def _theory_constant(method: str | None, hp: Any) -> tuple[float | None, str]:
    """Asymptotic error constant at a simple root (shared/REFERENCES.md §1), c_k = f^(k)(r)/(k! f'(r))."""
    if hp is None or method is None or (hp.multiplicity or 1) != 1 or len(hp.derivatives) < 3:
        return None, ""
    d1, d2, d3 = hp.derivatives[:3]
    if not d1:
        return None, ""
    c2, c3 = d2 / (2 * d1), d3 / (6 * d1)
    table = {
        "newton": (abs(c2), "|f''/(2f')|"),
        "steffensen": (abs(c2 * (1 + d1)), "|c2·(1 + f'(r))|"),
        "secant": (abs(c2) ** (GOLDEN - 1), "|f''/(2f')|^(φ−1)"),
        "iqi": (abs(2 * c2 * c2 - c3) ** ((1.8392867552141612 - 1) / 2), "|2c2² − c3|^((p−1)/2)"),
        "halley": (abs(c2 * c2 - c3), "|c2² − c3|"),
    }
    return table.get(method, (None, ""))


def _measure(
    L: NDArray[np.float64], ref: _Ref, floor: float, opts: _Options, *, method: str | None,
    evals: NDArray[np.int64] | None, log_res: NDArray[np.float64] | None, digits: int | None, basis: str,
    source: str, notes: list[str], floor_note: str = "", floors: NDArray[np.float64] | None = None,
) -> OrderEstimate:
    from ._methods import METHODS

    log_floor = np.maximum(math.log10(floor) if floor > 0 else -np.inf,
                           np.nan_to_num(floors, nan=-np.inf) if floors is not None else -np.inf)
    a = _analyse(L, np.broadcast_to(log_floor, L.shape).astype(np.float64), opts.min_points)
    if ref.kind == "differences" and a.label == "sublinear" and not a.drop >= 100:
        a.label, a.value, a.spread, a.rate, a.rate_spread = "not converging", math.nan, math.nan, None, None
        a.notes.append(f"without a root, steps that shrink by only a factor {a.drop:.3g} cannot tell slow "
                       "convergence from a slow drift away (Newton on x·e^(−x) drifts to infinity this way)")
        a.window, a.points = None, 0
    cls = METHODS.get(method or "")
    nominal = float(cls.nominal_order) if cls is not None else None
    est: dict[str, Any] = {}
    # evaluations per step over the window, and efficiency
    d: float | None = None
    if a.window is not None and evals is not None and len(evals) == len(L):
        lo, hi = (a.window[0] - 1, a.window[1] + 2) if a.rate is None else (a.window[0], a.window[1] + 2)
        steps = np.diff(evals[max(lo, 0) : hi])
        d = float(np.median(steps)) if len(steps) else None
    if d is None:
        d = opts.evals_per_step if opts.evals_per_step is not None else (float(cls.evals_per_step) if cls else None)
    if d is not None and math.isfinite(a.value) and a.value > 0:
        est["efficiency"] = float(a.value ** (1 / d))
    if cls is not None:
        est["efficiency_theory"] = cls.efficiency_index()
    # multiplicity
    mnotes: list[str] = []
    m: int | None = None
    if a.rate is not None and a.label == "linear" and ref.kind != "residuals":
        m, text = _multiplicity_from_rate(method, a.rate)
        if text:
            mnotes.append(text)
    hp = ref.hp
    if hp is not None:  # the function itself, at high precision, has the last word
        mnotes.append(f"reference root: m = {hp.multiplicity} from u = f/f'"
                      + (f", first nonvanishing derivative of order {hp.derivative_order}"
                         if hp.derivative_order is not None else ""))
        if m is not None and hp.multiplicity is not None and m != hp.multiplicity:
            mnotes.append(f"the rate suggests m = {m} but the function has m = {hp.multiplicity} at the root")
        m = hp.multiplicity
    if log_res is not None and a.window is not None and ref.kind in ("given", "high-precision"):
        ks = np.arange(max(a.window[0] - 1, 0), min(a.window[1] + 2, len(L)))
        ok = np.isfinite(L[ks]) & np.isfinite(log_res[ks])
        if np.sum(ok) >= 3 and np.ptp(L[ks][ok]) > 0.5:
            slope = float(np.polyfit(L[ks][ok], log_res[ks][ok], 1)[0])
            mnotes.append(f"|f(x_k)| ∝ e_k^{slope:.3f} over the window")
    # error constant against theory
    if (nominal is not None and a.rate is None and ref.kind != "residuals" and math.isfinite(a.value)
            and abs(a.value - nominal) <= 0.15 * nominal):
        assert a.window is not None
        lo = max(a.window[0] - 1, 0)
        ks = np.arange(lo + (a.window[1] + 1 - lo) // 2, a.window[1] + 1)  # the later half of the window
        logk = L[ks + 1] - nominal * L[ks]
        logk = logk[np.isfinite(logk)]
        if len(logk):
            est["error_constant"] = float(10.0 ** np.median(logk))
            theory, formula = _theory_constant(method, hp)
            est["error_constant_theory"] = theory
            est["error_constant_note"] = (f"median of e_(k+1)/e_k^{nominal:.4g} over the later half of the window"
                                          + (f"; theory {formula} at the root" if theory is not None else ""))
    if a.label == "linear" and nominal is not None and nominal > 1.5 and (hp is None or hp.multiplicity == 1):
        notes.append(f"{method} should converge with order {nominal:.3g} at a simple root but is linear here: "
                     "check the derivative (a wrong f' gives a linear rate |1 − f'(r)/g(r)|) or the function's smoothness")
    if a.label == "cubic" and method == "newton":
        notes.append("Newton is cubic where f''(r) = 0 (c2 = 0)")
    root = float(abs(ref.value)) if isinstance(ref.value, complex) else (
        float(ref.value) if ref.value is not None else None)
    with np.errstate(all="ignore"):
        errs = tuple(float(v) for v in 10.0**L)
    return OrderEstimate(
        value=a.value, spread=a.spread, window=a.window, points=a.points, label=a.label,
        reference=ref.label, reference_note=ref.note, root=root, rate=a.rate, rate_spread=a.rate_spread,
        multiplicity=m, multiplicity_note="; ".join(mnotes), evals_per_step=d, method=method, nominal_order=nominal,
        centre=a.centre, errors=errs, log_errors=tuple(float(v) for v in L), orders=tuple(float(v) for v in a.orders),
        evals=None if evals is None or len(evals) != len(L) else tuple(int(v) for v in evals),
        floor=floor, floor_note=floor_note, digits=digits, basis=basis, notes=(*notes, *a.notes), source=source,
        **est,
    )


def _measure_run(run: Any, root: Any, do_replay: bool, opts: _Options) -> OrderEstimate:
    problem = run.source if run.arithmetic != "complex" else None
    if run.arithmetic == "mpmath" and run.digits:
        opts = replace(opts, digits=max(opts.digits, min(run.digits, 2000)))
    exact = list(run.iterates_exact)
    xs = exact if run.arithmetic != "real" else [float(v) for v in run.iterates]
    unit = 10.0 ** (-run.digits) if run.arithmetic == "mpmath" and run.digits else EPS
    notes: list[str] = []
    if run.arithmetic == "complex":  # |x − r| in the complex plane; no high-precision root or replay
        ref = _complex_reference(xs, root, opts)
    else:
        ref = _choose_reference(problem, xs, root, opts, converged=run.converged, best=run.root,
                                has_residuals=True, unit=unit, notes=notes, residuals=list(run.values))
    floor = opts.floor if opts.floor is not None else (ref.floor_hp if run.arithmetic == "mpmath" else ref.floor)
    evals = run.evals_at_iterates
    L = _log_errors(xs, ref, list(run.values_exact))
    log_res: NDArray[np.float64] | None = _log_abs(list(run.values_exact))
    if ref.kind == "differences":
        evals, log_res = evals[1:], None
    source = f"{run.method} on {run.problem}"
    fnote = "given" if opts.floor is not None else (ref.floor_note if run.arithmetic == "real" else "")
    est = _measure(L, ref, floor, opts, method=run.method, evals=evals, log_res=log_res,
                   floors=_point_floors(xs, ref.kind, -run.digits if unit != EPS else math.log10(EPS), opts),
                   digits=run.digits if run.arithmetic == "mpmath" else None, basis="run", source=source,
                   notes=list(notes), floor_note=fnote)
    if not do_replay or run.arithmetic != "real" or problem is None:
        return est
    if ref.hp is None and ref.kind != "differences":
        return replace(est, notes=(*est.notes, "no high-precision replay: it needs a high-precision root"))
    rep = _replay_estimate(run, problem, ref, opts, source, notes)
    if isinstance(rep, str):
        return replace(est, notes=(*est.notes, rep))
    if rep.converged_estimate:
        return replace(rep, alternative=est)
    return replace(est, alternative=rep)


def _replay_estimate(run: Any, problem: Any, ref: _Ref, opts: _Options, source: str,
                     notes: list[str]) -> OrderEstimate | str:
    """The estimate on a high-precision replay, deepened (3 × the digits, at most twice) while its window has
    fewer than 4 settled single-step values."""
    from ._reference import reference_root, replay, rounding_floor

    digits, hp, floor_hp = opts.digits, ref.hp, ref.floor_hp
    same_steps = None if run.converged else max(len(run.steps), 1)
    best: OrderEstimate | str = "no high-precision replay"
    for attempt in range(3):
        if attempt:
            digits = min(3 * digits, 2000)
            if hp is not None:
                hp = reference_root(problem, float(hp.value), digits=digits)
                if not hp.confirmed:
                    break
                floor_hp = rounding_floor(problem, hp, digits=digits)[1]
        try:
            hp_run = replay(run, digits=digits, max_steps=same_steps)
        except ParameterError as exc:
            return f"no high-precision replay: {exc}"
        r = float(hp.value) if hp is not None else float(run.root)
        gap = abs(float(hp_run.root) - r) if _finite_floats([hp_run.root]) else math.inf
        if not gap <= max(1e-8 * max(abs(r), 1.0), 1e3 * ref.floor) and run.converged:
            return best if isinstance(best, OrderEstimate) else (
                f"the replay at {digits} digits ended {gap:.3g} away from the reference root (the double-precision "
                "path and the exact one parted), so it is not used")
        hp_ref = _Ref(ref.kind, None if hp is None else hp.value, hp, ref.note)
        if hp is None:
            floor_hp = 0.0  # differences: the per-point floors below carry the rounding
        L2 = _log_errors(list(hp_run.iterates_exact), hp_ref, None)
        deeper = f" ({opts.digits} digits gave too few settled points)" if attempt else ""
        hp_evals = hp_run.evals_at_iterates[1:] if hp is None else hp_run.evals_at_iterates
        rep = _measure(L2, hp_ref, floor_hp if opts.floor is None else 0.0, opts, method=run.method,
                       floors=_point_floors(list(hp_run.iterates_exact), ref.kind, -digits, opts),
                       evals=hp_evals, log_res=None if hp is None else _log_abs(list(hp_run.values_exact)), digits=digits,
                       basis="replay", source=f"{source}, replayed at {digits} digits{deeper}", notes=list(notes),
                       floor_note=f"4 units in the {digits}th digit of |r|, and the noise of f scaled to {digits} digits")
        if rep.converged_estimate or not isinstance(best, OrderEstimate):
            best = rep
        settled = rep.rate is not None or ("settled single-step orders" in rep.centre and rep.points >= 4)
        if settled or digits >= 2000 or same_steps is not None:
            break
    return best


def _measure_sequence(source: Any, root: Any, method: str | None, kind: Any, opts: _Options) -> OrderEstimate:
    from ._problem import as_problem
    from ._record import Recorder
    from ._sequence import as_sequence

    seq = as_sequence(source, kind=kind)
    problem = None
    if isinstance(source, Recorder) and opts.reference in ("auto", "high-precision"):
        try:
            problem = as_problem(getattr(source, "__wrapped__"))  # noqa: B009 (a slot mypy does not see)
        except ParameterError:
            problem = None
    method = method or (seq.method if seq.method else None)
    root = root if root is not None else seq.root
    xs: list[Any] = list(seq.exact) if seq.exact is not None else (
        [] if seq.iterates is None else [float(v) for v in seq.iterates])
    unit = 10.0 ** (-seq.digits) if seq.exact is not None and seq.digits else EPS
    converged = len(xs) >= 2 and float(abs(xs[-1] - xs[-2])) <= 1e3 * unit * max(abs(float(xs[-1])), 1e-300)
    notes: list[str] = []
    if opts.reference == "residuals" and seq.residuals is None:
        raise ParameterError("reference='residuals' needs residuals f(x_k); this sequence has iterates only.")
    ref = _choose_reference(problem, xs, root, opts, converged=converged, best=xs[-1] if xs else None,
                            has_residuals=seq.residuals is not None, unit=unit, notes=notes,
                            residuals=None if seq.residuals is None else list(seq.residuals))
    floor = opts.floor if opts.floor is not None else ref.floor
    res = None if seq.residuals is None else [float(v) for v in seq.residuals]
    L = _log_errors(xs, ref, res)
    evals = seq.evals
    if ref.kind == "differences" and evals is not None:
        evals = evals[1:]
    log_res = _log_abs(res) if res is not None and ref.kind in ("given", "high-precision") else None
    return _measure(L, ref, floor, opts, method=method, evals=evals, log_res=log_res, digits=seq.digits,
                    floors=None if seq.iterates is None else _point_floors(
                        xs, ref.kind, -seq.digits if seq.digits and unit != EPS else math.log10(EPS), opts),
                    basis="sequence", source=seq.label, notes=notes,
                    floor_note="given" if opts.floor is not None else ref.floor_note)


# -- equal-work comparison ----------------------------------------------------------------------
@dataclass(frozen=True, repr=False)
class MethodResult:
    """One method in a :class:`Comparison`: its run, its order estimate, and the work it took.

    ``errors`` are |x_k − r| against the comparison's common root and ``evals`` the cumulative
    evaluations when each iterate became known; ``evals_to_tol`` is the first count at which
    the error was at most the comparison's ``tol`` (None if never).
    """

    method: str
    run: Any
    estimate: OrderEstimate
    evals_to_tol: int | None
    errors: tuple[float, ...]
    evals: tuple[int, ...]

    def __repr__(self) -> str:
        return f"<MethodResult {self.method}: {self.estimate.label_text}, {self.evals_to_tol} evaluations to tol>"


@dataclass(frozen=True, repr=False)
class Comparison(Showable):
    """Several methods on one problem, compared at equal work (function evaluations, not iterations)."""

    problem: str
    root: float | None
    reference: str
    tol: float
    results: tuple[MethodResult, ...]
    notes: tuple[str, ...] = ()

    def fastest(self) -> MethodResult | None:
        """The method that reached ``tol`` with the fewest evaluations (None if none did)."""
        done = [r for r in self.results if r.evals_to_tol is not None]
        return min(done, key=lambda r: (r.evals_to_tol, r.method)) if done else None

    def __repr__(self) -> str:
        best = self.fastest()
        tail = f"fastest to {self.tol:g}: {best.method} ({best.evals_to_tol} evaluations)" if best else "none reached tol"
        return f"<Comparison of {len(self.results)} methods on {self.problem}: {tail}>"


def compare_methods(
    f: Any,
    methods: Sequence[str],
    *,
    start: float | None = None,
    bracket: Sequence[float] | None = None,
    root: float | None = None,
    fprime: Any = None,
    fprime2: Any = None,
    params: dict[str, float] | None = None,
    tol: float = 1e-10,
    max_evals: int = 100,
    replay: bool = True,
    digits: int = 60,
) -> Comparison:
    """Run several methods on one problem and compare them per function evaluation.

    Open methods start at ``start`` (default: the middle of ``bracket``); bracketing methods
    use ``bracket``. Every run is measured against one common root: ``root`` if given, else a
    high-precision root confirmed by a second method (see :func:`reference_root`), else the
    most accurate run's best iterate.

    Returns
    -------
    Comparison
        Per method: the run, its :class:`OrderEstimate` (with the efficiency index
        order^(1/evaluations per step)), and the evaluations it needed to reach ``tol``.

    Raises
    ------
    ParameterError
        No methods, an unknown method, no start and no bracket, or a bad ``tol``.
    BracketError
        A bracketing method was given a bracket without a sign change.

    Examples
    --------
    >>> c = compare_methods("cos(x) - x", ["newton", "secant", "bisection"], bracket=(0.0, 1.0), replay=False)
    >>> c.fastest().method, [r.evals_to_tol for r in c.results]
    ('secant', [9, 7, 32])
    """
    from ._methods import METHODS
    from ._problem import as_problem
    from ._reference import ReferenceRoot, reference_root
    from ._session import solve

    owner = "compare_methods"
    if isinstance(methods, str) or not methods or any(m not in METHODS for m in methods):
        raise ParameterError.expected("methods", owner, f"a non-empty list of names from {', '.join(sorted(METHODS))}",
                                      methods)
    if isinstance(tol, bool) or not isinstance(tol, (int, float)) or not tol > 0:
        raise ParameterError.expected("tol", owner, "a float > 0", tol)
    if start is None and bracket is None:
        raise ParameterError(f"{owner} needs start= (open methods) or bracket= (all methods); got neither.")
    problem = as_problem(f, fprime=fprime, fprime2=fprime2, params=params)
    x0 = start if start is not None else (float(bracket[0]) + float(bracket[1])) / 2  # type: ignore[index]
    runs = []
    for name in methods:
        if METHODS[name].needs_bracket:
            if bracket is None:
                raise ParameterError(f"{name} needs a bracket; pass bracket=(a, b) to {owner}.")
            runs.append(solve(problem, name, bracket=bracket, max_evals=max_evals))
        else:
            runs.append(solve(problem, name, start=x0, max_evals=max_evals))
    notes: list[str] = []
    good = [r for r in runs if _finite_floats([r.root])]
    best = min(good, key=lambda r: (not r.converged, abs(float(r.values[-1])) if len(r.values) else math.inf),
               default=None)
    common: Any = root
    reference = "given root"
    if common is None and best is not None:
        try:
            cand = reference_root(problem, float(best.root), digits=digits)
        except ParameterError as exc:
            notes.append(f"no high-precision root: {exc}")
            cand = None
        if cand is not None and cand.confirmed:
            common, reference = cand, "high-precision root"
        else:
            common, reference = float(best.root), "best iterate"
            notes.append(f"errors are measured against the best iterate of {best.method}, {float(best.root):.17g}")
    r_float = float(common.value) if isinstance(common, ReferenceRoot) else (None if common is None else float(common))
    results = []
    for run in runs:
        est = estimate_order(run, root=common if reference != "best iterate" else None, replay=replay, digits=digits)
        errs = tuple(abs(float(x) - r_float) for x in run.iterates) if r_float is not None else est.errors
        evals = tuple(int(v) for v in run.evals_at_iterates)
        hit = next((ev for e, ev in zip(errs, evals) if e <= tol), None)
        results.append(MethodResult(run.method, run, est, hit, errs, evals))
    label = problem.label
    return Comparison(label, r_float, reference, float(tol), tuple(results), tuple(notes))
