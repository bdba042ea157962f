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
"""

from __future__ import annotations

import ast
import math
import re
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from fractions import Fraction
from typing import TYPE_CHECKING, Any

import numpy as np

from ..errors import ExpressionError, ParameterError

if TYPE_CHECKING:
    import sympy

__all__ = ["FUNCTIONS", "Expression", "parse_expression", "sympy_to_text"]

MAX_DEPTH = 60  # nesting levels (brackets, calls, powers, unary signs)
MAX_LOG10 = 308.0  # log10 of the largest double, rounded down
MAX_DIFF = 10
MAX_EXPONENT_PART = 10_000  # exponents of non-constant powers with larger numerators or denominators become floats
MP_LIMIT = 4096  # mpmath arguments beyond 2**MP_LIMIT give NaN: its range reductions would take forever
_NAME = re.compile(r"[A-Za-z][A-Za-z0-9_]{0,31}")
_CONSTANTS = ("e", "pi")
_OPS = {ast.Mod: "%", ast.FloorDiv: "//", ast.MatMult: "@", ast.LShift: "<<", ast.RShift: ">>", ast.BitAnd: "&",
        ast.BitOr: "|", ast.BitXor: "^", ast.Not: "not", ast.Invert: "~"}
_NON_ASCII_HINTS = {"\u2212": "-", "\u00d7": "*", "\u00b7": "*", "\u03c0": "pi", "\u00b2": "**2"}
_REFUSED: dict[type, str] = {
    ast.Attribute: "Attribute access", ast.Subscript: "A subscript", ast.Lambda: "A lambda function",
    ast.ListComp: "A comprehension", ast.SetComp: "A comprehension", ast.DictComp: "A comprehension",
    ast.GeneratorExp: "A generator expression", ast.JoinedStr: "An f-string", ast.Starred: "A starred argument",
    ast.Compare: "A comparison (use one '=' for an equation)", ast.BoolOp: "A boolean operator (and/or)",
    ast.IfExp: "A conditional expression (if/else)", ast.NamedExpr: "An assignment (:=)", ast.Dict: "A dictionary",
    ast.Set: "A set", ast.List: "A list", ast.Tuple: "A tuple", ast.Await: "'await'", ast.Yield: "'yield'",
}


def _sympy() -> Any:
    import sympy

    return sympy


def _named(name: str) -> Callable[[Any], Any]:
    return lambda u: getattr(_sympy(), name)(u)


def _cbrt(u: Any) -> Any:
    sp = _sympy()
    return sp.sign(u) * sp.Abs(u) ** sp.Rational(1, 3)  # the real cube root, also for u < 0


#: name -> (number of arguments, builder of the sympy expression). Extend here.
FUNCTIONS: dict[str, tuple[int, Callable[..., Any]]] = {
    **{n: (1, _named(n)) for n in ("sin", "cos", "tan", "asin", "acos", "atan", "sinh", "cosh", "tanh", "asinh",
                                   "acosh", "atanh", "exp", "log", "sqrt", "sign")},
    "ln": (1, _named("log")), "log10": (1, lambda u: _sympy().log(u) / _sympy().log(10)),
    "abs": (1, _named("Abs")), "cbrt": (1, _cbrt),
}
_ALLOWED = ("Allowed: numbers, + - * / **, parentheses, the variable, pi, e, parameter names and the functions "
            + ", ".join(FUNCTIONS) + ".")


def _show(part: str) -> str:
    return repr(part if len(part) <= 60 else part[:57] + "...")


class _Reader:
    """One side of an equation: :meth:`check` it (no sympy), then :meth:`build` it."""

    def __init__(self, source: str, offset: int, variable: str) -> None:
        self.source, self.offset, self.variable = source, offset, variable
        self.names: set[str] = set()

    def part(self, node: ast.AST) -> str:
        return ast.get_source_segment(self.source, node) or self.source

    def refuse(self, node: ast.AST, message: str, what: str = "") -> ExpressionError:
        part = self.part(node)
        if what:
            message = f"{what} ({_show(part)}) is not allowed in an expression. {message or _ALLOWED}"
        return ExpressionError(message, part=part, position=self.offset + getattr(node, "col_offset", 0) + 1)

    def check(self, node: ast.AST, depth: int) -> None:
        """Pass 1: whitelist, nesting depth and literals; collects parameter names."""
        if depth > MAX_DEPTH:
            raise self.refuse(node, f"The expression is nested more than {MAX_DEPTH} levels deep at "
                                    f"{_show(self.part(node))}. Simplify it.")
        if isinstance(node, ast.Constant):
            v = node.value
            if type(v) is int and abs(v) >= 10**300:
                raise self.refuse(node, "Use fewer digits.", what="An integer with more than 300 digits")
            if type(v) is float and not math.isfinite(v):
                raise self.refuse(node, "Numbers must stay below about 1.8e308.", what="A number too large for floats")
            if type(v) not in (int, float):
                kind = {str: "A string", bytes: "A bytes literal", complex: "A complex literal"}
                raise self.refuse(node, "", what=kind.get(type(v), f"The constant {v!r}"))
        elif isinstance(node, ast.Name):
            if node.id.startswith("_") or not _NAME.fullmatch(node.id):
                raise self.refuse(node, "Names start with a letter and have at most 32 ASCII letters, digits or "
                                        "underscores ('_' may not come first).", what="The name")
            if node.id in FUNCTIONS:
                raise self.refuse(node, f"Call it, e.g. {node.id}(x).", what="A function name without a call")
            if node.id != self.variable and node.id not in _CONSTANTS:
                self.names.add(node.id)
        elif isinstance(node, ast.UnaryOp):
            if not isinstance(node.op, (ast.UAdd, ast.USub)):
                raise self.refuse(node, "", what=f"The operator '{_OPS[type(node.op)]}'")
            self.check(node.operand, depth + 1)
        elif isinstance(node, ast.BinOp):
            first, rest = _chain(node)
            for op, _ in rest:
                if type(op) in _OPS:
                    hint = "'^' is not power in Python: write powers as x**2." if type(op) is ast.BitXor else ""
                    raise self.refuse(node, hint, what=f"The operator '{_OPS[type(op)]}'")
            for operand in [first, *(n for _, n in rest)]:
                self.check(operand, depth + 1)
        elif isinstance(node, ast.Call):
            name = node.func.id if isinstance(node.func, ast.Name) else ""
            if name not in FUNCTIONS:
                raise self.refuse(node, "", what=f"The function {name!r}" if name else "Calling an expression")
            if node.keywords or any(isinstance(a, ast.Starred) for a in node.args):
                raise self.refuse(node, f"Pass plain arguments, e.g. {name}(x).", what="A keyword or starred argument")
            if len(node.args) != FUNCTIONS[name][0]:
                raise self.refuse(node, f"{name}() takes {FUNCTIONS[name][0]}; got {len(node.args)}.",
                                  what="A call with the wrong number of arguments")
            for arg in node.args:
                self.check(arg, depth + 1)
        else:
            raise self.refuse(node, "", what=_REFUSED.get(type(node), "This construct"))

    def build(self, node: ast.expr) -> tuple[Any, complex | None]:
        """Pass 2: the sympy expression and, for a constant, its approximate value."""
        try:
            return self._build(node)
        except ExpressionError:
            raise
        except Exception as exc:  # noqa: BLE001 - sympy can raise anything on odd constants: asin(sin(9*10**300))
            raise self.refuse(node, f"sympy could not build {_show(self.part(node))} ({type(exc).__name__}). "
                                    "Use simpler constants.") from None

    def _build(self, node: ast.expr) -> tuple[Any, complex | None]:
        sp = _sympy()
        if isinstance(node, ast.Constant):
            v = node.value
            assert isinstance(v, (int, float))
            frac = Fraction(repr(v))  # 0.1 -> 1/10 exactly (its shortest repr): exact in high-precision replays
            return sp.Rational(frac.numerator, frac.denominator), complex(v)
        if isinstance(node, ast.Name):
            if node.id in _CONSTANTS:
                return (sp.E, complex(math.e)) if node.id == "e" else (sp.pi, complex(math.pi))
            return sp.Symbol(node.id, real=True), None
        if isinstance(node, ast.UnaryOp):
            expr, val = self.build(node.operand)
            return (-expr, None if val is None else -val) if isinstance(node.op, ast.USub) else (expr, val)
        if isinstance(node, ast.Call):
            assert isinstance(node.func, ast.Name)
            builder = FUNCTIONS[node.func.id][1]
            built = [self.build(a) for a in node.args]
            args = [b[0] for b in built]
            if any(val is None for _, val in built):
                with sp.evaluate(False):  # sympy's automatic simplification can hang: log(sinh((2*x)**0.3))
                    return builder(*args), None
            with sp.evaluate(False):  # exp(n*log(3)) would become 3**n: estimate it first
                probe = builder(*args)
            self.value(node, probe)
            expr = builder(*args)
            return expr, self.value(node, expr)
        assert isinstance(node, ast.BinOp)
        first, rest = _chain(node)
        if isinstance(node.op, ast.Pow):
            (base, bval), (power, pval) = self.build(first), self.build(rest[0][1])
            expr = sp.Pow(base, self.tame_power(node, base, bval, power, pval))
            return expr, (None if bval is None or pval is None else self.value(node, expr))
        out = [self.build(first)[0]]
        for op, operand in rest:
            expr, val = self.build(operand)
            if isinstance(op, ast.Div) and val is not None and expr.is_zero:
                raise self.refuse(node, f"Division by zero in {_show(self.part(node))}.")
            out.append(-expr if isinstance(op, ast.Sub) else 1 / expr if isinstance(op, ast.Div) else expr)
        expr = sp.Add(*out) if isinstance(node.op, (ast.Add, ast.Sub)) else sp.Mul(*out)
        return expr, (self.value(node, expr) if expr.is_number else None)

    def tame_power(self, node: ast.AST, base: Any, bval: complex | None, power: Any, pval: complex | None) -> Any:
        """Return the exponent to use for ``base**power``, or refuse the power.

        sympy computes Rational**Rational exactly: ``9**9**9`` would run for hours, and so would a constant
        to a power with a long numerator or denominator (its loops run to the denominator). It also expands
        x**(p/q) to polynomials of degree p, distributes powers over products ((2*x)**n -> 2**n * x**n)
        and splits b**(h + t) into b**h * b**t. So long fractions in exponents become floats, the value of a
        constant power is estimated in floats, and so is the size of the exact numbers sympy would compute.
        """
        sp = _sympy()
        const = bval is not None and pval is not None
        wide = {a: sp.Float(float(a)) for a in power.atoms(sp.Rational)
                if max(abs(a.p), a.q) > MAX_EXPONENT_PART and not (const and a.q == 1)}
        if wide:
            with sp.evaluate(False):
                power = power.xreplace(wide)
        shown = _show(self.part(node))
        size = abs(pval) * abs(math.log10(abs(bval))) if bval and pval is not None else 0.0
        if size > MAX_LOG10:
            raise self.refuse(node, f"The power {shown} has about {size:.4g} digits: it overflows double precision "
                                    "(about 1.8e308). Use smaller constants.")
        h = power.as_coeff_Add()[0]
        logs = [0.0] + [max(math.log10(abs(int(a.p)) or 1), math.log10(int(a.q))) for a in base.atoms(sp.Rational)]
        digits = float(min(abs(int(h.p)), 10**308)) * max(logs) if h.is_Rational else 0.0
        if digits <= MAX_LOG10:
            return power
        if bval is not None and pval is not None:  # the value fits a double: compute it in floats, not exactly
            return sp.Float(pval.real)
        raise self.refuse(node, f"The power {shown} would make sympy compute numbers of about {digits:.4g} digits "
                                "(doubles stop at about 1e308). Use smaller constants.")

    def value(self, node: ast.AST, expr: Any) -> complex:
        """Approximate a constant; refuse it when undefined, too large for floats or not real."""
        sp = _sympy()
        shown = _show(self.part(node))
        approx = expr if isinstance(expr, sp.Rational) else expr.evalf(17)
        if approx.has(sp.zoo, sp.nan, sp.oo, -sp.oo):
            raise self.refuse(node, f"The constant {shown} is undefined (division by zero or a pole).")
        try:
            val = complex(approx)
        except (TypeError, ValueError, OverflowError):
            val = complex(math.inf)
        if not (math.isfinite(val.real) and math.isfinite(val.imag)):
            raise self.refuse(node, f"The constant {shown} overflows double precision (about 1.8e308). "
                                    "Use smaller constants.")
        if val.imag != 0:
            raise self.refuse(node, f"The constant {shown} is not real ({val:.6g}); functions must be real. "
                                    "For a real cube root use cbrt().")
        return complex(val.real)


def _chain(node: ast.BinOp) -> tuple[ast.expr, list[tuple[ast.operator, ast.expr]]]:
    """Flatten a left-nested ``+ -`` or ``* /`` chain, so ``1+1+...+1`` does not count as deep."""
    group = (ast.Add, ast.Sub) if isinstance(node.op, (ast.Add, ast.Sub)) else (ast.Mult, ast.Div)
    if not isinstance(node.op, group):
        return node.left, [(node.op, node.right)]
    rest: list[tuple[ast.operator, ast.expr]] = []
    cur: ast.expr = node
    while isinstance(cur, ast.BinOp) and isinstance(cur.op, group):
        rest.append((cur.op, cur.right))
        cur = cur.left
    return cur, rest[::-1]


def _sides(text: str) -> list[tuple[str, int]]:
    """Split at a single top-level '=' (not part of ==, <=, >=, !=, :=, += ...); text and offset of each side."""
    depth, quote, signs = 0, "", []
    for i, ch in enumerate(text):
        if quote or ch in "'\"":
            quote = "" if ch == quote else quote or ch
        elif ch == "#":
            break
        elif ch in "([{)]}":
            depth += 1 if ch in "([{" else -1
        elif ch == "=" and depth == 0 and text[i + 1:i + 2] != "=" and text[i - 1:i] not in tuple("=<>!:+-*/%&|^@"):
            signs.append(i)
    if len(signs) > 1:
        raise ExpressionError(f"Only one '=' is allowed in {_show(text)}: write 'lhs = rhs'.", part=text,
                              position=signs[1] + 1)
    return [(text, 0)] if not signs else [(text[: signs[0]], 0), (text[signs[0] + 1:], signs[0] + 1)]


def _prescan(text: str, max_length: int) -> None:
    """Cheap checks before ``ast.parse``: length, characters and bracket depth (the parser fails on deep nesting)."""
    if len(text) > max_length:
        raise ExpressionError(f"The expression has {len(text)} characters; at most {max_length} are allowed.",
                              part=text[:60], position=max_length + 1)
    if not text.strip():
        raise ExpressionError("The expression is empty. Write one like 'x**2 - 2'.", part=text)
    depth = 0
    for i, ch in enumerate(text):
        if not (" " <= ch <= "~" or ch in "\t\r\n"):
            hint = f" Write {_NON_ASCII_HINTS[ch]!r} instead." if ch in _NON_ASCII_HINTS else ""
            raise ExpressionError(f"The character {ch!r} at column {i + 1} is not allowed: use plain ASCII.{hint}",
                                  part=ch, position=i + 1)
        depth += 1 if ch in "([{" else -1 if ch in ")]}" else 0
        if depth > MAX_DEPTH:
            raise ExpressionError(f"Brackets are nested more than {MAX_DEPTH} deep at column {i + 1}. Simplify "
                                  "the expression.", part=text[max(0, i - 20):i + 1], position=i + 1)


def _read(side: str, offset: int, variable: str, whole: str) -> tuple[_Reader, ast.expr]:
    lead, source = len(side) - len(side.lstrip()), side.strip()
    if not source:
        raise ExpressionError(f"One side of the equation {_show(whole)} is empty. Write 'lhs = rhs'.", part=whole,
                              position=offset + 1)
    try:
        tree = ast.parse(source, mode="eval")
    except SyntaxError as exc:
        col = offset + lead + (exc.offset or 1)
        raise ExpressionError(f"Could not read the expression at column {col}: {exc.msg} (in {_show(source)}).",
                              part=source, position=col) from None
    except (RecursionError, MemoryError, ValueError) as exc:
        raise ExpressionError(f"Could not read the expression {_show(source)}: {exc}.", part=source) from None
    reader = _Reader(source, offset + lead, variable)
    reader.check(tree.body, 1)
    return reader, tree.body


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
