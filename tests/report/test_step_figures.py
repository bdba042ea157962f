"""StepDisplay, sample_curve and auto_xlim (convdiag/report/_step_figures.py), drawn on Agg.

Check values, by hand on f = x² − 2 (f' = 2x, f'' = 2):
- Newton from 1: 1 − (−1)/2 = 1.5.
- secant from 1, 2: 2 − 2·(2 − 1)/(2 − (−1)) = 4/3.
- Halley from 1: 1 − 2·(−1)·2/(2·4 − (−1)·2) = 1.4.
- bisection on [0, 2]: the midpoint 1.
- inverse quadratic interpolation: x at y = 0 of the parabola x = p(y) through the three points,
  computed independently with numpy.polyfit.
"""

from __future__ import annotations

import math
import time

import numpy as np
import pytest

import convdiag

matplotlib = pytest.importorskip("matplotlib")
matplotlib.use("Agg")

from convdiag.report._step_figures import StepDisplay, auto_xlim, sample_curve


def first_step(method, **kw):
    return convdiag.solve("x**2 - 2", method, max_steps=1, **kw)


@pytest.mark.parametrize(
    ("method", "kw", "kind", "anchors", "x1"),
    [
        ("newton", {"start": 1.0}, "tangent", 1, 1.5),
        ("secant", {"start": [1.0, 2.0]}, "chord", 2, 4 / 3),
        ("halley", {"start": 1.0}, "tangent-hyperbola", 1, 1.4),
        ("bisection", {"bracket": (0.0, 2.0)}, "midpoint", 0, 1.0),
    ],
)
def test_each_local_model_is_drawn_with_its_anchor_points_and_its_zero(method, kw, kind, anchors, x1):
    run = first_step(method, **kw)
    d = StepDisplay.from_run(run).plot()
    assert d.model_kind == kind and len(d.anchor_x) == anchors
    assert d.zero_x == pytest.approx(x1, rel=1e-12) and d.new_x == pytest.approx(x1, rel=1e-12)
    assert d.new_y == pytest.approx(x1 * x1 - 2, rel=1e-9)
    xs, ys = d.lines_["model"].get_data()
    _, my = run.steps[0].model.curve(*d.xlim, len(xs))
    np.testing.assert_allclose(ys, my)
    assert d.ax_.get_xlim() == pytest.approx(d.xlim)


def test_the_sideways_parabola_meets_zero_where_numpy_puts_it():
    run = convdiag.solve("x**2 - 2", "iqi", start=[1.0, 1.5, 2.0], max_steps=1)
    d = StepDisplay.from_run(run).plot()
    coeffs = np.polyfit([-1.0, 0.25, 2.0], [1.0, 1.5, 2.0], 2)  # x as a quadratic in y through the 3 points
    assert d.model_kind == "inverse-parabola" and len(d.anchor_x) == 3
    assert d.zero_x == pytest.approx(float(np.polyval(coeffs, 0.0)), rel=1e-12)


def test_a_bracket_is_shaded_before_and_after_the_step():
    run = first_step("bisection", bracket=(0.0, 2.0))
    d = StepDisplay.from_run(run).plot()
    before, after = d.lines_["before"], d.lines_["after"]
    assert (before.get_x(), before.get_width()) == (0.0, 2.0)
    assert (after.get_x(), after.get_width()) == (1.0, 1.0)  # f(1) < 0: the root is in [1, 2]


def test_update_moves_the_same_artists_to_the_next_step():
    session = convdiag.start_session("x**2 - 2", "newton", start=1.0)
    d = StepDisplay.from_session(session).plot()
    artists = dict(d.lines_)
    assert d.index == 0 and "Press Step" in d.title
    session.forward()
    d.update(StepDisplay.from_session(session, xlim=(0.0, 2.0)))
    assert d.lines_ == artists and d.index == 1
    assert d.lines_["new"].get_xdata()[0] == 1.5 and d.ax_.get_xlim() == (0.0, 2.0)
    assert d.lines_["title"].get_text().startswith("Step 1 of Newton")


def test_points_off_the_plot_are_named_in_a_note():
    run = convdiag.solve("x**3 - 2*x + 2", "newton", start=0.0, max_steps=1)  # 0 -> 1
    d = StepDisplay.from_run(run, xlim=(-1.0, 0.5)).plot()
    assert d.offscreen == "new point x = 1 is off the plot →"
    assert d.lines_["new"].get_xdata()[0] == 0.5 and d.lines_["new"].get_marker() == ">"  # at the edge


def test_the_curve_is_sampled_point_by_point_where_f_is_not_vectorised_and_nan_where_it_fails():
    _, ys = sample_curve(lambda x: math.sqrt(x) - 1, -1.0, 1.0, 5)
    assert np.isnan(ys[:2]).all()
    np.testing.assert_allclose(ys[2:], [-1.0, math.sqrt(0.5) - 1, 0.0])


def test_a_slow_function_is_drawn_through_fewer_points_within_the_time_allowed():
    calls = []

    def slow(x):  # an inner solve taking 50 ms per evaluation
        calls.append(x)
        time.sleep(0.05)
        return math.cos(x) - x

    xs, ys = sample_curve(slow, 0.0, 1.0, 300, seconds=0.5)
    # 300 points would take 15 s; about 0.5 s / 0.05 s = 10 fit, raised to the floor of 16, evenly spaced
    assert len(xs) == 16 and xs[0] == 0.0 and xs[-1] == 1.0
    assert len(calls) == 1 + 3 + 16  # the array tried once (refused), three that measured the pace, the curve
    np.testing.assert_allclose(ys, np.cos(xs) - xs)  # the same values, fewer of them


