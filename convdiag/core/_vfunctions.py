"""The user's functions on lanes: f, f', f'' called on arrays of iterates, checked lane by lane.

:func:`lane_functions` turns what the user gave (a callable, expression text,
a sympy expression or a :class:`~convdiag.core._problem.Problem`) into
:class:`LaneFunctions`. Expressions are differentiated symbolically and
lambdified for numpy; a callable that does not take arrays is called lane by
lane from its first failure on (slow, but each lane gets what a scalar call
gives). Every value is checked as the scalar evaluator checks it: a
non-finite value, a non-real value in real arithmetic, or an exception
becomes a per-lane stop reason.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from typing import Any

import numpy as np
from numpy.typing import NDArray

from ..errors import ParameterError
from ._outcomes import R

__all__ = ["LaneFunctions", "all_finite", "check_array", "lane_functions"]

Arr = NDArray[Any]


class LaneFunctions:
    """f, f', f'' called on the active lanes; lane by lane when a call on an array fails."""

    def __init__(self, fs: tuple[Callable[..., Any] | None, ...], source: str, vectorized: bool | None) -> None:
        self.fs, self.source = fs, source
        self.vectorized = vectorized
        self.notes: list[str] = []

    def call(self, which: int, x: Arr, p: dict[str, Any], cplx: bool) -> tuple[Arr, Arr | None]:
        """Values and per-lane reason codes (None when every lane is fine)."""
        fn = self.fs[which]
        assert fn is not None
        if self.vectorized is not False:
            try:
                with np.errstate(all="ignore"):
                    y = np.asarray(fn(x, **p))
            except Exception:  # noqa: BLE001  (f may not take arrays: tried lane by lane next)
                y = None
            if y is not None and y.shape == x.shape and y.dtype.kind in "fciub":
                self.vectorized = True
                return check_array(y, cplx)
            vals, codes = self._lanewise(fn, x, p, cplx)
            if y is not None or codes is None or not np.any(codes == R["function-raised"]):
                self.vectorized = False  # it does not take arrays: call it lane by lane from now on
                self.notes.append("the function does not take arrays; it was called lane by lane")
            return vals, codes
        return self._lanewise(fn, x, p, cplx)

    @staticmethod
    def _lanewise(fn: Callable[..., Any], x: Arr, p: dict[str, Any], cplx: bool) -> tuple[Arr, Arr | None]:
        from ._record import classify_value

        out = np.full(x.shape, np.nan, np.complex128 if cplx else np.float64)
        codes = np.zeros(x.shape, np.uint8)
        xs = x.tolist()
        cols = {k: (v.tolist() if isinstance(v, np.ndarray) else [v] * len(xs)) for k, v in p.items()}
        for i, xi in enumerate(xs):
            try:
                y = fn(xi, **{k: c[i] for k, c in cols.items()})
            except Exception:  # noqa: BLE001  (the user's code failed on this lane, as in the scalar driver)
                codes[i] = R["function-raised"]
                continue
            if cplx:
                try:
                    z = complex(y)
                except Exception:  # noqa: BLE001 - whatever the object raises, it is not a number
                    codes[i] = R["bad-value"]
                    continue
                out[i] = z
                if not (math.isfinite(z.real) and math.isfinite(z.imag)):
                    codes[i] = R["nonfinite-value"]
                continue
            v, status, _ = classify_value(y)
            out[i] = v
            if status != "ok":
                codes[i] = R["nonfinite-value" if status in ("nan", "inf") else "bad-value"]
        return out, (codes if codes.any() else None)


def all_finite(y: Arr) -> bool:
    """No NaN or infinity in ``y`` (a finite sum proves it for complex arrays, at a third of the cost)."""
    if y.dtype.kind == "c":
        with np.errstate(all="ignore"):  # a sum that overflows only sends us to the full test
            if np.isfinite(y.sum()):
                return True
    return bool(np.isfinite(y).all())


