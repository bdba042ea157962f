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
