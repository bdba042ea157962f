"""Hostile callables, starts, brackets and settings for the hardening property tests.

A :class:`Hostile` function is a plain base function (a polynomial, ``math.sqrt``, ``1/x``, a step, a
function with no root, one that overflows) with faults laid over it: from some call on, above some x,
every k-th call or always, it raises (ZeroDivisionError, OverflowError, ValueError, TypeError,
RecursionError, ...), returns something that is not a float (NaN, ±inf, complex, None, a string, a list,
arrays of the wrong shape, integers too large for a float, an object whose ``float()`` fails), returns a
huge or tiny magnitude, or jumps (sign flips, steps, rounding noise). It counts its calls, so a test can
check that every call into user code is in the result's evaluation log, and it describes itself in its
``repr`` so a failing example reads as a recipe.

Nothing here is a check value: these are inputs. Every value a strategy can produce is one a user's code
could produce (the kinds listed in the issue, and what ``math``/``numpy`` raise or return at the edges).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from decimal import Decimal
from fractions import Fraction
from typing import Any

import numpy as np
from hypothesis import strategies as st

__all__ = [
    "BASES",
    "EXCEPTIONS",
    "VALUES",
    "Fault",
    "Hostile",
    "brackets",
    "budgets",
    "hostile_functions",
    "starts",
    "tolerances",
]


class BadFloat:
    """A returned object whose conversion to float fails with an error of its own."""

    def __float__(self) -> float:
        raise RuntimeError("this object cannot become a float")

    def __complex__(self) -> complex:
        raise RuntimeError("this object cannot become a complex number")

    def __repr__(self) -> str:
        return "BadFloat()"


class UserError(Exception):
    """An exception type of the user's own."""


# -- base functions: (scalar implementation, takes arrays) ------------------------------------------------
def _cubic(x: Any) -> Any:
    return x * x * x - 2 * x - 5


def _two_cycle(x: Any) -> Any:
    return x**3 - 2 * x + 2  # float ** overflows with OverflowError far out


def _cos(x: Any) -> Any:
    return math.cos(x) - x  # TypeError on complex input and on arrays


def _np_cos(x: Any) -> Any:
    with np.errstate(all="ignore"):
        return np.cos(x) - x


def _double(x: Any) -> Any:
    return (x - 1) * (x - 1)


def _bump(x: Any) -> Any:
    return math.exp(-x * x)  # no root; underflows to 0.0 exactly far out


def _atan(x: Any) -> Any:
    return math.atan(x)  # Newton diverges from |x| > 1.39


def _sqrt(x: Any) -> Any:
    return math.sqrt(x) - 1  # ValueError (math domain error) for x < 0


def _recip(x: Any) -> Any:
    return 1 / x - 2  # ZeroDivisionError at 0


def _log(x: Any) -> Any:
    return math.log(x)  # ValueError for x <= 0


def _step(x: Any) -> Any:
    return 1.0 if x >= 0 else -1.0  # a jump, no root


def _huge(x: Any) -> Any:
    return 1e300 * x - 1e300  # inf for |x| beyond about 1.8e8


def _tiny(x: Any) -> Any:
    return 1e-300 * (x - 0.5)


def _exp(x: Any) -> Any:
    return math.exp(x) - 1e10  # OverflowError beyond 709.78


def _const(x: Any) -> Any:
    return 0 * x + 1.0


def _zero(x: Any) -> Any:
    return 0 * x


def _np_sqrt(x: Any) -> Any:
    with np.errstate(all="ignore"):
        return np.sqrt(x) - 1  # NaN below 0, arrays fine


BASES: dict[str, tuple[Any, bool]] = {
    "cubic": (_cubic, True), "two-cycle": (_two_cycle, True), "cos": (_cos, False), "np-cos": (_np_cos, True),
    "double": (_double, True), "bump": (_bump, False), "atan": (_atan, False), "sqrt": (_sqrt, False),
    "recip": (_recip, False), "log": (_log, False), "step": (_step, False), "huge": (_huge, True),
    "tiny": (_tiny, True), "exp": (_exp, False), "const": (_const, True), "zero": (_zero, True),
    "np-sqrt": (_np_sqrt, True),
}

EXCEPTIONS: dict[str, type[BaseException]] = {
    e.__name__: e
    for e in (ZeroDivisionError, OverflowError, ValueError, TypeError, RecursionError, KeyError, IndexError,
              AttributeError, RuntimeError, AssertionError, StopIteration, FloatingPointError, ArithmeticError,
              NotImplementedError, UnicodeError, LookupError, UserError)
}

