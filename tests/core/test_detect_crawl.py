"""The exponential-like crawl: Newton far from the root of an exponential moves one e-folding length per step.

Check values: a diode on a 2.0 V rail through 10 Ω (Shockley diode, Is = 1e-12 A, n = 1, Vt = 0.025852 V;
shared/REFERENCES.md §5), its operating point from the Lambert W closed form (Banwell & Jayakumar,
Electron. Lett. 36(4) (2000) 291, from memory; evaluated with scipy.special.lambertw). Far from the root,
f ≈ −Is·e^(V/(n·Vt)), so Newton's step −f/f' is −n·Vt and |f| falls by a factor e per step (calculus:
d/dV e^(V/(n·Vt)) = e^(V/(n·Vt))/(n·Vt)).
"""

import math

import pytest

from convdiag import solve
from convdiag.core._diagnose import diagnose
from convdiag.report._diagnosis_text import diagnosis_text

IS, N, VT, RAIL, R = 1e-12, 1.0, 0.025852, 2.0, 10.0
DIODE = "(2.0 - x)/10 - Is*(exp(x/(n*Vt)) - 1)"
PARAMS = {"Is": IS, "n": N, "Vt": VT}


def operating_point():
    """The diode voltage at the operating point: Lambert W closed form (scipy.special.lambertw)."""
    from scipy.special import lambertw

    nvt = N * VT
    current = nvt / R * lambertw(IS * R / nvt * math.exp((RAIL + IS * R) / nvt)).real - IS
    return RAIL - current * R


def diode_node(vd):
    """The quick start's callable: the diode's current minus the resistor's (the same root, the other sign)."""
    return IS * (math.exp(vd / (N * VT)) - 1.0) - (RAIL - vd) / R


@pytest.mark.parametrize("f, params", [(DIODE, PARAMS), (diode_node, None)], ids=["expression", "callable"])
def test_newton_on_the_diode_from_zero_crawls_one_thermal_voltage_per_step_and_is_called_slow(f, params):
    run = solve(f, "newton", start=0.0, params=params)
    assert run.stop_reason == "max-evals" and abs(run.iterates[1] - RAIL) < 1e-6  # the jump to ~2 V (the rail)
    d = diagnose(run)
    c = d.primary
    assert d.verdict == "slow" and c.tag == "exponential-like", (d, d.kinds)
    assert c.value("step length") == pytest.approx(N * VT, rel=1e-3)  # Newton's step on e^(V/(n·Vt)) is n·Vt
    assert c.value("|f| ratio per step") == pytest.approx(math.exp(-1), rel=1e-3)  # one e-fold per step
    assert c.value("e-folding length of f") == pytest.approx(N * VT, rel=1e-3)
    text = diagnosis_text(d)
    assert "stationary" not in text and "exponential-like" in text and "0.0259" in text
    assert "flat" not in d.kinds and "budget" not in d.kinds  # the crawl, not the jump or the symptom
    # steps still needed: the distance left to the operating point, one n·Vt per step (±1 for the last ones)
    v_root = operating_point()
    assert c.value("steps still needed") == pytest.approx((run.iterates[-1] - v_root) / (N * VT), abs=1.5)
    lo, hi = c.remedy.bracket
    assert lo <= v_root <= hi
    cured = c.remedy.solve(f, params=params)
    assert cured.converged and abs(cured.root - v_root) < 1e-12


def test_the_steps_still_needed_match_the_run_given_more_budget():
    run = solve(DIODE, "newton", start=0.0, params=PARAMS)
    need = diagnose(run).primary.value("steps still needed")
    longer = solve(DIODE, "newton", start=0.0, params=PARAMS, max_evals=1000)
    v_root = operating_point()
    steps_in = len(run.steps)
    # the step at which the longer run first comes within one e-folding length of the root
    reached = next(k for k, x in enumerate(longer.iterates) if abs(x - v_root) <= N * VT)
    assert longer.converged and abs(reached - steps_in - need) <= 2


def test_without_probes_the_crawl_is_read_from_the_iterates_alone():
    run = solve(DIODE, "newton", start=0.0, params=PARAMS)
    d = diagnose(run, probe=False)
    c = d.primary
    assert d.verdict == "slow" and c.tag == "exponential-like" and d.probes == 0
    lo, hi = c.value("sign change behind")  # f(0) > 0 and f < 0 along the crawl
    assert lo == 0.0 and lo <= operating_point() <= hi
    assert c.remedy.solve(DIODE, params=PARAMS).converged


def test_a_decay_without_a_root_ahead_is_divergence_not_a_crawl():
    # x·e^(−x) from 2: steps tend to 1 and |f| falls by about e per step, but no root lies ahead (REFERENCES §4)
    d = diagnose(solve("x*exp(-x)", "newton", start=2.0))
    assert d.verdict == "divergence" and "slow" not in d.kinds
