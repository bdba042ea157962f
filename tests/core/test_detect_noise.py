"""When f is sampled for noise: only at a stall, and never at spacings where f's own curvature dominates.

Check values: Kepler's equation at e = 0.99, M = 0.14 from E0 = M (shared/REFERENCES.md §5), where Newton is
thrown about to |E| ~ 1e5; calculus for the length |f'/f''| over which the slope of f changes (x² at x:
2x/2 = x; x² − 1 + A·sin(ωx): about |2x + Aω·cos ωx|/|2 − Aω²·sin ωx|). Moré & Wild (2011) sample f at
equally spaced points (REFERENCES §3).
"""

import math

import pytest

from convdiag import solve
from convdiag.core._detect_noise import _length_scale, detect_noise
from convdiag.core._detect_path import Context
from convdiag.core._detect_stop import stalled_tail
from convdiag.core._detect_trace import Prober, build_trace
from convdiag.core._diagnose import diagnose
from convdiag.core._noise import estimate_noise


def test_iterates_still_thrown_about_are_not_sampled_for_noise():
    run = solve("x - ecc*sin(x) - M", "newton", start=0.14, params={"M": 0.14, "ecc": 0.99})
    assert not run.converged and max(abs(run.iterates)) > 1e5
    t = build_trace(run)
    assert stalled_tail(t) is None
    ctx = Context(Prober(t.f, 60))
    assert detect_noise(t, ctx) is None and ctx.prober.count == 0  # not one evaluation spent on a noise sample


def test_a_stalled_run_is_stalled():
    # Newton on x² − 2 with noise of 1e-10 stalls within about 1e-10/|f'(√2)| of √2 (REFERENCES §3)
    import struct

    import numpy as np

    def f(x):
        seed = struct.unpack("<Q", struct.pack("<d", float(x)))[0]
        return x * x - 2 + 1e-10 * float(np.random.default_rng(seed).uniform(-1.0, 1.0))

    t = build_trace(solve(f, "newton", start=1.0, fprime=lambda x: 2 * x))
    _, spread, travelled = stalled_tail(t)
    assert spread < 1e-8 and travelled == pytest.approx(math.sqrt(2) - 1, rel=1e-6)


def test_the_second_spacing_is_not_used_where_the_curvature_of_f_dominates():
    # f = x² − 1 + 1e-3·sin(1e4·x): its slope changes over about 1e-4, while the stalled iterates spread over 8e-3;
    # a sample spaced 1e-3 apart would read the sine as noise
    calls = []

    def f(x):
        calls.append(x)
        return x * x - 1 + 1e-3 * math.sin(1e4 * x)

    xs = [11.0, 6.0, 3.0, 1.5] + [1.0 + 0.004 * math.sin(3.0 * k) for k in range(8)]
    fs = [f(x) for x in xs]
    calls.clear()
    d = diagnose({"x": xs, "f": fs}, f=f)
    assert any("was not sampled at spacing" in n and "curvature" in n for n in d.notes)
    best = xs[min(range(len(xs)), key=lambda k: abs(fs[k]))]
    assert calls and all(abs(p - best) <= 1e-4 * max(1.0, abs(best)) for p in calls)  # only the default spacing
    assert "noise-floor" not in d.kinds


def test_the_length_scale_of_a_parabola_is_x():
    est = estimate_noise(lambda x: x * x, 3.0)  # f'/f'' = 2x/2 = x
    assert _length_scale(est) == pytest.approx(3.0, rel=1e-4)


def hashed_noise(x):
    """Deterministic pseudo-noise in [−1, 1] from the 64 bits of x (numpy's PCG64 seeded with them)."""
    import struct

    import numpy as np

    seed = struct.unpack("<Q", struct.pack("<d", float(x)))[0]
    return float(np.random.default_rng(seed).uniform(-1.0, 1.0))


def noisy_square(x):
    """x² − 2 plus noise of amplitude 1e-8: the root √2 is resolvable to about 1e-8/|f'(√2)| = 1e-8/(2√2)."""
    return x * x - 2 + 1e-8 * hashed_noise(x)


def scipy_recording(solver, *args, **kwargs):
    import warnings

    from convdiag import record

    rf = record(noisy_square)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        try:
            solver(rf, *args, **kwargs)
            failed = False
        except RuntimeError:
            failed = True
    return rf, failed


def test_a_scipy_newton_recording_that_failed_in_the_noise_is_a_noise_floor_not_converged():
    so = pytest.importorskip("scipy.optimize")
    rf, failed = scipy_recording(so.newton, 1.0, fprime=lambda x: 2 * x, tol=1e-15, maxiter=40)
    assert failed  # scipy: "Failed to converge after 40 iterations"
    d = diagnose(rf)
    assert d.verdict == "noise-floor", (d, d.kinds)
    nf = d.primary
    assert "No tolerance was given" in nf.summary and nf.value("tolerance") == pytest.approx(1e-6 * math.sqrt(2))
    sigma = 1e-8 / math.sqrt(3)  # standard deviation of uniform noise on [−A, A]
    assert sigma / 3 <= nf.value("noise level in f") <= 3 * sigma  # Moré & Wild, within a factor of a few
    assert nf.value("attainable accuracy in x") == pytest.approx(nf.value("noise level in f") / (2 * math.sqrt(2)),
                                                                rel=0.05)


