"""``convdiag diagnose FILE`` on CSV and JSON logs, and the verdict in ``convdiag run --json``.

Logs hold the published cases of shared/REFERENCES.md §4 (Newton's 2-cycle 0, 1, 0, 1 on
x³ − 2x + 2) and Newton at the double root of (x − 1)²e^x (rate 1/2, §1).
"""

import json
import math

import pytest

import convdiag.cli
from convdiag.cli import main


@pytest.fixture(autouse=True)
def diagnose_command(monkeypatch):
    """The subcommand module, registered as convdiag.cli._COMMANDS lists it (added here if not yet listed)."""
    if "_diagnose" not in convdiag.cli._COMMANDS:
        monkeypatch.setattr(convdiag.cli, "_COMMANDS", (*convdiag.cli._COMMANDS, "_diagnose"))


def run_cli(capsys, *args):
    code = main(list(args))
    out = capsys.readouterr()
    return code, out.out, out.err


def newton_double_root(n=30):
    xs = [2.0]
    for _ in range(n):
        x = xs[-1]
        xs.append(x - (x - 1) ** 2 * math.exp(x) / ((2 * (x - 1) + (x - 1) ** 2) * math.exp(x)))
    return xs


def test_a_csv_log_of_a_two_cycle_is_diagnosed_as_json(capsys, tmp_path):
    path = tmp_path / "cycle.csv"
    path.write_text("k,x\n" + "".join(f"{k},{k % 2}\n" for k in range(12)))
    code, out, _ = run_cli(capsys, "diagnose", str(path), "--json")
    d = json.loads(out)
    assert code == 1 and d["verdict"] == "cycle" and d["entries"] == 12
    f = d["findings"][0]
    assert f["kind"] == "cycle" and f["advice"]
    assert {e["label"]: e["value"] for e in f["evidence"]}["period"] == 2


def test_a_json_log_with_the_method_gives_the_multiplicity(capsys, tmp_path):
    path = tmp_path / "double.json"
    path.write_text(json.dumps({"x": newton_double_root()}))
    _code, out, _ = run_cli(capsys, "diagnose", str(path), "--method", "newton", "--json")
    d = json.loads(out)
    assert d["verdict"] == "multiple-root"
    assert {e["label"]: e["value"] for e in d["findings"][0]["evidence"]}["multiplicity"] == 2
    assert d["findings"][0]["remedy"]["cli"] == "--method newton-m --multiplicity 2 --start 2.0"


def test_the_text_form_reads_as_a_note(capsys, tmp_path):
    path = tmp_path / "double.csv"
    path.write_text("\n".join(str(x) for x in newton_double_root()))
    code, out, _ = run_cli(capsys, "diagnose", str(path), "--method", "newton", "--function", "(x - 1)**2*exp(x)")
    assert code == 1
    assert "verdict: multiple-root (m = 2)" in out and "What to change:" in out and "newton-m" in out
    assert "extra evaluations by the diagnosis" in out  # --function lets it probe f


def test_a_converged_log_exits_0(capsys, tmp_path):
    path = tmp_path / "ok.json"
    xs = [1.0, 1.5, 1.4166666666666667, 1.4142156862745099, 1.4142135623746899, 1.4142135623730951]  # Newton on x²−2
    path.write_text(json.dumps(xs))
    code, out, _ = run_cli(capsys, "diagnose", str(path))
    assert code == 0 and "verdict: converged" in out


def test_run_json_output_of_convdiag_run_is_read_back(capsys, tmp_path):
    code, out, _ = run_cli(capsys, "run", "x**3 - 2*x + 2", "--start", "0", "--max-evals", "20", "--json")
    assert code == 1 and json.loads(out)["verdict"] == "cycle"
    path = tmp_path / "run.json"
    path.write_text(out)
    code, out, _ = run_cli(capsys, "diagnose", str(path), "--json")
    assert code == 1 and json.loads(out)["verdict"] == "cycle"


@pytest.mark.parametrize("content, match", [("", "is empty"), ("x\n1\n2\n", "at least 3"), ("{", "not valid JSON")])
def test_a_bad_file_exits_2_with_the_reason(capsys, tmp_path, content, match):
    path = tmp_path / ("bad.json" if content.startswith("{") else "bad.csv")
    path.write_text(content)
    code, out, err = run_cli(capsys, "diagnose", str(path))
    assert code == 2 and out == "" and match in err


