"""The converged finding: root, residual and order, and a nearer root the iteration jumped over.

Newton on sin x from 1.5: f'(1.5) = cos 1.5 ≈ 0.0707, so the first step, tan 1.5 ≈ 14.1 long, lands
near −4π (sin(−4π) = 0), although 0 is the root nearest the start.
"""

import math

from convdiag import solve
from convdiag.core._diagnose import diagnose


def test_the_nearer_root_jumped_over_is_reported_and_its_bracket_holds_it():
    # Newton on sin from 1.5: f'(1.5) = cos 1.5 ≈ 0.0707 throws the first step to ≈ −12.6 and Newton
    # converges to −4π, although 0 (distance 1.5) is the root nearest the start.
    run = solve("sin(x)", "newton", start=1.5)
    assert abs(run.root + 4 * math.pi) < 1e-12  # sin(−4π) = 0 (mpmath agrees)
    d = diagnose(run)
    assert d.verdict == "converged" and d.primary.tag == "another root nearer the start"
    lo, hi = d.primary.value("nearer sign change")
    assert lo < 0.0 < hi
    assert "flat" in d.kinds and d.finding("flat").tag == "small slope"  # why it jumped
    cured = d.remedy.solve("sin(x)")
    assert cured.converged and abs(cured.root) < 1e-12


def test_a_root_outside_the_expected_bracket_is_reported():
    d = diagnose(solve("sin(x)", "newton", start=1.5), bracket=(-1.0, 1.0))
    assert "outside the bracket" in d.primary.summary
    assert d.primary.remedy.bracket is not None


VDW_ROOTS = (0.0827491160998, 0.126918825022, 0.298841964478)  # CO2 at 280 K, 50 bar: shared/REFERENCES.md §5


def vdw_run():
    from convdiag.demos import VDW_CO2, vdw_pressure_residual

    state = {"P": 50.0, "T": 280.0, **VDW_CO2}
    return solve(vdw_pressure_residual, "newton", start=0.10, params=state), vdw_pressure_residual, state


def test_the_remedy_uses_the_expected_bracket_when_f_changes_sign_across_it():
    # Newton from 0.10 L/mol lands on the unstable middle root and jumps over the liquid root nearer the start;
    # the user expected the vapour root in [0.2, 1.0], where f changes sign: the remedy must go there
    run, f, state = vdw_run()
    assert abs(run.root - VDW_ROOTS[1]) < 1e-11
    d = diagnose(run, bracket=(0.2, 1.0))
    c = d.primary
    assert d.verdict == "converged" and "outside the bracket" in c.summary
    lo, hi = c.value("nearer sign change")  # still reported
    assert lo <= VDW_ROOTS[0] <= hi
    assert d.remedy.bracket == (0.2, 1.0) and "you expected" in c.advice
    cured = d.remedy.solve(f, params=state)
    assert cured.converged and abs(cured.root - VDW_ROOTS[2]) < 1e-11


def test_an_expected_bracket_without_a_sign_change_is_said_so_and_not_used():
    run, f, state = vdw_run()
    d = diagnose(run, bracket=(0.2, 0.25))  # below the vapour root 0.2988: f has one sign on [0.2, 0.25]
    c = d.primary
    f_lo, f_hi = c.value("f at its ends")
    assert (f_lo > 0) == (f_hi > 0) and d.remedy.bracket != (0.2, 0.25)
    assert d.remedy.solve(f, params=state).converged
