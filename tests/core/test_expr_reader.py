"""Reading expression text: hostile text refused quickly and without side effects, columns, nesting, length
(convdiag.core._expr_reader, through parse_expression)."""

import os
import re
import time

import pytest
import sympy

from convdiag.core._expr import parse_expression
from convdiag.errors import ExpressionError

PWNED = "/tmp/convdiag_pwned"


def test_long_flat_sums_are_not_counted_as_deep_nesting():
    f = parse_expression("+".join(["x"] * 300))
    assert f.sympy == 300 * sympy.Symbol("x", real=True)  # reference: sympy


def test_refusal_reports_column_in_the_original_text():
    with pytest.raises(ExpressionError) as info:
        parse_expression("x**2 =  y.real")
    assert info.value.part == "y.real" and info.value.position == 9
    with pytest.raises(ExpressionError, match="column 5"):
        parse_expression("x + ) 1")


def test_text_longer_than_max_length_is_refused_before_parsing():
    with pytest.raises(ExpressionError, match="at most 5 are allowed"):
        parse_expression("x + 1 ", max_length=5)


HOSTILE = [  # (text, a piece the message must name)
    (f"__import__('os').system('touch {PWNED}')", "__import__"),
    ("().__class__.__bases__[0].__subclasses__()", "__subclasses__"),
    ("x.__class__", "x.__class__"),
    ("__builtins__", "__builtins__"),
    ("open('/etc/passwd')", "open"),
    ("eval('1')", "eval"),
    ("exec('1')", "exec"),
    ("getattr(x,'real')", "getattr"),
    ("import os", "import os"),
    ("lambda: 1", "lambda: 1"),
    ("[i for i in range(9)]", "[i for i in range(9)]"),
    ("sum(i for i in range(9))", "sum"),
    ('f"{x}"', 'f"{x}"'),
    ("'abc'", "abc"),
    ("b'x'", "b'x'"),
    ("x if x else 1", "x if x else 1"),
    ("x < 1", "x < 1"),
    ("x == 1", "x == 1"),
    ("x and 1", "x and 1"),
    ("not x", "not"),
    ("~x", "~"),
    ("(y:=1)", "y:=1"),
    ("{1:2}", "{1:2}"),
    ("{1}", "{1}"),
    ("[1]", "[1]"),
    ("(1,2)", "(1,2)"),
    ("*x", "*x"),
    ("sin(*x)", "sin(*x)"),
    ("sin(x=1)", "sin(x=1)"),
    ("sin(x, 2)", "sin(x, 2)"),
    ("(f)(x)", "(f)(x)"),
    ("sin(x)(2)", "sin(x)(2)"),
    ("_x + 1", "_x"),
    ("9**9**9", "9**9**9"),
    ("10**10**10", "10**10**10"),
    ("2**(2**(2**(2**10)))", "2**(2**10)"),
    ("(9**9)**(9**9)", "(9**9)**(9**9)"),
    ("(2*x)**(10**300)", "(2*x)**(10**300)"),
    ("e**(10**300)", "e**(10**300)"),
    ("exp(10**300*log(3))", "exp(10**300*log(3))"),
    ("exp(exp(exp(10)))", "exp(exp(10))"),
    ("x*10**300*10**300", "x*10**300*10**300"),
    ("x**(10**300)*(2*x)**(10**300)", "(2*x)**(10**300)"),
    ("asin(sin(9*10**300))", "asin(sin(9*10**300))"),
    ("1e999", "1e999"),
    ("1" + "0" * 400, "more than 300 digits"),
    ('"1"*10**6', '"1"'),
    ("x" * 5000, "5000 characters"),
    ("(" * 200 + "x" + ")" * 200, "nested more than 60"),
    ("-" * 5000 + "x", "5001 characters"),
    ("-" * 500 + "x", "nested more than 60"),
    ("x**" * 70 + "x", "nested more than 60"),
    ("x ^ 2", "x ^ 2"),
    ("x % 2", "x % 2"),
    ("x // 2", "x // 2"),
    ("3j", "3j"),
    ("...", "..."),
    ("None", "None"),
    ("True", "True"),
    ("False", "False"),
    ("x.real", "x.real"),
    ("x[0]", "x[0]"),
    ("print(1)", "print"),
    ("sin", "sin"),
    ("1 +", "1 +"),
    ("x = 1 = 2", "x = 1 = 2"),
    ("= x", "= x"),
    ("1/0", "1/0"),
    ("tan(pi/2)", "tan(pi/2)"),
    ("log(0)", "log(0)"),
    ("sqrt(-1)", "sqrt(-1)"),
    ("(-8)**(1/3)", "(-8)**(1/3)"),
    ("\u03c0*x", "\u03c0"),
    ("x\x00", "\\x00"),
    ("", "empty"),
    ("   \n ", "empty"),
]


@pytest.fixture(scope="module")
def sympy_loaded():
    parse_expression("sin(x) + 1")  # import sympy once, so the timing below measures refusal only


@pytest.mark.parametrize(("text", "named"), HOSTILE, ids=[repr(t[:30]) for t, _ in HOSTILE])
def test_hostile_text_is_refused_quickly_and_without_side_effects(text, named, sympy_loaded):
    assert len(HOSTILE) >= 35
    start = time.perf_counter()
    with pytest.raises(ExpressionError, match=re.escape(named)) as info:
        parse_expression(text)
    assert time.perf_counter() - start < 0.5  # a guard against exact arithmetic on towers, not a benchmark
    assert isinstance(info.value, ValueError) and isinstance(info.value.part, str)
    assert info.value.position is None or 1 <= info.value.position <= len(text) + 1
    assert not os.path.exists(PWNED)
