"""The explorer driven from Python: buttons, fields, sliders and plot clicks through their handlers.

Check values:
- Newton on x³ − 2x + 2 from 0 cycles 0 → 1 → 0 → 1 (REFERENCES.md §4; Wikipedia "Newton's method").
- Kepler's equation E − e sin E = M: M = 1, e = 0.5 gives E = 1.49870113351785 (REFERENCES.md §5,
  recomputed with mpmath).
- Newton on √x − 2 from 25: x+ = −x + 4√x = −5 (by hand), where √ is undefined.
- Newton on ln x − 1 from 10: x+ = x(2 − ln x) = −3.0259 (by hand), where ln is undefined.
"""

from __future__ import annotations

import math
import threading

import numpy as np
import pytest
from matplotlib.backend_bases import MouseEvent

from convdiag.widgets import Explorer

CYCLE = "x**3 - 2*x + 2"


def kepler(E, M=1.0, ecc=0.9):
    return E - ecc * math.sin(E) - M


def click(ex: Explorer, x: float, y: float = 0.0, ax=None) -> None:
    """A synthetic left click at data point (x, y) of ``ax`` (the function plot by default)."""
    ax = ax or ex.ax_f
    px, py = ax.transData.transform((x, y))
    ex.on_plot_click(MouseEvent("button_press_event", ex.host.figure.canvas, px, py, button=1))


def rows(ex: Explorer) -> int:
    return ex.table.value.count('class="cdx-row"')


def test_step_back_and_reset_move_through_newtons_two_cycle():
    ex = Explorer(CYCLE, "newton", start=0.0, canvas="image", background=False)
    assert rows(ex) == 1
    for _ in range(3):
        ex.step_button.click()
    assert ex.session.position == 3
    assert ex.session.run.iterates.tolist() == [0.0, 1.0, 0.0, 1.0]  # REFERENCES.md §4
    assert rows(ex) == 4
    ex.back_button.click()
    assert ex.session.position == 2 and rows(ex) == 3
    assert ex.step_display.new_x == 0.0
    ex.reset_button.click()
    assert ex.session.position == 0 and rows(ex) == 1
    assert ex.back_button.disabled and ex.reset_button.disabled
    ex.step_button.click()  # replays the step already computed
    assert len(ex.session.steps) == 3 and ex.session.position == 1


def test_a_step_moves_the_drawn_model_and_changes_the_picture(image_hash):
    ex = Explorer(CYCLE, "newton", start=0.0, canvas="image", background=False)
    before_png, before_image = image_hash(ex.host), ex.host.widget.value
    new_line = ex.step_display.lines_["new"]
    ex.step()
    # the tangent at x = 0 (f = 2, f' = -2) meets zero at 1: the model's zero and the new point are there
    assert new_line.get_xdata()[0] == 1.0
    assert ex.step_display.lines_["zero"].get_xdata()[0] == 1.0
    xs, ys = ex.step_display.lines_["model"].get_data()
    np.testing.assert_allclose(ys, 2.0 - 2.0 * np.asarray(xs))
    assert ex.step_display.lines_["new"] is new_line  # artists are updated, not re-created
    assert image_hash(ex.host) != before_png
    assert ex.host.widget.value != before_image


def test_run_to_end_reports_the_stop_reason_and_the_budget_advice():
    ex = Explorer(CYCLE, "newton", start=0.0, max_evals=20, canvas="image", background=False)
    ex.run_button.click()
    assert ex.session.at_end and ex.session.stop_reason == "max-evals"
    assert "did not converge (max-evals)" in ex.status.value
    assert ex.step_button.disabled and ex.run_button.disabled


