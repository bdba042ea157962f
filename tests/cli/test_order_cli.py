"""``convdiag order FILE``: CSV and JSON input, --json output, exit codes, clear errors for bad files.

The iterates are computed here: Heron's iteration x ← (x + 2/x)/2 for √2 (Newton on x² − 2), whose order
is 2 (textbook, e.g. Burden & Faires §2.3, from memory).
"""

import json
import math

import mpmath
import pytest

from convdiag import cli


@pytest.fixture
def run_cli(monkeypatch, capsys):
    # The lead wires "_order" into _COMMANDS; until then add it for the test (no-op once it is there).
    if "_order" not in cli._COMMANDS:
        monkeypatch.setattr(cli, "_COMMANDS", (*cli._COMMANDS, "_order"))

    def run(*args):
        code = cli.main(list(args))
        out = capsys.readouterr()
        return code, out.out, out.err

    return run


def heron_strings(n, digits):
    with mpmath.workdps(digits):
        x, out = mpmath.mpf(1), []
        for _ in range(n):
            out.append(mpmath.nstr(x, digits))
            x = (x + 2 / x) / 2
    return out


def test_a_csv_of_high_precision_iterates_gives_order_2_as_json(run_cli, tmp_path):
    p = tmp_path / "heron.csv"
    p.write_text("k,x\n" + "".join(f"{k},{x}\n" for k, x in enumerate(heron_strings(9, 80))))
    code, out, _ = run_cli("order", str(p), "--root", repr(math.sqrt(2)), "--json")
    d = json.loads(out)
    assert code == 0
    assert d["order"]["label"] == "quadratic" and abs(d["order"]["value"] - 2) <= 0.05
    assert d["order"]["reference"] == "given root" and d["file"] == str(p) and d["entries"] == 9
    # without --root: successive differences on the 80-digit iterates (ACOC)
    code, out, _ = run_cli("order", str(p), "--json")
    d = json.loads(out)
    assert code == 0 and d["order"]["label"] == "quadratic"
    assert d["order"]["reference"] in ("successive differences", "best iterate")


def test_the_json_output_of_convdiag_run_is_accepted(run_cli, tmp_path):
    code, out, _ = run_cli("run", "x**2 - 2", "--method", "bisection", "--bracket", "1", "2", "--json")
    assert code == 0
    p = tmp_path / "run.json"
    p.write_text(out)
    code, out, _ = run_cli("order", str(p), "--root", repr(math.sqrt(2)), "--json")
    d = json.loads(out)
    assert code == 0 and d["method"] == "bisection"
    assert d["order"]["label"] == "linear" and abs(d["rate"] - 0.5) <= 0.02  # bisection halves (REFERENCES §1)
    assert d["efficiency"]["evals_per_step"] == 1


def test_text_output_says_what_was_read(run_cli, tmp_path):
    p = tmp_path / "h.txt"
    xs = [1.0]
    for _ in range(5):
        xs.append((xs[-1] + 2 / xs[-1]) / 2)
    p.write_text("\n".join(repr(x) for x in xs))
    code, out, _ = run_cli("order", str(p), "--root", repr(math.sqrt(2)), "--method", "newton")
    assert code == 0
    assert out.startswith(f"{p}: 6 entries (iterates)") and "Observed order" in out and "quadratic" in out


def test_too_few_settled_points_exit_1(run_cli, tmp_path):
    p = tmp_path / "short.csv"
    p.write_text("1\n1.5\n1.4166666666666667\n")
    code, out, _ = run_cli("order", str(p), "--root", repr(math.sqrt(2)))
    assert code == 1 and "not enough points" in out


@pytest.mark.parametrize("name, content, match", [
    ("missing.csv", None, "No such file"),
    ("empty.csv", "", "is empty"),
    ("words.csv", "x\n1\nabc\n2\n", "entry 2 of the iterates column is 'abc'"),
    ("ragged.csv", "1,2\n3\n4,5\n", "row 2 has 1 fields"),
    ("broken.json", "[1, 2,", "not valid JSON"),
    ("two.csv", "1\n2\n", "has 2 entries; an order of convergence needs at least 3"),
])
def test_bad_files_exit_2_with_a_clear_message(run_cli, tmp_path, name, content, match):
    p = tmp_path / name
    if content is not None:
        p.write_text(content)
    code, out, err = run_cli("order", str(p))
    assert code == 2 and out == ""
    assert err.startswith("convdiag: error: ")
    import re

    assert re.search(match, err), err


def test_bad_options_are_refused(run_cli, tmp_path):
    p = tmp_path / "h.csv"
    p.write_text("1\n1.5\n1.4166666666666667\n1.4142156862745099\n")
    with pytest.raises(SystemExit) as exc:
        run_cli("order", str(p), "--floor", "-1")
    assert exc.value.code == 2
