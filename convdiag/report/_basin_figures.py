"""Figures of basin maps and sweeps: which root each start reaches, what it cost, how each point went.

Display objects in the scikit-learn shape: a classmethod computes (numbers
only), ``plot(ax=None)`` draws, imports matplotlib inside, and keeps ``ax_``,
``figure_`` and ``lines_`` (a dict of the drawn artists by name).

>>> from convdiag.core._basin import basin_map
>>> from convdiag.report._basin_figures import BasinDisplay
>>> disp = BasinDisplay.from_basin(basin_map("x**2 - 1", interval=(-2, 2), shape=9))
>>> disp.legend
['root 0: -1', 'root 1: 1', 'flat']
"""

from __future__ import annotations

from typing import Any, Literal

import numpy as np
from numpy.typing import NDArray

from ..core._basin import BasinMap
from ..core._sweep import SweepResult
from ..core._vector import OUTCOMES
from ..errors import ParameterError
from ._sweep_text import OUTCOME_COLOURS
from ._text import fmt

__all__ = ["BasinDisplay", "EvaluationsDisplay", "SweepDisplay"]

#: colours of roots 0, 1, 2, ... in basin maps (repeated past the end).
ROOT_COLOURS = ("#2a6fbb", "#27ae60", "#c2185b", "#00838f", "#8d6e63", "#7e57c2", "#9e9d24", "#5c6bc0")
Arr = NDArray[Any]


def _rgb(hex_colour: str) -> NDArray[np.float64]:
    h = hex_colour.lstrip("#")
    return np.array([int(h[i:i + 2], 16) / 255 for i in (0, 2, 4)])


def _new_ax(ax: Any, size: tuple[float, float]) -> tuple[Any, Any]:
    import matplotlib.pyplot as plt

    if ax is None:
        fig, ax = plt.subplots(figsize=size)
        return fig, ax
    return ax.figure, ax


class BasinDisplay:
    """The basin map: each start coloured by the root it reaches (or by how it failed).

    Converged starts darken with the evaluations they used (``shade``), which shows the basin
    boundaries. Build with :meth:`from_basin`; draw with :meth:`plot`.
    """

    def __init__(self, basin: BasinMap, *, shade: bool = True) -> None:
        self.basin = basin
        ids, outcome = basin.root_id, basin.outcome
        colours = np.zeros((*ids.shape, 3))
        self.legend: list[str] = []
        self.legend_colours: list[str] = []
        for k, r in enumerate(basin.roots):
            c = ROOT_COLOURS[k % len(ROOT_COLOURS)]
            colours[ids == k] = _rgb(c)
            self.legend.append(f"root {k}: {fmt(r.item(), 6)}")
            self.legend_colours.append(c)
        for o in OUTCOMES[1:]:
            sel = (ids < 0) & (outcome == o)
            if sel.any():
                colours[sel] = _rgb(OUTCOME_COLOURS[o])
                self.legend.append(o)
                self.legend_colours.append(OUTCOME_COLOURS[o])
        conv = ids >= 0
        if shade and conv.any():  # darker where a start needed more evaluations (converged starts only)
            ev = basin.evals.astype(np.float64)
            lo, span = float(ev[conv].min()), float(ev[conv].max() - ev[conv].min())
            if span > 0:
                colours[conv] *= (1.0 - 0.55 * (ev[conv] - lo) / span)[:, None]
        self.colours = colours
        self.ax_: Any = None
        self.figure_: Any = None
        self.lines_: dict[str, Any] = {}

    @classmethod
    def from_basin(cls, basin: BasinMap, *, shade: bool = True) -> BasinDisplay:
        """Colours per start from a :class:`~convdiag.core._basin.BasinMap` (no drawing)."""
        return cls(basin, shade=shade)

    def plot(self, ax: Any = None, *, legend: bool = True) -> BasinDisplay:
        """Draw the map (an image for a grid, points otherwise) with the roots marked."""
        from matplotlib.patches import Patch

        bm = self.basin
        fig, ax = _new_ax(ax, (6.0, 5.2) if bm.kind == "rectangle" else (8.0, 2.2))
        if bm.kind == "rectangle" and bm.extent is not None:
            self.lines_["image"] = ax.imshow(self.colours, origin="lower", extent=bm.extent, interpolation="nearest",
                                             aspect="equal")
            (mk,) = ax.plot(bm.roots.real, bm.roots.imag, "x", color="white", ms=8, mew=2, label="roots")
            ax.set_xlabel("Re start")
            ax.set_ylabel("Im start")
        elif bm.kind == "interval" and bm.extent is not None:
            self.lines_["image"] = ax.imshow(self.colours[None, :, :], extent=(*bm.extent, 0.0, 1.0), aspect="auto",
                                             interpolation="nearest")
            (mk,) = ax.plot(bm.roots.real, np.full(bm.roots.size, 0.5), "v", color="white", mec="black", ms=9,
                            label="roots")
            ax.set_yticks([])
            ax.set_xlabel("start")
        else:
            s = bm.starts.ravel()
            self.lines_["points"] = ax.scatter(s.real, s.imag, c=self.colours.reshape(-1, 3), s=6, marker="s")
            (mk,) = ax.plot(bm.roots.real, bm.roots.imag, "x", color="black", ms=8, mew=2, label="roots")
            ax.set_xlabel("Re start")
            ax.set_ylabel("Im start")
        self.lines_["roots"] = mk
        ax.set_title(f"Basins of {bm.method} on {bm.label}")
        if legend and self.legend:
            handles = [Patch(color=c, label=t) for t, c in zip(self.legend, self.legend_colours)]
            self.lines_["legend"] = ax.legend(handles=handles, loc="upper left", bbox_to_anchor=(1.01, 1.0),
                                              fontsize=8, frameon=False)
        self.ax_, self.figure_ = ax, fig
        return self


