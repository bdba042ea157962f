"""Reading sequences of iterates and residuals from CSV and JSON files (convdiag.core._seqfile).

The sequences used here are computed in the tests: Heron's iteration x ← (x + 2/x)/2 for √2 (Newton on
x² − 2), in floats and at 60 digits with mpmath.
"""

import json
import math

import mpmath
import pytest

from convdiag import InputFileError, solve
from convdiag.core._seqfile import load_sequence, parse_sequence_text
from convdiag.core._sequence import IterationSequence


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