def test_an_exception_in_the_function_is_shown_and_the_history_kept():
    ex = Explorer(lambda x: math.sqrt(x) - 2, "newton", start=25.0, canvas="image", background=False)
    ex.step()
    run = ex.session.run
    assert run.stop_reason == "function-raised"
    assert run.iterates.tolist() == [25.0]
    assert run.failure.x == pytest.approx(-5.0, abs=1e-6)  # x+ = -x + 4 sqrt(x), by hand
    assert "ValueError" in ex.status.value and "math domain error" in ex.status.value
    assert "f failed here" in ex.table.value and rows(ex) == 1
    assert ex.message == ""  # nothing went wrong in the explorer itself
    ex.set_start(4.5)  # and the explorer carries on
    ex.run_to_end()
    assert ex.session.run.converged and ex.session.run.root == pytest.approx(4.0)


def test_a_nan_from_the_function_stops_the_run_with_the_history_kept():
    ex = Explorer(lambda x: math.log(x) - 1 if x > 0 else float("nan"), "newton", start=10.0, canvas="image",
                  background=False)
    ex.run_to_end()
    run = ex.session.run
    assert run.stop_reason == "nonfinite-value" and run.iterates.tolist() == [10.0]
    assert run.failure.x == pytest.approx(10 * (2 - math.log(10)), rel=1e-6)  # by hand
    assert "nonfinite-value" in ex.status.value


def test_a_bad_start_is_shown_in_the_message_line_and_the_last_session_kept():
    ex = Explorer(CYCLE, "bisection", bracket=(-2.0, -1.0), canvas="image", background=False)
    good = ex.session
    ex.set_bracket(0.0, 1.0)  # f > 0 on [0, 1]: no sign change
    assert ex.session is good
    assert "same sign" in ex.message and "same sign" in ex.message_line.value


def test_a_parameter_slider_runs_the_method_again_with_the_new_value():
    ex = Explorer(kepler, "newton", start=1.0, params={"ecc": (0.0, 0.99)}, canvas="image", background=False)
    assert set(ex.param_controls) == {"M", "ecc"}
    first = ex.session
    ex.param_controls["ecc"].value = 0.5
    assert ex.session is not first and ex.session.at_end
    assert ex.session.run.params == {"M": 1.0, "ecc": 0.5}
    assert ex.session.run.root == pytest.approx(1.49870113351785, abs=1e-12)  # REFERENCES.md §5


def test_a_sympy_expression_gets_a_slider_for_its_parameter_and_the_slider_runs_the_method_again():
    sympy = pytest.importorskip("sympy")
    x, M, ecc = sympy.symbols("x M ecc")
    ex = Explorer(x - ecc * sympy.sin(x) - M, "newton", start=1.0, params={"M": 1.0, "ecc": (0.0, 0.99, 0.9)},
                  canvas="image", background=False)
    assert set(ex.param_controls) == {"M", "ecc"}
    first = ex.session
    ex.param_controls["ecc"].value = 0.5
    assert ex.session is not first and ex.session.at_end and ex.message == ""
    assert ex.session.run.params == {"M": 1.0, "ecc": 0.5}
    assert ex.session.run.derivative_source == "symbolic"
    assert ex.session.run.root == pytest.approx(1.49870113351785, abs=1e-12)  # REFERENCES.md §5


def test_when_f_fails_on_the_first_step_the_figure_says_where_and_marks_it():
    ex = Explorer(lambda x: math.sqrt(x) - 2, "newton", start=25.0, canvas="image", background=False)
    ex.step()
    d = ex.step_display
    assert ex.step_button.disabled  # the run has ended
    # x+ = -x + 4 sqrt(x) = -5 from 25, by hand; sqrt raises there
    assert d.title == "Newton: f failed at x = -5 (function-raised) on the first step"
    assert "Press Step" not in d.lines_["title"].get_text()
    assert d.xlim[0] < -5.0 < d.xlim[1]  # the view takes the failed point in
    assert list(d.lines_["failure"].get_xdata()) == pytest.approx([-5.0, -5.0])
    assert d.lines_["failure_text"].get_visible() and "f failed at x = -5" in d.lines_["failure_text"].get_text()
    ex.set_start(4.5)  # a new run: the marker goes
    assert len(ex.step_display.lines_["failure"].get_xdata()) == 0
    assert not ex.step_display.lines_["failure_text"].get_visible()


