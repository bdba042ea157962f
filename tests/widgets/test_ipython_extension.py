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


def test_after_load_ext_a_sweep_shows_a_widget_bar_that_ends_with_every_point(shell):
    # the sweep is Kepler's equation at e = 0.5 from E0 = pi over 3,000 mean anomalies (converges everywhere,
    # Danby 1988, from memory); what is checked is the bar: it counts the points and ends as complete
    import numpy as np

    import convdiag
    from convdiag.core import _sweep
    from convdiag.report._sweep_text import TextProgressBar
    from convdiag.widgets._progress import WidgetProgressBar

    made = []

    def factory(total):
        made.append(WidgetProgressBar(total, delay=0.0, show=False))
        return made[-1]

    from convdiag._ipython import _use_widget_progress

    class Kernel:  # %load_ext in a notebook: the shell has a kernel
        kernel = object()

    try:
        _sweep.set_progress_factory(TextProgressBar)
        _use_widget_progress(shell)  # a terminal shell (no kernel): the text bar stays
        assert _sweep._PROGRESS == [TextProgressBar]
        _use_widget_progress(Kernel())
        assert _sweep._PROGRESS == [WidgetProgressBar]
        _sweep.set_progress_factory(factory)
        res = convdiag.sweep(lambda E, M: E - 0.5 * np.sin(E) - M, {"M": np.linspace(0.01, 3.1, 3000)},
                             start=np.pi, chunk_size=500, progress=True)
    finally:
        _sweep.set_progress_factory(TextProgressBar)
    assert res.counts() == {"converged": 3000}
    (bar,) = made
    assert bar.bar.value == bar.bar.max == 3000 and bar.bar.bar_style == "success"
    assert bar.label.value.startswith("3,000 of 3,000 points")


def test_a_bar_stopped_early_says_the_finished_points_are_kept():
    from convdiag.widgets._progress import WidgetProgressBar

    bar = WidgetProgressBar(1000, delay=0.0, show=False)
    bar.update(400, 1000)
    bar.close()
    assert bar.bar.bar_style == "warning" and "finished points are in the result" in bar.label.value
