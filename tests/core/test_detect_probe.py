"""Findings that rest on extra evaluations: noise floor, unattainable tolerance, pole or jump.

Noise: a smooth function plus deterministic pseudo-noise of known amplitude A (uniform on [−A, A],
standard deviation A/√3). Moré & Wild, SIAM J. Sci. Comput. 33(3) (2011) 1292-1314, report
estimates within a factor of a few of the true level (from memory); shared/REFERENCES.md §3
measured 0.48-2.0 σ [V]; we ask for a factor 3 in 9 of 10 cases. Attainable accuracy noise/|f'(r)|:
Wilkinson (1963), from memory. Spacing of doubles: IEEE 754 (numpy.spacing).
"""

import math
import struct

import numpy as np
import pytest

from convdiag import solve
from convdiag.core._diagnose import diagnose

SQRT2 = math.sqrt(2.0)


def u(x: float) -> float:
    """Deterministic pseudo-noise in [−1, 1] from the 64 bits of x (numpy's PCG64 seeded with them)."""
    seed = struct.unpack("<Q", struct.pack("<d", float(x)))[0]
    return float(np.random.default_rng(seed).uniform(-1.0, 1.0))


def noisy(amplitude):
    return lambda x: x * x - 2 + amplitude * u(x)


def test_the_noise_level_of_a_stalled_run_is_within_a_factor_3_in_9_of_10_cases():
    ratios = []
    for amplitude in np.logspace(-12, -6, 10):
        run = solve(noisy(amplitude), "newton", start=1.0, fprime=lambda x: 2 * x)  # the smooth part's slope
        d = diagnose(run)
        nf = d.finding("noise-floor")
        sigma = amplitude / math.sqrt(3)  # standard deviation of uniform noise on [−A, A]
        ratios.append(nf.value("noise level in f") / sigma if nf is not None else math.nan)
        if nf is not None:
            assert d.verdict == "noise-floor"
            # attainable accuracy ≈ noise/|f'(r)| with f'(√2) = 2√2
            assert nf.value("attainable accuracy in x") == pytest.approx(nf.value("noise level in f") / (2 * SQRT2),
                                                                        rel=0.05)
    assert sum(1 / 3 <= r <= 3 for r in ratios) >= 9, ratios


@pytest.mark.parametrize("amplitude", [1e-10, 1e-7])
def test_the_noise_advice_gives_a_tolerance_the_run_meets(amplitude):
    f = noisy(amplitude)
    d = diagnose(solve(f, "newton", start=1.0, fprime=lambda x: 2 * x))
    assert d.verdict == "noise-floor"
    cured = d.remedy.solve(f, fprime=lambda x: 2 * x)
    assert cured.converged and abs(cured.root - SQRT2) <= 10 * amplitude  # within a few noise/|f'|


def test_noise_does_not_make_a_bracketing_run_look_like_a_jump():
    d = diagnose(solve(noisy(1e-8), "hybrid", bracket=(0.0, 2.0)))
    assert d.verdict == "converged" and "pole" not in d.kinds


def test_a_genuine_jump_is_reported_as_not_a_root():
    step = lambda x: -1.0 if x < 0.3 else 1.0
    d = diagnose(solve(step, "bisection", bracket=(0.0, 1.0)))
    assert d.verdict == "pole" and d.primary.tag == "jump at 0.3"
    assert d.primary.value("sign change at") == pytest.approx(0.3, abs=1e-15)


def test_a_step_tolerance_below_the_spacing_of_doubles_is_flagged_with_the_attainable_value():
    # root of x³ − 2 is 2^(1/3) = 1.2599210498948732 (math.cbrt); the gap between doubles there is 2^-52
    run = solve("x**3 - 2", "newton", start=1.0, xtol=1e-20, rtol=0.0)
    d = diagnose(run)
    u_ = d.finding("unattainable-tolerance")
    assert d.verdict == "unattainable-tolerance" and u_ is not None
    assert u_.value("gap between doubles at x") == float(np.spacing(1.2599210498948732)) == 2.0**-52
    assert u_.value("attainable accuracy in x") >= 2.0**-52
    cured = u_.remedy.solve("x**3 - 2")
    assert cured.converged and u_.remedy.xtol >= 2.0**-52


def test_the_default_tolerance_is_not_flagged():
    assert "unattainable-tolerance" not in diagnose(solve("x**3 - 2", "newton", start=1.0)).kinds


def test_a_residual_tolerance_below_rounding_is_flagged_with_the_rounding_level():
    run = solve("x**2 - 2", "bisection", bracket=(0.0, 2.0), ftol=1e-20)
    d = diagnose(run)
    u_ = d.finding("unattainable-tolerance")
    level = u_.value("rounding level of f")
    # rounding of x² − 2 near √2: a few eps times the size of the terms (2), i.e. about 1e-16 .. 1e-15
    assert 1e-17 < level < 1e-14 and u_.value("requested ftol") == 1e-20
    assert "residual tolerance 1e-20" in u_.summary


def test_a_high_precision_run_is_judged_by_its_own_spacing():
    # 50 digits: rtol = 4e-50 is far below the double spacing 2.2e-16 but above 10^-50 relative
    d = diagnose(solve("x**2 - 2", "newton", start=1.0, digits=50))
    assert d.kinds == ("converged",)
    d = diagnose(solve("x**2 - 2", "newton", start=1.0, digits=50, xtol=1e-60, rtol=0.0))
    u_ = d.finding("unattainable-tolerance")
    assert u_ is not None and u_.value("gap between doubles at x") == pytest.approx(SQRT2 * 1e-50, rel=1e-6)


