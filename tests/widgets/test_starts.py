"""The bracket view and the basin view, and the door from each into the explorer.

Check values: the real root of x³ − 2x − 5 (Wallis's equation) is 2.0945514815423265 (numpy.roots,
recomputed in the test); Newton on x² − 1 maps x to (x + 1/x)/2, which keeps the sign of x, so every
start x < 0 reaches −1 and every start x > 0 reaches +1 (by hand).
"""

from __future__ import annotations

import numpy as np
import pytest
from matplotlib.backend_bases import MouseEvent

from convdiag.widgets import BasinView, BracketView, Explorer
from convdiag.widgets import _adapters as ad

WALLIS = float(max(r.real for r in np.roots([1, 0, -2, -5]) if abs(r.imag) < 1e-12))


def click(view, ax, x: float, y: float) -> None:  # type: ignore[no-untyped-def]
    """A left click at data x, halfway up the axes."""
    px = ax.transData.transform((x, 0.0))[0]
    py = ax.transAxes.transform((0.0, 0.5))[1]
    view.on_plot_click(MouseEvent("button_press_event", view.host.figure.canvas, px, py, button=1))


def test_the_bracket_view_finds_the_root_and_its_button_opens_it_in_an_explorer():
    view = BracketView("x**3 - 2*x - 5", (0.0, 3.0), canvas="image", background=False)
    roots = view.result.roots
    assert len(roots) == 1 and roots[0].lo < WALLIS < roots[0].hi
    buttons = view.extra.children[1].children
    assert len(buttons) == 1
    buttons[0].click()
    ex = view.explorer
    assert isinstance(ex, Explorer) and view.explorer_box.children == (ex.widget,)
    assert ex.starts[0] == roots[0].newton
    ex.run_to_end()
    assert ex.session.run.root == pytest.approx(WALLIS, abs=1e-12)


def test_a_click_on_the_bracket_plot_moves_the_given_explorers_start():
    ex = Explorer("x**3 - 2*x - 5", "newton", start=0.0, canvas="image", background=False)
    view = BracketView("x**3 - 2*x - 5", (0.0, 3.0), explorer=ex, canvas="image", background=False)
    click(view, view.ax, 2.5, 0.0)
    assert ex.starts == [pytest.approx(2.5, abs=1e-6)]


def test_the_basin_view_maps_which_root_each_start_reaches_and_a_click_opens_that_start():
    ex = Explorer("x**2 - 1", "newton", start=0.5, canvas="image", background=False)
    view = BasinView("x**2 - 1", "newton", domain=(-3.0, 3.0), n=24, explorer=ex, canvas="image",
                     background=False)
    bm = view.result
    np.testing.assert_allclose(np.sort(bm.roots.real), [-1.0, 1.0], atol=1e-12)
    reached = bm.roots.real[bm.root_id]
    np.testing.assert_array_equal(np.sign(reached), np.sign(bm.starts.real))  # Newton keeps the sign
    assert view.ax.get_images() and view.ax_evals.get_lines()
    click(view, view.ax, 2.0, 0.5)
    assert ex.starts == [pytest.approx(2.0, abs=1e-6)]
    click(view, view.ax_evals, -2.0, 5.0)  # the evaluations plot below takes clicks too
    assert ex.starts == [pytest.approx(-2.0, abs=1e-6)]


def test_the_basin_view_says_not_available_yet_when_the_basin_module_is_missing(monkeypatch):
    monkeypatch.setattr(ad, "_lookup", lambda module, name: None)
    view = BasinView("x**2 - 1", "newton", domain=(-3.0, 3.0), canvas="image", background=False)
    assert "Not available yet" in view.message_line.value and view.result is None


def test_a_method_the_basin_map_cannot_run_is_reported_in_the_view():
    view = BasinView("x**2 - 1", "bisection", domain=(-3.0, 3.0), canvas="image", background=False)
    assert view.result is None and "Something went wrong" in view.message_line.value


def test_a_view_nobody_holds_still_answers_clicks():
    import gc

    pytest.importorskip("ipympl")
    ex = Explorer("x**2 - 1", "newton", start=0.5, canvas="image", background=False)
    host = BasinView("x**2 - 1", "newton", domain=(-3.0, 3.0), n=24, explorer=ex, canvas="ipympl",
                     background=False).host
    gc.collect()  # only the figure's canvas (kept by the notebook's widget registry) holds the view now
    px = host.figure.axes[0].transData.transform((2.0, 0.0))[0]
    py = host.figure.axes[0].transAxes.transform((0.0, 0.5))[1]
    host.figure.canvas.callbacks.process("button_press_event",
                                         MouseEvent("button_press_event", host.figure.canvas, px, py, button=1))
    assert ex.starts == [pytest.approx(2.0, abs=1e-6)]
