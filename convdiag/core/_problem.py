"""A function to solve, with where its derivatives come from.

:func:`as_problem` accepts a Python callable, a sympy expression, an
expression string (parsed safely by ``_expr``) or a ``Problem``, plus
optional derivatives and model parameters (``f(x, **params)``).

Derivative sources, in order of preference:

``user``
    the caller passed ``fprime`` (and ``fprime2``).
``symbolic``
    the function is an expression; sympy differentiates it.
``complex-step``
    the callable accepts complex numbers: f'(x) = Im f(x + ih) / h with
    h = 1e-20. On first use the complex step is checked once against a
    central difference; if they disagree (the function is not
    complex-analytic, e.g. it uses ``abs``), convdiag falls back.
``central-difference``
    (f(x + h) - f(x - h)) / 2h with h = eps^(1/3) max(1, |x|).
"""

from __future__ import annotations

import functools
import inspect
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from typing import Any, Literal

from ..errors import ParameterError

__all__ = ["DerivativeSource", "Problem", "as_problem"]

DerivativeSource = Literal["user", "symbolic", "complex-step", "central-difference", "auto"]


def _is_sympy(obj: Any) -> bool:
    return type(obj).__module__.startswith("sympy")


def _callable_name(f: Any) -> str:
    name = getattr(f, "__name__", None) or type(f).__name__
    return "function" if name == "<lambda>" else str(name)


@dataclass
class Problem:
    """A scalar function f(x), its derivative sources and its parameters.

    Build it with :func:`as_problem`. ``f``, ``fprime`` and ``fprime2``
    are plain callables of x (parameters already bound). ``expression`` is
    the parsed expression (``convdiag.core._expr.Expression``) when the
    problem came from text or sympy, else None.
    """

    f: Callable[[Any], Any]
    label: str
    fprime: Callable[[Any], Any] | None = None
    fprime2: Callable[[Any], Any] | None = None
    derivative_source: DerivativeSource = "auto"
    second_derivative_source: str = "central-difference"
    expression: Any = None
    params: dict[str, float] = field(default_factory=dict)
    raw: Any = None  # the user's original callable (unbound), for re-binding parameters
    raw_fprime: Any = None
    raw_fprime2: Any = None

    @property
    def is_expression(self) -> bool:
        return self.expression is not None

    def with_params(self, **params: float) -> Problem:
        """The same problem with some parameter values changed."""
        merged = {**self.params, **params}
        if self.expression is not None:
            return _from_expression(
                self.expression,
                params=merged,
                fprime=None if self.derivative_source == "symbolic" else self.fprime,
                label=self.label,
            )
        if self.raw is None:
            raise ParameterError(f"{self.label} takes no parameters; got {sorted(params)}.")
        return as_problem(
            self.raw, fprime=self.raw_fprime, fprime2=self.raw_fprime2, params=merged, label=self.label
        )

    def mpmath_functions(self) -> tuple[Callable[[Any], Any], Callable[[Any], Any] | None, Callable[[Any], Any] | None]:
        """(f, f', f'') that evaluate in mpmath arithmetic at the current ``mp.dps``.

        For expressions these are exact symbolic translations. For
        callables, ``f`` itself is returned (it may or may not accept mpmath
        numbers; the caller tries), with no derivatives.
        """
        if self.expression is not None:
            e = self.expression
            return e.mpmath(self.params), e.diff(1).mpmath(self.params), e.diff(2).mpmath(self.params)
        return self.f, None, None

    def __repr__(self) -> str:
        return f"<Problem {self.label}, derivative: {self.derivative_source}>"


def _from_expression(
    expr: Any,
    *,
    params: Mapping[str, float] | None,
    fprime: Any = None,
    label: str | None = None,
) -> Problem:
    params = dict(params or {})
    f = expr.numeric(params)
    d1 = expr.diff(1)
    d2 = d1.diff(1)
    if fprime is not None:
        fp = _derivative_callable(fprime, params, expr.variable, "fprime")
        source: DerivativeSource = "user"
    else:
        fp = d1.numeric(params)
        source = "symbolic"
    return Problem(
        f=f,
        label=label or expr.text,
        fprime=fp,
        fprime2=d2.numeric(params),
        derivative_source=source,
        second_derivative_source="symbolic",
        expression=expr,
        params=params,
        raw=None,
    )


def _derivative_callable(d: Any, params: Mapping[str, float], variable: str, name: str) -> Callable[[Any], Any]:
    if isinstance(d, str) or _is_sympy(d):
        from ._expr import parse_expression

        e = parse_expression(d, variable=variable) if isinstance(d, str) else _expression_from_sympy(d, variable)
        fn: Callable[[Any], Any] = e.numeric(params)
        return fn
    if callable(d):
        return _bind(d, params)
    raise ParameterError.expected(name, "as_problem", "a callable, an expression string or a sympy expression", d)


