"""Evaluations of a bracket search: array calls, point by point, and the budget (convdiag.core._bracket_sampler).

Check values: zeros of the Bessel function J0 from scipy.special.jn_zeros; x² + 1 has no real root.
"""

import math

import numpy as np
from scipy.special import j0, jn_zeros

from convdiag.core._brackets import find_brackets


def _inside(c, r):
    return c.lo <= r <= c.hi


def test_scalar_and_vectorised_evaluation_find_the_same_brackets():
    vec = find_brackets(lambda x: np.exp(x) - 2 - x / 3, domain=(-8.0, 3.0))
    sca = find_brackets(lambda x: math.exp(x) - 2 - x / 3, domain=(-8.0, 3.0))
    assert vec.vectorised and not sca.vectorised
    assert [(c.lo, c.hi) for c in vec.roots] == [(c.lo, c.hi) for c in sca.roots]
    assert sca.evaluations == vec.evaluations + 2  # the two-point array probe, then point by point


def test_budget_exhaustion_returns_what_was_found_with_a_message():
    found = find_brackets(lambda x: x * x + 1, near=1.0, max_evals=30)  # no real root (exact)
    assert found.budget_exhausted and not found.candidates
    assert found.evaluations == len(found.evals) <= 30
    assert any("budget of 30 ran out" in n for n in found.notes)


def test_budget_exhaustion_over_a_domain_leaves_sign_changes_unclassified():
    found = find_brackets(j0, domain=(0.0, 50.0), max_evals=150)
    assert found.budget_exhausted and found.evaluations <= 150
    zeros = jn_zeros(0, 16)  # reference: scipy.special.jn_zeros
    assert found.of_kind("unclassified")
    for c in found.roots + found.of_kind("unclassified"):
        assert sum(_inside(c, z) for z in zeros) == 1
