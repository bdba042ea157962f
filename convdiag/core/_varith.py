"""Complex arithmetic that the scalar driver and the vectorised engine share, so their lanes agree bit for bit.

numpy's complex quotient multiplies by the reciprocal of the denominator,
where Python's divides by it: the two differ in the last bit in about half of
all cases, and a quotient is what every open method's step is made of. Doing
Python's quotient on arrays takes a dozen numpy passes per step, so the
shared quotient is numpy's: in complex arithmetic the scalar evaluator hands
the methods :class:`NumpyDivComplex` values, Python complex numbers in every
other respect (repr, ``float()``, ``abs()``, products, powers) whose
quotients follow numpy's formula, and the lanes divide with numpy.

The other operations follow Python: numpy's complex products and moduli use
fused multiply-adds on processors that have them, and are cheap to redo with
Python's formulas on the real and imaginary parts (:func:`mul`,
:func:`le_abs`). Real lanes need none of this: numpy's float operations are
IEEE operations, as Python's are.

Large temporaries are taken from a :class:`Scratch` pool: a fresh array of
more than about 128 KiB costs page faults every time it is allocated.
"""

from __future__ import annotations

from typing import Any

import numpy as np
from numpy.typing import NDArray

__all__ = ["NumpyDivComplex", "Scratch", "cx", "le_abs", "minus_quotient", "mul", "numpy_quotient"]

Arr = NDArray[Any]
_F8 = np.float64
_NAN = float("nan")


def numpy_quotient(ar: float, ai: float, br: float, bi: float) -> tuple[float, float]:
    """(ar + i ai) / (br + i bi) by numpy's formula (its complex ``divide`` loop), in Python floats.

    Smith's method with the reciprocal of the denominator: where |br| >= |bi|, with r = bi/br and
    s = 1/(br + bi·r), ((ar + ai·r)·s, (ai - ar·r)·s); elsewhere, with r = br/bi and
    s = 1/(bi + br·r), ((ar·r + ai)·s, (ai·r - ar)·s). A zero divisor raises ZeroDivisionError,
    as Python's complex division does (numpy returns infinities).

    Examples
    --------
    >>> numpy_quotient(1.0, 2.0, 3.0, 4.0)
    (0.44, 0.08)
    """
    abr, abi = abs(br), abs(bi)
    if abr >= abi:
        if abr == 0.0:
            raise ZeroDivisionError("complex division by zero")
        r = bi / br
        s = 1.0 / (br + bi * r)
        return (ar + ai * r) * s, (ai - ar * r) * s
    if bi == 0.0:  # br is NaN (|br| >= |bi| failed): numpy gives NaN
        return _NAN, _NAN
    r = br / bi
    s = 1.0 / (bi + br * r)
    return (ar * r + ai) * s, (ai * r - ar) * s


def _wrap(z: Any) -> Any:
    return z if z is NotImplemented else NumpyDivComplex(z)


class NumpyDivComplex(complex):
    """A Python complex number whose quotients are numpy's (:func:`numpy_quotient`).

    Sums, differences, products, powers and negations are Python's and give this type again, so
    every number computed from it divides as numpy does; ``abs()``, ``float()``, ``repr()`` and
    comparisons are those of :class:`complex`.

    Examples
    --------
    >>> z = NumpyDivComplex(1 + 2j)
    >>> z / (3 + 4j), isinstance(z * 2, NumpyDivComplex), repr(z)
    ((0.44+0.08j), True, '(1+2j)')
    """

    __slots__ = ()

    def __add__(self, other: Any) -> Any:
        return _wrap(complex.__add__(self, other))

    def __radd__(self, other: Any) -> Any:
        return _wrap(complex.__radd__(self, other))

    def __sub__(self, other: Any) -> Any:
        return _wrap(complex.__sub__(self, other))

    def __rsub__(self, other: Any) -> Any:
        return _wrap(complex.__rsub__(self, other))

    def __mul__(self, other: Any) -> Any:
        return _wrap(complex.__mul__(self, other))

    def __rmul__(self, other: Any) -> Any:
        return _wrap(complex.__rmul__(self, other))

    def __pow__(self, other: Any, mod: Any = None) -> Any:
        return _wrap(complex.__pow__(self, other, mod))

    def __rpow__(self, other: Any, mod: Any = None) -> Any:
        return _wrap(complex.__rpow__(self, other, mod))

    def __neg__(self) -> NumpyDivComplex:
        return NumpyDivComplex(complex.__neg__(self))

    def __pos__(self) -> NumpyDivComplex:
        return self

    def conjugate(self) -> NumpyDivComplex:
        return NumpyDivComplex(complex.conjugate(self))

    def __truediv__(self, other: Any) -> Any:
        if not isinstance(other, (int, float, complex)):
            return NotImplemented
        b = complex(other)
        return NumpyDivComplex(complex(*numpy_quotient(self.real, self.imag, b.real, b.imag)))

    def __rtruediv__(self, other: Any) -> Any:
        if not isinstance(other, (int, float, complex)):
            return NotImplemented
        a = complex(other)
        return NumpyDivComplex(complex(*numpy_quotient(a.real, a.imag, self.real, self.imag)))


