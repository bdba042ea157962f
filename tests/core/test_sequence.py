"""Normalising plain sequences of iterates and residuals (lists, arrays, runs, recorders); files are
tested in test_seqfile.py.

The sequences used here are computed in the tests: Heron's iteration x ← (x + 2/x)/2 for √2 (Newton on
x² − 2), in floats and at 60 digits with mpmath.
"""

import mpmath
import numpy as np
import pytest

from convdiag import ParameterError, record, solve
from convdiag.core._sequence import as_sequence


def heron(n, digits=None):
    """Heron's iteration for √2 from 1 (floats, or mpmath strings with ``digits`` digits)."""
    if digits is None:
        xs = [1.0]
        for _ in range(n):
            xs.append((xs[-1] + 2 / xs[-1]) / 2)
        return xs
    with mpmath.workdps(digits):
        x = mpmath.mpf(1)
        xs = [x]
        for _ in range(n):
            x = (x + 2 / x) / 2
            xs.append(x)
        return [mpmath.nstr(v, digits) for v in xs]


def test_a_list_is_read_as_iterates_and_an_n_by_2_array_as_iterates_and_residuals():
    xs = heron(4)
    s = as_sequence(xs)
    assert s.columns == ("iterates",) and s.iterates.tolist() == xs
    both = as_sequence(np.column_stack([xs, [x * x - 2 for x in xs]]))
    assert both.columns == ("iterates", "residuals") and both.residuals[0] == -1.0
    res = as_sequence([x * x - 2 for x in xs], kind="residuals")
    assert res.columns == ("residuals",)


def test_a_mapping_is_read_by_column_names():
    s = as_sequence({"Iterate": [3, 2, 1.5], "F(x)": [7, 2, 0.25], "nfev": [1, 2, 3]})
    assert s.columns == ("iterates", "residuals", "evals") and s.evals.tolist() == [1, 2, 3]


def test_a_run_gives_iterates_residuals_and_evaluation_counts():
    run = solve("x**2 - 2", "newton", start=1.0)
    s = as_sequence(run)
    assert s.iterates.tolist() == run.iterates.tolist() and s.evals.tolist() == run.evals_at_iterates.tolist()
    assert s.method == "newton" and s.exact is None
    hp = as_sequence(solve("x**2 - 2", "newton", start=1.0, digits=40))
    assert hp.exact is not None and hp.digits == 40


def test_a_recorder_gives_its_f_evaluations_in_order_and_skips_failures():
    def f(x):
        if x > 10:
            raise ValueError("outside the model")
        return x * x - 2

    rf = record(f, fprime=lambda x: 2 * x)
    for x in (1.0, 1.5, 20.0):
        try:
            rf(x)
        except ValueError:
            pass
    rf.fprime(1.5)
    rf(1.4166666666666667)
    s = as_sequence(rf)
    assert s.iterates.tolist() == [1.0, 1.5, 1.4166666666666667]  # no failed call, no derivative call
    assert s.evals.tolist() == [1, 2, 5]  # cumulative rows, the derivative and the failure included


def test_mpmath_numbers_are_kept_exactly():
    with mpmath.workdps(50):
        xs = [mpmath.mpf(v) for v in heron(8, 50)]
    s = as_sequence(xs)
    assert s.exact is not None and s.digits >= 45 and s.exact[-1] == xs[-1]


@pytest.mark.parametrize("data, match", [
    ([1.0, 2.0], "at least 3"),
    ("1, 2, 3", "'data' parameter of as_sequence"),
    ([1 + 2j, 1, 2], "must be real numbers"),
    (np.zeros((3, 3)), "1-D, or 2-D with two columns"),
    ({"foo": [1, 2, 3]}, "no column of iterates or residuals .found 'foo'"),
])
def test_bad_objects_are_refused_with_clear_messages(data, match):
    with pytest.raises(ParameterError, match=match):
        as_sequence(data)
