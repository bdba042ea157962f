"""find_brackets: what a root bracket guarantees, bad input, and the result (convdiag.core._brackets).

The search itself is tested in test_bracket_search.py, its evaluations in test_bracket_sampler.py and
the recommended starts in test_bracket_starts.py.
"""

import itertools
import math

import numpy as np
import pytest
from hypothesis import example, given, settings
from hypothesis import strategies as st

from convdiag import ParameterError
from convdiag.core._brackets import find_brackets


def _inside(c, r):
    return c.lo <= r <= c.hi


def _changes_sign(f, c):
    fl, fh = float(f(c.lo)), float(f(c.hi))
    return (fl < 0 < fh) or (fh < 0 < fl) or fl == 0 or fh == 0  # no product: it can underflow to 0


# -- property: a root bracket always changes sign --------------------------------------------------


@settings(max_examples=30, deadline=None)
@given(
    roots=st.lists(st.floats(min_value=-4.5, max_value=4.5), min_size=1, max_size=5),
    scale=st.floats(min_value=1e-3, max_value=1e3),
    extra=st.floats(min_value=0.1, max_value=4.0),
)
@example(roots=[0.0, 1.0, 2.0], scale=1.0, extra=1.0)  # roots on grid points: exact zeros
@example(roots=[1.0, 1.0, -2.0], scale=1.0, extra=1.0)  # a double root: a touch, no bracket
@example(roots=[2.2250738585e-313], scale=0.001, extra=0.25)  # a subnormal root: f(0) is subnormal too
def test_a_root_bracket_always_changes_sign_and_holds_a_known_root(roots, scale, extra):
    # Evaluated as a product of factors, so the computed sign is the true sign (each x - r keeps its sign).
    def f(x):
        x = np.asarray(x, dtype=float)
        return scale * np.prod([x - r for r in roots], axis=0) * (x * x + extra)  # x^2 + extra: no real roots
    found = find_brackets(f, domain=(-6.0, 6.0))
    for c in found.roots:
        assert _changes_sign(f, c)
        assert any(c.lo <= r <= c.hi for r in roots)  # known roots, the polynomial's factors
    distinct = sorted(set(roots))
    simple = [r for r in distinct if roots.count(r) % 2 == 1]
    if all(b - a > 0.3 for a, b in itertools.pairwise(distinct)):
        for r in simple:  # well-separated odd-multiplicity roots are all bracketed
            assert any(_inside(c, r) for c in found.roots)


# -- bad input ----------------------------------------------------------------------------------


def test_give_exactly_one_of_domain_and_near():
    with pytest.raises(ParameterError, match=r"The 'domain' parameter of find_brackets must be a pair"):
        find_brackets("x - 1")
    with pytest.raises(ParameterError, match=r"The 'near' parameter of find_brackets must be None"):
        find_brackets("x - 1", domain=(0, 2), near=1.0)


@pytest.mark.parametrize(
    "kwargs, match",
    [
        ({"domain": (2.0, 1.0)}, r"The 'domain' parameter of find_brackets must be a pair of finite floats"),
        ({"domain": (0.0, math.inf)}, r"'domain' parameter .* Got \(0\.0, inf\) instead"),
        ({"near": math.nan}, r"The 'near' parameter of find_brackets must be a finite float. Got nan"),
        ({"near": 0.0, "max_evals": 2}, r"The 'max_evals' parameter of find_brackets must be an int >= 3. Got 2"),
        ({"near": 0.0, "step": -1.0}, r"The 'step' parameter of find_brackets must be a finite float > 0"),
    ],
)
def test_bad_values_are_refused_with_the_template_message(kwargs, match):
    with pytest.raises(ParameterError, match=match):
        find_brackets("x - 1", **kwargs)


@pytest.mark.parametrize("domain", [(5, 0), [5.0, 0.0], (np.float64(5.0), np.float64(0.0))])
def test_a_reversed_domain_is_quoted_whole_in_the_message(domain):
    with pytest.raises(ParameterError, match=r"with lo < hi\. Got \(5\.0, 0\.0\) instead\.$"):
        find_brackets("x**2 - 1", domain=domain)


def test_the_result_serialises_to_plain_json():
    import json

    found = find_brackets(np.tan, domain=(1.0, 4.0))
    d = json.loads(json.dumps(found.to_dict(), allow_nan=False))
    assert d["evaluations"] == found.evaluations
    assert [b["kind"] for b in d["brackets"]] == [c.kind for c in found.candidates]
    assert "<BracketSearch tan over [1, 4]: 1 root, 1 pole;" in repr(found)
    assert "2 roots" in repr(find_brackets("x**2 - 2", domain=(-2, 2)))