#: What a hostile function may return instead of a number; factories, so each call gets a fresh object.
VALUES: dict[str, Any] = {
    "nan": lambda: math.nan, "inf": lambda: math.inf, "-inf": lambda: -math.inf, "1e308": lambda: 1e308,
    "-1e308": lambda: -1e308, "5e-324": lambda: 5e-324, "-0.0": lambda: -0.0, "complex": lambda: 1 + 1j,
    "imag": lambda: 2j, "complex-nan": lambda: complex(math.nan, 0.0), "real-complex": lambda: complex(0.5, 0.0),
    "None": lambda: None, "str": lambda: "1.0", "bytes": lambda: b"1", "list": lambda: [1.0],
    "tuple": lambda: (1.0, 2.0), "array2": lambda: np.array([1.0, 2.0]), "array0": lambda: np.array([]),
    "array11": lambda: np.array([[0.25]]), "object-array": lambda: np.array([None], dtype=object),
    "str-array": lambda: np.array(["a"]), "np-nan": lambda: np.float64("nan"), "np-f32": lambda: np.float32(3.5),
    "np-int": lambda: np.int64(-7), "huge-int": lambda: 10**400, "-huge-int": lambda: -(10**400),
    "fraction": lambda: Fraction(1, 3), "decimal-nan": lambda: Decimal("NaN"), "decimal-big": lambda: Decimal("1e400"),
    "bool": lambda: True, "object": lambda: object(), "bad-float": lambda: BadFloat(), "dict": lambda: {"f": 1.0},
}
_NUMERIC = {"nan", "inf", "-inf", "1e308", "-1e308", "5e-324", "-0.0", "complex", "imag", "complex-nan",
            "real-complex", "np-nan", "np-f32", "np-int"}


@dataclass(frozen=True)
class Fault:
    """When (``when`` with ``n`` or ``t``) and how (``what`` with ``payload``) a function misbehaves."""

    when: str  # always | after | every | above | below | near
    n: int
    t: float
    what: str  # raise | return | flip | jump | noise | scale
    payload: str

    def fires(self, calls: int, x: Any) -> bool:
        if self.when == "always":
            return True
        if self.when == "after":
            return calls > self.n
        if self.when == "every":
            return calls % max(self.n, 1) == 0
        try:
            v = float(np.real(x))
        except (TypeError, ValueError, OverflowError):
            return False
        if self.when == "above":
            return v > self.t
        if self.when == "below":
            return v < self.t
        return abs(v - self.t) < 0.25  # near

    def mask(self, calls: int, x: Any) -> Any:
        """For an array call: the lanes it fires on (a bool array), or one bool for the whole call."""
        if self.when in ("always", "after", "every"):
            return self.fires(calls, None)
        v = np.real(np.asarray(x))
        with np.errstate(all="ignore"):
            if self.when == "above":
                return v > self.t
            if self.when == "below":
                return v < self.t
            return np.abs(v - self.t) < 0.25

    def __repr__(self) -> str:
        cond = {"always": "always", "after": f"after {self.n} calls", "every": f"every {self.n} calls",
                "above": f"x > {self.t!r}", "below": f"x < {self.t!r}", "near": f"|x - {self.t!r}| < 0.25"}
        return f"{self.what} {self.payload} when {cond[self.when]}"


@dataclass
class Hostile:
    """A user's function with faults; counts its calls; ``f(x)`` or ``f(x, **params)``."""

    base: str
    faults: tuple[Fault, ...]
    vector: bool = True  # whether it takes arrays (a scalar-only function raises TypeError on one)
    calls: int = field(default=0, compare=False)
    points: int = field(default=0, compare=False)

    def __call__(self, x: Any, **params: Any) -> Any:
        self.calls += 1
        self.points += int(np.size(x)) if isinstance(x, np.ndarray) else 1
        fn, takes_arrays = BASES[self.base]
        if isinstance(x, np.ndarray) and x.ndim > 0:
            if not (self.vector and takes_arrays):
                raise TypeError("only scalars are accepted")  # what math.* says to an array, more or less
            return self._array(fn, x)
        y = fn(x)
        for fault in self.faults:
            if fault.fires(self.calls, x):
                y = _apply(fault, y, x)
        return y

    def _array(self, fn: Any, x: Any) -> Any:
        with np.errstate(all="ignore"):
            y = np.asarray(fn(x))
            for fault in self.faults:
                m = fault.mask(self.calls, x)
                if not np.any(m):
                    continue
                if fault.what == "return" and fault.payload in _NUMERIC:
                    v = VALUES[fault.payload]()
                    if isinstance(v, complex) or np.iscomplexobj(v):
                        y = y.astype(np.complex128)
                    y = np.where(m, v, y)
                elif fault.what in ("raise", "return"):
                    return _apply(fault, y, x)  # the whole call fails or returns garbage
                else:
                    y = np.where(m, _apply(fault, y, x), y)
        return y

    def fresh(self) -> Hostile:
        """Zero the counters (an explicit example's function is shared by every run of the test)."""
        self.calls = self.points = 0
        return self

    def __repr__(self) -> str:
        faults = "; ".join(map(repr, self.faults)) or "no faults"
        return f"Hostile({self.base!r}, {'arrays' if self.vector else 'scalars only'}: {faults})"


