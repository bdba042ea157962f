"""The explorer in a real browser: JupyterLab in headless Chromium, driven like an engineer would.

Opens ``example_notebooks/explore.ipynb`` (Kepler's equation, e = 0.99, M = 0.1), runs all cells,
presses Step three times, clicks the function plot to take a new start, runs to the end, and saves
screenshots. Check values: Newton's first step from E0 = 0.1 is E1 = E0 - f(E0)/f'(E0) with
f(E) = E - 0.99 sin E - 0.1 (Kepler's equation; the numbers below were recomputed with Python's
math module for this test).
"""

from __future__ import annotations

import hashlib
import math
import re
import time

import pytest

pytestmark = pytest.mark.browser

XLIM = (-0.5, 3.5)  # the notebook's x-range of the function plot


def _first_step() -> float:
    e0 = 0.1  # Newton on Kepler's equation, by hand: E1 = E0 - f/f'
    f = e0 - 0.99 * math.sin(e0) - 0.1
    d = 1 - 0.99 * math.cos(e0)
    return e0 - f / d


def _pixels(canvas) -> str:  # type: ignore[no-untyped-def]
    """A hash of what the figure's image canvas shows."""
    return hashlib.sha256(canvas.evaluate("c => c.toDataURL('image/png')").encode()).hexdigest()


def _wait_for_paint(page, canvas) -> None:  # type: ignore[no-untyped-def]
    """Wait until a figure's image canvas has a size and some drawn pixels."""
    page.wait_for_function("c => { if (!c.width || !c.height) return false;"
                           " const d = c.getContext('2d').getImageData(0, 0, c.width, c.height).data;"
                           " for (let i = 3; i < d.length; i += 4) if (d[i]) return true; return false; }",
                           arg=canvas.element_handle(), timeout=30_000)


def _wait_for_change(canvas, before: str, timeout: float = 10.0) -> str:  # type: ignore[no-untyped-def]
    deadline = time.monotonic() + timeout
    while time.monotonic() < deadline:
        now = _pixels(canvas)
        if now != before:
            return now
        time.sleep(0.1)
    raise AssertionError(f"the figure did not change within {timeout:g} s")


