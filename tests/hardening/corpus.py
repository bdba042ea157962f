"""Hostile expression text: what a shared file or a pasted line could hold to make convdiag run code or hang.

Each entry is refused by the expression reader (an ExpressionError naming what was refused) and must be
refused through every door text comes in by (see test_hostile_text.py). The README's Reliability section
quotes ``len(HOSTILE_TEXT)``; tests/hardening/test_reliability_figures.py keeps it honest.
"""

from __future__ import annotations

PWNED = "/tmp/convdiag_hardening_pwned"

HOSTILE_TEXT: tuple[str, ...] = (
    # dunder and attribute access
    f"__import__('os').system('touch {PWNED}')",
    "().__class__.__bases__[0].__subclasses__()",
    "x.__class__",
    "x.__class__.__mro__[-1].__subclasses__()",
    "sin.__globals__",
    "sin(x).__class__",
    "pi.real",
    "e.__class__.__init__",
    "__builtins__",
    "x.__dict__",
    # names that are not on the list, called or not
    "globals()",
    "locals()['x']",
    "vars()",
    f"open('{PWNED}', 'w')",
    "eval('1+1')",
    "exec('import os')",
    "compile('1', 'f', 'eval')",
    "getattr(x, 'real')",
    "setattr(x, 'y', 1)",
    "breakpoint()",
    "input()",
    "print(x)",
    "Symbol('x')",
    "sympify('x')",
    "os.system('ls')",
    # statements and imports
    "import os",
    "from os import system",
    "x; import os",
    "x\nimport os",
    "del x",
    "yield x",
    "await x",
    "(y := 1)",
    # lambdas, comprehensions, generators
    "lambda x: x",
    "(lambda: 1)()",
    "[x for x in range(10)]",
    "{x: 1 for x in range(3)}",
    "sum(i for i in range(10**9))",
    # f-strings and other literals
    "f'{x}'",
    "f'{__import__(\"os\").getcwd()}'",
    "'a' * 10**9",
    "b'x'",
    "3j + x",
    "[1, 2]",
    "x[0]",
    # very long and deeply nested
    "x" * 10_001,
    "x+" * 3_000 + "x",
    "(" * 1_000 + "x" + ")" * 1_000,
    "sin(" * 200 + "x" + ")" * 200,
    "-" * 100 + "x",
    "x**" * 100 + "x",
    # exponent towers and constants beyond double precision
    "9**9**9",
    "10**10**10**10",
    "2**2**2**2**2**2",
    "(9**9)**(9**9)",
    "exp(exp(exp(exp(10))))",
    "(2*x)**(10**300)",
    "1e999*x",
    "1" + "0" * 400 + "*x",
    "exp(10**300*log(3))",
)
