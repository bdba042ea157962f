"""Remedies shared by the detectors: a bracket searched near a point, or the same run with new settings."""

from __future__ import annotations

import math
from typing import Any

from ._detect_path import Context, g
from ._detect_trace import EPS, Trace
from ._findings import Remedy

__all__ = ["bracket_remedy"]


def bracket_remedy(ctx: Context, t: Trace, near: float | None, why: str) -> Remedy:
    """Hybrid on the best root bracket found near ``near`` (searched on the probe budget)."""
    if near is None or not math.isfinite(near):
        near = float(t.xs[t.best_index()]) if t.n else 0.0
    key = f"bracket near {near!r}"
    if key in ctx.cache:
        found: Remedy = ctx.cache[key]
        return found
    pr = ctx.prober
    remedy = Remedy("hybrid", near=near, note=why + f"; solve() first searches a bracket near {g(near)}")
    if pr.available and pr.remaining >= 12 and t.f is not None:
        from ._brackets import find_brackets

        try:
            res = find_brackets(t.problem if t.problem is not None else t.f, near=near,
                                max_evals=min(pr.remaining, 60))
        except Exception:  # noqa: BLE001 - the search is advice only; solve() searches again
            res = None
        if res is not None:
            pr.spend(res.evaluations)
            if res.roots:
                c = res.roots[0]
                scale = max(1.0, abs(near))
                # a root at (or within rounding of) 0: a relative tolerance would never close the bracket
                at_zero = c.lo <= 0 <= c.hi or min(abs(c.lo), abs(c.hi)) <= 1e-8 * scale
                if c.lo == c.hi:  # the search hit f = 0 exactly: the root itself is known
                    remedy = Remedy("newton", start=(c.lo,), note=why + f"; f is exactly 0 at {g(c.lo, 17)}, found "
                                    f"near {g(near)}")
                else:
                    remedy = Remedy("hybrid", bracket=(c.lo, c.hi), xtol=4 * EPS * scale if at_zero else None,
                                    note=why + f"; bracket found near {g(near)} ({c.reason[:80]})"
                                    + ("; an absolute tolerance because the root is at 0" if at_zero else ""))
    ctx.cache[key] = remedy
    return remedy


def _bracketing(method: str) -> bool:
    from ._methods import METHODS

    cls = METHODS.get(method)
    return bool(cls is not None and cls.needs_bracket)


def _remedy_same(t: Trace, **settings: Any) -> Remedy:
    """The same method, start and bracket with changed settings."""
    method = t.method or "hybrid"
    if _bracketing(method) or (t.method is None and t.brackets is not None):
        br = t.bracket0 or ((float(min(t.xs[0], t.xs[1])), float(max(t.xs[0], t.xs[1]))) if t.n >= 2 else None)
        return Remedy("hybrid" if t.method is None else method, bracket=br, **settings)
    x0 = t.starts if t.starts else (float(t.xs[0]),)
    return Remedy(method if t.method else "secant", start=tuple(x0), **settings)
