"""Figure of a bracket search: f over the searched interval with each candidate marked by kind.

``BracketsDisplay.from_search(search)`` computes (numbers only, from the
search's own evaluation log: nothing is evaluated again); ``.plot(ax=None)``
draws, imports matplotlib inside, and keeps ``ax_``, ``figure_``, ``lines_``
(the curve pieces) and ``markers_`` (the artists of each kind).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np
from numpy.typing import NDArray

from ..core._brackets import BracketSearch, Candidate
from ._brackets_text import KIND_COLOURS

__all__ = ["BracketsDisplay"]

#: the y range shows at most this many times the median |f| (poles would flatten everything else).
Y_CLIP = 10.0


@dataclass
class BracketsDisplay:
    """f over the searched interval, the curve broken at poles, jumps and domain edges.

    Attributes
    ----------
    x, y : the evaluated points with a finite value, sorted by x, NaN where the curve breaks.
    candidates : the search's candidates.
    ylim : the y range to show (clipped to ``Y_CLIP`` × the median |f|).
    xlim : the x range: the domain searched, or every point evaluated (undefined ones too).
    label : the function's label.
    """

    x: NDArray[np.float64]
    y: NDArray[np.float64]
    candidates: tuple[Candidate, ...]
    ylim: tuple[float, float]
    xlim: tuple[float, float]
    label: str
    ax_: Any = field(default=None, init=False, repr=False)
    figure_: Any = field(default=None, init=False, repr=False)
    lines_: list[Any] = field(default_factory=list, init=False, repr=False)
    markers_: dict[str, list[Any]] = field(default_factory=dict, init=False, repr=False)

    @classmethod
    def from_search(cls, search: BracketSearch) -> BracketsDisplay:
        log = search.evals
        real = (log.kind == "f") & (log.x_imag == 0) & np.isfinite(log.x)
        keep = real & log.ok
        xs, ys = log.x[keep], log.value[keep]
        xs, idx = np.unique(xs, return_index=True)
        ys = ys[idx]
        cuts = sorted(c.x for c in search.candidates if c.kind in ("pole", "jump", "domain-edge", "unclassified"))
        if len(xs) > 1 and cuts:
            gaps = np.searchsorted(xs, cuts, side="left")
            gaps = np.unique(gaps[(gaps > 0) & (gaps < len(xs))])
            xs = np.insert(xs, gaps, np.nan)
            ys = np.insert(ys, gaps, np.nan)
        finite = ys[np.isfinite(ys)]
        if finite.size:
            med = float(np.median(np.abs(finite))) or 1.0
            top = min(float(finite.max()), Y_CLIP * med)
            bottom = max(float(finite.min()), -Y_CLIP * med)
            top, bottom = max(top, 0.0), min(bottom, 0.0)
            pad = 0.08 * (top - bottom or 1.0)
            ylim = (bottom - pad, top + pad)
        else:
            ylim = (-1.0, 1.0)
        if search.domain is not None:
            xlim = search.domain
        elif real.any():
            xlim = (float(log.x[real].min()), float(log.x[real].max()))
        else:
            xlim = (-1.0, 1.0)
        span = (xlim[1] - xlim[0]) or 1.0
        xlim = (xlim[0] - 0.02 * span, xlim[1] + 0.02 * span)
        return cls(xs.astype(np.float64), ys.astype(np.float64), search.candidates, ylim, xlim, search.problem)

    def plot(self, ax: Any = None, *, legend: bool = True) -> BracketsDisplay:
        """Draw on ``ax`` (a new figure if None); returns self."""
        import matplotlib.pyplot as plt

        if ax is None:
            _, ax = plt.subplots(figsize=(7.5, 3.8))
        self.ax_, self.figure_ = ax, ax.figure
        self.lines_ = list(ax.plot(self.x, self.y, color="#2b4c7e", lw=1.3, label=f"f = {self.label}"))
        ax.axhline(0.0, color="#999999", lw=0.8)
        ax.set_ylim(*self.ylim)
        ax.set_xlim(*self.xlim)
        self.markers_ = {}
        for c in self.candidates:
            self.markers_.setdefault(c.kind, []).extend(self._mark(ax, c))
        if legend:
            handles = [arts[0] for arts in self.markers_.values() if arts]
            ax.legend(handles=self.lines_[:1] + handles, loc="best", fontsize=8)
        ax.set_xlabel("x")
        ax.set_ylabel("f(x)")
        ax.set_title(f"Where f = {self.label} has roots, poles, jumps and edges", fontsize=10)
        return self

    @staticmethod
    def _mark(ax: Any, c: Candidate) -> list[Any]:
        colour = KIND_COLOURS.get(c.kind, "#333333")
        label = c.kind
        if c.kind == "root":
            arts = list(ax.plot([c.x], [0], "o", color=colour, ms=6, label=label))  # first: the legend uses it
            arts += ax.plot([c.lo, c.hi], [0, 0], color=colour, lw=5, alpha=0.5, solid_capstyle="butt")
            if c.rank is not None:
                arts.append(ax.annotate(str(c.rank), (c.x, 0), textcoords="offset points", xytext=(0, 7),
                                        ha="center", fontsize=8, color=colour))
            return arts
        if c.kind == "pole":
            return [ax.axvline(c.x, color=colour, ls="--", lw=1.2, label=label)]
        if c.kind == "jump":
            return [ax.axvline(c.x, color=colour, ls=":", lw=1.5, label=label)]
        if c.kind == "touch":
            return list(ax.plot([c.x], [0], "D", color=colour, ms=6, label=label))
        if c.kind == "domain-edge":
            lo, hi = ax.get_xlim()
            line = ax.axvline(c.x, color=colour, lw=1.0, label="domain edge")
            if c.undefined_side == "left" and lo < c.x:
                span = ax.axvspan(lo, c.x, color=colour, alpha=0.15, lw=0)
            elif c.undefined_side == "right" and c.x < hi:
                span = ax.axvspan(c.x, hi, color=colour, alpha=0.15, lw=0)
            else:
                return [line]
            return [line, span]
        return list(ax.plot([c.x], [0], "x", color=colour, ms=7, label=label))

    def __repr__(self) -> str:
        n = int(np.count_nonzero(np.isfinite(self.y)))
        return f"<BracketsDisplay {self.label}: {n} points, {len(self.candidates)} candidates>"
