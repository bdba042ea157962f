"""Reading expression text safely: a whitelist check of the syntax tree, then a sympy build node by node.

:func:`_prescan` and :func:`_sides` look at the raw text (length, characters,
bracket depth, one ``=``); :func:`_read` parses one side with
``ast.parse(..., mode="eval")`` and has :class:`_Reader` check it against the
whitelist (no sympy needed); :meth:`_Reader.build` then builds the sympy
expression, estimating constants and powers in floats before sympy computes
them exactly. Used by :func:`~convdiag.core._expr.parse_expression`.
"""

from __future__ import annotations

import ast
import math
import re
from collections.abc import Callable
from fractions import Fraction
from typing import Any

from ..errors import ExpressionError

__all__ = ["FUNCTIONS"]

MAX_DEPTH = 60  # nesting levels (brackets, calls, powers, unary signs)
MAX_LOG10 = 308.0  # log10 of the largest double, rounded down
MAX_EXPONENT_PART = 10_000  # exponents of non-constant powers with larger numerators or denominators become floats
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
