"""Lane arithmetic (convdiag.core._varith): numpy's complex quotient in Python floats, Python's products
and moduli on arrays, and the complex type the scalar driver computes with.

References: numpy's own ``divide`` loop on complex128 arrays (what the lanes use) for the quotient;
Python's ``complex`` multiplication and ``abs`` (what the scalar driver uses) for products and
moduli. Special values follow IEEE 754 (zeros of both signs, infinities, NaN, subnormals).
"""

import itertools
import math
import pickle

import numpy as np
import pytest

from convdiag import solve
from convdiag.core._varith import NumpyDivComplex, Scratch, le_abs, minus_quotient, mul, numpy_quotient

SPECIAL = [0.0, -0.0, math.inf, -math.inf, math.nan, 5e-324, -5e-324, 1.0, -1.0, 1e308, -3e-300, 2.5]


def _same(u, v):
    """Equal bit for bit (the sign of a zero included; any NaN equals any NaN)."""
    if math.isnan(u) or math.isnan(v):
        return math.isnan(u) and math.isnan(v)
    return u == v and math.copysign(1.0, u) == math.copysign(1.0, v)


def _wide(rng, n):
    """Complex numbers over the whole exponent range, some parts zero."""
    e = rng.integers(-320, 309, (n, 2)) * rng.integers(0, 2, (n, 2))
    parts = rng.uniform(-1, 1, (n, 2)) * np.power(10.0, e)
    parts[::13, 0] = 0.0
    parts[::17, 1] = 0.0
    return parts[:, 0] + 1j * parts[:, 1]


def test_the_python_quotient_equals_numpys_divide_loop_over_the_whole_exponent_range():
    rng = np.random.default_rng(2024)
    a, b = _wide(rng, 100_000), _wide(rng, 100_000)
    b[b == 0] = 1.0
    with np.errstate(all="ignore"):
        ref = a / b  # numpy's complex divide loop
    mismatches = 0
    for x, y, r in zip(a.tolist(), b.tolist(), ref.tolist()):
        qr, qi = numpy_quotient(x.real, x.imag, y.real, y.imag)
        mismatches += not (_same(qr, r.real) and _same(qi, r.imag))
    assert mismatches == 0
    python_differs = sum(complex(x) / complex(y) != r for x, y, r in zip(a[:2000].tolist(), b[:2000].tolist(),
                                                                         ref[:2000].tolist()))
    assert python_differs > 100  # Python's own complex division is not numpy's: the test can fail


def test_the_python_quotient_equals_numpys_on_every_combination_of_special_values():
    combos = [c for c in itertools.product(SPECIAL, repeat=4) if not (c[2] == 0 and c[3] == 0)]
    a = np.array([complex(c[0], c[1]) for c in combos])
    b = np.array([complex(c[2], c[3]) for c in combos])
    with np.errstate(all="ignore"):
        ref = a / b
    for c, r in zip(combos, ref.tolist()):
        qr, qi = numpy_quotient(*c)
        assert _same(qr, r.real) and _same(qi, r.imag), c


def test_a_zero_divisor_raises_as_pythons_complex_division_does():
    with pytest.raises(ZeroDivisionError, match="complex division by zero"):
        numpy_quotient(1.0, 2.0, 0.0, -0.0)
    with pytest.raises(ZeroDivisionError):
        NumpyDivComplex(1 + 1j) / 0


def test_the_scalar_type_divides_as_numpy_and_otherwise_is_a_python_complex():
    rng = np.random.default_rng(5)
    z = rng.uniform(-2, 2, 500) + 1j * rng.uniform(-2, 2, 500)
    w = rng.uniform(-2, 2, 500) + 1j * rng.uniform(-2, 2, 500)
    for a, b, q in zip(z.tolist(), w.tolist(), (z / w).tolist()):
        c = NumpyDivComplex(a)
        assert c / b == q and b / NumpyDivComplex(a) == complex((np.array([b]) / np.array([a]))[0])
        for got, want in ((c + b, a + b), (b - c, b - a), (c * b, a * b), (c**3, a**3), (2.5 * c, 2.5 * a), (-c, -a)):
            assert type(got) is NumpyDivComplex and got == want  # Python's arithmetic, bit for bit
        assert abs(c) == abs(a) and type(abs(c)) is float
    c = NumpyDivComplex(1 + 2j)
    assert repr(c) == "(1+2j)" and f"{c:.1f}" == "1.0+2.0j" and isinstance(c, complex)
    assert type(pickle.loads(pickle.dumps(c))) is NumpyDivComplex
    with pytest.raises(TypeError):
        float(c)  # as for any complex number (numpy's complex128 would warn and drop the imaginary part)


def test_products_on_lanes_are_pythons_complex_products():
    rng = np.random.default_rng(8)
    a, b = _wide(rng, 20_000), _wide(rng, 20_000)
    with np.errstate(all="ignore"):
        got = mul(a, b)
    want = [x * y for x, y in zip(a.tolist(), b.tolist())]  # Python's complex multiplication
    assert all(_same(g.real, w.real) and _same(g.imag, w.imag) for g, w in zip(got.tolist(), want))


def test_modulus_tests_at_the_threshold_are_decided_by_pythons_abs():
    # numpy's complex abs and Python's (hypot) differ in the last bit for some values: put the
    # threshold exactly at Python's |z|, and one float below it
    rng = np.random.default_rng(3)
    z = rng.uniform(-1, 1, 200_000) + 1j * rng.uniform(-1, 1, 200_000)
    hyp = np.array([abs(v) for v in z.tolist()])  # Python's abs
    z = z[np.abs(z) != hyp][:200]
    assert z.size == 200  # they do differ, so the test can fail
    hyp = np.array([abs(v) for v in z.tolist()])
    sc = Scratch()
    for rtol_ref, expect in ((hyp, True), (np.nextafter(hyp, 0), False)):
        got = le_abs(sc, z, 0.0, 0.5, 2.0 * rtol_ref)  # |z| <= 0.5 * |2 t| (exact scalings)
        assert got.tolist() == [expect] * 200


def test_x_minus_a_quotient_is_numpys():
    rng = np.random.default_rng(4)
    x, a, b = (rng.normal(size=(3, 1000)) + 1j * rng.normal(size=(3, 1000)))
    np.testing.assert_array_equal(minus_quotient(x, a, b, Scratch()), x - a / b)


def test_the_scalar_driver_divides_complex_numbers_as_numpy_does():
    # convdiag.solve in complex arithmetic: the first Newton step is x0 - f/f' with numpy's quotient
    start = 1.311 - 0.363j
    fx, d = start**3 - 1, 3 * start * start
    assert fx / d != complex((np.array([fx]) / np.array([d]))[0])  # a start where the two quotients differ
    run = solve(lambda z: z**3 - 1, "newton", start=start, fprime=lambda z: 3 * z * z, max_steps=1)
    assert run.steps[0].x == start - complex((np.array([fx]) / np.array([d]))[0])
    assert type(run.steps[0].x) is NumpyDivComplex and type(run.steps[0].fx) is NumpyDivComplex