class EvaluationsDisplay:
    """Evaluations used from each start (image for a rectangle, a curve for an interval)."""

    def __init__(self, basin: BasinMap) -> None:
        self.basin = basin
        self.evals = basin.evals
        self.failed = basin.root_id < 0
        self.ax_: Any = None
        self.figure_: Any = None
        self.lines_: dict[str, Any] = {}

    @classmethod
    def from_basin(cls, basin: BasinMap) -> EvaluationsDisplay:
        return cls(basin)

    def plot(self, ax: Any = None, *, cmap: str = "viridis") -> EvaluationsDisplay:
        """Draw evaluations per start; starts that did not converge are outlined in red (interval) or hatched."""
        bm = self.basin
        fig, ax = _new_ax(ax, (6.0, 5.0) if bm.kind == "rectangle" else (8.0, 3.0))
        if bm.kind == "rectangle" and bm.extent is not None:
            im = ax.imshow(self.evals, origin="lower", extent=bm.extent, cmap=cmap, interpolation="nearest")
            self.lines_["image"] = im
            self.lines_["colorbar"] = fig.colorbar(im, ax=ax, label="evaluations")
            if self.failed.any():
                self.lines_["failed"] = ax.contour(self.failed.astype(float), levels=[0.5], colors="red",
                                                   linewidths=0.6, origin="lower", extent=bm.extent)
            ax.set_xlabel("Re start")
            ax.set_ylabel("Im start")
        else:
            s = bm.starts.ravel().real
            order = np.argsort(s, kind="stable")
            (ln,) = ax.plot(s[order], self.evals.ravel()[order], "-", color="#2a6fbb", lw=1.0, label="evaluations")
            self.lines_["evals"] = ln
            f = self.failed.ravel()
            (bad,) = ax.plot(s[f], self.evals.ravel()[f], "o", color="#c0392b", ms=3, label="did not converge")
            self.lines_["failed"] = bad
            ax.set_xlabel("start")
            ax.set_ylabel("evaluations")
            ax.legend(fontsize=8, frameon=False)
        ax.set_title(f"Evaluations of {bm.method} on {bm.label}")
        self.ax_, self.figure_ = ax, fig
        return self


What = Literal["outcome", "evals", "root"]


