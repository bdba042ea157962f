"""The arguments of :func:`~convdiag.core._session.solve`, checked and turned into what a session needs.

:func:`session_arguments` looks up the method, builds the problem, checks the
tolerances and budgets (:func:`_validate_settings`, also used by the vector
and sweep drivers) and resolves the starts and bracket (:func:`resolve_starts`),
in the order ``solve`` documents; bad values raise a ``ParameterError`` in the
house template.
"""

from __future__ import annotations

import math
import numbers
from collections.abc import Sequence
from typing import Any

from ..errors import ParameterError
from ._evaluate import Arithmetic
from ._methods import METHODS
from ._problem import Problem, as_problem
from ._run import Settings
from ._step import Method, midpoint

__all__ = ["resolve_starts", "session_arguments"]

EPS = 2.220446049250313e-16


def _method(method: str | Method | type[Method], owner: str) -> Method:
    if isinstance(method, Method):
        return method
    if isinstance(method, type) and issubclass(method, Method):
        return method()
    if isinstance(method, str) and method in METHODS:
        return METHODS[method]()
    raise ParameterError(
        f"The 'method' parameter of {owner} must be one of {', '.join(sorted(METHODS))}. Got {method!r} instead."
    )


def _number(v: Any, name: str, owner: str, *, allow_complex: bool = False) -> Any:
    ok = isinstance(v, numbers.Real) and not isinstance(v, bool)
    if allow_complex and isinstance(v, numbers.Complex) and not isinstance(v, bool):
        ok = True
    if not ok and type(v).__module__.startswith("mpmath"):
        ok = True
    if not ok:
        raise ParameterError.expected(name, owner, "a finite number", v)
    try:
        z = complex(v)
    except (OverflowError, TypeError, ValueError):  # an int beyond the float range, an mpmath oddity
        raise ParameterError.expected(name, owner, "a finite number", v) from None
    if not (math.isfinite(z.real) and math.isfinite(z.imag)):
        raise ParameterError.expected(name, owner, "a finite number", v)
    return v


def _validate_settings(
    xtol: float, rtol: float, ftol: float, max_evals: int, max_time: float | None, max_steps: int | None, owner: str
) -> Settings:
    for name, val in (("xtol", xtol), ("rtol", rtol), ("ftol", ftol)):
        if not isinstance(val, numbers.Real) or isinstance(val, bool) or not (val >= 0 and math.isfinite(val)):
            raise ParameterError.expected(name, owner, "a finite float >= 0", val)
    if not isinstance(max_evals, numbers.Integral) or isinstance(max_evals, bool) or max_evals < 1:
        raise ParameterError.expected("max_evals", owner, "an int >= 1", max_evals)
    if max_time is not None and (
        not isinstance(max_time, numbers.Real) or isinstance(max_time, bool) or not 0 < max_time < math.inf
    ):  # an infinite budget is None: the settings stay JSON-ready
        raise ParameterError.expected("max_time", owner, "a finite float > 0 or None", max_time)
    if max_steps is not None and (
        not isinstance(max_steps, numbers.Integral) or isinstance(max_steps, bool) or max_steps < 1
    ):
        raise ParameterError.expected("max_steps", owner, "an int >= 1 or None", max_steps)
    return Settings(float(xtol), float(rtol), float(ftol), int(max_evals), max_time, max_steps)


def _default_starts(m: Method, x0: Any, n: int) -> list[Any]:
    d = 1e-4 * max(1, abs(x0))
    return [x0 + k * d for k in range(n)]


