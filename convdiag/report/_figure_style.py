"""What the step and progress figures share: the explorer's palette, an empty array, fixed axis labels."""

from __future__ import annotations

from typing import Any

import numpy as np
from numpy.typing import NDArray

__all__ = ["COLOURS", "FloatArray"]

FloatArray = NDArray[np.float64]
_EMPTY: FloatArray = np.zeros(0)

#: the explorer's palette (ink, model, new point, bracket, earlier points, step size, |f|, error).
COLOURS = {
    "ink": "#243447", "grid": "#d5dbe1", "model": "#d9822b", "new": "#b8336a", "bracket": "#3aa6a0",
    "past": "#8795a3", "start": "#4a6fa5", "step": "#3d6fb6", "resid": "#7d8c2b", "error": "#b8336a",
}


def _fixed_labels(ax: Any, xlabel: str, size: float) -> None:
    """Put the axis labels at fixed places under the tick labels: no layout work on each redraw."""
    ax.set_xlabel(xlabel, fontsize=size)
    height_pt = ax.get_position().height * ax.figure.get_figheight() * 72
    ax.xaxis.set_label_coords(0.5, -(1.7 * size + 5) / max(height_pt, 1.0))
    ax.xaxis.label.set_verticalalignment("top")
    ax.yaxis.set_label_coords(-0.08, 0.5)
