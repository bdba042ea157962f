"""Rate-based findings rest on the asymptotic window only, never on the wandering before it.

Check values: Kepler's equation E − e·sin E = M (shared/REFERENCES.md §5), its root from scipy's brentq
on [M, M + e] (which holds it: f(M) = −e·sin M < 0, f(M + e) = e·(1 − sin(M + e)) ≥ 0). Newton converges
quadratically at a simple root (REFERENCES §1); the smooth problems are those of tests/core/test_order.py
(Alefeld, Potra & Shi 1995 via scipy's copy, and Kepler).
"""

import importlib.util
import pathlib

import pytest

from convdiag import solve
from convdiag.core._diagnose import diagnose
from convdiag.demos import kepler_prime, kepler_residual


def kepler_root(m, ecc):
    from scipy.optimize import brentq

    return brentq(kepler_residual, m, m + ecc, args=(m, ecc), xtol=1e-15)


def test_a_run_that_wandered_before_converging_is_not_called_slow():
    # e = 0.99, M = 0.08 from E0 = M: 35 steps of wandering, then quadratic convergence in 6; a rate fitted over
    # the whole history (0.48) said "slow" and "f may not be smooth at the root"
    run = solve(kepler_residual, "newton", start=0.08, fprime=kepler_prime, params={"M": 0.08, "ecc": 0.99})
    assert run.converged and abs(run.root - kepler_root(0.08, 0.99)) < 1e-14
    d = diagnose(run)
    assert d.verdict == "converged" and "slow" not in d.kinds and "wrong-derivative" not in d.kinds
    assert not any("may not be smooth" in n for n in d.notes)
    assert any("reaches back to where the iterates were still wandering" in n for n in d.notes)
    assert "wandering" in d.primary.evidence[[e[0] for e in d.primary.evidence].index("convergence")][2]


def test_a_multiple_root_keeps_its_rate_finding():
    # the window of a steady linear rate has no growing error: (x − 1)²·e^x, Newton rate 1/2 (REFERENCES §1)
    d = diagnose(solve("(x - 1)**2*exp(x)", "newton", start=2.0))
    assert d.verdict == "multiple-root" and d.primary.value("linear rate") == pytest.approx(0.5, abs=0.02)


def _order_problems():
    spec = importlib.util.spec_from_file_location("order_cases", pathlib.Path(__file__).with_name("test_order.py"))
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


ORDER = _order_problems()


@pytest.mark.parametrize("method", sorted(ORDER.THEORY))
def test_every_converged_run_on_the_order_tests_smooth_problems_is_converged_with_no_other_finding(method):
    checked = 0
    for name, text, x0, root in ORDER.problems(1 / 16 if method == "steffensen" else 1 / 4):
        run = solve(text, method, start=x0)
        if not (run.converged and abs(float(run.root) - root) <= 1e-8 * max(1.0, abs(root))):
            continue  # the method does not reach this root from here: not a statement about the diagnosis
        d = diagnose(run)
        assert d.kinds == ("converged",) and d.primary.tag == "", (name, d, d.kinds, d.notes)
        checked += 1
    assert checked >= 20, checked


def test_a_window_of_unequal_contraction_ratios_is_no_rate():
    # e = 0.99, M = 0.225 from E0 = M, 20 evaluations: the last steps shrink (errors 399, 165, 17.5, 11.7, 8.4 by
    # successive differences) but by ratios from 0.11 to 0.72: still wandering. Newton with the exact derivative
    # (1 − e·cos E, sympy.diff) is quadratic at this simple root (REFERENCES §1), so a "linear rate" there would be a
    # false wrong-derivative alarm.
    run = solve(kepler_residual, "newton", start=0.225, fprime=kepler_prime, params={"M": 0.225, "ecc": 0.99},
                max_evals=20, xtol=1e-12, rtol=0)
    assert not run.converged
    d = diagnose(run, probe=False)
    assert "wrong-derivative" not in d.kinds and "multiple-root" not in d.kinds and "slow" not in d.kinds
    assert any("contraction ratios from" in n for n in d.notes)
