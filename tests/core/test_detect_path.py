"""Findings read from the shape of the path: cycles, divergence, domain errors.

Check values: shared/REFERENCES.md §4 [V] (Newton's 2-cycle on x³ − 2x + 2 from 0; x → −2x for the
cube root; x+ = x²/(x − 1) for x·e^(−x)), plus closed forms computed in the comments.
"""

import json
import math

import pytest

from convdiag import solve
from convdiag.core._diagnose import diagnose
from convdiag.core._sequence import load_sequence


def test_a_logged_two_cycle_from_a_csv_file_is_a_cycle(tmp_path):
    path = tmp_path / "newton.csv"
    # the user's own Newton loop on x³ − 2x + 2 from 0 (REFERENCES §4): 0, 1, 0, 1, ...
    path.write_text("k,x,f\n" + "".join(f"{k},{k % 2},{(k % 2) ** 3 - 2 * (k % 2) + 2}\n" for k in range(10)))
    d = diagnose(load_sequence(path))
    assert d.verdict == "cycle" and d.primary.value("period") == 2
    assert d.primary.value("smallest |f| on the cycle") == 1.0  # f(1) = 1, f(0) = 2


def test_a_logged_cycle_in_json_gets_the_remedy_when_the_function_is_given(tmp_path):
    path = tmp_path / "log.json"
    path.write_text(json.dumps({"x": [0.0, 1.0] * 5}))
    d = diagnose(load_sequence(path), f="x**3 - 2*x + 2")
    assert d.verdict == "cycle" and d.remedy.bracket is not None
    lo, hi = d.remedy.bracket
    assert lo < -1.7692923542386314 < hi  # the real root (REFERENCES §4)


def test_the_secant_on_the_cube_root_falls_into_a_four_cycle():
    # secant on cbrt from (1, 1.0002): the iterates settle on ±1.7158, ±0.40504 (scipy's secant does the same)
    d = diagnose(solve("cbrt(x)", "secant", start=[1.0, 1.0002]))
    assert d.verdict == "cycle" and d.primary.value("period") == 4
    pts = sorted(d.primary.value("cycle points"))
    assert pts[0] == pytest.approx(-pts[3], rel=1e-3) and pts[1] == pytest.approx(-pts[2], rel=1e-3)


def test_converging_iterates_are_not_a_cycle_even_when_they_alternate():
    xs = [1 + (-0.5) ** k for k in range(40)]  # alternating linear convergence to 1
    assert "cycle" not in diagnose(xs).kinds


def test_x_exp_minus_x_drift_is_divergence_with_the_probe_ahead():
    run = solve("x*exp(-x)", "newton", start=2.0)
    assert run.iterates[:4].tolist() == pytest.approx([2.0, 4.0, 16 / 3, 6.564102564102564])  # x²/(x − 1)
    d = diagnose(run)
    assert d.verdict == "divergence" and "no root ahead" in d.primary.value("ahead")
    assert d.primary.value("step ratio") > 0.95


def test_slow_convergence_in_one_direction_is_not_divergence():
    # regula falsi on x^10 − 1 creeps towards 1 from below in its first steps (REFERENCES §4)
    run = solve("x**10 - 1", "regula-falsi", bracket=(0.0, 1.3), max_evals=20)
    assert "divergence" not in diagnose(run).kinds
    # and a plain linear sequence moving the same way, rate 0.97, is not divergence without f either
    xs = [10 * (1 - 0.97**k) for k in range(60)]
    assert "divergence" not in diagnose(xs).kinds


def test_a_sequence_that_overflows_is_divergence():
    xs = [1.5, -1.694, 2.321, -5.114, 32.3, -1575.3, 3.89e6, -2.38e13, 8.9e26, math.inf]
    d = diagnose(xs)
    assert d.verdict == "divergence" and d.primary.value("last finite iterate") == 8.9e26


def test_a_function_that_raises_is_a_domain_error_with_its_edge():
    def f(x):
        return math.sqrt(x) - 2  # defined for x >= 0; root 4

    # Newton: x − (√x − 2)·2√x = 4√x − x; from 20 that is 4√20 − 20 = −2.111, where math.sqrt raises
    d = diagnose(solve(f, "newton", start=20.0, fprime=lambda x: 0.5 / math.sqrt(x)))
    assert d.verdict == "domain-error"
    assert d.primary.value("first failure at x") == pytest.approx(4 * math.sqrt(20) - 20, rel=1e-12)
    assert "math domain error" in {e[0]: e[2] for e in d.primary.evidence}["first failure at x"]
    lo, hi = d.primary.value("domain edge")
    assert hi < 0 <= lo and lo - hi <= 1e-8 * 20
    cured = d.remedy.solve(f)
    assert cured.converged and cured.root == pytest.approx(4.0, rel=1e-12)


@pytest.mark.parametrize("budget, width", [(60, 1e-6), (100, 1e-8)])
def test_the_domain_edge_is_found_when_not_one_evaluation_of_the_path_succeeded(budget, width):
    # √x − 1 from −3: the very first evaluation is NaN (math: √x is real for x ≥ 0 only), so the nearest defined
    # point comes from the probes; the bisection towards −3 must close on 0 within the probe budget
    d = diagnose(solve("sqrt(x) - 1", "newton", start=-3.0), max_probe_evals=budget)
    assert d.verdict == "domain-error" and d.probes <= budget
    assert d.primary.value("first failure at x") == -3.0
    lo, hi = d.primary.value("domain edge")
    assert hi < 0 <= lo and lo - hi <= width
    assert "not defined just below x ≈" in d.primary.summary
    cured = d.remedy.solve("sqrt(x) - 1")
    assert cured.converged and abs(cured.root - 1.0) <= 1e-12


def test_the_domain_edge_is_found_by_stepping_out_when_the_bracket_search_has_no_budget():
    # 11 probes leave no room for a bracket search (it needs 12): the defined point comes from stepping out from
    # the failed start −2 (math: log is real for x > 0 only; log(0) = −inf counts as undefined, like NaN)
    d = diagnose(solve("log(x)", "newton", start=-2.0), max_probe_evals=11)
    lo, hi = d.primary.value("domain edge")
    assert hi <= 0 < lo  # log(0) = −inf is undefined to the Prober, like NaN
