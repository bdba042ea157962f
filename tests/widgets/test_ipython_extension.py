"""``%load_ext convdiag``: rich display of results and the ``%iterscope`` magic, in a real IPython shell."""

from __future__ import annotations

import pytest

import convdiag
from convdiag._ipython import MagicError, parse_magic_line, resolve_function

IPython = pytest.importorskip("IPython")


@pytest.fixture(scope="module")
def shell():  # type: ignore[no-untyped-def]
    from IPython.core.interactiveshell import InteractiveShell

    ip = InteractiveShell.instance()
    ip.run_line_magic("load_ext", "convdiag")
    return ip


def test_the_magic_opens_an_explorer_on_a_name_from_the_notebook(shell):
    def colebrook_like(x, a=2.0):
        return x * x - a

    shell.user_ns["colebrook_like"] = colebrook_like
    ex = shell.run_line_magic("iterscope", "colebrook_like --method secant --start 1 --param a=1:3 --canvas image")
    assert isinstance(ex, convdiag.widgets.Explorer)
    assert ex.method == "secant" and ex.starts == [1.0] and ex.problem.raw is colebrook_like
    assert set(ex.param_controls) == {"a"}


def test_the_magic_reads_expression_text_with_the_safe_parser_and_never_runs_it(shell):
    ex = shell.run_line_magic("iterscope", "x**3 - 2*x + 2 --start 0 --canvas image")
    assert ex.problem.label == "x**3 - 2*x + 2"
    from IPython.core.error import UsageError

    with pytest.raises(UsageError, match="not allowed"):
        shell.run_line_magic("iterscope", "\"__import__('os').getcwd()\" --start 0 --canvas image")


def test_a_bad_magic_line_is_a_one_line_usage_error(shell):
    from IPython.core.error import UsageError

    with pytest.raises(UsageError, match="invalid choice: 'nowton'"):
        shell.run_line_magic("iterscope", "x**2 - 2 --method nowton")
    with pytest.raises(UsageError, match="give a function first"):
        shell.run_line_magic("iterscope", "--start 1")


def test_the_magic_opens_the_compare_view(shell):
    view = shell.run_line_magic("iterscope", "x**2 - 2 --compare newton secant --start 1 --canvas image")
    view.wait()
    assert [r.method for r in view.comparison.results] == ["newton", "secant"]


def test_sessions_and_runs_show_their_html_table(shell):
    session = convdiag.start_session("x**2 - 2", "newton", start=1.0)
    session.forward()
    data, _ = shell.display_formatter.format(session)
    assert "<table" in data["text/html"] and "Newton" in data["text/plain"]
    data, _ = shell.display_formatter.format(session.run_to_end())
    assert "<table" in data["text/html"]


def test_parse_magic_line_splits_the_function_from_the_options():
    ns = parse_magic_line("-x**2 + 2 -s 1 2 --param k=0.5 --param a=0:4:1")
    assert ns.function == "-x**2 + 2" and ns.start == [1.0, 2.0]
    assert ns.params == {"k": 0.5, "a": (0.0, 4.0, 1.0)}
    with pytest.raises(MagicError, match="NAME=VALUE"):
        parse_magic_line("f --param k")


def test_names_are_looked_up_and_anything_else_is_left_as_text():
    import math

    ns = {"models": math}
    assert resolve_function("models.cos", ns) is math.cos
    assert resolve_function("x**2 - 2", ns) == "x**2 - 2"
    assert resolve_function("unknown_name", ns) == "unknown_name"  # the parser reads it as an expression
    with pytest.raises(MagicError, match="has no attribute 'nope'"):
        resolve_function("models.nope", ns)


def test_order_estimates_bracket_searches_and_diagnoses_render_as_html(shell):
    from convdiag.core._brackets import find_brackets
    from convdiag.core._diagnose import diagnose
    from convdiag.core._order import estimate_order

    run = convdiag.solve("x**3 - 2*x + 2", "newton", start=0.0, max_evals=20)
    results = [estimate_order(convdiag.solve("x**2 - 2", "newton", start=1.0)),
               find_brackets("x**2 - 2", domain=(0.0, 2.0)), diagnose(run)]
    for result in results:
        data, _ = shell.display_formatter.format(result)
        assert "text/html" in data and "<" in data["text/html"], type(result).__name__
