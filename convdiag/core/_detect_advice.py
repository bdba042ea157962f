"""Remedies shared by the detectors: a bracket searched near a point, or the same run with new settings.

Rule: when you gave ``diagnose(..., bracket=(lo, hi))`` — where you expect the root — and f
changes sign across it (two probes, or unchecked when the diagnosis may not evaluate f), every
remedy that needs a bracket uses that bracket, not one searched near the start: the root you
want is the one you bracketed, not the one nearest the start.
"""

from __future__ import annotations

import math
from typing import Any

from ._detect_path import Context, g
from ._detect_trace import EPS, Trace
from ._findings import Remedy

__all__ = ["bracket_remedy", "expected_bracket"]


def expected_bracket(ctx: Context, t: Trace) -> tuple[float, float] | None:
    """The bracket you gave when f changes sign across it (or it cannot be checked), else None."""
    if ctx.bracket is None:
        return None
    if "expected" not in ctx.cache:
        lo, hi = ctx.bracket
        verdict: Any = ctx.bracket
        pr = ctx.prober
        if pr.available and pr.remaining >= 2 and t.f is not None:
            try:
                f_lo, f_hi = pr(lo), pr(hi)
            except Exception:  # noqa: BLE001 - budget
                f_lo = f_hi = math.nan
            if math.isfinite(f_lo) and math.isfinite(f_hi):
                ctx.cache["expected values"] = (f_lo, f_hi)
                if not (f_lo == 0 or f_hi == 0 or (f_lo < 0) != (f_hi < 0)):
                    verdict = None
        ctx.cache["expected"] = verdict
    found: tuple[float, float] | None = ctx.cache["expected"]
    return found


def bracket_remedy(ctx: Context, t: Trace, near: float | None, why: str) -> Remedy:
    """Hybrid on the bracket you gave (when f changes sign across it), else on a root bracket found near ``near``."""
    user = expected_bracket(ctx, t)
    if user is not None:
        checked = "expected values" in ctx.cache
        return Remedy("hybrid", bracket=user, note=why + "; the bracket you expected the root in" + (
            " (f changes sign across it)" if checked else " (not checked: the diagnosis may not evaluate f)"))
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
