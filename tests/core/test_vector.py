"""The vectorised engine (convdiag.core._vector): lane-by-lane equality with the scalar driver,
outcome classes on published pathologies, and parameter errors.

Sources: the scalar driver ``convdiag.solve`` is what each lane must reproduce (the brief's
requirement); roots are checked against numpy.roots / mpmath; the pathologies and their numbers
are those of REFERENCES §1 and §4 (recomputed there, [V]).
"""

import math

import mpmath
import numpy as np
import pytest
from hypothesis import example, given, settings
from hypothesis import strategies as st

from convdiag import ParameterError, solve
from convdiag.core._vector import OUTCOMES, REASONS, classify_run, solve_many

EPS = 2.220446049250313e-16


def _kepler(E, M, e):
    return E - e * np.sin(E) - M


def _kepler_prime(E, M, e):
    return 1 - e * np.cos(E)


def _cubic(x):
    return x * x * x - 2 * x + 2  # products, not **: Python's float ** and numpy's power differ in the last bit


def _cube_minus_one(z):
    return z**3 - 1  # integer powers of complex numbers: numpy and Python both multiply z*(z*z)


def _assert_lanes_equal_scalar_runs(f, method, starts, params=None, **kw):
    """Every lane: same stop reason, evaluation count and class as solve(); same root to the last bit."""
    lanes = solve_many(f, method, starts=starts, params=params, **kw)
    flat = np.ravel(starts)
    for i, s in enumerate(flat.tolist()):
        p = None if params is None else {k: float(np.ravel(v)[i]) for k, v in params.items()}
        with np.errstate(all="ignore"):
            run = solve(f, method, start=s, params=p, **kw)
        where = f"lane {i}, start {s!r}"
        assert lanes.stop_reason.ravel()[i] == run.stop_reason, where
        assert lanes.evals.ravel()[i] == run.evaluations, where
        assert lanes.steps.ravel()[i] == len(run.steps), where
        assert lanes.outcome.ravel()[i] == classify_run(run), where
        if run.converged:
            assert lanes.x.ravel()[i] == run.root, where  # bit for bit
    return lanes


@pytest.mark.parametrize("method", ["newton", "secant", "steffensen", "halley"])
def test_each_real_lane_equals_the_scalar_driver(method):
    starts = np.random.default_rng(3).uniform(-3, 3, 150)
    lanes = _assert_lanes_equal_scalar_runs(_cubic, method, starts, max_evals=40)
    assert len(lanes.counts()) >= 2  # the sample mixes converged lanes with failures


@pytest.mark.parametrize("method", ["newton", "secant", "steffensen", "halley"])
def test_each_complex_lane_equals_the_scalar_driver(method):
    rng = np.random.default_rng(5)
    starts = rng.uniform(-2, 2, 120) + 1j * rng.uniform(-2, 2, 120)
    _assert_lanes_equal_scalar_runs(_cube_minus_one, method, starts, max_evals=60)


def test_lanes_with_per_lane_parameters_equal_the_scalar_driver_with_a_given_derivative():
    rng = np.random.default_rng(11)
    M, e = rng.uniform(0, 2 * np.pi, 200), rng.uniform(0.9, 0.99, 200)
    _assert_lanes_equal_scalar_runs(_kepler, "newton", M.copy(), params={"M": M, "e": e}, fprime=_kepler_prime,
                                    xtol=1e-12, rtol=0.0)


def test_lanes_with_the_automatic_derivative_choose_it_per_lane_like_the_scalar_driver():
    # |x - 1| is not complex-analytic: the complex step disagrees with a central difference and each
    # lane falls back on its own, as solve() does (REFERENCES: derivative sources in core/_problem.py)
    starts = np.random.default_rng(2).uniform(-3, 3, 80)
    _assert_lanes_equal_scalar_runs(lambda x: np.abs(x - 1) + x * x * x - 3, "newton", starts)
    _assert_lanes_equal_scalar_runs(lambda x: np.sin(x) - 0.5 * x, "newton", starts)