def test_a_fast_scalar_function_gets_every_point_it_asked_for():
    xs, ys = sample_curve(lambda x: math.cos(x) - x, 0.0, 1.0, 300)
    assert len(xs) == 300
    np.testing.assert_allclose(ys, np.cos(xs) - xs)


def test_auto_xlim_leaves_a_wild_step_out_of_the_picture():
    lo, hi = auto_xlim([0.5, 1.0, -55.3, 26.4], core=[0.1])
    assert -55.3 < lo < 0.1 and 1.0 < hi < 26.4


def test_the_sideways_parabola_is_drawn_over_the_whole_plot_and_reaches_the_edges_it_leaves_through():
    # IQI on x³ − 2x − 2 from 0.5, 1, 1.5: step 1 jumps to 19.1, so step 2's parabola through (1, −3),
    # (1.5, −1.625), (19.1, 6937.6) turns back far to the right of the plot
    run = convdiag.solve("x**3 - 2*x - 2", "iqi", start=[0.5, 1.0, 1.5], max_steps=2)
    m = run.steps[1].model
    d = StepDisplay.from_run(run).plot()
    xs, ys = (np.asarray(v, dtype=float) for v in d.lines_["model"].get_data())
    ok = np.isfinite(xs)
    coeffs = np.polyfit(np.asarray(m.ys, float), np.asarray(m.xs, float), 2)  # x as a quadratic in y
    np.testing.assert_allclose(xs[ok], np.polyval(coeffs, ys[ok]), rtol=1e-6, atol=1e-6 * np.ptp(d.xlim))
    lo, hi = d.xlim
    assert ys[ok].min() >= d.ylim[0] and ys[ok].max() <= d.ylim[1]
    assert np.count_nonzero(np.isclose(xs[ok], hi)) == 2  # both arms leave through the right edge
    # drawn smoothly: neighbouring points of one piece are close in x and in y
    gaps = np.abs(np.diff(xs))[ok[1:] & ok[:-1]]
    assert gaps.max() < 0.02 * (hi - lo)
    turn = coeffs[2] - coeffs[1] ** 2 / (4 * coeffs[0])  # the vertex of x = a y² + b y + c
    assert turn > hi and f"the parabola turns back at x = {turn:.4g}" in d.offscreen


def bad(x):
    if x > 2:
        raise ValueError("the table ends at 2")
    return x * x - 5


def test_at_the_end_of_a_run_that_failed_the_title_says_where_f_failed_and_a_line_marks_it():
    run = convdiag.solve(bad, "newton", start=1.0)  # Newton from 1: x1 = 1 + 4/2 = 3, by hand
    d = StepDisplay.from_run(run).plot()
    assert d.title == "Newton: f failed at x = 3 (function-raised) on the first step"
    assert d.failure_x == pytest.approx(3.0, abs=1e-8) and d.failure_reason == "function-raised"  # f′ by differences
    assert list(d.lines_["failure"].get_xdata()) == pytest.approx([3.0, 3.0], abs=1e-8)
    assert d.lines_["failure_text"].get_text() == "f failed at x = 3\n(function-raised)"
    assert d.xlim[0] < 1.0 and d.xlim[1] > 3.0 and d.offscreen == ""  # the range takes the failed point in
    narrow = StepDisplay.from_run(run, xlim=(0.0, 2.0)).plot()
    assert narrow.offscreen == "f failed at x = 3, off the plot" and len(narrow.lines_["failure"].get_xdata()) == 0
    session = convdiag.start_session(bad, "newton", start=1.0)
    early = StepDisplay.from_session(session)
    assert "Press Step" in early.title and math.isnan(early.failure_x)
    session.forward()
    late = StepDisplay.from_session(session, xlim=(0.0, 4.0)).plot()
    assert late.title == d.title and list(late.lines_["failure"].get_xdata()) == pytest.approx([3.0, 3.0], abs=1e-8)


def bounded_atan(x):
    if abs(x) > 4:
        raise ValueError("outside the fitted range")
    return math.atan(x)


def test_a_run_that_failed_after_some_steps_names_the_last_step_then_the_failure():
    # Newton on atan x from 1.5 overshoots: −1.694, 2.321, −5.114 (by hand, x+ = x − (1 + x²) atan x)
    run = convdiag.solve(bounded_atan, "newton", start=1.5, fprime=lambda x: 1 / (1 + x * x))
    assert len(run.steps) == 2 and run.failure.x == pytest.approx(-5.114, abs=1e-3)
    d = StepDisplay.from_run(run)
    assert d.title.startswith("Step 2 of Newton") and d.title.endswith("; then f failed at x = -5.114 (function-raised)")
    assert math.isnan(StepDisplay.from_run(run, step=1).failure_x)  # earlier steps show no failure


def test_a_run_that_ran_out_of_budget_is_not_drawn_as_a_failure_of_f():
    run = convdiag.solve("x**3 - 2*x + 2", "newton", start=0.0, max_evals=8)  # the two-cycle 0, 1, 0, 1
    assert run.stop_reason == "max-evals" and run.failure is not None
    d = StepDisplay.from_run(run).plot()
    assert "failed" not in d.title and math.isnan(d.failure_x)
    assert len(d.lines_["failure"].get_xdata()) == 0
