"""``convdiag brackets``: JSON and text output, --domain / --near exclusive, exit codes."""

import json
import math

import pytest

from convdiag import cli


@pytest.fixture
def main(monkeypatch):
    # Until the subcommand is listed in convdiag.cli._COMMANDS, add it for these tests.
    if "_brackets" not in cli._COMMANDS:
        monkeypatch.setattr(cli, "_COMMANDS", cli._COMMANDS + ("_brackets",))
    return cli.main


def run_cli(main, capsys, *args):
    code = main(list(args))
    out = capsys.readouterr()
    return code, out.out, out.err


def test_json_has_brackets_with_kind_and_starts_and_the_evaluation_count(main, capsys):
    code, out, _ = run_cli(main, capsys, "brackets", "tan(x) - 1", "--domain", "0", "3", "--json")
    d = json.loads(out)
    assert code == 0
    assert isinstance(d["evaluations"], int) and 0 < d["evaluations"] <= 1000
    kinds = [b["kind"] for b in d["brackets"]]
    assert kinds == ["root", "pole"]
    root, pole = d["brackets"]
    for b in d["brackets"]:
        assert {"lo", "hi", "kind", "starts"} <= set(b) and b["lo"] <= b["hi"]
    assert root["lo"] <= math.pi / 4 <= root["hi"]  # tan x = 1 at pi/4 (exact)
    assert pole["lo"] <= math.pi / 2 <= pole["hi"]  # pole of tan at pi/2 (exact)
    assert set(root["starts"]) == {"newton", "secant", "iqi"}
    assert root["lo"] <= root["starts"]["newton"] <= root["hi"] and len(root["starts"]["iqi"]) == 3


def test_near_searches_outward_and_prints_a_table(main, capsys):
    code, out, _ = run_cli(main, capsys, "brackets", "x**3 - 2*x - 5", "--near", "0")
    assert code == 0
    assert "outward from x = 0" in out and "root" in out and "What to do:" in out


def test_a_file_function_with_parameters(main, capsys, tmp_path):
    model = tmp_path / "kepler.py"
    model.write_text("import math\ndef residual(E, M=1.0, ecc=0.5):\n    return E - ecc * math.sin(E) - M\n")
    code, out, _ = run_cli(
        main, capsys, "brackets", "--file", f"{model}:residual", "--near", "3", "--param", "M=3",
        "--param", "ecc=0.8", "--json",
    )
    d = json.loads(out)
    root = d["brackets"][0]
    assert code == 0 and root["kind"] == "root"
    assert root["lo"] <= 3.06289397434037 <= root["hi"]  # REFERENCES.md §5: Kepler M = 3, e = 0.8


def test_no_root_within_the_budget_exits_1(main, capsys):
    code, out, _ = run_cli(main, capsys, "brackets", "x**2 + 1", "--near", "0", "--max-evals", "40", "--json")
    d = json.loads(out)
    assert code == 1 and d["brackets"] == [] and d["budget_exhausted"]


@pytest.mark.parametrize(
    "args",
    [
        ("brackets", "x - 1", "--domain", "0", "2", "--near", "1"),  # both
        ("brackets", "x - 1"),  # neither
        ("brackets", "--domain", "0", "2"),  # no function
    ],
)
def test_domain_and_near_are_exclusive_and_one_is_required(main, capsys, args):
    with pytest.raises(SystemExit) as exc:
        main(list(args))
    assert exc.value.code == 2
    assert "error" in capsys.readouterr().err


@pytest.mark.parametrize(
    "args, message",
    [
        (("brackets", "x - ", "--near", "1"), "error"),
        (("brackets", "x - 1", "--domain", "2", "1"), "'domain' parameter of find_brackets"),
        (("brackets", "x - 1", "--near", "1", "--max-evals", "1"), "'max_evals' parameter of find_brackets"),
        (("brackets", "--file", "missing.py:f", "--near", "1"), "No such file"),
        (("brackets", "x - a", "--near", "1", "--param", "a"), "--param needs NAME=VALUE"),
    ],
)
def test_bad_input_exits_2_with_a_message(main, capsys, args, message):
    code, out, err = run_cli(main, capsys, *args)
    assert code == 2 and out == ""
    assert message in err


def test_a_reversed_domain_is_quoted_whole(main, capsys):
    code, out, err = run_cli(main, capsys, "brackets", "x**2-1", "--domain", "5", "0")
    assert code == 2 and out == ""
    assert "with lo < hi. Got (5.0, 0.0) instead." in err


@pytest.mark.parametrize("value", ["inf", "-inf", "nan", "1e999"])
def test_a_guess_that_is_not_finite_is_refused_clearly(main, capsys, value):
    code, out, err = run_cli(main, capsys, "brackets", "x**2-1", "--near", value)
    assert code == 2 and out == ""
    assert "The 'near' parameter of find_brackets must be a finite float. Got" in err


def test_negative_numbers_in_exponent_form_are_read_as_values(main, capsys):
    code, out, _ = run_cli(main, capsys, "brackets", "x**2-1", "--near", "-1e1", "--json")
    d = json.loads(out)
    assert code == 0 and d["near"] == -10.0
    assert d["brackets"][0]["lo"] <= -1.0 <= d["brackets"][0]["hi"]  # x^2 = 1 at -1 (exact), the root nearer -10
    code, out, _ = run_cli(main, capsys, "brackets", "x**2-1", "--domain", "-2.5e0", "-5e-1", "--json")
    (root,) = json.loads(out)["brackets"]
    assert code == 0 and root["lo"] <= -1.0 <= root["hi"]


def test_exp_overflow_is_listed_once_not_as_poles(main, capsys):
    code, out, _ = run_cli(main, capsys, "brackets", "exp(x) + 1", "--near", "0", "--json")
    d = json.loads(out)
    assert code == 1 and [b["kind"] for b in d["brackets"]] == ["domain-edge"]
    assert abs(d["brackets"][0]["x"] - 709.782712893384) < 1e-6  # numpy.log(numpy.finfo(float).max)
