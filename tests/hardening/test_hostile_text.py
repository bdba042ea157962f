"""Hostile expression text through every door text comes in by: refused at once, clearly, with no side effect.

Doors: ``convdiag.solve(text)``, ``as_problem``, ``find_brackets(text)``, the command line (``convdiag run``,
``convdiag brackets``, ``convdiag diagnose --function``: exit status 2, one error line, no traceback), the
``%iterscope`` magic and the explorer widget. The parser itself has its own corpus in
tests/core/test_expr_reader.py; here the corpus of ``corpus.py`` goes through the doors, and a fuzz test feeds
the parser Python-flavoured text. "Quickly" is guarded by ``signal.alarm`` (a hang fails the test), not timed.
"""

from __future__ import annotations

import os
import shlex
import subprocess
import sys

import pytest
from checks import alarm
from corpus import HOSTILE_TEXT, PWNED
from hypothesis import given, settings
from hypothesis import strategies as st

import convdiag
from convdiag.cli import main
from convdiag.core._expr import parse_expression
from convdiag.errors import ConvdiagError, ExpressionError, InputFileError

N_FUZZ_CHARS = 1500
N_FUZZ_TOKENS = 1500
GUARD = 10  # seconds a refusal may take before the test fails: a guard against runaway work, not a benchmark

IDS = [repr(t[:24]) + (f"…{len(t)}" if len(t) > 24 else "") for t in HOSTILE_TEXT]


@pytest.fixture(autouse=True)
def no_side_effects(tmp_path, monkeypatch):
    """Each test runs in an empty directory; afterwards nothing was written there or at PWNED."""
    monkeypatch.chdir(tmp_path)
    if os.path.exists(PWNED):
        os.remove(PWNED)
    yield
    assert not os.path.exists(PWNED)
    assert os.listdir(tmp_path) == [] or set(os.listdir(tmp_path)) <= {"log.csv"}


def test_the_corpus_is_large_and_every_entry_is_refused_by_the_parser():
    assert len(HOSTILE_TEXT) >= 30 and len(set(HOSTILE_TEXT)) == len(HOSTILE_TEXT)
    for text in HOSTILE_TEXT:
        with alarm(GUARD), pytest.raises(ExpressionError) as info:
            parse_expression(text)
        assert str(info.value).strip() and isinstance(info.value.part, str)


@pytest.mark.parametrize("text", HOSTILE_TEXT, ids=IDS)
def test_the_library_doors_refuse_hostile_text(text):
    doors = {
        "solve": lambda: convdiag.solve(text, "newton", start=1.0),
        "start_session": lambda: convdiag.start_session(text, "secant", start=1.0),
        "as_problem": lambda: convdiag.as_problem(text),
        "fprime": lambda: convdiag.as_problem("x**2 - 2", fprime=text),
        "find_brackets": lambda: convdiag.find_brackets(text, domain=(0.0, 1.0)),
        "solve_many": lambda: convdiag.solve_many(text, starts=[1.0, 2.0]),
        "sweep": lambda: convdiag.sweep(text, {"a": [1.0, 2.0]}, start=1.0),
        "diagnose": lambda: convdiag.diagnose([1.0, 0.5, 0.25], f=text),
    }
    for name, door in doors.items():
        with alarm(GUARD), pytest.raises(ConvdiagError, match=r"\S") as info:
            door()
        assert isinstance(info.value, ExpressionError), f"{name}: {type(info.value).__name__}: {info.value}"


def _cli(capsys, *argv):
    """Run the command line in this process: (exit status, stdout, stderr)."""
    try:
        with alarm(GUARD):
            code = main(list(argv))
    except SystemExit as exc:  # argparse's own refusals (text that looks like an option)
        code = exc.code
    out, err = capsys.readouterr()
    return code, out, err


@pytest.mark.parametrize("text", HOSTILE_TEXT, ids=IDS)
def test_the_command_line_refuses_hostile_text_with_status_2_and_no_traceback(capsys, tmp_path, text):
    log = tmp_path / "log.csv"
    log.write_text("x\n1.0\n0.5\n0.25\n0.125\n", encoding="utf-8")
    for argv in (
        ("run", text, "--start", "1"),
        ("brackets", text, "--domain", "0", "1"),
        ("diagnose", str(log), "--function", text),
        ("run", "x**2 - 2", "--start", "1", "--fprime", text),
    ):
        code, out, err = _cli(capsys, *argv)
        assert code == 2, (argv[0], code, out[-300:], err[-300:])
        assert "Traceback" not in err + out
        assert err.strip().splitlines()[-1].startswith("convdiag") and "error:" in err  # one message last