def cx(re: Arr, im: Arr) -> Arr:
    """A complex array from its real and imaginary parts."""
    out = np.empty(re.shape, np.complex128)
    out.real, out.imag = re, im
    return out


class Scratch:
    """Reusable work arrays by name (views of the first ``n`` elements)."""

    def __init__(self) -> None:
        self.bufs: dict[tuple[str, str], Arr] = {}

    def __call__(self, name: str, n: int, dt: Any = _F8) -> Arr:
        key = (name, np.dtype(dt).char)
        buf = self.bufs.get(key)
        if buf is None or buf.shape[0] < n:
            buf = self.bufs[key] = np.empty(max(n, 1024), dt)
        return buf[:n]


def mul(a: Arr, b: Arr) -> Arr:
    """a * b lane by lane, complex products by Python's formula (no fused multiply-add)."""
    if a.dtype.kind != "c" or b.dtype.kind != "c":
        return a * b
    ar, ai, br, bi = a.real, a.imag, b.real, b.imag
    return cx(ar * br - ai * bi, ar * bi + ai * br)


def minus_quotient(x: Arr, a: Arr, b: Arr, sc: Scratch) -> Arr:
    """x - a / b lane by lane (numpy's quotient, as :class:`NumpyDivComplex` divides), in a new array."""
    q = np.divide(a, b, out=sc("mq", x.shape[0], np.result_type(a, b)))
    return np.subtract(x, q)


def le_abs(sc: Scratch, a: Arr, tol: float, rtol: float = 0.0, b: Arr | None = None, key: str = "le") -> Arr:
    """``abs(a) <= tol + rtol*abs(b)`` lane by lane, decided as Python decides it (in the scratch array ``key``).

    Python's ``abs`` of a complex number is ``hypot``; numpy's complex ``abs`` is much faster but
    may differ in the last bit, so lanes within 1e-13 of the threshold are decided again with
    ``hypot``.
    """
    n = a.shape[0]
    m = np.abs(a, out=sc("abs_a", n))
    t: Any = tol
    if rtol and b is not None:
        t = np.abs(b, out=sc("abs_b", n))
        t *= rtol
        if tol:
            t += tol
    le: Arr = np.less_equal(m, t, out=sc(key, n, np.bool_))
    if a.dtype.kind != "c":
        return le
    with np.errstate(all="ignore"):
        if isinstance(t, np.ndarray):
            gap = np.abs(np.subtract(m, t, out=m), out=m)
            near = np.less_equal(gap, np.multiply(t, 1e-13, out=t), out=sc("near", n, np.bool_))
        else:
            near = np.abs(np.subtract(m, t, out=m), out=m) <= 1e-13 * t
    if near.any():
        at = np.flatnonzero(near)
        sub = a.take(at)
        te: Any = tol
        if rtol and b is not None:
            te = tol + rtol * _hypot(b.take(at))
        le[at] = np.hypot(sub.real, sub.imag) <= te
    return le


def _hypot(a: Arr) -> Arr:
    return np.hypot(a.real, a.imag) if a.dtype.kind == "c" else np.abs(a)
