"""Each method's iterates against an independent 50-digit mpmath implementation of its formula,
plus known behaviour from the literature. Common checks run over every registered method."""

import math

import mpmath
import pytest

from convdiag import METHODS, solve
from convdiag.core import Step

# Smooth problems with simple roots: (name, f, f', f'', start, bracket), written once for
# mpmath (reference) and once for floats (run). The roots come from mpmath.findroot at 50 digits.
PROBLEMS = {
    "cos(x) - x": (lambda x, m: m.cos(x) - x, lambda x, m: -m.sin(x) - 1, lambda x, m: -m.cos(x), 1.0, (0.0, 1.0)),
    "exp(x) - 2 - x/3": (
        lambda x, m: m.exp(x) - 2 - x / 3,
        lambda x, m: m.exp(x) - mpmath.mpf(1) / 3 if m is mpmath else m.exp(x) - 1 / 3,
        lambda x, m: m.exp(x),
        1.0,
        (0.0, 2.0),
    ),
    "x**3 - 2x - 5 (Wallis)": (
        lambda x, m: x**3 - 2 * x - 5,
        lambda x, m: 3 * x**2 - 2,
        lambda x, m: 6 * x,
        2.0,
        (2.0, 3.0),
    ),
    "sin(x) - x/2 (APS problem 1)": (
        lambda x, m: m.sin(x) - x / 2,
        lambda x, m: m.cos(x) - mpmath.mpf(1) / 2 if m is mpmath else m.cos(x) - 0.5,
        lambda x, m: -m.sin(x),
        2.0,
        (math.pi / 2, math.pi),
    ),
}


def mp_root(name):
    """Reference root: mpmath.findroot (secant) at 50 digits, polished from the float bracket."""
    f, _, _, x0, (a, b) = PROBLEMS[name]
    with mpmath.workdps(50):
        return mpmath.findroot(lambda x: f(x, mpmath), (mpmath.mpf(a), mpmath.mpf(b)), solver="anderson")


# -- independent reference iterations at 50 digits (textbook formulas) ----------------------
def ref_iterates(method, name, n):
    f, d1, d2, x0, (a, b) = PROBLEMS[name]
    F = lambda x: f(x, mpmath)  # noqa: E731
    D1 = lambda x: d1(x, mpmath)  # noqa: E731
    D2 = lambda x: d2(x, mpmath)  # noqa: E731
    out = []
    with mpmath.workdps(50):
        a, b, x = mpmath.mpf(a), mpmath.mpf(b), mpmath.mpf(x0)
        if method == "newton":
            for _ in range(n):
                x = x - F(x) / D1(x)
                out.append(x)
        elif method == "halley":
            for _ in range(n):
                fx, g, h = F(x), D1(x), D2(x)
                x = x - 2 * fx * g / (2 * g * g - fx * h)
                out.append(x)
        elif method == "steffensen":
            for _ in range(n):
                fx = F(x)
                x = x - fx * fx / (F(x + fx) - fx)
                out.append(x)
        elif method == "secant":
            p, q = x, x + mpmath.mpf(1e-4) * max(1, abs(x))
            for _ in range(n):
                p, q = q, q - F(q) * (q - p) / (F(q) - F(p))
                out.append(q)
        elif method == "iqi":
            d = mpmath.mpf(1e-4) * max(1, abs(x))
            xs = [x, x + d, x + 2 * d]
            for _ in range(n):
                (x0_, x1, x2), (y0, y1, y2) = xs, [F(v) for v in xs]
                x3 = (
                    x0_ * y1 * y2 / ((y0 - y1) * (y0 - y2))
                    + x1 * y0 * y2 / ((y1 - y0) * (y1 - y2))
                    + x2 * y0 * y1 / ((y2 - y0) * (y2 - y1))
                )
                xs = [x1, x2, x3]
                out.append(x3)
        elif method == "bisection":
            fa = F(a)
            for _ in range(n):
                m = (a + b) / 2
                fm = F(m)
                out.append(m)
                if (fm > 0) == (fa > 0):
                    a, fa = m, fm
                else:
                    b = m
        elif method in ("regula-falsi", "illinois"):
            # Wikipedia "Regula falsi", Illinois algorithm pseudo-code (side flag form).
            s, t = a, b
            fs, ft = F(s), F(t)
            side = 0
            for _ in range(n):
                r = (fs * t - ft * s) / (fs - ft)
                fr = F(r)
                out.append(r)
                if fr * ft > 0:
                    t, ft = r, fr
                    if side == -1 and method == "illinois":
                        fs /= 2
                    side = -1
                elif fs * fr > 0:
                    s, fs = r, fr
                    if side == +1 and method == "illinois":
                        ft /= 2
                    side = +1
                else:
                    break
        else:
            raise AssertionError(method)
    return out


