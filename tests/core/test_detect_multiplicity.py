"""What a linear rate says about the root: a multiple root, or a wrong derivative.

Newton with a slope g ≠ f' converges linearly with rate |1 − f'(r)/g(r)| at a simple root, and with rate
(m − 1)/m at a root of multiplicity m (shared/REFERENCES.md §1 [V]). The root of x² − 2 is √2 (math.sqrt).
"""

import math

import pytest

from convdiag.core._diagnose import diagnose


def newton_with_a_scaled_slope(scale, x0=1.0, steps=60):
    """Newton on x² − 2 written to a log by the user's own loop, with the slope scale·2x instead of 2x."""
    xs = [x0]
    for _ in range(steps):
        x = xs[-1]
        xs.append(x - (x * x - 2) / (scale * 2 * x))
        if abs(xs[-1] - xs[-2]) <= 1e-14:
            break
    return xs


def test_newton_iterates_at_a_rate_no_multiplicity_explains_note_a_wrong_derivative():
    # a slope 1.5 times too steep: rate |1 − f'/g| = 1 − 1/1.5 = 1/3 at the simple root √2 (REFERENCES §1);
    # a root of multiplicity m would give (m − 1)/m, so m = 1/(1 − 1/3) = 1.5, no whole number
    xs = newton_with_a_scaled_slope(1.5)
    d = diagnose(xs, method="newton")
    assert d.verdict == "converged"  # it did converge, to √2
    assert abs(d.root - math.sqrt(2)) <= 1e-13
    w = d.finding("wrong-derivative")
    assert w is not None and w.tag == "from the rate"
    assert w.value("linear rate") == pytest.approx(1 / 3, abs=0.01)
    assert w.value("multiplicity the rate implies") == pytest.approx(1.5, abs=0.05)
    cured = w.remedy.solve("x**2 - 2")  # Newton with the derivative convdiag computes
    assert w.remedy.drop_fprime and cured.converged and abs(cured.root - math.sqrt(2)) <= 1e-15
    assert len(cured.iterates) < len(xs) / 2  # quadratic again: far fewer steps than the linear run took
    # without the method: a note only (a linear rate is normal for a fixed-point iteration)
    plain = diagnose(xs)
    assert plain.kinds == ("converged",) and any("m = 1.5" in n for n in plain.notes)
    # a slope twice too steep gives rate 1/2 = (m − 1)/m at m = 2: a double root is as likely, no such finding
    assert "wrong-derivative" not in diagnose(newton_with_a_scaled_slope(2.0), method="newton").kinds
