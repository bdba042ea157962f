"""A safe expression language: math text in one variable, turned into sympy.

Text such as ``"x**3 - 2*x + 2"`` or ``"cos(x) = a*x"`` is read with ``ast.parse(..., mode="eval")`` and checked
against a whitelist before anything is built: numbers, ``+ - * / **``, parentheses, the variable, ``pi``, ``e``,
parameter names and calls of :data:`FUNCTIONS`. The sympy expression is then built node by node; user text never
reaches ``eval``, ``exec``, ``sympify`` or ``parse_expr``.

sympy's exact arithmetic and automatic simplification are kept on a leash, since both can run for hours: powers
are estimated in floats before sympy computes them (``9**9**9`` is refused at once); constants that overflow
doubles, are undefined or are not real are refused; powers of the variable keep exact exponents up to 10000 only,
larger ones become floats (sympy's polynomial code expands ``x**(p/q)`` to degree p); functions of the variable are
left unevaluated; ``abs`` and ``sign`` get the derivatives of real analysis. sympy and mpmath are imported only
when needed.

Reading the text (the whitelist check and the node-by-node build) is done in
``_expr_reader``; this module holds :class:`Expression` (derivatives, numpy and
mpmath functions) and :func:`parse_expression`. :data:`FUNCTIONS` is defined
there and re-exported here.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

import numpy as np

from ..errors import ExpressionError, ParameterError
from ._expr_reader import _CONSTANTS, _NAME, FUNCTIONS, MAX_LOG10, _prescan, _read, _show, _sides, _sympy

if TYPE_CHECKING:
    import sympy

__all__ = ["FUNCTIONS", "Expression", "parse_expression", "sympy_to_text"]

MAX_DIFF = 10
MP_LIMIT = 4096  # mpmath arguments beyond 2**MP_LIMIT give NaN: its range reductions would take forever


@dataclass(frozen=True)
class Expression:
    """A checked expression in one variable, with free parameters.

    Attributes
    ----------
    text : the original text (for a derivative, its formula in this language).
    variable : the variable's name.
    params : the parameter names written in the text, sorted; :meth:`diff` keeps them.
    sympy : the sympy expression (``lhs - rhs`` for an equation).

    Examples
    --------
    >>> f = parse_expression("x**3 = 2*x - 2")
    >>> f.sympy
    x**3 - 2*x + 2
    >>> float(f.numeric()(1.0)), str(f.diff())
    (1.0, '3*x**2 - 2')
    >>> float(parse_expression("a*x - 1").numeric({"a": 4.0})(0.5))
    1.0
    """

    text: str
    variable: str
    params: tuple[str, ...]
    sympy: sympy.Expr
    _cache: dict[str, Callable[..., Any]] = field(default_factory=dict, init=False, repr=False, compare=False)

    def __str__(self) -> str:
        return self.text

    def __repr__(self) -> str:
        params = f", params {', '.join(self.params)}" if self.params else ""
        return f"<Expression {_show(self.text)} in {self.variable}{params}>"

    def diff(self, n: int = 1) -> Expression:
        """Return the n-th derivative in the variable (``n=0`` returns self).

        The text is the formula written back in this language, so it parses again. Delta terms
        from ``sign`` are dropped: they vanish wherever the function is differentiable.
        """
        if type(n) is not int or not 0 <= n <= MAX_DIFF:
            raise ParameterError.expected("n", "Expression.diff", f"an int in [0, {MAX_DIFF}]", n)
        if n == 0:
            return self
        sp = _sympy()
        real_abs, real_sign = _real_abs_sign()
        try:
            with sp.evaluate(False):
                expr = _swap(self.sympy, {sp.Abs: real_abs, sp.sign: real_sign})
            expr = sp.diff(expr, sp.Symbol(self.variable, real=True), n)
            with sp.evaluate(False):
                expr = _swap(expr, {real_abs: sp.Abs, real_sign: sp.sign})
            return Expression(sympy_to_text(expr), self.variable, self.params, expr)
        except Exception as exc:  # noqa: BLE001 - sympy fails on some huge constants: x**(2**1000)
            raise ExpressionError(f"sympy could not differentiate {_show(self.text)} ({type(exc).__name__}). Use "
                                  "smaller constants, or pass the derivative yourself.", part=self.text) from None

    def numeric(self, params: Mapping[str, float] | None = None) -> Callable[[Any], Any]:
        """Return a numpy function of the variable, parameters fixed to ``params``.

        It takes floats, complex numbers (complex step) and arrays (elementwise) and returns numpy
        scalars or arrays. Warnings are silenced: invalid points give NaN for the caller to classify.
        """
        values = [np.asarray(v, dtype=np.complex128 if isinstance(v, complex) else np.float64)[()]
                  for v in self._values(params)]  # numpy scalars: overflow gives inf, not OverflowError
        fn = self._lambdified("numpy")

        def f(x: Any) -> Any:
            if isinstance(x, (list, tuple, np.ndarray)):
                x = np.asarray(x)
                x = x.astype(np.float64) if x.dtype.kind in "iub" else x
            elif isinstance(x, (int, float, complex, np.number)) and not isinstance(x, bool):
                x = np.asarray(x, dtype=np.complex128 if np.iscomplexobj(x) else np.float64)[()]  # numpy semantics
            with np.errstate(all="ignore"):
                try:
                    out = np.asarray(fn(x, *values))
                except ArithmeticError:  # Python arithmetic on constants; numpy itself returns inf/nan
                    out = np.asarray(np.nan)
            out = out.astype(np.float64) if out.dtype.kind in "iub" else out
            if out.shape != np.shape(x):  # a constant expression
                out = np.broadcast_to(out, np.shape(x)).copy()
            return out[()] if out.ndim == 0 else out

        return f

    def mpmath(self, params: Mapping[str, float] | None = None) -> Callable[[Any], Any]:
        """Return an mpmath function of the variable, for high-precision replays (set ``mpmath.mp.dps``)."""
        import mpmath

        values = [mpmath.mpmathify(v) for v in self._values(params)]
        fn = self._lambdified("mpmath")

        def f(x: Any) -> Any:
            try:
                out = fn(mpmath.mpmathify(x) if isinstance(x, (int, float, complex)) else x, *values)
            except ArithmeticError:  # mpmath.exp(1e300) and the like: too large for mpmath too
                return mpmath.nan
            return out if isinstance(out, (mpmath.mpf, mpmath.mpc)) else mpmath.mpmathify(out)

        return f

    def _values(self, params: Mapping[str, float] | None) -> list[Any]:
        given = dict(params or {})
        unknown = sorted(set(given) - set(self.params))
        if unknown:
            raise ParameterError(f"Unknown parameter(s) {', '.join(map(repr, unknown))} for {_show(self.text)}; its "
                                 f"parameters are: {', '.join(map(repr, self.params)) or 'none'}.")
        missing = [p for p in self.params if p not in given]
        if missing:
            want = ", ".join(f"{p!r}: ..." for p in missing)
            cli = " ".join(f"--param {p}=VALUE" for p in missing)
            raise ParameterError(f"{_show(self.text)} needs a value for {', '.join(map(repr, missing))}: pass "
                                 f"params={{{want}}} (command line: {cli}).")
        for p in self.params:
            if isinstance(given[p], (str, bytes, bool)) or given[p] is None:
                raise ParameterError.expected(p, "the expression", "a number", given[p])
        return [given[p] for p in self.params]

    def _lambdified(self, module: str) -> Callable[..., Any]:
        if module not in self._cache:  # one per module: parameter values are passed at call time
            sp = _sympy()
            symbols = [sp.Symbol(name, real=True) for name in (self.variable, *self.params)]
            try:
                self._cache[module] = _lambdify(symbols, self.sympy, module)
            except Exception as exc:  # noqa: BLE001 - e.g. integers too long to print
                raise ExpressionError(f"sympy could not turn {_show(self.text)} into a {module} function "
                                      f"({type(exc).__name__}). Use smaller constants.", part=self.text) from None
        return self._cache[module]


_REAL_ABS_SIGN: list[Any] = []


def _real_abs_sign() -> tuple[Any, Any]:
    """``abs`` and ``sign`` with the derivatives of real analysis: sign and 0 (deltas vanish almost everywhere).

    sympy's own derivative of Abs(u) expands re(u) and im(u) when it cannot prove u real, which can take minutes.
    """
    if not _REAL_ABS_SIGN:
        from sympy import Function, S

        class RealSign(Function):  # type: ignore[misc]
            def fdiff(self, argindex: int = 1) -> Any:
                return S.Zero

        class RealAbs(Function):  # type: ignore[misc]
            def fdiff(self, argindex: int = 1) -> Any:
                return RealSign(self.args[0])

        _REAL_ABS_SIGN.extend([RealAbs, RealSign])
    return _REAL_ABS_SIGN[0], _REAL_ABS_SIGN[1]


def _swap(expr: Any, table: dict[Any, Any]) -> Any:
    """Rebuild ``expr`` bottom-up with the functions in ``table`` replaced (call under ``evaluate(False)``)."""
    if not expr.args:
        return expr
    return table.get(expr.func, expr.func)(*[_swap(a, table) for a in expr.args])


def _float_text(p: int, q: int) -> str:
    if max(abs(p), q) <= 2**53:
        return str(p) if q == 1 else f"({p}/{q})"
    try:
        return f"({p / q!r})"  # numpy cannot take Python ints beyond int64: sin(10**300)
    except OverflowError:
        return "float('inf')" if p > 0 else "float('-inf')"


def _mp_guard(name: str) -> Callable[[Any], Any]:
    def guarded(u: Any) -> Any:
        import mpmath

        return mpmath.nan if mpmath.mag(u) > MP_LIMIT else getattr(mpmath, name)(u)

    return guarded


def _mp_pow(a: Any, b: Any) -> Any:
    import mpmath

    if a != 0 and mpmath.mag(b) + mpmath.mag(mpmath.log(a)) > MP_LIMIT:
        return mpmath.nan
    return a**b


def _lambdify(symbols: list[Any], expr: Any, module: str) -> Callable[..., Any]:
    """``sympy.lambdify`` with printers that keep numpy in floats and mpmath out of endless range reductions."""
    import sympy
    from sympy.printing.numpy import NumPyPrinter
    from sympy.printing.pycode import MpmathPrinter

    class NumPy(NumPyPrinter):  # type: ignore[misc]
        def _print_Integer(self, e: Any) -> str:
            return _float_text(int(e.p), 1)

        def _print_Rational(self, e: Any) -> str:
            return _float_text(int(e.p), int(e.q))

        def _print_Pow(self, e: Any, rational: bool = False) -> str:  # sympy's asks e.exp.is_integer: can hang
            if e.exp == sympy.S.Half:
                return f"{self._module_format('numpy.sqrt')}({self._print(e.base)})"
            return f"({self._print(e.base)})**({self._print(e.exp)})"

    class Mpmath(MpmathPrinter):  # type: ignore[misc]
        def _print_Pow(self, e: Any, rational: bool = False) -> str:
            return f"_mp_pow({self._print(e.base)}, {self._print(e.exp)})"

    names: dict[str, Any] = {"_mp_pow": _mp_pow, **{f: _mp_guard(f) for f in ("sin", "cos", "tan", "sinh", "cosh",
                                                                            "tanh", "exp")}}
    modules: list[Any] = ["numpy"] if module == "numpy" else [names, "mpmath"]
    printer = (NumPy if module == "numpy" else Mpmath)({"fully_qualified_modules": False, "inline": True,
                                                        "allow_unknown_functions": True,
                                                        "user_functions": {k: k for k in names}})
    plain = [sympy.Symbol(f"_cd{i}") for i in range(len(symbols))]  # lambdify's own dummify re-evaluates everything
    with sympy.evaluate(False):
        expr = expr.xreplace(dict(zip(symbols, plain)))
    return sympy.lambdify(plain, expr, modules=modules, printer=printer)  # type: ignore[no-any-return]


def sympy_to_text(expr: Any) -> str:
    """Write a sympy expression in this language (``abs`` for ``Abs``, ``e`` for ``E``) so it parses again.

    Examples
    --------
    >>> import sympy
    >>> sympy_to_text(sympy.Abs(sympy.Symbol("x")) + sympy.E)
    'abs(x) + e'
    """
    from sympy.printing.str import StrPrinter

    class Printer(StrPrinter):  # type: ignore[misc]
        def _print_Abs(self, e: Any) -> str:
            return f"abs({self._print(e.args[0])})"

        def _print_Exp1(self, e: Any) -> str:
            return "e"

        def _print_Float(self, e: Any) -> str:
            return repr(float(e))  # all 17 digits, so the text reads back to the same double

    return str(Printer().doprint(expr))


def parse_expression(text: str, *, variable: str = "x", max_length: int = 1000) -> Expression:
    """Read math text into an :class:`Expression`, refusing anything unsafe.

    Parameters
    ----------
    text : Python-syntax math, e.g. ``"cos(x) - x"``, or an equation ``"lhs = rhs"`` (read as
        ``lhs - rhs``). Names other than the variable, ``pi``, ``e`` and functions are parameters.
    variable : the variable's name, ``"x"`` by default.
    max_length : the longest text accepted, checked before parsing.

    Returns
    -------
    Expression

    Raises
    ------
    ExpressionError
        If the text is malformed or uses anything outside the whitelist; ``part`` and ``position``
        (1-based column) point at the offending text.
    ParameterError
        If ``text`` is not a str or ``variable`` is not a valid name.

    See Also
    --------
    FUNCTIONS : the functions that may be called.

    Examples
    --------
    >>> f = parse_expression("cbrt(x) + a*e")
    >>> f.params
    ('a',)
    >>> float(f.numeric({"a": 0.0})(-8.0))
    -2.0
    >>> parse_expression("x.real")  # doctest: +ELLIPSIS
    Traceback (most recent call last):
    ...
    convdiag.errors.ExpressionError: Attribute access ('x.real') is not allowed in an expression. Allowed: ...
    """
    if not isinstance(text, str):
        raise ParameterError.expected("text", "parse_expression", "a str", text)
    if not isinstance(variable, str) or not _NAME.fullmatch(variable) or variable in (*FUNCTIONS, *_CONSTANTS):
        raise ParameterError.expected("variable", "parse_expression", "a name like 'x' (a letter, then letters, "
                                      "digits or '_'; not a function, pi or e)", variable)
    if type(max_length) is not int or max_length < 1:
        raise ParameterError.expected("max_length", "parse_expression", "an int >= 1", max_length)
    _prescan(text, max_length)
    flat = text.replace("\t", " ").replace("\r", " ").replace("\n", " ")  # one line: columns stay right
    sides = [_read(side, offset, variable, text) for side, offset in _sides(flat)]
    parts = [reader.build(body)[0] for reader, body in sides]  # every side is checked before any is built
    sp = _sympy()
    expr = parts[0] - parts[1] if len(parts) == 2 else parts[0]
    if expr.has(sp.zoo, sp.nan, sp.oo, -sp.oo):
        raise ExpressionError(f"{_show(text)} is undefined (division by zero or a pole).", part=text)
    for number in expr.atoms(sp.Number):  # folded constants: x*10**300*10**300 -> 10**600*x
        p, q = (abs(int(number.p)), int(number.q)) if number.is_Rational else (0, 1)
        if (max(p.bit_length(), q.bit_length()) > 2400 or (p and math.log10(p) - math.log10(q) > MAX_LOG10)
                or (number.is_Float and not math.isfinite(float(number)))):
            raise ExpressionError(f"Folding the constants in {_show(text)} gives a number beyond double precision "
                                  "(about 1.8e308). Use smaller constants.", part=text)
    return Expression(text, variable, tuple(sorted(set().union(*(r.names for r, _ in sides)))), expr)