def float_run(method, name, **kw):
    f, d1, d2, x0, br = PROBLEMS[name]
    m = mpmath if kw.get("digits") else math  # high-precision runs need functions that compute in mpmath
    return solve(
        lambda x: f(x, m),
        method,
        start=None if METHODS[method].needs_bracket else x0,
        bracket=br if METHODS[method].needs_bracket else None,
        fprime=lambda x: d1(x, m),
        fprime2=lambda x: d2(x, m),
        **kw,
    )


CLASSIC = ["newton", "secant", "iqi", "bisection", "regula-falsi", "illinois", "steffensen", "halley"]


@pytest.mark.parametrize("name", list(PROBLEMS))
@pytest.mark.parametrize("method", CLASSIC)
def test_iterates_match_a_50_digit_mpmath_reference(method, name):
    run = float_run(method, name, max_evals=60)
    root = mp_root(name)
    xs = [s.x for s in run.steps]
    ref = ref_iterates(method, name, len(xs))
    compared = 0
    for k, (x, r) in enumerate(zip(xs, ref)):
        # Compare while the step is well conditioned: until the reference is within 1e-7 of the
        # root (after that, both sequences sit at the rounding level and may differ in the last bits).
        if abs(r - root) < 1e-7 * max(1, abs(root)):
            break
        assert abs(x - float(r)) <= 1e-9 * max(1.0, abs(float(r))), (method, name, k, x, r)
        compared += 1
    assert compared >= 1
    # and the run ends within a few ulps of the 50-digit root (mpmath.findroot reference)
    if method != "regula-falsi":  # plain regula falsi stagnates on some of these (expected)
        assert run.converged, run
        assert abs(float(run.root) - float(root)) <= 8 * math.ulp(float(root)), (run.root, root)


@pytest.mark.parametrize("method", sorted(METHODS))
def test_every_step_carries_a_model_that_reproduces_the_step(method):
    run = float_run(method, "cos(x) - x", max_evals=40)
    assert run.steps, run
    for s in run.steps:
        assert isinstance(s, Step) and s.reason
        predicted = s.model.predict()
        if s.model.kind == "midpoint":
            assert predicted == s.x
        else:
            assert abs(predicted - s.x) <= 1e-12 * max(1, abs(s.x)), (s.model, s.x)
        xs, ys = s.model.curve(0.0, 2.0)
        assert len(xs) == len(ys)
        if METHODS[method].needs_bracket:
            lo, hi = s.bracket
            assert lo <= hi and s.bracket_before[0] <= lo and hi <= s.bracket_before[1]


@pytest.mark.parametrize("method", sorted(METHODS))
def test_every_method_runs_in_50_digit_arithmetic(method):
    # Reference root: mpmath.findroot at 50 digits.
    run = float_run(method, "exp(x) - 2 - x/3", digits=50, max_evals=400)
    root = mp_root("exp(x) - 2 - x/3")
    assert run.converged and run.arithmetic == "mpmath", run
    with mpmath.workdps(50):
        assert abs(run.root - root) < mpmath.mpf(10) ** -40


