"""Loading and normalising plain sequences of iterates and residuals (lists, arrays, runs, recorders, files).

The sequences used here are computed in the tests: Heron's iteration x ← (x + 2/x)/2 for √2 (Newton on
x² − 2), in floats and at 60 digits with mpmath.
"""

import json
import math

import mpmath
import numpy as np
import pytest

from convdiag import InputFileError, ParameterError, record, solve
from convdiag.core._sequence import IterationSequence, as_sequence, load_sequence, parse_sequence_text


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


# -- files ------------------------------------------------------------------------------------------------
def test_csv_with_a_header_and_an_index_column(tmp_path):
    xs = heron(5)
    p = tmp_path / "log.csv"
    p.write_text("k,x,f\n" + "".join(f"{k},{x!r},{x * x - 2!r}\n" for k, x in enumerate(xs)))
    s = load_sequence(p)
    assert s.iterates.tolist() == xs and s.residuals.tolist() == [x * x - 2 for x in xs]


def test_csv_without_header_one_or_two_columns_and_an_index(tmp_path):
    xs = heron(4)
    one = parse_sequence_text("\n".join(repr(x) for x in xs))
    assert one.columns == ("iterates",)
    idx = parse_sequence_text("".join(f"{k}\t{x!r}\n" for k, x in enumerate(xs)))
    assert idx.columns == ("iterates",) and idx.iterates.tolist() == xs  # the counting column is an index
    two = parse_sequence_text("# x f\n" + "".join(f"{x!r} {x * x - 2!r}\n" for x in xs))
    assert two.columns == ("iterates", "residuals")
    res = parse_sequence_text("\n".join(repr(x * x - 2) for x in xs), kind="residuals")
    assert res.columns == ("residuals",)


def test_more_than_17_digits_are_kept_exactly(tmp_path):
    xs = heron(8, 60)
    s = parse_sequence_text("x\n" + "\n".join(xs))
    assert s.exact is not None and s.digits == 60
    with mpmath.workdps(60):
        assert abs(s.exact[-1] - mpmath.sqrt(2)) < mpmath.mpf(10) ** -58  # Heron converged to 60 digits
        assert abs(s.exact[-1] - s.iterates[-1]) > mpmath.mpf(10) ** -30  # more than the double holds


def test_json_list_columns_rows_and_run_output(tmp_path):
    xs = heron(4)
    assert parse_sequence_text(json.dumps(xs), fmt="json").iterates.tolist() == xs
    cols = parse_sequence_text(json.dumps({"x": xs, "f": [x * x - 2 for x in xs]}), fmt="json")
    assert cols.columns == ("iterates", "residuals")
    rows = parse_sequence_text(json.dumps([{"x": x, "evals": 2 * k + 1} for k, x in enumerate(xs)]), fmt="json")
    assert rows.evals.tolist() == [1, 3, 5, 7, 9]
    run = solve("x**2 - 2", "newton", start=1.0)
    d = run.to_dict()
    d["known_root"] = math.sqrt(2)
    s = parse_sequence_text(json.dumps(d), fmt="json")
    assert s.method == "newton" and s.root == math.sqrt(2)
    assert s.evals.tolist() == run.evals_at_iterates.tolist()
    p = tmp_path / "run.json"
    p.write_text(json.dumps(d))
    assert isinstance(load_sequence(p), IterationSequence)


@pytest.mark.parametrize("text, match", [
    ("", "is empty"),
    ("# only a comment\n", "only comments"),
    ("x\n1\nabc\n", "entry 2 of the iterates column is 'abc'"),
    ("1,2\n3\n", "row 2 has 1 fields"),
    ("1\n2\n", "has 2 entries"),
    ("a,b,c\n1,2,3\n4,5,6\n7,8,9\n", "no column of iterates or residuals .found 'a', 'b', 'c'"),
    ("1 2 3\n4 5 6\n7 8 9\n", "3 unnamed columns; add a header"),
])
def test_bad_csv_text_raises_input_file_error(text, match):
    with pytest.raises(InputFileError, match=match):
        parse_sequence_text(text, name="log.csv")


@pytest.mark.parametrize("text, match", [
    ("[1, 2,", "not valid JSON"),
    ('"hello"', "unexpected shape"),
    ('{"x": "1 2 3"}', "must be a list of numbers"),
    ('{"x": [1, 2, 3], "evals": [1, 0.5, 2]}', "whole numbers that never decrease"),
])
def test_bad_json_raises_input_file_error(text, match):
    with pytest.raises(InputFileError, match=match):
        parse_sequence_text(text, name="log.json", fmt="json")


def test_a_missing_or_unreadable_file_raises_input_file_error(tmp_path):
    with pytest.raises(InputFileError, match="No such file"):
        load_sequence(tmp_path / "nope.csv")
    p = tmp_path / "binary.csv"
    p.write_bytes(b"\xff\xfe\x00\x81")
    with pytest.raises(InputFileError, match="Could not read"):
        load_sequence(p)
