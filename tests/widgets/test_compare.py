"""The compare view: several methods on one function and start, at equal work.

Check values: √2 = 1.4142135623730951 (math.sqrt); Newton converges quadratically and the secant
method with order (1 + √5)/2 ≈ 1.618 at a simple root (REFERENCES.md §1). Efficiency in theory:
Newton √2 = 1.41421, secant 1.61803 (Ostrowski's index, REFERENCES.md §1).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from matplotlib.colors import to_hex

from convdiag.widgets import CompareView


def body_rows(html: str) -> int:
    return html.split("<tbody>")[1].count("<tr>")


def test_the_compare_view_runs_each_method_and_tabulates_order_and_efficiency():
    view = CompareView("x**2 - 2", ["newton", "secant", "bisection"], start=1.0, bracket=(0.0, 2.0),
                       canvas="image", background=False)
    results = view.comparison.results
    assert [r.method for r in results] == ["newton", "secant", "bisection"]
    for r in results:
        assert r.run.converged and r.run.root == pytest.approx(math.sqrt(2), abs=1e-12)
    assert view.comparison.root == pytest.approx(math.sqrt(2), abs=1e-15)
    assert body_rows(view.table.value) == 3
    newton, secant, _ = results
    assert newton.estimate.label == "quadratic"  # REFERENCES.md §1
    assert secant.estimate.value == pytest.approx((1 + 5**0.5) / 2, abs=0.15)  # REFERENCES.md §1
    assert "1.414" in view.table.value and "1.618" in view.table.value  # efficiency in theory
    for r in results:
        assert f">{r.run.evaluations}<" in view.table.value
    assert "(fewest)" in view.table.value


def test_the_compare_figure_draws_error_against_evaluations_one_line_per_method():
    view = CompareView("x**2 - 2", ["newton", "secant"], start=1.0, canvas="image", background=False)
    lines = [ln for ln in view.ax.get_lines() if ln.get_label().startswith(("newton", "secant"))]
    assert len(lines) == 2
    for ln, r in zip(lines, view.comparison.results):
        x = np.asarray(ln.get_xdata())
        assert x.max() <= r.run.evaluations and np.all(np.diff(x) > 0)  # evaluations only go up
        assert np.all(np.asarray(ln.get_ydata()) > 0)
        assert to_hex(ln.get_color()) in view.table.value  # the table's swatch matches the line
    assert "function evaluations" in view.ax.get_xlabel()
    assert view.host.widget.value  # the PNG the notebook shows


def test_bracketing_methods_are_left_out_without_a_bracket_and_the_view_says_so():
    view = CompareView("x**2 - 2", ["newton", "bisection"], start=1.0, canvas="image", background=False)
    assert [r.method for r in view.comparison.results] == ["newton"]
    assert "bisection" in view.message_line.value and "need a bracket" in view.message_line.value


def test_ticking_a_method_and_pressing_compare_adds_it():
    view = CompareView("cos(x) - x", ["newton"], start=1.0, bracket=(0.0, 1.0), canvas="image", background=False)
    view.pickers["illinois"].value = True
    view.compare_button.click()
    assert [r.method for r in view.comparison.results] == ["newton", "illinois"]
    root = view.comparison.results[1].run.root  # the Dottie number, cos(x) = x: 0.7390851332151607 (math.cos fixed point)
    assert root == pytest.approx(0.7390851332151607, abs=1e-12)


def test_a_bracket_without_a_sign_change_is_reported_and_nothing_is_drawn():
    view = CompareView("x**2 - 2", ["newton", "bisection"], start=1.0, bracket=(2.0, 3.0), canvas="image",
                       background=False)
    assert view.comparison is None and "same sign" in view.message_line.value


def test_the_table_scrolls_sideways_in_a_narrow_view_and_its_headers_wrap_while_numbers_do_not():
    view = CompareView("x**2 - 2", ["newton", "secant"], start=1.0, canvas="image", background=False)
    page = view.table.value
    assert page.startswith('<div style="max-width:100%;overflow-x:auto;">')
    heads = page.split("<thead>")[1].split("</thead>")[0].split("<th ")[1:]
    cells = page.split("<tbody>")[1].split("<td ")[1:]
    assert heads and all("white-space:nowrap" not in h.split(">")[0] for h in heads)  # the header cells wrap
    assert cells and all("white-space:nowrap" in c for c in cells)
    assert '>evals to error ≤ <span style="white-space:nowrap;">1e-10</span><' in page  # the number in one piece
