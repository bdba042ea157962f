"""Figures and text of basin maps and sweeps (convdiag.report._basin_figures, _sweep_text).

Sources: the roots of z^3 - 1 are the cube roots of unity (exact); x^2 - 1 is even, so its basins
mirror; Kepler values as in tests/core/test_sweep.py (REFERENCES §5).
"""

import io
import math

import numpy as np
import pytest

from convdiag.core._basin import basin_map
from convdiag.core._sweep import param_grid, sweep
from convdiag.core._vector import solve_many
from convdiag.report import _sweep_text  # noqa: F401  (registers the formatters and the progress bar)
from convdiag.report._sweep_text import OUTCOME_COLOURS, TextProgressBar, basin_html, basin_text, sweep_text

matplotlib = pytest.importorskip("matplotlib")
matplotlib.use("Agg")

from matplotlib.colors import to_rgb

from convdiag.report._basin_figures import ROOT_COLOURS, BasinDisplay, EvaluationsDisplay, SweepDisplay


def cube(z):
    return z**3 - 1


cube.__name__ = "z³-1<b>"  # a label with markup, to check escaping


@pytest.fixture(scope="module")
def cube_map():
    return basin_map(cube, rectangle=((-2, 2), (-2, 2)), shape=(61, 61), max_evals=200)


def test_basin_image_colours_each_start_by_its_root(cube_map):
    disp = BasinDisplay.from_basin(cube_map, shade=False).plot()
    img = disp.lines_["image"].get_array()
    assert img.shape == (61, 61, 3) and disp.ax_.get_images()[0] is disp.lines_["image"]
    for k in range(3):
        sel = cube_map.root_id == k
        np.testing.assert_allclose(img[sel], np.broadcast_to(to_rgb(ROOT_COLOURS[k]), (sel.sum(), 3)))
    xs, ys = disp.lines_["roots"].get_data()
    for r in np.exp(2j * np.pi * np.arange(3) / 3):  # exact cube roots of unity, to a few ulp
        assert np.min(np.hypot(xs - r.real, ys - r.imag)) < 1e-15
    assert disp.figure_ is disp.ax_.figure and list(disp.ax_.get_xlim()) == [-2.0, 2.0]
    labels = [t.get_text() for t in disp.lines_["legend"].get_texts()]
    assert labels[:3] == disp.legend[:3] and labels[2] == "root 2: 1+0i"


def test_shading_darkens_converged_starts_that_needed_more_evaluations(cube_map):
    img = BasinDisplay.from_basin(cube_map).colours
    sel = cube_map.root_id == 2
    ev, brightness = cube_map.evals[sel], img[sel].sum(axis=1)
    assert brightness[ev == ev.min()].min() > brightness[ev == ev.max()].max()


def test_failed_starts_take_the_colour_of_their_outcome():
    bm = basin_map("x**3 - 2*x + 2", interval=(-3, 3), shape=121, max_evals=40)
    disp = BasinDisplay.from_basin(bm).plot()
    img = disp.lines_["image"].get_array()[0]
    cyc = bm.outcome == "cycle"
    assert cyc.any()
    np.testing.assert_allclose(img[cyc], np.broadcast_to(to_rgb(OUTCOME_COLOURS["cycle"]), (cyc.sum(), 3)))
    assert "cycle" in disp.legend


def test_evaluations_map_shows_the_evaluation_counts(cube_map):
    disp = EvaluationsDisplay.from_basin(cube_map).plot()
    np.testing.assert_array_equal(disp.lines_["image"].get_array(), cube_map.evals)
    line = EvaluationsDisplay.from_basin(basin_map("x**2 - 1", interval=(-3, 3), shape=61)).plot()
    x, y = line.lines_["evals"].get_data()
    assert np.all(np.diff(x) > 0) and y.tolist() == y[::-1].tolist()  # even function: symmetric counts


def test_sweep_figure_over_a_parameter_plane_puts_each_point_in_its_cell():
    grid = param_grid(e=np.linspace(0.0, 0.99, 12), M=np.linspace(0.05, 6.2, 20))
    res = sweep(lambda E, M, e: E - e * np.sin(E) - M, grid, start=lambda M, e: M,
                fprime=lambda E, M, e: 1 - e * np.cos(E), xtol=1e-12, rtol=0.0)
    disp = SweepDisplay.from_sweep(res, x="M", y="e", what="evals").plot()
    mesh = np.asarray(disp.lines_["mesh"].get_array()).reshape(12, 20)  # rows follow e, columns M
    np.testing.assert_array_equal(mesh, res.on_grid("evals"))
    out = SweepDisplay.from_sweep(res).plot()
    assert [t.get_text().split(" ")[0] for t in out.lines_["legend"].get_texts()] == list(res.counts())
    sample = sweep(lambda x, a, b: x * x - a - b, {"a": np.linspace(1, 4, 30), "b": np.zeros(30)}, start=3.0)
    pts = SweepDisplay.from_sweep(sample, what="root").plot()
    np.testing.assert_allclose(pts.lines_["points"].get_array(), np.sqrt(np.linspace(1, 4, 30)), rtol=1e-15)


def test_basin_text_and_html_list_the_roots_and_escape_the_label(cube_map):
    text = basin_text(cube_map)
    assert "Basin map of newton on z³-1<b>" in text and "61 × 61 starts" in text
    assert "-0.5+0.866025403784i" in text and "converged" in text
    assert cube_map.to_text() == text
    page = basin_html(cube_map)
    assert "z³-1&lt;b&gt;" in page and "z³-1<b>" not in page
    assert cube_map._repr_mimebundle_()["text/html"] == page and "<script" not in page


def test_sweep_text_names_the_failing_points():
    M = np.array([0.1, 0.2, 1.0, 3.0])
    res = sweep(lambda E, M, e: E - e * np.sin(E) - M, {"M": M, "e": np.full(4, 0.99)}, start=lambda M, e: M,
                fprime=lambda E, M, e: 1 - e * np.cos(E), max_evals=20)
    text = sweep_text(res)
    assert "Sweep of newton" in text and "4 points over (M, e)" in text
    table = text.split("first points that did not converge (of ")[1].splitlines()[3:]
    assert [int(line.split()[0]) for line in table] == res.failures()["point"].tolist()
    assert all(line.split()[4] == str(o) for line, o in zip(table, res.failures()["outcome"]))
    assert str(res) == repr(res) and res.to_text() == text


def test_lanes_show_their_counts():
    lanes = solve_many("x**2 - 2", starts=np.array([1.0, 0.0]))
    assert "converged" in lanes.to_text() and "flat" in lanes.to_text() and repr(lanes).startswith("<Lanes newton")


def test_the_progress_bar_waits_then_draws_one_rewritten_line():
    out = io.StringIO()
    quiet = TextProgressBar(100, stream=out, delay=60.0)
    quiet.update(50, 100)
    quiet.close()
    assert out.getvalue() == ""
    bar = TextProgressBar(1000, stream=out, delay=0.0, width=10)
    bar.update(250, 1000)
    bar.update(1000, 1000)
    bar.close()
    lines = out.getvalue().split("\r")[1:]
    assert lines[0].startswith("sweep [##") and "25.0%" in lines[0] and "250/1,000 points" in lines[0]
    assert "100.0%" in lines[-1] and lines[-1].endswith("s\n") and math.isfinite(len(lines))
