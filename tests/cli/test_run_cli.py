"""``convdiag run``: table and JSON output, exit codes, --file, hostile text never runs."""

import json
import math
import os
import subprocess
import sys

import pytest

from convdiag.cli import main


def run_cli(capsys, *args):
    code = main(list(args))
    out = capsys.readouterr()
    return code, out.out, out.err


def test_newton_two_cycle_is_printed_and_exits_1(capsys):
    # Textbook example (Burden & Faires, from memory): Newton from 0 on x^3 - 2x + 2 cycles 0, 1, 0, 1.
    code, out, _ = run_cli(capsys, "run", "x**3 - 2*x + 2", "--method", "newton", "--start", "0", "--max-evals", "12")
    assert code == 1
    assert "did not converge (max-evals)" in out
    lines = [ln.split() for ln in out.splitlines() if ln.strip()[:1].isdigit()]
    assert [float(ln[1]) for ln in lines[:4]] == [1.0, 0.0, 1.0, 0.0]


def test_json_output_has_the_stable_keys(capsys):
    code, out, _ = run_cli(capsys, "run", "cos(x) - x", "--method", "secant", "--start", "1", "--json")
    d = json.loads(out)
    assert code == 0
    for key in ("method", "evaluations", "iterates", "values", "stop_reason", "root"):
        assert key in d
    assert d["method"] == "secant" and d["evaluations"] == len(d["iterates"])
    assert abs(d["root"] - 0.7390851332151607) < 1e-15  # reference: mpmath.findroot at 50 digits


def test_bracketing_method_and_tolerance(capsys):
    code, out, _ = run_cli(capsys, "run", "x**2 - 2", "-m", "bisection", "--bracket", "0", "2", "--tol", "1e-6", "--json")
    d = json.loads(out)
    assert code == 0 and d["stop_reason"] == "bracket-small"
    assert abs(d["root"] - math.sqrt(2)) < 1e-6  # reference: math.sqrt


def test_user_file_and_parameters(capsys, tmp_path):
    model = tmp_path / "model.py"
    model.write_text(
        "import math\n"
        "def residual(E, M=1.0, ecc=0.5):\n"
        "    return E - ecc * math.sin(E) - M\n"
        "def slope(E, M=1.0, ecc=0.5):\n"
        "    return 1 - ecc * math.cos(E)\n"
    )
    code, out, _ = run_cli(
        capsys,
        "run",
        "--file",
        f"{model}:residual",
        "--fprime",
        f"{model}:slope",
        "--start",
        "1",
        "--param",
        "M=1",
        "--param",
        "ecc=0.5",
        "--json",
    )
    d = json.loads(out)
    # reference: shared/REFERENCES.md §5, Kepler (M=1, e=0.5) E = 1.49870113351785 rad
    assert code == 0 and abs(d["root"] - 1.49870113351785) < 1e-13
    assert d["derivative_source"] == "user"


@pytest.mark.parametrize(
    "args, message",
    [
        (["run", "x**2 - 2", "--start", "nan"], "must be a finite number"),
        (["run", "x**2 - 2", "--start", "1", "--method", "bisection"], "needs a bracket"),
        (["run", "x**2 + 1", "-m", "bisection", "--bracket", "1", "2"], "same sign at both ends"),
        (["run", "--file", "nope.py:f", "--start", "1"], "No such file"),
        (["run", "x**2 - a", "--start", "1"], "needs a value for 'a'"),
        (["run", "x**2", "--start", "1", "--param", "a"], "NAME=VALUE"),
        (["run", "__import__('os').system('true')", "--start", "1"], "is not allowed in an expression"),
    ],
)
def test_bad_input_exits_2_with_a_message(capsys, args, message):
    code, out, err = run_cli(capsys, *args)
    assert code == 2
    assert err.startswith("convdiag: error:") and message in err


def test_hostile_expression_never_runs_code(capsys, tmp_path):
    marker = tmp_path / "pwned"
    code, _, err = run_cli(capsys, "run", f"__import__('os').system('touch {marker}')", "--start", "1")
    assert code == 2 and not marker.exists()


def test_argparse_rejects_non_numbers_with_exit_2():
    with pytest.raises(SystemExit) as info:
        main(["run", "x", "--start", "abc"])
    assert info.value.code == 2


def test_console_script_and_module_entry_point_work():
    env = dict(os.environ)
    out = subprocess.run(
        [sys.executable, "-m", "convdiag", "run", "x**2 - 2", "--start", "1", "--json"],
        capture_output=True,
        text=True,
        env=env,
        check=False,
    )
    assert out.returncode == 0, out.stderr
    assert abs(json.loads(out.stdout)["root"] - math.sqrt(2)) < 1e-15  # reference: math.sqrt


