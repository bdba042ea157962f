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