def test_expression_lanes_equal_the_scalar_driver_and_find_the_published_root():
    starts = np.linspace(-3, 3, 61)
    lanes = _assert_lanes_equal_scalar_runs("x**3 - 2*x + 2", "newton", starts, max_evals=40)
    real_root = min(r.real for r in np.roots([1, 0, -2, 2]) if abs(r.imag) < 1e-12)
    assert lanes.x[lanes.converged] == pytest.approx(real_root, abs=4e-16)  # numpy.roots; REFERENCES §4
    assert float(lanes.x[lanes.converged][0]) == -1.7692923542386314  # REFERENCES §4 [V]


def test_newton_from_zero_on_the_cubic_is_named_a_cycle():
    # 0 -> 1 -> 0 -> ... (REFERENCES §4: superattracting 2-cycle of x^3 - 2x + 2)
    lanes = solve_many(_cubic, "newton", starts=np.array([0.0]), max_evals=30)
    assert lanes.outcome.tolist() == ["cycle"] and lanes.stop_reason.tolist() == ["max-evals"]


def test_newton_on_arctan_converges_inside_the_critical_start_and_diverges_outside():
    crit = 1.3917452002707349  # root of 2x = (1 + x^2) atan x (REFERENCES §4 [V])
    starts = np.array([0.5, 1.0, crit - 1e-3, crit + 1e-3, 1.5, -1.5, 3.0])
    lanes = solve_many(np.arctan, "newton", starts=starts, fprime=lambda x: 1 / (1 + x * x))
    assert lanes.outcome.tolist() == ["converged"] * 3 + ["divergence"] * 4


def test_newton_on_the_real_cube_root_diverges_from_every_nonzero_start():
    # x+ = -2x (REFERENCES §4; Wikipedia "Newton's method", from memory)
    lanes = solve_many(np.cbrt, "newton", starts=np.array([-2.0, -0.1, 0.3, 1.7]), fprime=lambda x: 1 / (3 * np.cbrt(x) ** 2))
    assert set(lanes.outcome.tolist()) == {"divergence"}


def test_a_double_root_that_runs_out_of_budget_is_named_a_multiple_root():
    # Newton at a root of multiplicity m converges linearly with rate (m-1)/m; Halley (m-1)/(m+1)
    # (REFERENCES §1 [V]; Ralston & Rabinowitz 1978, from memory)
    starts = np.linspace(1.5, 4.0, 11)
    newton = solve_many("(x - 1)**2*exp(x)", "newton", starts=starts, max_evals=40)
    halley = solve_many("(x - 1)**3*exp(x)", "halley", starts=starts, max_evals=40)
    secant = solve_many("(x - 1)**2*exp(x)", "secant", starts=starts, max_evals=30)
    assert set(newton.outcome.tolist()) == {"multiple-root"}
    assert set(halley.outcome.tolist()) == {"multiple-root"}
    assert set(secant.outcome.tolist()) == {"multiple-root"}
    assert set(newton.stop_reason.tolist()) == {"max-evals"}


def test_a_zero_or_near_zero_derivative_is_named_flat():
    # f'(0) = 0 for x^2 - 1 and 3z^2 at z = 0 exactly; from z = 1e-4 the step is about 1/(3e-8):
    # thrown 3e7 away, z^3 - 1 then shrinks by 2/3 per step far out (REFERENCES §1: rate (m-1)/m, m = 3)
    lanes = solve_many("x**2 - 1", "newton", starts=np.array([0.0]))
    far = solve_many(_cube_minus_one, "newton", starts=np.array([0.0 + 0j, 1e-4 + 0j]), fprime=lambda z: 3 * z * z,
                     max_steps=30)
    assert lanes.outcome.tolist() == ["flat"] and lanes.stop_reason.tolist() == ["zero-derivative"]
    assert far.outcome.tolist() == ["flat", "flat"]
    assert far.stop_reason.tolist() == ["zero-derivative", "max-steps"]


