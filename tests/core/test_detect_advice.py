"""Remedies that need a bracket: found near a point on the probe budget, with a tolerance that can close.

Roots: the real cube root and arctan vanish at 0 (exact); √x − 2 vanishes at 4, which is a double
the bracket search can land on exactly (√4 = 2 in floating point, IEEE 754 correctly rounded sqrt).
"""

import math

import pytest

from convdiag import solve
from convdiag.core._diagnose import diagnose


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