class SweepDisplay:
    """A sweep over a plane of two parameters: outcome classes (or evaluations, or the root) per point.

    Grids are drawn as a mesh, samples as points. Build with :meth:`from_sweep`; draw with :meth:`plot`.
    """

    def __init__(self, result: SweepResult, x: str, y: str | None, what: What) -> None:
        t = result.table
        self.result, self.x, self.y, self.what = result, x, y, what
        self.xs = t[x]
        self.ys = t[y] if y is not None else None
        if what == "outcome":
            self.present = [o for o in OUTCOMES if np.any(t["outcome"] == o)]
            self.values = np.zeros(len(t))
            for k, o in enumerate(self.present):
                self.values[t["outcome"] == o] = k
        else:
            self.present = []
            self.values = t["evals" if what == "evals" else "root"].astype(np.float64)
        self.ax_: Any = None
        self.figure_: Any = None
        self.lines_: dict[str, Any] = {}

    @classmethod
    def from_sweep(cls, result: SweepResult, *, x: str | None = None, y: str | None = None,
                   what: What = "outcome") -> SweepDisplay:
        """Pick the parameters on the axes (default: the first two) and what to colour by."""
        names = list(result.params)
        x = x if x is not None else names[0]
        y = y if y is not None else (names[1] if len(names) > 1 else None)
        for v in (x, y):
            if v is not None and v not in names:
                raise ParameterError.expected("x/y", "SweepDisplay.from_sweep", f"one of {names}", v)
        if what not in ("outcome", "evals", "root"):
            raise ParameterError.expected("what", "SweepDisplay.from_sweep", "'outcome', 'evals' or 'root'", what)
        return cls(result, x, y, what)

    def plot(self, ax: Any = None, *, cmap: str = "viridis") -> SweepDisplay:
        """Draw the plane (or a line for one parameter)."""
        from matplotlib.colors import ListedColormap
        from matplotlib.patches import Patch

        res = self.result
        fig, ax = _new_ax(ax, (6.5, 5.0))
        if self.what == "outcome":
            cm: Any = ListedColormap([OUTCOME_COLOURS[o] for o in self.present] or ["#ffffff"])
            kw: dict[str, Any] = {"cmap": cm, "vmin": -0.5, "vmax": max(len(self.present), 1) - 0.5}
        else:
            kw = {"cmap": cmap}
        if self.ys is None:
            order = np.argsort(self.xs, kind="stable")
            self.lines_["points"] = ax.scatter(self.xs[order], np.zeros(order.size), c=self.values[order], s=12,
                                               marker="|", **kw)
            ax.set_yticks([])
        elif res.grid is not None and {self.x, self.y} <= set(res.grid.names) and len(res.grid.names) == 2:
            g = res.grid
            vals = self.values.reshape(g.shape)
            if g.names[0] == self.x:  # rows of the table grid follow the first name: put y on rows
                vals = vals.T
            ax_x, ax_y = g.axes[g.names.index(self.x)], g.axes[g.names.index(self.y)]
            self.lines_["mesh"] = ax.pcolormesh(ax_x, ax_y, vals, shading="nearest", rasterized=True, **kw)
        else:
            self.lines_["points"] = ax.scatter(self.xs, self.ys, c=self.values, s=2, marker=".", linewidths=0,
                                               rasterized=True, **kw)
        ax.set_xlabel(self.x)
        if self.y is not None:
            ax.set_ylabel(self.y)
        art = self.lines_.get("mesh", self.lines_.get("points"))
        if self.what == "outcome":
            handles = [Patch(color=OUTCOME_COLOURS[o], label=f"{o} ({int(np.sum(res.table['outcome'] == o)):,})")
                       for o in self.present]
            self.lines_["legend"] = ax.legend(handles=handles, loc="upper left", bbox_to_anchor=(1.01, 1.0),
                                              fontsize=8, frameon=False)
        else:
            self.lines_["colorbar"] = fig.colorbar(art, ax=ax, label={"evals": "evaluations"}.get(self.what, self.what))
        ax.set_title(f"Sweep of {res.method} on {res.label}: {self.what}")
        self.ax_, self.figure_ = ax, fig
        return self
