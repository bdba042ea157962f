"""Text, HTML and figures of order estimates and equal-work comparisons (drawn on Agg, checked via artists)."""

import math

import numpy as np
import pytest

from convdiag import solve
from convdiag.core._order import compare_methods, estimate_order

mpl = pytest.importorskip("matplotlib")
mpl.use("Agg")

from convdiag.report._order_figures import EqualWorkDisplay, OrderDisplay
from convdiag.report._order_text import comparison_html, comparison_text, order_html, order_text


@pytest.fixture(scope="module")
def newton():
    return estimate_order(solve("x**2 - 2", "newton", start=1.0))


def test_text_names_value_label_window_and_reference(newton):
    text = order_text(newton)
    assert text.splitlines()[0].startswith(f"Observed order {newton.value:.3f}")
    assert "quadratic" in text
    assert f"q_{newton.window[0]} … q_{newton.window[1]}: {newton.points} points" in text
    assert "high-precision root" in text and "1.4142135623730951" in text
    assert "label rests on" in text and "replay" in text  # says which estimate the label rests on
    assert "efficiency" in text and "error constant" in text
    assert newton.to_text() == text  # registered with the display hook


def test_html_names_the_same_facts_and_is_a_small_table(newton):
    html = order_html(newton)
    assert "quadratic" in html and f"{newton.value:.3f}" in html and "high-precision root" in html
    assert f"q_{newton.window[0]} … q_{newton.window[1]}" in html
    assert "<script" not in html and "<table" in html
    assert newton._repr_mimebundle_()["text/html"] == html


def test_html_escapes_user_strings():
    est = estimate_order({"x": [1.0, 0.5, 0.25, 0.125, 0.0625]}, root=0.0)
    from dataclasses import replace

    hostile = replace(est, source="<script>alert(1)</script>", notes=("a & b <i>",))
    html = order_html(hostile)
    assert "<script>" not in html and "&lt;script&gt;" in html and "a &amp; b &lt;i&gt;" in html


def test_linear_and_not_enough_points_read_plainly():
    lin = order_text(estimate_order(solve("(x - 1)**2*exp(x)", "newton", start=2.0)))
    assert "linear (rate 0.5" in lin and "multiplicity        2" in lin
    few = order_text(estimate_order(solve("x**2 - 2", "newton", start=1.0, max_steps=2)))
    assert few.splitlines()[0] == "Observed order: not enough points"


def test_the_table_marks_the_window_and_shortens_long_runs():
    est = estimate_order(solve("cos(x) - x", "bisection", bracket=(0.0, 1.0)))
    table = order_text(est).split("\n\n")[-1].splitlines()
    assert len(table) < 40 and any(row.strip() == "…" for row in table)
    marked = [row for row in table if row.rstrip().endswith("◂")]
    assert marked and all(est.window[0] <= int(row.split()[0]) <= est.window[1] for row in marked)


def test_comparison_text_and_html_list_the_methods_fastest_first():
    c = compare_methods("cos(x) - x", ["bisection", "newton", "secant"], bracket=(0.0, 1.0), replay=False)
    text = comparison_text(c)
    rows = [ln.split()[0] for ln in text.splitlines() if ln.split() and ln.split()[0] in ("bisection", "newton", "secant")]
    assert rows == ["secant", "newton", "bisection"]
    assert "evals to 1e-10" in text and "efficiency" in text
    html = comparison_html(c)
    assert "<table" in html and "secant" in html and "cos(x) - x" in html


def test_order_display_draws_error_against_iteration_and_evaluations(newton):
    disp = OrderDisplay.from_estimate(newton).plot()
    assert isinstance(disp.ax_, np.ndarray) and len(disp.ax_) == 2
    line = disp.lines_["error"]
    run = newton.in_run
    y = line.get_ydata()
    keep = [e for e in run.errors if e > 0 and math.isfinite(e)]
    assert np.allclose(y, keep) and disp.ax_[0].get_yscale() == "log"
    assert np.allclose(disp.lines_["error@evals"].get_xdata(), [run.evals[k] for k, e in enumerate(run.errors) if e > 0])
    assert "replay" in disp.lines_ and disp.lines_["floor"].get_ydata()[0] == pytest.approx(run.floor)
    disp.figure_.clf()


def test_order_display_on_one_axes_and_bad_against():
    import matplotlib.pyplot as plt

    fig, ax = plt.subplots()
    disp = OrderDisplay.from_run(solve("cos(x) - x", "bisection", bracket=(0.0, 1.0))).plot(ax=ax, against="iteration")
    assert disp.ax_ is ax and "window" in disp.lines_
    from convdiag import ParameterError

    with pytest.raises(ParameterError, match="'against' parameter of OrderDisplay.plot"):
        disp.plot(ax=ax, against="time")
    plt.close(fig)


def test_equal_work_display_has_one_line_per_method_against_evaluations():
    c = compare_methods("cos(x) - x", ["newton", "secant"], start=1.0, replay=False)
    disp = EqualWorkDisplay.from_comparison(c).plot()
    for r in c.results:
        x = disp.lines_[r.method].get_xdata()
        assert list(x) == [ev for ev, e in zip(r.evals, r.errors) if e > 0]
    assert disp.lines_["tol"].get_ydata()[0] == c.tol and disp.ax_.get_yscale() == "log"
    disp.figure_.clf()