def _apply(fault: Fault, y: Any, x: Any) -> Any:
    if fault.what == "raise":
        exc = EXCEPTIONS[fault.payload]
        raise exc(f"hostile {fault.payload} at x = {x!r:.40}")
    if fault.what == "return":
        return VALUES[fault.payload]()
    if fault.what == "flip":
        return -y
    if fault.what == "jump":
        return y + (1.0 if fault.payload == "up" else -1.0)
    if fault.what == "noise":
        return y * (1 + 1e-12 * ((hash(repr(x)) % 7) - 3))  # deterministic rounding-size noise
    return y * (1e300 if fault.payload == "huge" else 1e-300)  # scale


# -- strategies -----------------------------------------------------------------------------------------
_EDGE_FLOATS = [0.0, -0.0, 1.0, -1.0, 0.5, 2.0, 1e-300, -1e-300, 5e-324, 1e8, 1e300, -1e300, 1.7976931348623157e308,
                math.nan, math.inf, -math.inf]


def floats() -> st.SearchStrategy[float]:
    """Ordinary, extreme and non-finite floats."""
    return st.one_of(
        st.floats(-10, 10, allow_nan=False), st.sampled_from(_EDGE_FLOATS),
        st.floats(allow_nan=True, allow_infinity=True)
    )


def faults() -> st.SearchStrategy[Fault]:
    what = st.sampled_from(["raise", "return", "flip", "jump", "noise", "scale"])

    def payload(w: str) -> st.SearchStrategy[str]:
        if w == "raise":
            return st.sampled_from(sorted(EXCEPTIONS))
        if w == "return":
            return st.sampled_from(sorted(VALUES))
        if w == "jump":
            return st.sampled_from(["up", "down"])
        if w == "scale":
            return st.sampled_from(["huge", "tiny"])
        return st.just("-")

    return what.flatmap(lambda w: st.builds(
        Fault,
        when=st.sampled_from(["always", "after", "after", "every", "above", "below", "near"]),
        n=st.integers(0, 25),
        t=st.floats(-5, 5, allow_nan=False).map(lambda v: round(v, 2)),
        what=st.just(w),
        payload=payload(w),
    ))


def hostile_functions(*, max_faults: int = 2, vector: bool | None = None) -> st.SearchStrategy[Hostile]:
    """A base function with up to ``max_faults`` faults; scalar-only or array-taking."""
    return st.builds(
        Hostile,
        base=st.sampled_from(sorted(BASES)),
        faults=st.lists(faults(), max_size=max_faults).map(tuple),
        vector=st.booleans() if vector is None else st.just(vector),
    )


def starts(*, allow_complex: bool = True) -> st.SearchStrategy[Any]:
    """A start as a user might pass one: a float (or a few), an int, a complex number, or junk."""
    one = st.one_of(floats(), st.integers(-10**400, 10**400), st.integers(-5, 5))
    junk = st.sampled_from([None, "1.0", True, [], [None], (1.0, "a"), {"x": 1.0}, np.float64(1.5),
                            np.array([1.0, 2.0])])
    parts = [one, one, st.lists(one, min_size=1, max_size=4), st.tuples(one, one), junk]
    if allow_complex:
        parts.append(st.complex_numbers(max_magnitude=10, allow_nan=False))
    return st.one_of(*parts)


def brackets() -> st.SearchStrategy[Any]:
    """A bracket: ordered, reversed, equal, non-finite, wrong length, or not a pair at all."""
    pair = st.tuples(floats(), floats())
    return st.one_of(
        st.none(), pair, pair.map(list), st.tuples(st.floats(-10, 0), st.floats(0.01, 10)),
        st.tuples(st.floats(-10, 10), st.floats(-10, 10)).map(lambda p: (max(p), min(p))),  # reversed
        st.sampled_from([(1.0, 1.0), (1.0,), (0.0, 1.0, 2.0), "0 1", 5.0, (None, 1.0), ("a", "b")]),
    )


def tolerances() -> st.SearchStrategy[Any]:
    """A tolerance: 0, small, huge, negative, non-finite, or not a number."""
    return st.one_of(
        st.just(0.0), st.floats(0, 1e-3), st.sampled_from([1e-15, 1.0, 1e300, -1e-8, math.nan, math.inf, -math.inf]),
        st.sampled_from([None, "1e-8", True, 1]),
    )


def budgets() -> st.SearchStrategy[Any]:
    """An evaluation budget: mostly small positive ints, sometimes invalid."""
    return st.one_of(st.integers(1, 40), st.integers(1, 40), st.sampled_from([0, -1, True, 3.0, None, "10", 300]))
