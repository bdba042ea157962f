"""Flat spots of f: a zero slope, a long throw from a small slope, no sign change at all.

Closed forms in the comments: f = x³ − 2x + 2 has f' = 0 at √(2/3), where f = 2 − (4/3)√(2/3);
Newton's first step from 1.5 on sin x has length tan 1.5 and slope cos 1.5; x² + 1 > 0 everywhere.
"""

import math

import numpy as np
import pytest

from convdiag import solve
from convdiag.core._diagnose import diagnose


def test_a_zero_slope_stop_is_flat_with_the_point():
    # f'(x) = 3x² − 2 vanishes at √(2/3); f there is 2 − (4/3)√(2/3) = 0.91134 (not a root)
    d = diagnose(solve("x**3 - 2*x + 2", "newton", start=math.sqrt(2 / 3)))
    assert d.verdict == "flat" and d.primary.tag == "zero slope"
    assert d.primary.value("f there") == pytest.approx(2 - 4 / 3 * math.sqrt(2 / 3), rel=1e-12)


def test_a_small_slope_throw_names_the_slope_and_the_step():
    d = diagnose(solve("sin(x)", "newton", start=1.5))
    f = d.finding("flat")
    assert f.value("slope used") == pytest.approx(math.cos(1.5), rel=1e-12)  # Newton's slope is f'(1.5)
    assert f.value("step length") == pytest.approx(math.tan(1.5), rel=1e-12)  # |f/f'| = tan 1.5 = 14.1


@pytest.mark.parametrize("method", ["newton", "secant"])
def test_a_function_without_a_real_root_is_flat_with_no_sign_change(method):
    # x² + 1 > 0 everywhere: Newton and the secant method wander around its minimum at 0, where |f| = 1
    d = diagnose(solve("x**2 + 1", method, start=0.5))
    assert d.verdict == "flat" and d.primary.tag == "no sign change"
    assert d.primary.value("sign of f") == "+" and d.primary.value("smallest |f|") >= 1.0
    assert d.primary.value("bracket search") == "no sign change" and d.remedy is None
    assert "no real root" in d.primary.summary


KEPLER = "x - ecc*sin(x) - M"


def kepler_root(m, ecc):
    """E with E − e·sin E = M: scipy's brentq on [M, M + e], which holds the root (f(M) = −e·sin M < 0,
    f(M + e) = e·(1 − sin(M + e)) ≥ 0)."""
    from scipy.optimize import brentq

    return brentq(lambda e_: e_ - ecc * math.sin(e_) - m, m, m + ecc, xtol=1e-15)


@pytest.mark.parametrize("form", ["expression", "callable"])
def test_newton_on_kepler_at_high_eccentricity_is_thrown_about_by_flat_tangents(form):
    # e = 0.99, M = 0.14 from E0 = M: f'(E) = 1 − e·cos E is 0.0197 at E0, and again and again the tangent throws
    # the iterate far away (|E| reaches ~8e5) until the budget runs out.
    from convdiag.demos import kepler_prime, kepler_residual

    orbit = {"M": 0.14, "ecc": 0.99}
    calls = []

    def f(e_, M, ecc):
        calls.append(e_)
        return kepler_residual(e_, M, ecc)

    if form == "expression":
        run = solve(KEPLER, "newton", start=0.14, params=orbit)
        problem = KEPLER
    else:
        run = solve(f, "newton", start=0.14, fprime=kepler_prime, params=orbit)
        problem = f
    assert run.stop_reason == "max-evals" and max(abs(run.iterates)) > 1e5
    before = len(calls)
    d = diagnose(run)
    assert d.verdict == "flat" and d.primary.tag == "repeated throws", (d, d.kinds)
    assert d.primary.value("throws") >= 3
    x_flat, slope = d.primary.value("flattest throw")
    assert slope == pytest.approx(1 - 0.99 * math.cos(x_flat), rel=1e-6)  # the slope Newton used is f'(x)
    assert not any("noise" in n for n in d.notes) and "noise-floor" not in d.kinds  # nothing stalled: no noise probe
    assert "unattainable-tolerance" not in d.kinds
    # every probe is near the start and the root, or within 1e-3 (relative) of an iterate (the derivative check);
    # none is spaced like the wandering iterates (a noise sample 1e4 apart reads sin E as noise)
    # (the bracket search tries arrays first, the derivative check a complex step)
    probes = [float(p) for p in calls[before:] if np.ndim(p) == 0 and not np.iscomplexobj(p)]
    near = [min(abs(p - x) for x in run.iterates) <= 1e-3 * max(1.0, abs(p)) or abs(p) <= 10 for p in probes]
    assert all(near) and (form == "expression" or probes)
    root = kepler_root(0.14, 0.99)
    lo, hi = d.remedy.bracket
    assert 0.14 <= lo <= root <= hi <= 0.14 + 0.99
    cured = d.remedy.solve(problem, params=orbit)
    assert cured.converged and abs(cured.root - root) < 1e-14


def test_a_run_that_recovers_from_repeated_throws_is_converged_and_says_why_it_took_long():
    # e = 0.99, M = 0.08 from E0 = M: thrown about for ~35 steps, then quadratic to the root
    from convdiag.demos import kepler_prime, kepler_residual

    run = solve(kepler_residual, "newton", start=0.08, fprime=kepler_prime, params={"M": 0.08, "ecc": 0.99})
    assert run.converged and abs(run.root - kepler_root(0.08, 0.99)) < 1e-14
    d = diagnose(run)
    assert d.verdict == "converged" and d.kinds == ("converged", "flat")
    assert d.finding("flat").tag == "repeated throws" and "before they closed in" in d.finding("flat").summary