def test_text_shaped_like_a_file_reference_is_never_imported(capsys, tmp_path):
    script = tmp_path / "evil.py"
    script.write_text(f"open({PWNED!r}, 'w').close()\ndef f(x):\n    return x\n", encoding="utf-8")
    for argv in (("run", f"{script}:f", "--start", "1"), ("brackets", f"{script}:f", "--near", "1"),
                 ("run", "x - 1", "--start", "1", "--fprime", f"{script}:f")):
        code, _, err = _cli(capsys, *argv)
        assert code == 2 and "never imported or run" in err and "--file" in err
    assert not os.path.exists(PWNED)
    script.unlink()


def test_a_real_process_refuses_hostile_text_without_a_traceback(tmp_path):
    for text in (HOSTILE_TEXT[0], "9**9**9", "(" * 1_000 + "x" + ")" * 1_000):
        proc = subprocess.run([sys.executable, "-m", "convdiag", "run", text, "--start", "1"], capture_output=True,
                              text=True, timeout=120, cwd=tmp_path, check=False)
        assert proc.returncode == 2 and "convdiag: error:" in proc.stderr and "Traceback" not in proc.stderr


@pytest.fixture(scope="module")
def shell():
    pytest.importorskip("IPython")
    pytest.importorskip("ipywidgets")
    from IPython.core.interactiveshell import InteractiveShell

    ip = InteractiveShell.instance()
    ip.run_line_magic("load_ext", "convdiag")
    return ip


@pytest.mark.parametrize("text", HOSTILE_TEXT, ids=IDS)
def test_the_iterscope_magic_refuses_hostile_text_as_a_usage_error(shell, text):
    import matplotlib

    matplotlib.use("Agg")
    from IPython.core.error import UsageError

    shell.user_ns["x"] = 1.5  # a notebook variable named like the unknown
    shell.user_ns["os"] = os
    with alarm(GUARD), pytest.raises(UsageError, match=r"\S"):
        shell.run_line_magic("iterscope", f"{shlex.quote(text)} --start 0 --canvas image")


@pytest.mark.parametrize("text", ["x.__class__", "os.system.__self__", "x.__class__.__mro__"])
def test_the_magic_follows_no_double_underscore_attribute_of_a_notebook_name(shell, text):
    from IPython.core.error import UsageError

    shell.user_ns["x"] = 1.5
    shell.user_ns["os"] = os
    with pytest.raises(UsageError, match="double underscores are not followed"):
        shell.run_line_magic("iterscope", f"{text} --start 0 --canvas image")


@pytest.mark.parametrize("text", HOSTILE_TEXT[::3], ids=IDS[::3])
def test_the_explorer_refuses_hostile_text(text):
    pytest.importorskip("ipywidgets")
    import matplotlib

    matplotlib.use("Agg")
    from convdiag.widgets import Explorer

    with alarm(GUARD), pytest.raises(ExpressionError, match=r"\S"):
        Explorer(text, "newton", start=0.0, canvas="image")


# -- fuzz: Python-flavoured text is read or refused, never anything else ------------------------------------
TOKENS = ["x", "y", "a", "e", "pi", "sin", "exp", "log", "sqrt", "abs", "cbrt", "(", ")", "**", "*", "/", "+", "-",
          "=", "==", ".", ",", "[", "]", "{", "}", ":", ";", "'", '"', "f'", "__", "__class__", "__import__", "import",
          "lambda", "for", "in", "if", "else", "not", "and", "os", "open", "9", "0", "1e308", "1e-320", "10**300",
          "0.5", "1_000", "0x1f", "3j", " ", "\n", "\t", "#", "\\", "@", "%", "//", "~", "^", "|", "&", "!", "?", "$"]
PYTHONISH = "x()+-*/.,_=[]{}:'\"0123456789eEjpisnoctqrabl \t#"


def _read_or_refuse(text):
    try:
        with alarm(GUARD):
            expr = parse_expression(text)
            fn = expr.numeric(dict.fromkeys(expr.params, 1.5))
            y = fn(0.75)  # a value, or NaN; never an exception
    except ExpressionError as exc:
        assert str(exc).strip()
        return
    assert expr.variable == "x" and isinstance(complex(y), complex)


@settings(max_examples=N_FUZZ_CHARS)
@given(st.text(alphabet=st.sampled_from(PYTHONISH), max_size=60))
def test_any_python_flavoured_text_is_read_or_refused_with_an_expression_error(text):
    _read_or_refuse(text)


@settings(max_examples=N_FUZZ_TOKENS)
@given(st.lists(st.sampled_from(TOKENS), max_size=25).map("".join))
def test_any_sequence_of_python_tokens_is_read_or_refused_with_an_expression_error(text):
    _read_or_refuse(text)


def test_an_input_file_error_is_what_a_missing_file_gives(capsys):
    code, _, err = _cli(capsys, "run", "--file", "missing.py:f", "--start", "1")
    assert code == 2 and "No such file" in err
    assert issubclass(InputFileError, ConvdiagError)