def kepler_root(m, ecc):
    """Kepler's E − e·sin E = M (REFERENCES §5) by scipy's brentq to its tightest tolerance."""
    from scipy.optimize import brentq

    from convdiag.demos import kepler_residual

    return brentq(kepler_residual, 0.0, math.pi, args=(m, ecc), xtol=1e-300, rtol=8.9e-16)


@pytest.mark.parametrize("m, ecc, form", [(0.015, 0.9, "callable"), (0.006, 0.99, "expression")])
def test_a_cycle_at_the_rounding_level_is_an_unattainable_tolerance_with_the_attainable_value(m, ecc, form):
    # Newton on Kepler's equation from E0 = π with the default rtol = 4·eps: near the root the terms E, e·sin E
    # (about 0.1-0.3) cancel, so f carries rounding of about eps·|E| while |x·f'| is far smaller; the iterates end
    # in a cycle a few ulps wide that never meets the step tolerance.
    from convdiag.demos import kepler_prime, kepler_residual

    params = {"M": m, "ecc": ecc}
    kw = {"fprime": kepler_prime} if form == "callable" else {}
    f = kepler_residual if form == "callable" else "x - ecc*sin(x) - M"
    run = solve(f, "newton", start=math.pi, params=params, **kw)
    root = kepler_root(m, ecc)
    tail = run.iterates[-8:]
    assert run.stop_reason == "max-evals" and max(abs(tail - root)) < 1e-14  # stuck at the root, not converging
    d = diagnose(run)
    u_ = d.primary
    assert d.verdict == "unattainable-tolerance", (d, d.kinds)
    asked = u_.value("requested xtol + rtol·|x|")
    assert asked == pytest.approx(4 * 2.220446049250313e-16 * abs(run.iterates[-1]), rel=1e-12)
    attain = u_.value("attainable accuracy in x")
    assert attain > asked and attain >= max(abs(tail - root)) / 4  # the cycle stays within a few times of it
    cured = u_.remedy.solve(f, params=params, **kw)
    assert cured.converged and abs(cured.root - root) <= 2 * attain


def test_the_rounding_of_terms_that_cancel_is_seen_in_an_expression():
    # at the root of E − 0.99·sin E − 0.005 (E ≈ 0.248) the terms are about 0.25 each while |f| ≈ 0 and
    # |E·f'| ≈ 0.01: the sum's rounding bound eps·Σ|t_i| (Higham 2002 §4.2, from memory) is about 1.1e-16
    from convdiag.core._detect_noise import rounding_level
    from convdiag.core._detect_path import Context
    from convdiag.core._detect_trace import Prober, build_trace

    run = solve("x - ecc*sin(x) - M", "newton", start=math.pi, params={"M": 0.005, "ecc": 0.99})
    t = build_trace(run)
    x = float(run.root)
    terms = x + 0.99 * math.sin(x) + 0.005
    level, base, how, _ = rounding_level(t, Context(Prober(t.f, 60)), x)
    assert base >= 2.220446049250313e-16 * terms * 0.999 and "terms" in how
    assert level >= base > 10 * 2.220446049250313e-16 * abs(x * (1 - 0.99 * math.cos(x)))


def test_kepler_from_pi_at_m_0005_is_never_left_as_a_bare_budget_stop():
    # the notebook's setting (e = 0.99, M = 0.005, default rtol): it converges here or stalls at the rounding floor
    from convdiag.demos import kepler_prime, kepler_residual

    run = solve(kepler_residual, "newton", start=math.pi, fprime=kepler_prime, params={"M": 0.005, "ecc": 0.99})
    d = diagnose(run)
    assert d.verdict == ("converged" if run.converged else "unattainable-tolerance"), (run, d)
    assert abs(run.root - kepler_root(0.005, 0.99)) < 1e-14


def colebrook32(f):
    """Colebrook–White (REFERENCES §5) at Re = 1e5, ε/D = 1e-4, computed in float32 (a legacy single-precision model)."""
    f = np.float32(f)
    return float(np.float32(1) / np.sqrt(f) + np.float32(2) * np.log10(
        np.float32(1e-4) / np.float32(3.7) + np.float32(2.51) / (np.float32(1e5) * np.sqrt(f))))


def recorded_scipy_secant(f, x0, **kwargs):
    import warnings

    from scipy.optimize import newton

    from convdiag import record

    rf = record(f)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        try:
            newton(rf, x0, **kwargs)  # scipy's secant: it fails when two values of f are equal
        except RuntimeError:
            pass
    return rf


def test_a_floor_far_above_double_rounding_is_noise_not_a_limit_of_double_precision():
    from convdiag.core._detect_path import Context
    from convdiag.core._detect_probe import detect_unattainable
    from convdiag.core._detect_trace import Prober, build_trace

    rf = recorded_scipy_secant(colebrook32, 0.02, tol=1e-12, maxiter=50)
    # the float32 result near the root is about 1/√0.0185 ≈ 7.35 in size, where float32 numbers are 2^-21 apart
    # (IEEE 754 binary32; numpy.spacing): f is only known to about that, 1e8 times double rounding
    f32_step = float(np.spacing(np.float32(7.35)))
    assert f32_step == 2.0**-21
    t = build_trace(rf, xtol=1e-12)
    found = detect_unattainable(t, Context(Prober(t.f, 60)))
    assert found is not None and found.kind == "noise-floor"  # not "cannot be met in double precision"
    assert f32_step / 10 <= found.value("noise level in f") <= 3 * f32_step
    assert found.value("times rounding") >= 1e4 and "cannot help" in found.advice and "digits=30" in found.advice
    d = diagnose(rf, xtol=1e-12)
    assert d.verdict == "noise-floor" and "budget" not in d.kinds and "unattainable-tolerance" not in d.kinds