def test_explorer_steps_and_takes_a_start_from_a_click_in_a_real_browser(lab_url, page, artifacts,
                                                                         steady_screenshot):  # type: ignore[no-untyped-def]
    from playwright.sync_api import expect

    t0 = time.monotonic()
    page.goto(f"{lab_url}/lab/tree/explore.ipynb?reset")
    kernel = page.locator("#jp-main-statusbar .jp-StatusBar-TextItem[title^='Change kernel']")
    expect(kernel).to_have_text(re.compile(r"\| Idle"), timeout=60_000)
    page.evaluate("() => window.jupyterapp.commands.execute('notebook:run-all-cells')")

    explorer = page.locator(".cdx-explorer").first
    expect(explorer).to_be_visible(timeout=30_000)
    rows = explorer.locator("tr.cdx-row")
    expect(rows).to_have_count(1, timeout=30_000)  # Newton has one start
    figure = explorer.locator(".jupyter-matplotlib-figure")
    expect(figure).to_be_visible(timeout=30_000)
    image = figure.locator("canvas").first  # the drawn image; the top canvas takes the mouse
    mouse = figure.locator("canvas").last
    _wait_for_paint(page, image)
    ready = time.monotonic()
    before = _pixels(image)

    step = explorer.locator("button.cdx-step")
    for n in (2, 3, 4):
        step.click()
        expect(rows).to_have_count(n, timeout=10_000)
    after_steps = _wait_for_change(image, before)
    # the table shows Newton's first step, to the printed 12 digits
    expect(rows.nth(1)).to_contain_text(f"{_first_step():.12g}"[:8], timeout=10_000)
    shot_steps = artifacts / "explorer-three-steps.png"
    steady_screenshot(explorer, shot_steps)

    # click the function plot at x = 3.0 (CSS pixels; the figure is drawn at one pixel per pixel)
    from convdiag.widgets._explorer import AXES_F

    left, bottom, width, height = AXES_F
    box = mouse.bounding_box()
    assert box is not None
    frac = (3.0 - XLIM[0]) / (XLIM[1] - XLIM[0])
    mouse.click(position={"x": box["width"] * (left + width * frac), "y": box["height"] * (1 - (bottom + height / 2))},
                timeout=10_000)
    start = explorer.locator(".cdx-start input")
    expect(rows).to_have_count(1, timeout=10_000)  # a new start: back to one row
    deadline = time.monotonic() + 10
    while abs(float(start.input_value()) - 3.0) > 0.02 and time.monotonic() < deadline:
        time.sleep(0.1)
    picked = float(start.input_value())
    assert abs(picked - 3.0) <= 0.02, picked  # one pixel is (3.5 + 0.5) / 516 ≈ 0.008 in x
    expect(rows.first).to_contain_text(f"{picked:g}")
    _wait_for_change(image, after_steps)

    explorer.locator("button.cdx-run").click()
    expect(explorer.locator(".cdx-status")).to_contain_text("converged", timeout=30_000)
    # E for M = 0.1 rad, e = 0.99 is 0.831660423791057 (REFERENCES.md §5, Kepler, recomputed with mpmath)
    expect(explorer.locator(".cdx-status")).to_contain_text("0.8316604237", timeout=10_000)
    shot_end = artifacts / "explorer-after-click-and-run.png"
    steady_screenshot(explorer, shot_end)
    whole = explorer.bounding_box()
    assert whole is not None and whole["y"] + whole["height"] <= page.viewport_size["height"], whole  # not cut off

    # the basin map of the plotted range opens below; a click on it sends that start back
    explorer.locator("button.cdx-open-basins").click()
    basin = explorer.locator(".cdx-basin-view")
    expect(basin).to_be_visible(timeout=30_000)
    expect(basin.locator(".jupyter-matplotlib-figure")).to_be_visible(timeout=30_000)
    _wait_for_paint(page, basin.locator(".jupyter-matplotlib-figure canvas").first)
    basin_mouse = basin.locator(".jupyter-matplotlib-figure canvas").last
    bbox = basin_mouse.bounding_box()
    assert bbox is not None
    frac = (1.0 - XLIM[0]) / (XLIM[1] - XLIM[0])  # the basin view's map: axes at (0.09, 0.62, 0.66, 0.25)
    basin_mouse.click(position={"x": bbox["width"] * (0.09 + 0.66 * frac), "y": bbox["height"] * (1 - 0.745)},
                      timeout=10_000)
    deadline = time.monotonic() + 10
    while abs(float(start.input_value()) - 1.0) > 0.02 and time.monotonic() < deadline:
        time.sleep(0.1)
    assert abs(float(start.input_value()) - 1.0) <= 0.02, start.input_value()
    shot_basin = artifacts / "basins.png"
    steady_screenshot(basin, shot_basin)

    compare = page.locator(".cdx-compare-view")
    expect(compare.locator(".cdx-compare-table tbody tr")).to_have_count(4, timeout=30_000)
    shot_compare = artifacts / "compare.png"
    steady_screenshot(compare, shot_compare)
    table = compare.locator(".cdx-compare-table").bounding_box()
    view = compare.bounding_box()
    assert table is not None and view is not None
    assert table["x"] + table["width"] <= view["x"] + view["width"] + 1, (table, view)  # the table fits the view
    magic = page.locator(".cdx-explorer").nth(1)  # opened by %iterscope
    expect(magic).to_contain_text("x**3 - 2*x + 2", timeout=30_000)
    expect(magic.locator("tr.cdx-row")).to_have_count(1, timeout=30_000)
    print(f"\nscreenshots: {shot_steps}, {shot_end}, {shot_basin}, {shot_compare}; "
          f"page ready in {ready - t0:.1f} s, whole flow {time.monotonic() - t0:.1f} s")