def test_a_click_on_the_function_plot_sets_the_start():
    ex = Explorer(CYCLE, "newton", start=0.0, xlim=(-3.0, 2.0), canvas="image", background=False)
    ex.step()
    click(ex, -1.5)
    assert ex.starts == [pytest.approx(-1.5, abs=0.01)]
    assert ex.start_field.value == ex.starts[0] == ex.session.starts[0]
    assert ex.session.position == 0 and rows(ex) == 1
    click(ex, 1.0, ax=ex.progress_display.ax_)  # the error plot is not a place to start from
    assert ex.starts == [pytest.approx(-1.5, abs=0.01)]
    ex.run_to_end()
    assert ex.session.run.root == pytest.approx(-1.7692923542386314, abs=1e-12)  # REFERENCES.md §4


def test_a_click_moves_the_nearer_end_of_a_bracket():
    ex = Explorer(CYCLE, "illinois", bracket=(-3.0, 0.0), canvas="image", background=False)
    click(ex, -0.5)
    assert ex.bracket == (-3.0, pytest.approx(-0.5, abs=0.01))
    assert ex.a_field.value == -3.0 and ex.b_field.value == ex.bracket[1]


def test_the_method_picker_switches_and_a_bracketing_method_gets_a_bracket_near_the_start():
    ex = Explorer(CYCLE, "newton", start=-1.0, canvas="image", background=False)
    ex.method_picker.value = "bisection"
    assert ex.method == "bisection" and ex.bracket is not None
    a, b = ex.bracket
    assert a < -1.7692923542386314 < b  # the real root (REFERENCES.md §4)
    assert ex.bracket_box.layout.display == "" and ex.start_box.layout.display == "none"
    ex.run_to_end()
    assert ex.session.run.converged
    assert "▮" in ex.legend.value  # the bracket's key shows for bracketing methods


def test_the_table_shows_log_error_ratios_and_the_status_the_order_so_far():
    ex = Explorer("x**2 - 2", "newton", start=1.0, canvas="image", background=False)
    for _ in range(4):
        ex.step()
    assert "log-error ratio" in ex.table.value
    assert "Observed order" in ex.status.value
    ex.run_to_end()
    assert "quadratic" in ex.status.value  # Newton at a simple root: order 2 (REFERENCES.md §1)
    assert "converged" in ex.status.value


def test_cancel_stops_a_run_between_steps_and_keeps_what_was_computed():
    calls: list[float] = []
    holder: dict[str, Explorer] = {}

    def slow_cycle(x):
        calls.append(x)
        if len(calls) == 12:
            holder["ex"].job.cancel()  # as if Cancel were pressed during the run
        return x**3 - 2 * x + 2

    ex = Explorer(slow_cycle, "newton", start=0.0, canvas="image", background=False)
    holder["ex"] = ex
    ex.run_to_end()
    assert 0 < ex.session.position < 50 and not ex.session.at_end
    assert "Cancelled" in ex.hint.value
    assert not ex.step_button.disabled
    ex.step()  # stepping goes on from there
    assert ex.session.position == len(ex.session.steps)


def test_a_background_run_shows_progress_and_can_be_cancelled():
    gate = threading.Event()
    calls: list[float] = []

    def gated(x):
        calls.append(x)
        if len(calls) > 6:
            gate.wait(10)
        return x**3 - 2 * x + 2

    ex = Explorer(gated, "newton", start=0.0, canvas="image", background=True)
    ex.run_to_end()
    assert ex.job.running and ex.step_button.disabled and not ex.job.cancel_button.disabled
    ex.job.cancel_button.click()
    gate.set()
    assert ex.wait(10)
    assert not ex.session.at_end and "Cancelled" in ex.hint.value
    assert not ex.step_button.disabled and ex.job.cancel_button.disabled