def test_import_convdiag_loads_numpy_only():
    code = (
        "import sys, convdiag\n"
        "heavy = [m for m in ('sympy', 'mpmath', 'scipy', 'matplotlib', 'ipywidgets', 'IPython') if m in sys.modules]\n"
        "print(','.join(heavy))\n"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == ""


@pytest.mark.parametrize(("expr", "bracket", "verdict", "headline"), [
    # 1/(x - 0.3): a sign change at a pole, |f| -> inf (any calculus text)
    ("1/(x - 0.3)", ("0", "1"), "pole", "a pole or jump, not a root"),
    # x*exp(-1/x**2) underflows to exactly 0 for |x| < ~0.037 (Alefeld, Potra and Shi 1995, problem 13)
    ("x*exp(-1/x**2)", ("-1", "4"), "flat", "f is exactly zero over a stretch"),
])
def test_a_sign_change_that_is_no_root_exits_1_and_says_so_in_the_headline(capsys, expr, bracket, verdict, headline):
    code, out, _ = run_cli(capsys, "run", expr, "--method", "hybrid", "--bracket", *bracket)
    assert code == 1
    assert headline in out.splitlines()[1] and "not at a confirmed root" in out.splitlines()[1]
    assert f"verdict: {verdict}" in out
    code, out, _ = run_cli(capsys, "run", expr, "--method", "hybrid", "--bracket", *bracket, "--json")
    assert code == 1 and json.loads(out)["verdict"] == verdict


def test_the_json_order_says_whether_its_window_counts_a_high_precision_replay(capsys):
    # IQI on x**3 - 2x - 5 (Wallis's cubic, root 2.0945514815423265..., mpmath) converges in too few double
    # precision steps for a window; the estimate replays the run at higher precision and must say so
    code, out, _ = run_cli(capsys, "run", "x**3 - 2*x - 5", "--method", "iqi", "--start", "2", "--json")
    order = json.loads(out)["order"]
    assert code == 0 and order["basis"] == "replay" and order["digits"] >= 60
    assert order["value"] == pytest.approx(1.839, abs=0.1)  # theory: the real root of t^3 = t^2 + t + 1, 1.8393


def test_the_diagnosis_shows_the_same_order_estimate_as_the_order_section(capsys):
    code, out, _ = run_cli(capsys, "run", "x**3 - 2*x - 5", "--method", "iqi", "--start", "2")
    order_line = [ln for ln in out.splitlines() if ln.startswith("Observed order:")]
    assert code == 0 and len(order_line) == 1
    assert "order 1.84" in order_line[0] and "replay" in order_line[0]


def test_a_closed_pipe_ends_the_command_quietly():
    # `convdiag run ... | head -2`: the reader closes the pipe early; no traceback may reach the terminal
    proc = subprocess.Popen([sys.executable, "-m", "convdiag", "run", "1/(x - 0.3)", "--method", "hybrid",
                             "--bracket", "0", "1"], stdout=subprocess.PIPE, stderr=subprocess.PIPE)
    with proc:
        proc.stdout.readline()
        proc.stdout.close()
        err = proc.stderr.read().decode()
        proc.wait(timeout=60)
    assert "Traceback" not in err and "BrokenPipeError" not in err


def test_report_writes_markdown_html_and_figures_that_document_the_run(capsys, tmp_path):
    # Newton from 0 on x**3 - 2x + 2 cycles 0, 1, 0, 1 (Burden & Faires, Numerical Analysis, from memory)
    folder = tmp_path / "cycle-report"
    code, out, err = run_cli(capsys, "run", "x**3 - 2*x + 2", "--method", "newton", "--start", "0",
                             "--report", str(folder))
    assert code == 1 and "verdict: cycle" in out
    page = (folder / "report.html").read_text(encoding="utf-8")
    md = (folder / "report.md").read_text(encoding="utf-8")
    assert "Report written" in err and str(folder / "report.html") in err
    for text in (page, md):
        assert "x**3 - 2*x + 2" in text and "cycle" in text and "Observed order of convergence" in text
    assert page.count("data:image/png;base64,") >= 2 and sorted(p.suffix for p in (folder / "figures").iterdir())[0] == ".png"


def test_report_into_a_folder_that_cannot_be_written_exits_2_after_printing_the_run(capsys, tmp_path):
    blocker = tmp_path / "a-file"
    blocker.write_text("not a folder")
    code, out, err = run_cli(capsys, "run", "x**2 - 2", "--start", "1", "--report", str(blocker / "sub"))
    assert code == 2 and "converged" in out  # the run's output is not lost
    assert err.startswith("convdiag: error:") and "a-file" in err


def test_expressions_that_start_with_a_minus_sign_are_read_as_expressions_not_options(capsys):
    # -x**3 + 2x + 5 = 0 is Wallis's cubic with the sign flipped: root 2.0945514815423265 (mpmath.findroot)
    code, out, _ = run_cli(capsys, "run", "-x**3 + 2*x + 5", "--start", "2", "--fprime", "-3*x**2 + 2", "--json")
    d = json.loads(out)
    assert code == 0 and d["root"] == pytest.approx(2.0945514815423265, rel=1e-15)
    assert d["derivative_source"] == "user"