def test_nan_and_exceptions_from_the_function_are_domain_errors_per_lane():
    def log_or_raise(x):
        if np.any(x > 50):
            raise ValueError("too large for this model")
        with np.errstate(invalid="ignore", divide="ignore"):
            return np.log(x) - 1

    lanes = solve_many(log_or_raise, "newton", starts=np.array([1.0, 8.0, 60.0]), fprime=lambda x: 1 / x)
    # from 8 the tangent of log x - 1 lands at 8 - 8(log 8 - 1) < 0, where log is NaN
    assert lanes.outcome.tolist() == ["converged", "domain-error", "domain-error"]
    assert lanes.stop_reason.tolist()[1:] == ["nonfinite-value", "function-raised"]
    assert float(lanes.x[0]) == pytest.approx(math.e, rel=4 * EPS)  # log x = 1 at e (exact)


def test_a_function_that_takes_only_scalars_runs_lane_by_lane_with_the_same_results():
    def scalar_only(x):
        return math.cos(x) - x  # math.cos raises TypeError on arrays

    starts = np.linspace(-2, 3, 21)
    lanes = _assert_lanes_equal_scalar_runs(scalar_only, "secant", starts)
    assert any("lane by lane" in n for n in lanes.notes)
    dottie = float(mpmath.findroot(lambda t: mpmath.cos(t) - t, 0.7))  # mpmath reference root
    assert lanes.x[lanes.converged] == pytest.approx(dottie, abs=2e-16)


def test_complex_lanes_match_the_scalar_driver_where_numpy_and_python_quotients_differ():
    # the scalar driver divides complex numbers as numpy does (core/_varith.py); the sample must
    # include starts whose first Newton quotient f/f' differs between numpy and Python, or equality
    # would prove nothing about the quotient (numpy's divide loop vs Python's complex division)
    rng = np.random.default_rng(17)
    starts = rng.uniform(-2, 2, 60) + 1j * rng.uniform(-2, 2, 60)
    h = EPS ** (1 / 3) * np.maximum(1.0, np.abs(starts))  # the central difference of core/_evaluate.py
    fx, d = starts**3 - 1, ((starts + h) ** 3 - (starts - h) ** 3) / (2 * h)
    differ = [complex(a) / complex(b) != complex(q) for a, b, q in zip(fx, d, fx / d)]
    assert sum(differ) >= 10
    lanes = _assert_lanes_equal_scalar_runs(_cube_minus_one, "newton", starts, max_evals=150)
    assert lanes.counts() == {"converged": 60}


def test_results_keep_the_shape_of_the_starts_and_every_lane_gets_a_known_outcome():
    grid = np.linspace(-2, 2, 12).reshape(3, 4)
    lanes = solve_many("x**2 - 2", "newton", starts=grid)
    assert lanes.x.shape == lanes.evals.shape == lanes.outcome.shape == (3, 4)
    assert set(lanes.outcome.ravel()) <= set(OUTCOMES) and set(lanes.stop_reason.ravel()) <= set(REASONS)
    assert sum(lanes.counts().values()) == 12


@settings(max_examples=25, deadline=None)
@given(a=st.floats(-4, 4), starts=st.lists(st.floats(-10, 10), min_size=1, max_size=6))
@example(a=0.0, starts=[0.0])  # exact zero at the start
@example(a=2.0, starts=[0.0, 1.0])  # zero derivative at 0
@example(a=-1.0, starts=[0.5])  # no real root: x^2 + 1
def test_newton_and_secant_lanes_equal_scalar_runs_on_any_quadratic(a, starts):
    x0 = np.array(starts)
    for method in ("newton", "secant"):
        _assert_lanes_equal_scalar_runs(lambda x, a: x * x - a, method, x0, params={"a": np.full(x0.shape, a)},
                                        max_evals=30)


def test_bad_arguments_are_refused_with_the_parameter_template():
    with pytest.raises(ParameterError, match="The 'method' parameter of solve_many must be one of newton"):
        solve_many("x - 1", "bisection", starts=np.array([0.0]))
    with pytest.raises(ParameterError, match="'starts' parameter of solve_many must be finite numbers"):
        solve_many("x - 1", starts=np.array([0.0, np.nan]))
    with pytest.raises(ParameterError, match="does not broadcast to the starts' shape"):
        solve_many(lambda x, a: x - a, starts=np.zeros(3), params={"a": np.zeros(4)})
    with pytest.raises(ParameterError, match="'max_evals' parameter of solve_many must be an int >= 1"):
        solve_many("x - 1", starts=np.zeros(2), max_evals=0)