def resolve_starts(
    m: Method, start: Any, bracket: Sequence[Any] | None, owner: str, *, allow_complex: bool
) -> tuple[list[Any], tuple[Any, Any] | None, list[str]]:
    """Starting points for the method from what the user gave. Returns (points, bracket, notes)."""
    notes: list[str] = []
    if start is None:
        starts: list[Any] = []
    elif isinstance(start, (list, tuple)):
        starts = [_number(v, "start", owner, allow_complex=allow_complex) for v in start]
    else:
        starts = [_number(start, "start", owner, allow_complex=allow_complex)]
    br: tuple[Any, Any] | None = None
    if bracket is not None:
        if not isinstance(bracket, (list, tuple)) or len(bracket) != 2:
            raise ParameterError.expected("bracket", owner, "a pair (a, b)", bracket)
        a, b = (_number(v, "bracket", owner) for v in bracket)
        if a == b:
            raise ParameterError(f"The 'bracket' parameter of {owner} must have a < b. Got a = b = {a!r}.")
        if a > b:
            a, b = b, a
            notes.append("the bracket was given as (b, a); used (a, b)")
        br = (a, b)
    if m.needs_bracket:
        if br is None and len(starts) >= 2:
            a, b = sorted(starts[:2])
            if a == b:
                raise ParameterError(f"{m.name} needs a bracket with a < b; both starts are {a!r}.")
            br = (a, b)
        if br is None:
            raise ParameterError(
                f"{m.name} needs a bracket (a, b) where f changes sign; got "
                f"{'only the start ' + repr(starts[0]) if starts else 'no bracket'}. "
                "Pass bracket=(a, b) (command line: --bracket A B), or use convdiag.find_brackets "
                "to find one."
            )
        return list(br), br, notes
    if not starts:
        if br is None:
            raise ParameterError(
                f"{m.name} needs a start: pass start=x0 (command line: --start X) or bracket=(a, b)."
            )
        a, b = br
        starts = {1: [midpoint(a, b)], 2: [a, b], 3: [a, b, midpoint(a, b)]}[m.n_starts]
    if len(starts) > m.n_starts:
        raise ParameterError(f"{m.name} takes at most {m.n_starts} start(s); got {len(starts)}: {starts!r}.")
    if len(starts) < m.n_starts:
        extra = _default_starts(m, starts[-1], m.n_starts - len(starts) + 1)[1:]
        notes.append(f"{m.name} needs {m.n_starts} starts; added {', '.join(f'{v:.6g}' for v in extra)}")
        starts = starts + extra
    if len(set(starts)) < len(starts):
        raise ParameterError(f"The starts of {m.name} must be distinct. Got {starts!r}.")
    return starts, br, notes


def session_arguments(
    f: Any,
    method: str | Method | type[Method],
    *,
    start: Any,
    bracket: Sequence[float] | None,
    fprime: Any,
    fprime2: Any,
    params: dict[str, float] | None,
    xtol: float,
    rtol: float | None,
    ftol: float,
    max_evals: int,
    max_time: float | None,
    max_steps: int | None,
    digits: int | None,
    owner: str = "solve",
) -> tuple[Method, Problem, list[Any], tuple[Any, Any] | None, Settings, Arithmetic, list[str]]:
    """(method, problem, starts, bracket, settings, arithmetic, notes) for a :class:`Session`."""
    m = _method(method, owner)
    problem = as_problem(f, fprime=fprime, fprime2=fprime2, params=params)
    arithmetic: Arithmetic = "real"
    if digits is not None:
        if not isinstance(digits, int) or isinstance(digits, bool) or not 16 <= digits <= 10_000:
            raise ParameterError.expected("digits", owner, "an int between 16 and 10000 or None", digits)
        arithmetic = "mpmath"
    if rtol is None:
        rtol = 4 * EPS if digits is None else 4.0 * 10.0 ** (-digits)
    settings = _validate_settings(xtol, rtol, ftol, max_evals, max_time, max_steps, owner)
    starts, br, notes = resolve_starts(m, start, bracket, owner, allow_complex=not m.needs_bracket and digits is None)
    if any(isinstance(v, complex) or (hasattr(v, "imag") and v.imag != 0) for v in starts):
        arithmetic = "complex"
        starts = [complex(v) for v in starts]
    if arithmetic == "mpmath":
        import mpmath

        with mpmath.workdps(digits):
            starts = [mpmath.mpf(v) for v in starts]
            if br is not None:
                br = (mpmath.mpf(br[0]), mpmath.mpf(br[1]))
    else:
        starts = [float(v) if arithmetic == "real" else v for v in starts]
    return m, problem, starts, br, settings, arithmetic, notes
