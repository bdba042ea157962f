"""The widgets' only doors into core features that arrive in separate modules.

Each adapter looks the feature up when it is called and returns None (or
raises :class:`Unavailable`) when that part of convdiag is not in this
version yet, so a view can say "not available yet" instead of failing.
Views call these; they never compute an order, a verdict or a basin map
themselves.
"""

from __future__ import annotations

import dataclasses
import importlib
from collections.abc import Callable, Sequence
from typing import Any

__all__ = [
    "Unavailable",
    "available",
    "basin_map",
    "compare",
    "diagnose",
    "find_brackets",
    "order_estimate",
    "run_prefix",
]


class Unavailable(LookupError):
    """A feature of convdiag that this version does not have yet."""


def _lookup(module: str, name: str) -> Callable[..., Any] | None:
    """``convdiag.<name>`` if exported, else ``convdiag.core.<module>.<name>``, else None."""
    import convdiag

    fn = getattr(convdiag, name, None)
    if callable(fn):
        return fn  # type: ignore[no-any-return]
    try:
        mod = importlib.import_module(f"convdiag.core.{module}")
    except ImportError:
        return None
    fn = getattr(mod, name, None)
    return fn if callable(fn) else None


def available(feature: str) -> bool:
    """Whether ``order``, ``diagnose``, ``compare``, ``brackets`` or ``basin`` is in this version."""
    where = {"order": ("_order", "estimate_order"), "diagnose": ("_diagnose", "diagnose"),
             "compare": ("_order", "compare_methods"), "brackets": ("_brackets", "find_brackets"),
             "basin": ("_basin", "basin_map")}[feature]
    return _lookup(*where) is not None


def run_prefix(session: Any) -> Any:
    """The session's run cut at the cursor: the steps up to ``session.position`` (a plain Run)."""
    run = session.run
    n = session.position
    if n >= len(run.steps):
        return run
    return dataclasses.replace(run, steps=run.steps[:n], stop_reason="in-progress", converged=False,
                               message=f"{n} of {len(run.steps)} computed steps shown.")


def order_estimate(run: Any, *, final: bool = False) -> Any:
    """``estimate_order(run)``: the observed order so far, or None when the order module is missing.

    While stepping (``final=False``) the high-precision replay is skipped to keep a step fast.
    """
    fn = _lookup("_order", "estimate_order")
    if fn is None or len(run.starts) + len(run.steps) < 3:
        return None
    return fn(run) if final else fn(run, replay=False)


def diagnose(run: Any) -> Any:
    """``convdiag.diagnose(run)`` -> Diagnosis (verdict, findings), or None when not available yet."""
    fn = _lookup("_diagnose", "diagnose")
    return None if fn is None else fn(run)


def find_brackets(f: Any, *, domain: tuple[float, float], params: dict[str, float] | None = None,
                  max_evals: int = 1000) -> Any:
    """``find_brackets(f, domain=...)`` -> BracketSearch; raises :class:`Unavailable` if missing."""
    fn = _lookup("_brackets", "find_brackets")
    if fn is None:
        raise Unavailable("the bracket search (convdiag.find_brackets) is not available yet")
    return fn(f, domain=domain, params=params, max_evals=max_evals)


def basin_map(f: Any, method: str, *, domain: tuple[float, float], n: int, params: dict[str, float] | None = None,
              max_evals: int = 100) -> Any:
    """``basin_map(f, method, interval=domain, shape=n)`` -> BasinMap (per start: the root reached,
    evaluations, outcome); raises :class:`Unavailable` when the basin module is missing."""
    fn = _lookup("_basin", "basin_map")
    if fn is None:
        raise Unavailable("the basin map (convdiag.core._basin) is not available yet")
    return fn(f, method, interval=domain, shape=n, params=params, max_evals=max_evals)


def compare(f: Any, methods: Sequence[str], *, start: float, bracket: tuple[float, float] | None,
            params: dict[str, float] | None, max_evals: int, tol: float = 1e-10) -> Any:
    """``compare_methods(...)`` -> Comparison (runs, order estimates, evaluations to ``tol`` against one
    common root); raises :class:`Unavailable` when the order module does not have it yet."""
    fn = _lookup("_order", "compare_methods")
    if fn is None:
        raise Unavailable("the method comparison (convdiag.compare_methods) is not available yet")
    return fn(f, list(methods), start=start, bracket=bracket, params=params, max_evals=max_evals, tol=tol)