def test_a_scipy_brentq_recording_that_met_its_tolerance_in_the_noise_says_so():
    # brentq keeps a sign change, so it "converges" to xtol = 1e-15 while the noise hides the root within about
    # 1e-8/(2√2): with no tolerance given, the noise floor is the verdict and the text says it was assumed
    so = pytest.importorskip("scipy.optimize")
    rf, failed = scipy_recording(so.brentq, 0.0, 2.0, xtol=1e-15)
    assert not failed
    d = diagnose(rf)
    assert d.verdict == "noise-floor" and "converged" in d.kinds, (d, d.kinds)
    assert "No tolerance was given" in d.primary.summary and "met it" in d.primary.summary
    acc = d.primary.value("attainable accuracy in x")
    assert 1e-10 < acc < 1e-8 and abs(d.root - math.sqrt(2)) <= 3 * acc


def test_a_smooth_recording_without_a_tolerance_stays_converged():
    so = pytest.importorskip("scipy.optimize")
    from convdiag import record

    for solve_it in (lambda rf: so.brentq(rf, 0.0, 2.0, xtol=1e-15), lambda rf: so.newton(rf, 1.0, tol=1e-15)):
        rf = record(lambda x: x * x - 2)
        solve_it(rf)
        assert diagnose(rf).kinds == ("converged",)


def test_a_short_stall_of_a_solver_that_gave_up_counts_as_stalled():
    # scipy's secant on Colebrook–White computed in float32 (REFERENCES §5) stops after 8 points when two values
    # of f are equal: the last 4 lie within 2e-8 while |f| sits at float32's spacing near 7.35, 2^-21 (numpy)
    import numpy as np

    so = pytest.importorskip("scipy.optimize")
    from convdiag import record

    def col32(f):
        f = np.float32(f)
        return float(np.float32(1) / np.sqrt(f) + np.float32(2) * np.log10(
            np.float32(1e-4) / np.float32(3.7) + np.float32(2.51) / (np.float32(1e5) * np.sqrt(f))))

    rf = record(col32)
    with pytest.raises(RuntimeError, match="Tolerance of"):
        so.newton(rf, 0.02, tol=1e-12, maxiter=50)
    t = build_trace(rf)
    k0, spread, _ = stalled_tail(t)
    assert t.n - k0 == 4 and spread < 1e-7 and np.all(np.abs(t.fs[k0 + 1:]) <= 2.0**-21)
    d = diagnose(rf)
    assert d.verdict == "noise-floor" and "No tolerance was given" in d.primary.summary


# -- a cycle or a zero slope at the noise floor is the noise ---------------------------------------------------------
# Colebrook–White (shared/REFERENCES.md, Colebrook 1939) at Re = 1e5, ε/D = 1e-4, computed in float32 (a legacy
# single-precision model): f ≈ 0.0185138660775 (REFERENCES table; scipy.optimize.brentq on the float64 residual
# agrees, checked below). Single precision rounds the residual's terms (about 7) to about 4e-7, so with |f'| ≈ 220
# no method resolves the root better than about 2e-9 (noise/|f'|, Wilkinson, from memory).


def _colebrook32(f):
    import numpy as np

    re, rough, f32 = np.float32(1e5), np.float32(1e-4), np.float32(f)
    return float(np.float32(1) / np.sqrt(f32) + np.float32(2) * np.log10(
        rough / np.float32(3.7) + np.float32(2.51) / (re * np.sqrt(f32))))


def _colebrook64(f):
    return 1 / math.sqrt(f) + 2 * math.log10(1e-4 / 3.7 + 2.51 / (1e5 * math.sqrt(f)))


def _colebrook_root():
    from scipy.optimize import brentq

    root = brentq(_colebrook64, 0.008, 0.1, xtol=1e-15)
    assert root == pytest.approx(0.0185138660775, abs=1e-12)  # shared/REFERENCES.md, Colebrook table
    return root


@pytest.mark.parametrize("method, start, looked_like", [("newton", 0.02, "cycle"), ("secant", (0.02, 0.021), "flat")])
def test_a_cycle_or_a_zero_slope_within_the_noise_of_a_float32_model_is_a_noise_floor(method, start, looked_like):
    root = _colebrook_root()
    run = solve(_colebrook32, method, start=start, xtol=1e-12, rtol=0, max_evals=40)
    assert not run.converged and abs(run.root - root) < 1e-8  # at the root, to what single precision allows
    d = diagnose(run)
    assert d.verdict == "noise-floor" and looked_like not in d.kinds
    nf = d.primary
    acc = nf.value("attainable accuracy in x")
    assert 3e-10 < acc < 1e-8  # float32 rounding of terms of size ~7 (eps32 = 1.19e-7, numpy.finfo) over |f'| ≈ 220
    assert any(label.startswith(f"{looked_like} (") for label, _, _ in nf.evidence)  # the path is the evidence
    # the remedy asks for what the noise allows, and it works: it converges to the float64 root within that accuracy
    assert nf.remedy.xtol >= 3 * acc
    cured = nf.remedy.solve(_colebrook32)
    assert cured.converged and abs(cured.root - root) <= nf.remedy.xtol


def test_a_cycle_far_from_the_noise_floor_of_a_noisy_f_is_still_a_cycle():
    # Newton on x³ − 2x + 2 from 0 cycles between 0 and 1 (a textbook example; the iteration map sends 0 → 1 → 0
    # exactly: 0 − 2/(−2) = 1, 1 − 1/1 = 0). Computed in float32, f is noisy near its root −1.7693 (numpy.roots), but
    # on the cycle |f| is 1 and 2, far above that noise: the cycle, not the noise, is the verdict
    import numpy as np

    def f32(x):
        x32 = np.float32(x)
        return float(x32 * x32 * x32 - np.float32(2) * x32 + np.float32(2))

    d = diagnose(solve(f32, "newton", start=0.0, fprime=lambda x: 3 * x * x - 2, max_evals=20))
    assert d.verdict == "cycle" and "noise-floor" not in d.kinds and d.primary.value("period") == 2
