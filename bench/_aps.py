"""Two classic test sets for bracketing root finders, coded from the papers.

* ``APS``: the 15 problems (154 instances) of Alefeld, Potra and Shi, "Algorithm 748:
  Enclosing zeros of continuous functions", ACM Trans. Math. Softw. 21(3) (1995) 327-344,
  Table I (functions, brackets and parameter values).
* ``CHANDRUPATLA``: the 9 functions, 5 brackets each (45 instances) of T. R. Chandrupatla,
  "A new hybrid quadratic/bisection algorithm for finding the zero of a nonlinear function
  without using derivatives", Adv. Eng. Softw. 28(3) (1997) 145-149, Table 1.

Every function takes ``m=math`` (float arithmetic) or ``m=mpmath`` (arbitrary precision,
used for independent reference roots). Scalars only; the benchmark vectorises where a peer
calls with arrays. Our copy of the problems is checked against scipy's private copy
(``scipy.optimize._tstutils``) in ``tests/core/test_hybrid.py``.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

__all__ = ["APS", "CHANDRUPATLA", "Instance"]


@dataclass(frozen=True)
class Instance:
    """One test instance: ``f(x, *args, m=math)`` on ``bracket``.

    ``problem`` is the number in the paper (APS 1-15, Chandrupatla 1-9); ``root`` is a known
    exact root where the paper states one in closed form (else None); ``multiplicity`` is the
    root's multiplicity where known (1 for simple roots); ``flat`` marks a root at which every
    derivative vanishes (f underflows to exactly zero on a whole interval around it).
    """

    id: str
    problem: int
    f: Callable[..., Any]
    args: tuple[Any, ...]
    bracket: tuple[float, float]
    root: float | None = None
    multiplicity: int = 1
    flat: bool = False

    def __call__(self, x: Any) -> Any:
        return self.f(x, *self.args)

    def mp(self, x: Any) -> Any:
        """f in mpmath arithmetic (at the caller's working precision)."""
        import mpmath

        return self.f(x, *self.args, m=mpmath)


def _num(m: Any, v: float) -> Any:
    """A constant as the float program sees it: the double, or that double's exact value in mpmath."""
    return float(v) if m is math else m.mpf(float(v))


# -- Alefeld, Potra and Shi (1995), Table I -------------------------------------------------
def aps1(x: Any, m: Any = math) -> Any:
    return m.sin(x) - x / 2


def aps2(x: Any, m: Any = math) -> Any:
    return -2 * sum((2 * i - 5) ** 2 / (x - i * i) ** 3 for i in range(1, 21))


def aps3(x: Any, a: float, b: float, m: Any = math) -> Any:
    return a * x * m.exp(b * x)


def aps4(x: Any, n: int, a: float, m: Any = math) -> Any:
    return x**n - _num(m, a)


def aps5(x: Any, m: Any = math) -> Any:
    return m.sin(x) - _num(m, 0.5)


def aps6(x: Any, n: int, m: Any = math) -> Any:
    return 2 * x * m.exp(-n) - 2 * m.exp(-n * x) + 1


def aps7(x: Any, n: int, m: Any = math) -> Any:
    return (1 + (1 - n) ** 2) * x - (1 - n * x) ** 2


def aps8(x: Any, n: int, m: Any = math) -> Any:
    return x * x - (1 - x) ** n


def aps9(x: Any, n: int, m: Any = math) -> Any:
    return (1 + (1 - n) ** 4) * x - (1 - n * x) ** 4


def aps10(x: Any, n: int, m: Any = math) -> Any:
    return m.exp(-n * x) * (x - 1) + x**n


def aps11(x: Any, n: int, m: Any = math) -> Any:
    return (n * x - 1) / ((n - 1) * x)


def aps12(x: Any, n: int, m: Any = math) -> Any:
    if m is math:
        return x ** (1.0 / n) - n ** (1.0 / n)
    return m.root(x, n) - m.root(n, n)


def aps13(x: Any, m: Any = math) -> Any:
    """x·exp(-1/x²), 0 at 0: every derivative is 0 at the root; in doubles f is exactly 0 for |x| < 0.037."""
    x2 = x * x
    if x2 == 0:
        return 0 * x
    return x * m.exp(-1 / x2)


def aps14(x: Any, n: int, m: Any = math) -> Any:
    c = _num(m, n) / 20
    if x <= 0:
        return -c
    return c * (x / _num(m, 1.5) + m.sin(x) - 1)


def aps15(x: Any, n: int, m: Any = math) -> Any:
    level = _num(m, 1.859)
    if x < 0:
        return 1 - level
    if x > 2 * _num(m, 1e-3) / (1 + n):
        return m.e - level
    return m.exp((n + 1) * x / 2 * 1000) - level


def _aps() -> list[Instance]:
    out: list[Instance] = []

    def add(p: int, f: Callable[..., Any], args: tuple[Any, ...], br: tuple[float, float], **kw: Any) -> None:
        k = sum(1 for i in out if i.problem == p)
        out.append(Instance(f"aps.{p:02d}.{k:02d}", p, f, args, br, **kw))

    add(1, aps1, (), (math.pi / 2, math.pi))
    for n in range(1, 11):
        add(2, aps2, (), (n * n + 1e-9, (n + 1) ** 2 - 1e-9))
    for a, b in ((-40, -1), (-100, -2), (-200, -3)):
        add(3, aps3, (a, b), (-9.0, 31.0), root=0.0)
    for n in (4, 6, 8, 10, 12):
        add(4, aps4, (n, 0.2), (0.0, 5.0))
    for n in (4, 6, 8, 10, 12):
        add(4, aps4, (n, 1), (0.0, 5.0), root=1.0)
    for n in (8, 10, 12, 14):
        add(4, aps4, (n, 1), (-0.95, 4.05), root=1.0)
    add(5, aps5, (), (0.0, 1.5), root=math.pi / 6)
    for n in (1, 2, 3, 4, 5, 20, 40, 60, 80, 100):
        add(6, aps6, (n,), (0.0, 1.0))
    for n in (5, 10, 20):
        add(7, aps7, (n,), (0.0, 1.0))
    for n in (2, 5, 10, 15, 20):
        add(8, aps8, (n,), (0.0, 1.0))
    for n in (1, 2, 4, 5, 8, 15, 20):
        add(9, aps9, (n,), (0.0, 1.0))
    for n in (1, 5, 10, 15, 20):
        add(10, aps10, (n,), (0.0, 1.0))
    for n in (2, 5, 15, 20):
        add(11, aps11, (n,), (0.01, 1.0), root=1 / n)
    for n in (2, 3, 4, 5, 6, *range(7, 34, 2)):
        add(12, aps12, (n,), (1.0, 100.0), root=float(n))
    add(13, aps13, (), (-1.0, 4.0), root=0.0, flat=True)
    for n in range(1, 41):
        add(14, aps14, (n,), (-1000.0, math.pi / 2))
    for n in (*range(20, 41), *range(100, 1001, 100)):
        add(15, aps15, (n,), (-1000.0, 1e-4))
    return out


# -- Chandrupatla (1997), Table 1 ------------------------------------------------------------
def ch1(x: Any, m: Any = math) -> Any:
    return x**3 - 2 * x - 5


def ch2(x: Any, m: Any = math) -> Any:
    return 1 - 1 / x**2


def ch3(x: Any, m: Any = math) -> Any:
    return (x - 3) ** 3


def ch4(x: Any, m: Any = math) -> Any:
    return 6 * (x - 2) ** 5


def ch5(x: Any, m: Any = math) -> Any:
    return x**9


def ch6(x: Any, m: Any = math) -> Any:
    return x**19


def ch7(x: Any, m: Any = math) -> Any:
    return aps13(x, m)


def ch8(x: Any, m: Any = math) -> Any:
    xi = _num(m, 0.61489)
    e = m.exp(-x)
    return -(3062 * (1 - xi) * e) / (xi + (1 - xi) * e) - 1013 + 1628 / x


def ch9(x: Any, m: Any = math) -> Any:
    return m.exp(x) - 2 - _num(m, 0.01) / x**2 + _num(m, 2e-6) / x**3


def _chandrupatla() -> list[Instance]:
    table: list[tuple[Callable[..., Any], list[tuple[float, float]], dict[str, Any]]] = [
        (ch1, [(2, 3), (1, 10), (1, 100), (-1e4, 1e4), (-1e10, 1e10)], {}),
        (ch2, [(0.5, 1.51), (1e-4, 1e4), (1e-6, 1e6), (1e-10, 1e10), (1e-12, 1e12)], {"root": 1.0}),
        (ch3, [(0, 5), (-10, 10), (-1e4, 1e4), (-1e6, 1e6), (-1e10, 1e10)], {"root": 3.0, "multiplicity": 3}),
        (ch4, [(0, 5), (-10, 10), (-1e4, 1e4), (-1e6, 1e6), (-1e10, 1e10)], {"root": 2.0, "multiplicity": 5}),
        (ch5, [(-1, 4), (-2, 5), (-1, 10), (-5, 50), (-10, 100)], {"root": 0.0, "multiplicity": 9}),
        (ch6, [(-1, 4), (-2, 5), (-1, 10), (-5, 50), (-10, 100)], {"root": 0.0, "multiplicity": 19}),
        (ch7, [(-1, 4), (-2, 5), (-1, 10), (-5, 50), (-10, 100)], {"root": 0.0, "flat": True}),
        (ch8, [(2e-4, 2), (2e-4, 3), (2e-4, 9), (2e-4, 27), (2e-4, 81)], {}),
        (ch9, [(2e-4, 1), (2e-4, 3), (2e-4, 9), (2e-4, 27), (2e-4, 81)], {}),
    ]
    out = []
    for p, (f, brackets, kw) in enumerate(table, start=1):
        for k, (a, b) in enumerate(brackets, start=1):
            out.append(Instance(f"ch.{p}.{k}", p, f, (), (float(a), float(b)), **kw))
    return out


APS: list[Instance] = _aps()
CHANDRUPATLA: list[Instance] = _chandrupatla()
