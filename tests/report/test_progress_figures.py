"""ProgressDisplay (convdiag/report/_progress_figures.py), drawn on Agg.

Check values: Newton on f = x² − 2 from 1 converges to √2 (math.sqrt); the steps, residuals and
evaluation counts are the run's own record.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

import convdiag

matplotlib = pytest.importorskip("matplotlib")
matplotlib.use("Agg")

from matplotlib.figure import Figure

from convdiag.report._progress_figures import ProgressDisplay


def test_progress_shows_step_sizes_residuals_and_errors_against_iteration_and_evaluations():
    run = convdiag.solve("x**2 - 2", "newton", start=1.0)
    est = convdiag.core._order.estimate_order(run, replay=False)
    p = ProgressDisplay.from_run(run, est)
    fig = Figure()
    p.plot(*fig.subplots(2, 1))
    np.testing.assert_allclose(p.step[1:], np.abs(np.diff(run.iterates)))
    np.testing.assert_allclose(p.resid, np.abs(run.values))
    np.testing.assert_allclose(p.error[:3], np.abs(run.iterates[:3] - math.sqrt(2)), rtol=1e-9)
    assert p.evals.tolist() == run.evals_at_iterates.tolist()
    assert p.lines_["error_ev"].get_xdata().tolist() == run.evals_at_iterates.tolist()
    assert p.ax_.get_yscale() == "log"