def _expression_from_sympy(obj: Any, variable: str | None) -> Any:
    from ._expr import parse_expression, sympy_to_text
    from ._expr_reader import _CONSTANTS, FUNCTIONS

    free = sorted(obj.free_symbols, key=lambda s: s.name)
    clash = [s.name for s in free if s.name in _CONSTANTS or s.name in FUNCTIONS]
    if clash:  # the text round trip would read them as the constant or the function of the same name
        name = clash[0]
        what = "the constant" if name in _CONSTANTS else "the function"
        raise ParameterError(
            f"The sympy symbol {name!r} has the name of {what} {name!r} in convdiag's expressions, so it would be "
            f"read as that, not as your symbol. Rename the symbol (a descriptive name such as sympy.Symbol('ecc') "
            f"for an eccentricity) and pass its value under the new name in params.")
    if variable is None:
        names = [s.name for s in free]
        variable = "x" if "x" in names or not names else names[0]
    # Round-trip through text so that the same whitelist applies to sympy input.
    text = sympy_to_text(obj)
    return parse_expression(text, variable=variable)


def _bind(f: Callable[..., Any], params: Mapping[str, float]) -> Callable[[Any], Any]:
    if not params:
        return f
    return functools.partial(f, **params)


def _check_params_accepted(f: Callable[..., Any], params: Mapping[str, float], label: str) -> None:
    try:
        sig = inspect.signature(f)
    except (TypeError, ValueError):
        return
    kinds = {p.kind for p in sig.parameters.values()}
    if inspect.Parameter.VAR_KEYWORD in kinds:
        return
    names = set(sig.parameters)
    unknown = sorted(set(params) - names)
    if unknown:
        known = [n for n in list(sig.parameters)[1:]]
        raise ParameterError(
            f"{label} has no parameter {', '.join(map(repr, unknown))}; "
            f"its parameters after x are {known or 'none'}."
        )


def as_problem(
    f: Any,
    *,
    fprime: Any = None,
    fprime2: Any = None,
    params: Mapping[str, float] | None = None,
    variable: str | None = None,
    label: str | None = None,
) -> Problem:
    """Turn a callable, sympy expression or expression string into a :class:`Problem`.

    Parameters
    ----------
    f : callable, str, sympy expression or Problem
        ``f(x)`` or ``f(x, **params)``; text like ``"x**3 - 2*x + 2"``.
    fprime, fprime2 : callable, str or sympy expression, optional
        Derivatives. Given ones win over every automatic source.
    params : mapping, optional
        Model parameters, passed as keywords to a callable or substituted
        into an expression.
    variable : str, optional
        The unknown's name in an expression (default ``x``).

    Raises
    ------
    ParameterError
        ``f`` is none of the accepted kinds, or a parameter is unknown.
    ExpressionError
        The expression text was refused.

    Examples
    --------
    >>> from convdiag import as_problem
    >>> p = as_problem("x**2 - a", params={"a": 2.0})
    >>> p.derivative_source, float(p.fprime(3.0))
    ('symbolic', 6.0)
    """
    if isinstance(f, Problem):
        if params:
            f = f.with_params(**params)
        if fprime is not None or fprime2 is not None:
            raise ParameterError("Pass derivatives when the problem is first built, not to an existing Problem.")
        problem: Problem = f
        return problem
    if isinstance(f, str) or _is_sympy(f):
        from ._expr import parse_expression

        expr = (
            parse_expression(f, variable=variable or "x")
            if isinstance(f, str)
            else _expression_from_sympy(f, variable)
        )
        problem = _from_expression(expr, params=params, fprime=fprime, label=label)
        if fprime2 is not None:
            problem.fprime2 = _derivative_callable(fprime2, problem.params, expr.variable, "fprime2")
            problem.second_derivative_source = "user"
        return problem
    if not callable(f):
        raise ParameterError.expected(
            "f", "as_problem", "a callable, an expression string or a sympy expression", f
        )
    params = dict(params or {})
    name = label or _callable_name(f)
    _check_params_accepted(f, params, name)
    problem = Problem(
        f=_bind(f, params), label=name, params=params, raw=f, raw_fprime=fprime, raw_fprime2=fprime2
    )
    if fprime is not None:
        problem.fprime = _derivative_callable(fprime, params, variable or "x", "fprime")
        problem.derivative_source = "user"
    if fprime2 is not None:
        problem.fprime2 = _derivative_callable(fprime2, params, variable or "x", "fprime2")
        problem.second_derivative_source = "user"
    return problem