def test_a_missing_file_exits_2(capsys, tmp_path):
    code, _, err = run_cli(capsys, "diagnose", str(tmp_path / "nope.csv"))
    assert code == 2 and "No such file" in err


def test_fprime_without_the_function_is_refused(capsys, tmp_path):
    path = tmp_path / "a.csv"
    path.write_text("1\n0.5\n0.25\n0.125\n")
    with pytest.raises(SystemExit) as exc:
        main(["diagnose", str(path), "--fprime", "2*x"])
    assert exc.value.code == 2 and "--fprime needs --function" in capsys.readouterr().err


def test_run_json_has_the_verdict_and_findings_and_keeps_the_stable_keys(capsys):
    code, out, _ = run_cli(capsys, "run", "x**10 - 1", "-m", "regula-falsi", "--bracket", "0", "1.3", "--json")
    d = json.loads(out)
    assert code == 1
    for key in ("method", "evaluations", "iterates", "values", "stop_reason", "root", "order", "rate",
                "multiplicity", "efficiency"):
        assert key in d
    assert d["verdict"] == "slow"
    assert [f["kind"] for f in d["findings"]][:2] == ["slow", "budget"]
    assert all({"kind", "evidence", "advice"} <= set(f) for f in d["findings"])


def test_run_text_ends_with_the_diagnosis(capsys):
    code, out, _ = run_cli(capsys, "run", "atan(x)", "--start", "1.5")
    assert code == 1 and "verdict: divergence" in out and "What to change:" in out


def test_run_accepts_the_multiplicity_of_newton_m(capsys):
    code, out, _ = run_cli(capsys, "run", "(x - 1)**4*exp(x)", "-m", "newton-m", "--multiplicity", "4",
                           "--start", "2", "--json")
    d = json.loads(out)
    assert code == 0 and d["verdict"] == "converged" and d["evaluations"] < 20
    with pytest.raises(SystemExit):
        main(["run", "x - 1", "--multiplicity", "2", "--start", "0"])
    assert "--multiplicity is a setting of --method newton-m" in capsys.readouterr().err


def test_run_on_the_tan_pole_reports_the_pole_without_a_traceback(capsys):
    # tan has a pole at π/2 inside [1, 2] (REFERENCES §4); bisection "converges" on it by its own rule
    code, out, err = run_cli(capsys, "run", "tan(x)", "-m", "bisection", "--bracket", "1", "2", "--json")
    d = json.loads(out)
    assert code == 1 and d["verdict"] == "pole" and d["findings"][0]["kind"] == "pole"  # no root: exit 1
    assert "Traceback" not in err


def test_the_text_form_gives_the_command_line_that_applies_the_remedy(capsys, tmp_path):
    # Newton's 2-cycle 0, 1, 0, 1 on x³ − 2x + 2 (REFERENCES §4); its real root is −1.7692923542386314
    path = tmp_path / "cycle.csv"
    path.write_text("x\n" + "".join(f"{k % 2}\n" for k in range(12)))
    code, out, _ = run_cli(capsys, "diagnose", str(path), "--function", "x**3 - 2*x + 2")
    assert code == 1 and "verdict: cycle" in out and "EXPR" not in out
    line = next(ln for ln in out.splitlines() if "Apply it:" in ln)
    command = line.split("·", 1)[1].strip()
    assert command.startswith("convdiag run 'x**3 - 2*x + 2' --method hybrid --bracket ")
    import shlex

    code, out, _ = run_cli(capsys, *shlex.split(command)[1:], "--json")
    assert code == 0 and abs(json.loads(out)["root"] - (-1.7692923542386314)) < 1e-12


def test_an_expected_bracket_is_used_by_the_remedy(capsys, tmp_path):
    # the same 2-cycle; you expect the root in [−2, −1.5] (f(−2) = −2 < 0 < f(−1.5) = 1.625)
    path = tmp_path / "cycle.csv"
    path.write_text("x\n" + "".join(f"{k % 2}\n" for k in range(12)))
    code, out, _ = run_cli(capsys, "diagnose", str(path), "--function", "x**3 - 2*x + 2", "--bracket", "-2", "-1.5",
                           "--json")
    assert code == 1 and json.loads(out)["findings"][0]["remedy"]["bracket"] == [-2.0, -1.5]
    with pytest.raises(SystemExit) as exc:
        main(["diagnose", str(path), "--bracket", "1", "0"])
    assert exc.value.code == 2 and "--bracket needs two finite numbers LO < HI" in capsys.readouterr().err