def test_newton_from_zero_on_x3_minus_2x_plus_2_alternates_between_0_and_1():
    # Standard textbook example (e.g. Burden & Faires, "Numerical Analysis", from memory;
    # also Wikipedia "Newton's method"): the iterates cycle 0, 1, 0, 1, ...
    run = solve(lambda x: x**3 - 2 * x + 2, "newton", start=0.0, fprime=lambda x: 3 * x**2 - 2, max_evals=21)
    assert run.iterates.tolist() == [0.0, 1.0, 0.0, 1.0, 0.0, 1.0, 0.0, 1.0, 0.0, 1.0, 0.0][: len(run.iterates)]
    assert len(run.iterates) == 11 and not run.converged and run.stop_reason == "max-evals"


def test_bisection_midpoints_obey_the_halving_error_bound():
    # Burden & Faires, Theorem 2.1 (from memory): |p_n - p| <= (b - a) / 2**n.
    run = solve(lambda x: math.cos(x) - x, "bisection", bracket=(0.0, 1.0))
    root = float(mpmath.findroot(lambda x: mpmath.cos(x) - x, 0.7))  # reference: mpmath
    for n, s in enumerate(run.steps, start=1):
        assert abs(s.x - root) <= 1.0 / 2**n + 1e-16


def test_regula_falsi_stagnates_on_x10_minus_1_as_published():
    # Chapra & Canale, "Numerical Methods for Engineers", Example 5.6 (from memory; values
    # recomputed in shared/REFERENCES.md): f = x^10 - 1 on [0, 1.3].
    run = solve(lambda x: x**10 - 1, "regula-falsi", bracket=(0.0, 1.3), max_evals=42)
    first = [round(s.x, 4) for s in run.steps[:5]]
    assert first == [0.0943, 0.1818, 0.2629, 0.3381, 0.4079]
    assert abs(run.steps[39].x - 1) > 1e-4  # still visibly short of 1 after 40 steps
    bis = solve(lambda x: x**10 - 1, "bisection", bracket=(0.0, 1.3), max_steps=14)
    assert abs(bis.steps[-1].x - 1) < 1e-4


@pytest.mark.parametrize("x0, diverges", [(1.39, False), (1.5, True)])
def test_newton_on_arctan_diverges_beyond_1_3917(x0, diverges):
    # Threshold 1.3917452002707349 = root of 2x = (1 + x^2) atan x (shared/REFERENCES.md, recomputed).
    run = solve(math.atan, "newton", start=x0, fprime=lambda x: 1 / (1 + x * x))
    if diverges:
        assert not run.converged and run.stop_reason in ("nonfinite-value", "iterate-overflow", "zero-derivative")
        assert max(abs(v) for v in run.iterates) > 1e10
    else:
        assert run.converged and abs(run.root) < 1e-300


@pytest.mark.parametrize("method", ["newton", "secant", "iqi"])
def test_open_methods_reach_a_simple_root_within_a_few_ulps(method):
    # Reference: mpmath.findroot at 50 digits.
    for name in PROBLEMS:
        run = float_run(method, name)
        root = float(mp_root(name))
        assert abs(run.root - root) <= 4 * math.ulp(root), (name, run.root, root)


def test_efficiency_index_is_ostrowskis_p_to_the_one_over_d():
    # Ostrowski (1960) / Traub (1964) efficiency index, from memory; values in shared/REFERENCES.md.
    assert METHODS["newton"].efficiency_index() == pytest.approx(math.sqrt(2))
    assert METHODS["secant"].efficiency_index() == pytest.approx((1 + math.sqrt(5)) / 2)
    assert METHODS["iqi"].efficiency_index() == pytest.approx(1.8392867552, abs=1e-9)
    assert METHODS["halley"].efficiency_index() == pytest.approx(3 ** (1 / 3))