def check_array(y: Arr, cplx: bool) -> tuple[Arr, Arr | None]:
    """The values as the run's number type, and per-lane reason codes (None when every lane is fine)."""
    codes = None
    if not cplx and y.dtype.kind == "c":
        nonreal = y.imag != 0
        y = y.real.astype(np.float64)
        if nonreal.any():
            codes = np.where(nonreal, R["bad-value"], np.uint8(0)).astype(np.uint8)
            y[nonreal] = np.nan
    y = y.astype(np.complex128 if cplx else np.float64, copy=False)
    if all_finite(y):
        return y, codes
    fin = np.isfinite(y)
    if not fin.all():
        bad = np.where(fin, np.uint8(0), R["nonfinite-value"]).astype(np.uint8)
        codes = bad if codes is None else np.where(codes != 0, codes, bad)
    return y, codes


def lane_functions(f: Any, fprime: Any, fprime2: Any, names: list[str], variable: str, owner: str) -> LaneFunctions:
    from ._problem import Problem, _check_params_accepted, _is_sympy

    if isinstance(f, Problem):
        if f.expression is None and f.raw is None:
            raise ParameterError.expected("f", owner, "a callable, an expression string or a sympy expression", f)
        f, fprime, fprime2 = (f.expression, None, None) if f.expression is not None else (f.raw, f.raw_fprime,
                                                                                           f.raw_fprime2)
    if isinstance(f, str) or _is_sympy(f) or type(f).__name__ == "Expression":
        e = _expression(f, variable)
        unknown = sorted(set(names) ^ set(e.params))
        if unknown:
            raise ParameterError(
                f"The parameters of {e.text!r} are {list(e.params)}; got values for {sorted(names)} in {owner}."
            )
        fs = [_lambdify(e.diff(n), variable) for n in range(3)]
        if fprime is not None:
            fs[1] = _derivative(fprime, variable, owner)
        if fprime2 is not None:
            fs[2] = _derivative(fprime2, variable, owner)
        return LaneFunctions(tuple(fs), "symbolic" if fprime is None else "user", True)
    if not callable(f):
        raise ParameterError.expected("f", owner, "a callable, an expression string or a sympy expression", f)
    _check_params_accepted(f, dict.fromkeys(names, 0.0), getattr(f, "__name__", "f"))
    d1 = None if fprime is None else _derivative(fprime, variable, owner)
    d2 = None if fprime2 is None else _derivative(fprime2, variable, owner)
    return LaneFunctions((f, d1, d2), "user" if d1 is not None else "auto", None)


def _expression(f: Any, variable: str) -> Any:
    from ._expr import parse_expression

    if isinstance(f, str):
        return parse_expression(f, variable=variable)
    if _is_expression(f):
        return f
    import sympy

    return parse_expression(sympy.sstr(f), variable=variable)


def _is_expression(f: Any) -> bool:
    return hasattr(f, "sympy") and hasattr(f, "params") and hasattr(f, "diff")


def _lambdify(e: Any, variable: str) -> Callable[..., Any]:
    import sympy

    symbols = [sympy.Symbol(n, real=True) for n in (e.variable, *e.params)]
    fn = sympy.lambdify(symbols, e.sympy, modules="numpy", dummify=True)
    names = tuple(e.params)

    def lane_fn(x: Any, **p: Any) -> Any:
        with np.errstate(all="ignore"):
            out = np.asarray(fn(x, *(p[n] for n in names)))
        return np.broadcast_to(out, np.shape(x)).copy() if out.shape != np.shape(x) else out

    return lane_fn


def _derivative(d: Any, variable: str, owner: str) -> Callable[..., Any]:
    if isinstance(d, str) or _is_expression(d) or type(d).__module__.startswith("sympy"):
        return _lambdify(_expression(d, variable), variable)
    if callable(d):
        return d  # type: ignore[no-any-return]
    raise ParameterError.expected("fprime", owner, "a callable or an expression", d)

