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
