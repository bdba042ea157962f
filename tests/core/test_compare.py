"""Methods compared per function evaluation (convdiag/core/_compare.py).

Reference: the root of cos x − x, 0.7390851332151607 (mpmath.findroot); per evaluation the secant
method (efficiency 1.618) beats Newton (1.414) and Halley (1.442), Ostrowski (1960), REFERENCES §1.
"""

import pytest

from convdiag import ParameterError
from convdiag.core._order import compare_methods


def test_compare_methods_counts_evaluations_not_iterations():
    c = compare_methods("cos(x) - x", ["newton", "secant", "halley", "bisection"], bracket=(0.0, 1.0), tol=1e-12)
    by = {r.method: r for r in c.results}
    assert c.reference == "high-precision root" and c.root == pytest.approx(0.7390851332151607, abs=1e-16)
    # per evaluation the secant (1.618) beats Newton (1.414) and Halley (1.442); bisection is last
    assert by["secant"].evals_to_tol < by["newton"].evals_to_tol
    assert by["bisection"].evals_to_tol == max(r.evals_to_tol for r in c.results)
    assert c.fastest().method == "secant"
    for r in c.results:  # evals_to_tol is the first count whose error is below tol
        k = r.evals.index(r.evals_to_tol)
        assert r.errors[k] <= 1e-12 and all(e > 1e-12 for e in r.errors[:k])


def test_compare_methods_refuses_bad_input_with_clear_messages():
    with pytest.raises(ParameterError, match="'methods' parameter of compare_methods"):
        compare_methods("cos(x) - x", ["nope"], start=1.0)
    with pytest.raises(ParameterError, match="bisection needs a bracket"):
        compare_methods("cos(x) - x", ["bisection"], start=1.0)
    with pytest.raises(ParameterError, match="needs start= .* or bracket="):
        compare_methods("cos(x) - x", ["newton"])
