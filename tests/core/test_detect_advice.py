"""Remedies that need a bracket: found near a point on the probe budget, with a tolerance that can close.

Roots: the real cube root and arctan vanish at 0 (exact); √x − 2 vanishes at 4, which is a double
the bracket search can land on exactly (√4 = 2 in floating point, IEEE 754 correctly rounded sqrt).
A remedy hands over a bracket only where f changes sign (checked here by evaluating f at its ends), and
every remedy is applied to show that it works.
"""

import math
import warnings

import numpy as np
import pytest

from convdiag import record, solve
from convdiag.core._diagnose import diagnose

so = pytest.importorskip("scipy.optimize")


def test_a_root_at_zero_gets_an_absolute_tolerance_so_the_bracket_can_close():
    # with only a relative tolerance 4·eps·|x| a bracket around 0 would have to shrink below 1e-300
    d = diagnose(solve("cbrt(x)", "newton", start=1.0))
    r = d.remedy
    assert r.method == "hybrid" and r.bracket[0] <= 0.0 <= r.bracket[1]
    assert r.xtol == pytest.approx(4 * 2.220446049250313e-16)  # 4 eps × max(1, |start|)
    cured = r.solve("cbrt(x)")
    assert cured.converged and abs(cured.root) <= r.xtol


def test_a_search_that_lands_on_the_root_starts_newton_there():
    def f(x):
        return math.sqrt(x) - 2

    d = diagnose(solve(f, "newton", start=20.0, fprime=lambda x: 0.5 / math.sqrt(x)))
    r = d.remedy
    assert r.method == "newton" and r.start == (4.0,)  # the search from 20 evaluated f exactly at 4
    cured = r.solve(f)
    assert cured.converged and cured.root == 4.0


def test_the_bracket_search_is_shared_between_findings_and_counted():
    d = diagnose(solve("atan(x)", "newton", start=1.5), max_probe_evals=60)
    assert d.remedy.bracket is not None and 0 < d.probes <= 60
    again = diagnose(solve("atan(x)", "newton", start=1.5), max_probe_evals=5)
    assert again.remedy.bracket is None and again.remedy.near == 1.5  # no budget: searched when applied
    assert again.remedy.solve("atan(x)").converged


def test_an_expected_bracket_with_a_sign_change_is_the_remedy_of_every_finding():
    # Newton's 2-cycle on x³ − 2x + 2 from 0 (REFERENCES §4): you expect the root in [−2, −1.5] (f(−2) = −2,
    # f(−1.5) = 1.625): the remedy uses that bracket instead of searching near the start
    d = diagnose(solve("x**3 - 2*x + 2", "newton", start=0.0, max_evals=20), bracket=(-2.0, -1.5))
    assert d.verdict == "cycle" and d.remedy.bracket == (-2.0, -1.5)
    cured = d.remedy.solve("x**3 - 2*x + 2")
    assert cured.converged and abs(cured.root - (-1.7692923542386314)) < 1e-12
    # without probes the bracket cannot be checked, and is still what you asked for
    assert diagnose(solve("x**3 - 2*x + 2", "newton", start=0.0, max_evals=20), bracket=(-2.0, -1.5),
                    probe=False).remedy.bracket == (-2.0, -1.5)


# Colebrook–White (REFERENCES §5) at Re = 1e5, ε/D = 1e-4, the residual in 1/√f, computed in float32 as a legacy
# single-precision model would: its rounding (float32 eps = 2^-23, numpy.finfo) is noise to a double-precision solver.
def colebrook32(f):
    f = np.float32(f)
    return float(np.float32(1) / np.sqrt(f) + np.float32(2) * np.log10(
        np.float32(1e-4) / np.float32(3.7) + np.float32(2.51) / (np.float32(1e5) * np.sqrt(f))))


def colebrook64(f):
    return 1 / math.sqrt(f) + 2 * math.log10(1e-4 / 3.7 + 2.51 / (1e5 * math.sqrt(f)))


def scipy_secant_recording(f, x0, **kwargs):
    """scipy.optimize.newton without fprime (the secant method) on a recorded f; its failure is expected."""
    rf = record(f)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        try:
            so.newton(rf, x0, **kwargs)
        except RuntimeError:
            pass
    return rf


def test_a_remedy_for_a_recording_of_an_unknown_method_never_hands_over_a_bracket_without_a_sign_change():
    rf = scipy_secant_recording(colebrook32, 0.02, tol=1e-12, maxiter=50)
    d = diagnose(rf, xtol=1e-12)
    for x in d.findings:
        if x.remedy is not None and x.remedy.bracket is not None:
            lo, hi = x.remedy.bracket
            assert (colebrook32(lo) < 0) != (colebrook32(hi) < 0) or 0.0 in (colebrook32(lo), colebrook32(hi)), x
    cured = d.remedy.solve(colebrook32)
    root = so.brentq(colebrook64, 0.008, 0.1, xtol=1e-16)  # the float64 friction factor, scipy's brentq
    assert cured.converged
    # within the remedy's tolerance plus twice the accuracy the float32 noise allows
    assert abs(cured.root - root) <= d.remedy.xtol + 2 * d.primary.value("attainable accuracy in x")


def test_iterates_without_f_get_a_bracket_searched_when_the_remedy_is_applied():
    # 2, 1.5, 1.25, 1.125 head for 1 (each step halves the distance); the first two do not bracket it
    d = diagnose([2.0, 1.5, 1.25, 1.125])
    r = d.remedy
    assert r.bracket is None and r.near == 1.125 and "--bracket" not in r.cli_options()
    cured = r.solve("log(x)")  # log vanishes at 1 (exactly, IEEE 754: log(1.0) = 0.0)
    assert cured.converged and abs(cured.root - 1.0) <= 1e-12
