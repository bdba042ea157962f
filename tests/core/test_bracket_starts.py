"""Recommended starts of root brackets, each checked by one step (convdiag.core._bracket_starts).

Check values: zeros of the Bessel function J0 from scipy.special.jn_zeros, roots from scipy's brentq,
the real root of x³ − 2x − 5 from numpy.roots.
"""

import math

from scipy.optimize import brentq
from scipy.special import j0, jn_zeros

from convdiag import solve
from convdiag.core._brackets import find_brackets

CUBIC_ROOT = 2.0945514815423265  # x^3 - 2x - 5: the real root, reference numpy.roots([1, 0, -2, -5])


def _inside(c, r):
    return c.lo <= r <= c.hi


# -- recommended starts -----------------------------------------------------------------------


def _j0(x):
    return float(j0(x))


def test_newton_secant_and_iqi_from_the_recommended_starts_reach_the_root_in_the_bracket():
    zeros = jn_zeros(0, 16)  # reference: scipy.special.jn_zeros
    for c in find_brackets(j0, domain=(0.0, 50.0)).roots:
        (z,) = [z for z in zeros if _inside(c, z)]
        for method, start in (("newton", c.newton), ("secant", list(c.secant)), ("iqi", list(c.iqi))):
            run = solve(_j0, method, start=start)
            assert run.converged and abs(run.root - z) < 1e-12 * max(1.0, z), (method, z)


def test_recommended_newton_starts_converge_on_an_expression_with_a_symbolic_derivative():
    f = "exp(x) - 2 - x/3"
    found = find_brackets(f, domain=(-8.0, 3.0))
    assert len(found.roots) == 2
    for c in found.roots:
        ref = brentq(lambda x: math.exp(x) - 2 - x / 3, c.lo, c.hi, xtol=1e-15)  # reference: scipy brentq
        run = solve(f, "newton", start=c.newton)
        assert run.converged and abs(run.root - ref) < 1e-13
        assert any("symbolic" in t for t in c.checks)
    assert found.evals.count_kind("df") >= 2


def test_a_given_derivative_is_used_to_check_the_newton_start():
    found = find_brackets(lambda x: x**3 - 2 * x - 5, near=0.0, fprime=lambda x: 3 * x**2 - 2)
    c = found.roots[0]
    assert any("from the problem (user)" in t for t in c.checks)
    assert abs(solve(lambda x: x**3 - 2 * x - 5, "newton", start=c.newton).root - CUBIC_ROOT) < 1e-14
