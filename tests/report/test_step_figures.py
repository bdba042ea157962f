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