def test_an_ipympl_canvas_works_headless_and_draws_once_the_front_end_is_there():
    pytest.importorskip("ipympl")
    ex = Explorer(CYCLE, "newton", start=0.0, canvas="ipympl", background=False)
    canvas = ex.host.figure.canvas
    assert ex.host.kind == "ipympl" and ex.host.widget is canvas and ex.host.clickable
    canvas._handle_message(canvas, {"type": "initialized"}, [])  # what the browser sends when it shows it
    ex.refresh()
    before = np.asarray(canvas.buffer_rgba()).copy()
    ex.step()
    after = np.asarray(canvas.buffer_rgba())
    assert (before != after).any()
    ev = MouseEvent("button_press_event", canvas, *ex.ax_f.transData.transform((0.5, 0.0)), button=1)
    canvas.callbacks.process("button_press_event", ev)  # the way ipympl delivers a browser click
    assert ex.starts == [pytest.approx(0.5, abs=0.01)]


def test_unknown_methods_and_parameters_are_refused_with_the_allowed_values():
    with pytest.raises(ValueError, match="The 'method' parameter of Explorer must be one of"):
        Explorer(CYCLE, "nowton", start=0.0, canvas="image")
    ex = Explorer(kepler, "newton", start=1.0, canvas="image", background=False)
    ex.set_param("eccentricity", 0.3)  # shown in the message line, not raised into the kernel
    assert "one of ['M', 'ecc']" in ex.message


def test_the_other_views_open_below_the_explorer_and_send_starts_back():
    ex = Explorer("x**2 - 1", "newton", start=0.5, xlim=(-3.0, 3.0), canvas="image", background=False)
    compare = ex.open_view("compare")
    assert ex.views_box.children == (compare.widget,)
    assert [r.method for r in compare.comparison.results] == ["newton", "secant", "illinois", "bisection"]
    basins = ex.open_view("basins")
    assert basins.explorer is ex and basins.domain == (-3.0, 3.0)
    px = basins.ax.transData.transform((-2.0, 0.0))[0]
    py = basins.ax.transAxes.transform((0.0, 0.5))[1]
    basins.on_plot_click(MouseEvent("button_press_event", basins.host.figure.canvas, px, py, button=1))
    assert ex.starts == [pytest.approx(-2.0, abs=1e-6)]
    brackets = ex.open_view("brackets")
    assert len(brackets.result.roots) == 2  # x = -1 and x = 1


def test_the_verdict_shows_the_findings_and_the_fix_runs_from_one_button():
    ex = Explorer(CYCLE, "newton", start=0.0, max_evals=20, canvas="image", background=False)
    ex.run_to_end()
    assert ex.remedy_button.layout.display == "" and "hybrid" in ex.remedy_button.description
    assert "cycle" in ex.status.value and "period" in ex.status.value  # a 2-cycle (REFERENCES.md §4)
    assert "What to try" in ex.status.value
    ex.remedy_button.click()
    run = ex.session.run
    assert run.converged and run.root == pytest.approx(-1.7692923542386314, abs=1e-12)  # REFERENCES.md §4
    assert ex.method_picker.value == ex.method


def test_a_step_of_a_slow_function_runs_in_the_background_and_can_be_waited_for():
    import time

    def slow(x):
        time.sleep(0.06)  # slower than SLOW_EVAL_SECONDS per evaluation
        return x * x - 2

    ex = Explorer(slow, "secant", start=[1.0, 2.0], samples=5, canvas="image", background=True)
    ex.step()
    assert ex.step_button.disabled  # busy until the step is in
    assert ex.wait(10)
    assert ex.session.position == 1 and not ex.step_button.disabled
    assert ex.session.run.iterates[-1] == pytest.approx(4 / 3)  # secant from 1, 2 on x^2 - 2, by hand
