"""The derivative check: your f' against the slope of f, and what a wrong one does to Newton.

Newton with a slope g ≠ f' converges linearly with rate |1 − f'(r)/g(r)| (shared/REFERENCES.md §1
[V]). The slope of f is checked against math.sin/math.exp closed forms; the root of cos x − x is
0.7390851332151607 (mpmath.findroot).
"""

import math

import numpy as np
import pytest

from convdiag import solve
from convdiag.core._diagnose import diagnose


@pytest.mark.parametrize(
    "name, fprime, ratio",
    [
        ("twice the slope", lambda x: 2 * (-math.sin(x) - 1), 2.0),
        ("sign error in one term", lambda x: math.sin(x) - 1, None),
    ],
)
def test_a_wrong_user_derivative_is_flagged_with_where_and_how_much(name, fprime, ratio):
    f = lambda x: math.cos(x) - x
    d = diagnose(solve(f, "newton", start=1.0, fprime=fprime))
    w = d.finding("wrong-derivative")
    assert d.verdict == "wrong-derivative" and w is not None
    rows = [r for r in w.evidence if r[0].startswith("f' at x = ")]
    assert rows and all(abs(g - s) > 0.1 * abs(s) for _, (_, g, s), _ in rows)
    # the slope of f where it was checked is the true f' = −sin x − 1 (to the difference error)
    for _, (x, g, s), _ in rows:
        assert s == pytest.approx(-math.sin(x) - 1, rel=1e-6)
        assert g == fprime(x)
        if ratio is not None:
            assert g / s == pytest.approx(ratio, rel=1e-6)
    cured = w.remedy.solve(f, fprime=fprime)
    assert w.remedy.drop_fprime and cured.converged and abs(cured.root - 0.7390851332151607) < 1e-15


def test_the_rate_of_newton_with_twice_the_slope_is_one_half():
    # rate |1 − f'/g| = 1/2 for g = 2f' (REFERENCES §1)
    f = lambda x: math.cos(x) - x
    d = diagnose(solve(f, "newton", start=1.0, fprime=lambda x: 2 * (-math.sin(x) - 1)))
    assert d.order is not None and d.order.rate == pytest.approx(0.5, abs=0.01)
    assert "rate |1 − f'/g|" in d.primary.summary


def test_the_right_derivative_is_not_flagged():
    f = lambda x: math.cos(x) - x
    d = diagnose(solve(f, "newton", start=1.0, fprime=lambda x: -math.sin(x) - 1))
    assert d.kinds == ("converged",)
    assert any("agrees with the slope of f" in n for n in d.notes)


def test_a_wrong_derivative_in_an_expression_is_flagged_through_the_complex_step():
    d = diagnose(solve("exp(x) - 2 - x/3", "newton", start=1.0, fprime="2*exp(x)"))
    w = d.primary
    assert d.verdict == "wrong-derivative" and "complex step" in w.evidence[0][2]
    x, g, s = w.evidence[0][1]
    assert x == 1.0 and g == pytest.approx(2 * math.e)
    assert s == pytest.approx(math.exp(1.0) - 1 / 3, rel=1e-12)  # f'(1) = e − 1/3 at the start x = 1


def test_a_sequence_with_the_function_and_derivative_gets_the_same_check():
    f = lambda x: math.cos(x) - x
    g = lambda x: 2 * (-math.sin(x) - 1)
    run = solve(f, "newton", start=1.0, fprime=g, max_evals=30)
    d = diagnose(run.iterates.tolist(), f=f, fprime=g, method="newton")
    assert d.verdict == "wrong-derivative" and d.source_kind == "sequence" and d.probes > 0


def test_a_negative_slope_is_said_to_fall_not_rise():
    # f = cos x − x falls everywhere: f' = −sin x − 1 ≤ 0 (calculus; sympy.diff gives the same). The derivative
    # below drops the −1, so it disagrees with the slope of f.
    f = lambda x: math.cos(x) - x
    d = diagnose(solve(f, "newton", start=1.0, fprime=lambda x: -math.sin(x), max_evals=30))
    w = d.finding("wrong-derivative")
    assert w is not None
    rows = [v for label, v, _ in w.evidence if label.startswith("f' at x")]
    assert rows and all(slope == pytest.approx(-math.sin(x) - 1, rel=1e-6) for x, _, slope in rows)
    assert any(f"f falls at {abs(slope):.6g} (slope {slope:.6g})" in w.summary for _, _, slope in rows)
    assert "rises" not in w.summary


