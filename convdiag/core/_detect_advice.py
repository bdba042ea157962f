"""Remedies shared by the detectors: a bracket searched near a point, or the same run with new settings.

Rule: when you gave ``diagnose(..., bracket=(lo, hi))`` — where you expect the root — and f
changes sign across it (two probes, or unchecked when the diagnosis may not evaluate f), every
remedy that needs a bracket uses that bracket, not one searched near the start: the root you
want is the one you bracketed, not the one nearest the start.

Rule: a remedy hands over a bracket only where a sign change of f is known (the run's own
bracket, a rebuilt bracket history, or two first points with residuals of opposite signs).
A recording or sequence of an unknown method without one gets a bracket searched near its
best iterate (on the probe budget, or by ``Remedy.solve`` when it is applied).
"""

from __future__ import annotations

import math
from dataclasses import replace
from typing import Any

from ._detect_path import Context, g
from ._detect_trace import EPS, Trace
from ._findings import Remedy

__all__ = ["bracket_remedy", "expected_bracket", "known_bracket"]


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
    if key in ctx.cache:  # the search is shared; each finding says its own why
        found: Remedy = ctx.cache[key]
        return replace(found, note=why + found.note)
    pr = ctx.prober
    remedy = Remedy("hybrid", near=near, note=f"; solve() first searches a bracket near {g(near)}")
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
                    remedy = Remedy("newton", start=(c.lo,), note=f"; f is exactly 0 at {g(c.lo, 17)}, found "
                                    f"near {g(near)}")
                else:
                    remedy = Remedy("hybrid", bracket=(c.lo, c.hi), xtol=4 * EPS * scale if at_zero else None,
                                    note=f"; bracket found near {g(near)} ({c.reason[:80]})"
                                    + ("; an absolute tolerance because the root is at 0" if at_zero else ""))
    ctx.cache[key] = remedy
    return replace(remedy, note=why + remedy.note)


def _bracketing(method: str) -> bool:
    from ._methods import METHODS

    cls = METHODS.get(method)
    return bool(cls is not None and cls.needs_bracket)


def _signs_differ(fa: float, fb: float) -> bool:
    return bool(math.isfinite(fa) and math.isfinite(fb) and (fa == 0 or fb == 0 or (fa < 0) != (fb < 0)))


def known_bracket(t: Trace) -> tuple[float, float] | None:
    """A bracket the trace proves has a sign change, else None.

    The run's own bracket (a bracketing run started from a sign change), the first two points of a
    rebuilt bracket history (``_bracket_history`` checked their signs), or the first two points when
    their residuals are known, signed and of opposite signs. Never two points whose signs are unknown:
    a bracketing method cannot start there.
    """
    if t.bracket0 is not None:
        return t.bracket0
    if t.n < 2:
        return None
    a, b = float(t.xs[0]), float(t.xs[1])
    if not (math.isfinite(a) and math.isfinite(b)) or a == b:
        return None
    pair = (min(a, b), max(a, b))
    if t.brackets is not None:
        return pair
    if t.fs is not None and t.fs_signed and len(t.fs) >= 2 and _signs_differ(float(t.fs[0]), float(t.fs[1])):
        return pair
    return None


def _remedy_same(t: Trace, ctx: Context | None = None, **settings: Any) -> Remedy:
    """The same method, start and bracket with changed settings.

    A bracketing method (or a solver whose method is unknown) gets a bracket only when the trace
    proves a sign change across it (:func:`known_bracket`). Otherwise: a bracket searched near the
    best iterate (on the probe budget, :func:`bracket_remedy`), or — when the diagnosis cannot
    evaluate f — a remedy that searches one near the best iterate when it is applied. An open
    method the trace names is restarted from its start.
    """
    known = t.method is not None and not _bracketing(t.method)
    if known:
        x0 = t.starts if t.starts else (float(t.xs[0]),)
        return Remedy(str(t.method), start=tuple(x0), **settings)
    br = known_bracket(t)
    method = t.method if t.method is not None else "hybrid"
    if br is not None:
        return Remedy(method, bracket=br, **settings)
    note = str(settings.pop("note", "") or "")
    given = {k: v for k, v in settings.items() if v is not None}
    near = float(t.xs[t.best_index()]) if t.n else None
    why = (note or "the settings changed") + "; no sign change is known across the first points"
    if ctx is not None:
        found = bracket_remedy(ctx, t, near, why)
        if found.method == "hybrid" and method != "hybrid" and found.bracket is not None:
            found = replace(found, method=method)
        return replace(found, **given)
    return Remedy(method, near=near if near is not None and math.isfinite(near) else 0.0,
                  note=why + (f"; solve() first searches a bracket near {g(near)}" if near is not None else ""),
                  **given)
