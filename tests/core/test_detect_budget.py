"""The budget finding: a count of the evaluations still needed that is checked, and remedies that work when applied.

Check values: Kepler's equation E − e·sin E − M (shared/REFERENCES.md §5) at e = 0.99; its root from scipy's brentq on
[0, π] (f(0) = −M < 0, f(π) = π − M > 0). Newton with the exact derivative 1 − e·cos E (sympy.diff).
"""

import math

import numpy as np
import pytest

from convdiag import solve
from convdiag.core._detect_rate import evals_needed
from convdiag.core._detect_trace import build_trace
from convdiag.core._diagnose import diagnose

E = 0.99


def kepler(m):
    return lambda x: x - E * np.sin(x) - m


def kepler_prime(x):
    return 1 - E * np.cos(x)


def kepler_root(m):
    from scipy.optimize import brentq

    return brentq(kepler(m), 0.0, math.pi, xtol=1e-15)


def newton_run(m, max_evals=20):
    return solve(kepler(m), "newton", start=m, fprime=kepler_prime, max_evals=max_evals, xtol=1e-12, rtol=0)


def test_the_budget_remedy_for_newton_on_kepler_at_m_one_tenth_converges_when_applied():
    # the last steps shrink 55 → 3.2 → 1.8 while Newton is still wandering: an extrapolation from them at order 2 is
    # no count; continuing the run is
    run = newton_run(0.1)
    d = diagnose(run)
    assert d.verdict == "budget"
    need = d.primary.value("evaluations still needed")
    assert "counted" in {lab: note for lab, _, note in d.primary.evidence}["evaluations still needed"]
    assert d.remedy.max_evals == run.evaluations + need
    cured = d.remedy.solve(kepler(0.1), fprime=kepler_prime)
    assert cured.converged and abs(cured.root - kepler_root(0.1)) < 1e-12  # scipy brentq
    # the count is tight: given room, the run converges after at most that many evaluations and at least that many
    # minus the two the continuation spent again on f and f' at the last iterate
    full = newton_run(0.1, max_evals=400)
    assert full.converged and d.remedy.max_evals - 2 <= full.evaluations <= d.remedy.max_evals


def test_no_count_is_extrapolated_from_steps_that_have_not_settled():
    run = newton_run(0.1)
    need, why = evals_needed(build_trace(run), None)
    assert need is None and "have not settled into convergence" in why
    # without probes nothing can be counted: the remedy is a bracketing method, which needs no count, and it works
    d = diagnose(run, probe=False)
    assert d.remedy is not None and d.remedy.method == "hybrid" and d.remedy.max_evals is None
    cured = d.remedy.solve(kepler(0.1), fprime=kepler_prime)
    assert cured.converged and abs(cured.root - kepler_root(0.1)) < 1e-12  # scipy brentq


def test_an_estimate_that_could_not_be_checked_says_so_and_offers_a_bracket():
    # M = 0.05: the last steps settle (quadratic); without probes the estimate cannot be checked
    d = diagnose(newton_run(0.05), probe=False)
    b = d.finding("budget")
    assert b is not None and "unchecked" in b.tag and "unchecked" in b.summary
    assert b.remedy.method == "hybrid"
    cured = b.remedy.solve(kepler(0.05), fprime=kepler_prime)
    assert cured.converged and abs(cured.root - kepler_root(0.05)) < 1e-12  # scipy brentq


@pytest.mark.parametrize("m", [0.05, 0.1, 0.15, 0.2, 0.25, 0.3])
@pytest.mark.parametrize("max_evals", [10, 20, 30])
def test_every_remedy_offered_on_a_stopped_kepler_run_works_when_applied(m, max_evals):
    run = newton_run(m, max_evals)
    if run.converged:
        return
    root = kepler_root(m)  # scipy brentq
    for probe in (True, False):
        for finding in diagnose(run, probe=probe).findings:
            assert finding.remedy is not None, finding
            cured = finding.remedy.solve(kepler(m), fprime=kepler_prime)
            assert cured.converged and abs(cured.root - root) < 1e-9, (probe, finding, cured)
