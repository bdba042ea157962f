"""The window engine of :func:`~convdiag.core._order.estimate_order`: from log10 errors to a labelled estimate.

:func:`_analyse` takes log10 errors and log10 rounding floors and finds the
window where the single-step orders (or rates) have settled, following the
window rules in the notes of :mod:`convdiag.core._order`. Plain numpy: it
knows nothing of runs, references or methods.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from numpy.typing import NDArray


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
    block: int = 1  # steps per block the order was measured over (_blocks)


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
        if _blocks(L, start, end, min_points, a) or _growth(L, start, end, a):
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


def _blocks(L: NDArray[np.float64], start: int, end: int, min_points: int, a: _Analysis) -> bool:
    """Superlinear in blocks of p = 2, 3 or 4 steps (Illinois-type methods repeat a pattern of p steps).

    The block order Q_k = ((L_(k+p) − L_k) / (L_k − L_(k−p)))^(1/p), the single-step order's formula applied to
    p-step log-decrements, per step; accepted for the smallest p whose last values settle (the single-step
    rule's tolerance, at least max(min_points, 3) of them) at 1.2 or more.
    """
    for p in (2, 3, 4):
        ks = list(range(start + p, end - p))
        if len(ks) < max(min_points, 3):
            break
        qs = []
        with np.errstate(all="ignore"):
            for k in ks:
                num, den = L[k + p] - L[k], L[k] - L[k - p]
                qs.append(float((num / den) ** (1 / p)) if num < 0 and den < 0 else math.nan)

        def tol(med: float) -> float:
            return max(0.1, 0.05 * abs(med))

        n = _settled(qs, tol)
        if n >= max(min_points, 3) and float(np.median(qs[-n:])) >= 1.2:
            win = np.asarray(qs[-n:])
            a.value, a.spread = float(np.median(win[n // 2:])), float((win.max() - win.min()) / 2)
            a.window, a.points = (ks[-n] - p, ks[-1] + p - 1), n
            a.label = "quadratic" if abs(a.value - 2) <= 0.1 else "cubic" if abs(a.value - 3) <= 0.15 else "superlinear"
            a.centre = f"median of the last {n - n // 2} of {n} settled {p}-step block orders, per step"
            a.block = p
            a.notes.append(f"single-step orders do not settle (the method repeats a pattern of {p} steps, as "
                           f"Illinois-type methods do); the order is measured over blocks of {p} steps")
            return True
    return False


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
