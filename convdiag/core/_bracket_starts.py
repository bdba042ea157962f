"""Recommended starts for a root bracket, each checked by one cheap step; the ranking of candidates.

For a root bracket found by :func:`~convdiag.core._brackets.find_brackets`:
a Newton start whose tangent step lands inside the bracket (f' from the
problem, else the bracket's secant slope), a secant pair across the closest
sign change, and an IQI triple whose first step stays inside. :func:`rank_candidates`
puts the root brackets first (nearest the guess, then cleanest) and adds the advice.
"""

from __future__ import annotations

import itertools
import math
from collections.abc import Sequence
from dataclasses import replace

from ._bracket_sampler import Sampler
from ._brackets import Candidate, _g, _opposite, advice
from ._step import Halt

__all__ = ["rank_candidates", "recommend_starts"]


def _false_position(a: float, b: float, fa: float, fb: float) -> float:
    c = a - fa * (b - a) / (fb - fa)
    return c if a < c < b else a + (b - a) / 2


def _iqi_point(xs: Sequence[float], fs: Sequence[float]) -> float:
    """Inverse quadratic interpolation (Lagrange form of x as a function of f) at f = 0."""
    total = 0.0
    for i, (xi, fi) in enumerate(zip(xs, fs)):
        term = xi
        for j, fj in enumerate(fs):
            if j != i:
                term *= fj / (fj - fi)
        total += term
    return total


def recommend_starts(sampler: Sampler, c: Candidate) -> Candidate:
    """``c`` with its recommended starts and what was checked for each (evaluations go through ``sampler``)."""
    lo, hi = c.lo, c.hi
    if lo == hi:
        return replace(c, newton=c.x, checks=(f"f({_g(c.x, 17)}) = 0 exactly: this is the root",))
    if c.evidence.get("exact_zero"):
        far = lo if abs(c.f_lo) >= abs(c.f_hi) else hi
        return replace(
            c, newton=c.x, secant=(far, c.x), iqi=(lo, hi, c.x),
            checks=(f"f({_g(c.x, 17)}) = 0 exactly: every start that includes it stops there at once",),
        )
    pts = {lo: c.f_lo, hi: c.f_hi}
    checks: list[str] = []
    newton: float | None = None
    slope = (c.f_hi - c.f_lo) / (hi - lo)
    src = (
        f"f' from the problem ({sampler.derivative_source})"
        if sampler.fprime is not None
        else "checked with the secant slope of the bracket, as f has no derivative to hand"
    )
    try:
        for x0 in dict.fromkeys((c.x, _false_position(lo, hi, c.f_lo, c.f_hi), lo + (hi - lo) / 2)):
            f0 = pts[x0] if x0 in pts else sampler(x0)
            pts[x0] = f0
            if f0 == 0:
                newton = x0
                checks.append(f"Newton from {_g(x0, 17)}: f = 0 there exactly")
                break
            d = sampler.df(x0) if sampler.fprime is not None else slope
            x1 = x0 - f0 / d if math.isfinite(d) and d != 0 and math.isfinite(f0) else math.nan
            if lo <= x1 <= hi:
                newton = x0
                checks.append(f"Newton from {_g(x0, 17)}: the tangent step lands at {_g(x1, 17)}, inside the "
                              f"bracket ({src})")
                break
            checks.append(f"Newton from {_g(x0, 17)} rejected: the tangent step goes to {_g(x1)}, outside ({src})")
    except Halt:
        checks.append("the budget ran out while checking the Newton start")
    xs = sorted(x for x in pts if math.isfinite(pts[x]))
    pairs = [(a, b) for a, b in itertools.pairwise(xs) if _opposite(pts[a], pts[b])]
    secant: tuple[float, float] | None = None
    iqi: tuple[float, float, float] | None = None
    if pairs:
        a, b = min(pairs, key=lambda p: p[1] - p[0])
        secant = (a, b) if abs(pts[b]) <= abs(pts[a]) else (b, a)
        checks.append(f"secant from ({_g(secant[0], 17)}, {_g(secant[1], 17)}): f changes sign between them, so "
                      "the first step (the false-position point) stays inside")
        for x3 in sorted((x for x in xs if x not in secant), key=lambda x: min(abs(x - a), abs(x - b))):
            triple = (x3, secant[0], secant[1])
            fs = [pts[t] for t in triple]
            if len(set(fs)) < 3:
                continue
            p = _iqi_point(triple, fs)
            if lo <= p <= hi:
                iqi = triple
                checks.append(f"IQI from ({', '.join(_g(t, 17) for t in triple)}): the first step lands at "
                              f"{_g(p, 17)}, inside the bracket")
                break
            checks.append(f"IQI from ({', '.join(_g(t) for t in triple)}) rejected: the first step goes to "
                          f"{_g(p)}, outside the bracket")
    return replace(c, newton=newton, secant=secant, iqi=iqi, checks=tuple(checks))


def rank_candidates(found: Sequence[Candidate], *, near: float | None, touch_rtol: float) -> tuple[Candidate, ...]:
    """Root brackets first (rank 1, 2, ...: nearest ``near``, then cleanest), then the others by position, with advice.

    A clean root bracket has a checked Newton start and |f| shrinking like width^q with 0.7 <= q <= 1.5 (a
    simple root), or holds an exact zero.
    """

    def clean(c: Candidate) -> bool:
        q = c.evidence.get("exponent", math.nan)
        return c.newton is not None and (bool(c.evidence.get("exact_zero")) or 0.7 <= q <= 1.5)

    def key(c: Candidate) -> tuple[float, bool, float]:
        dist = 0.0 if near is None or c.lo <= near <= c.hi else min(abs(c.lo - near), abs(c.hi - near))
        return (dist, not clean(c), c.x)

    ranked = [replace(c, rank=i + 1) for i, c in enumerate(sorted((c for c in found if c.kind == "root"), key=key))]
    others = sorted((c for c in found if c.kind != "root"), key=lambda c: (c.x, c.kind))
    return tuple(replace(c, recommend=advice(c, touch_rtol)) for c in ranked + others)