# Kepler's equation E − e·sin E − M (shared/REFERENCES.md §5) at e = 0.99: Newton from E0 = M is thrown far from the
# root (|E| up to 1e8) by flat tangents. Its derivative 1 − e·cos E is exact (sympy.diff, checked below), so it must
# never be called wrong, however far out it is checked; a derivative with half the cosine term still must be.
KEPLER_E = 0.99


def _kepler(m, trig=np):
    return lambda E: E - KEPLER_E * trig.sin(E) - m


def _kepler_prime(E):
    return 1 - KEPLER_E * np.cos(E)


def test_the_kepler_derivative_used_below_is_the_derivative_of_keplers_equation():
    import sympy

    E, e, M = sympy.symbols("E e M")
    assert sympy.simplify(sympy.diff(E - e * sympy.sin(E) - M, E) - (1 - e * sympy.cos(E))) == 0  # sympy.diff


@pytest.mark.parametrize("m", [0.05, 0.1, 0.1257, 0.2, 0.225, 0.2666, 0.3])
@pytest.mark.parametrize("max_evals", [20, 40])
def test_the_exact_kepler_derivative_is_never_called_wrong_on_a_run_thrown_far_from_the_root(m, max_evals):
    run = solve(_kepler(m), "newton", start=m, fprime=_kepler_prime, max_evals=max_evals, xtol=1e-12, rtol=0)
    # with probes (the slope of f checked at the iterates) and without (only the rate of the iterates to go by)
    for probe in (True, False):
        assert "wrong-derivative" not in diagnose(run, probe=probe).kinds


@pytest.mark.parametrize("m", [0.05, 0.1, 0.1257, 0.2, 0.2666, 0.3])
def test_a_kepler_derivative_with_half_the_cosine_term_is_still_called_wrong(m):
    wrong = lambda E: 1 - 0.5 * KEPLER_E * np.cos(E)
    run = solve(_kepler(m), "newton", start=m, fprime=wrong, max_evals=20, xtol=1e-12, rtol=0)
    d = diagnose(run)
    assert d.verdict == "wrong-derivative"
    assert d.primary.remedy.drop_fprime


@pytest.mark.parametrize("x", [3.1e6, 2.97e7, 4.4e8])
@pytest.mark.parametrize("trig", [math, np], ids=["math (no complex step)", "numpy (complex step)"])
def test_the_slope_far_out_is_read_on_the_scale_of_f_not_of_x(x, trig):
    import mpmath

    from convdiag.core._detect_path import Context
    from convdiag.core._detect_slope import _slope
    from convdiag.core._detect_trace import Prober, build_trace

    f = _kepler(0.1257, trig)
    t = build_trace([0.1, 0.2, 0.3], f=f)
    d, err, _ = _slope(t, Context(Prober(f, 60)), x)
    exact = float(1 - KEPLER_E * mpmath.cos(mpmath.mpf(x)))  # mpmath at 15 digits: cos of the double x
    # the difference step eps^(1/3)·|x| is 18 to 2600 here, where sin varies on a scale of 1
    assert abs(d - exact) <= max(10 * err, 1e-12) and abs(d - exact) <= 1e-3 * abs(exact)


def test_a_slope_that_is_not_stable_across_the_steps_is_not_compared():
    # at x = 1e10 the first steps (6e4, 6e3, …) average sin away, ever less as they shrink: the estimates grow apart
    # instead of settling, so no slope is returned (f'(1e10) = 1 − 0.99·cos(1e10) ≈ 0.136, mpmath)
    from convdiag.core._detect_path import Context
    from convdiag.core._detect_slope import _slope
    from convdiag.core._detect_trace import Prober, build_trace

    f = _kepler(0.1257, math)
    t = build_trace([0.1, 0.2, 0.3], f=f)
    d, _, how = _slope(t, Context(Prober(f, 60)), 1e10)
    assert math.isnan(d) and how.startswith("no estimate stable")
