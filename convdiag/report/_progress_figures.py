"""How fast a run closes in: step sizes, |f| and errors on a log scale (re-exported by ``_step_figures``).

:class:`ProgressDisplay` draws them against iteration and against function
evaluations, in the display-object shape (``from_run`` computes,
``plot(ax=None)`` draws, ``update(other)`` moves the drawn artists to another
display's data).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from ._figure_style import _EMPTY, COLOURS, FloatArray, _fixed_labels

__all__ = ["ProgressDisplay"]


def _nice_ceiling(v: float) -> float:
    """The smallest of 1, 2, 5, 10, 20, 50, ... that is >= v (v > 0)."""
    exp = 10.0 ** math.floor(math.log10(v))
    return next(m * exp for m in (1, 2, 5, 10) if m * exp >= v)


def _power_label(v: float, _pos: Any = None) -> str:
    """Tick label of a log axis as plain text: 1e-08 -> '1e-8', 1 -> '1'."""
    if not v > 0:
        return ""
    p = math.log10(v)
    if abs(p - round(p)) > 1e-9:
        return ""
    return "1" if round(p) == 0 else f"1e{round(p)}"


@dataclass
class ProgressDisplay:
    """Step sizes, |f| and errors of a run on a log scale, against iteration and against evaluations.

    Attributes
    ----------
    k : iteration number of each iterate (starts are 0, -1, ...; step n is n).
    evals : cumulative function evaluations when each iterate became known.
    step : |x_k − x_(k−1)| (NaN for the first start).
    resid : |f(x_k)|.
    error : |x_k − r| when a reference root r is known (from an order estimate), else all NaN.
    error_label : how the reference root was obtained.
    """

    k: FloatArray
    evals: FloatArray
    step: FloatArray
    resid: FloatArray
    error: FloatArray
    error_label: str = ""
    ax_: Any = field(default=None, init=False, repr=False)
    figure_: Any = field(default=None, init=False, repr=False)
    lines_: dict[str, Any] = field(default_factory=dict, init=False, repr=False)

    @classmethod
    def from_run(cls, run: Any, estimate: Any = None) -> ProgressDisplay:
        """From a run (or the part of it up to a step); ``estimate`` (an OrderEstimate) supplies errors."""
        xs = np.asarray(run.iterates, dtype=float)
        n0 = len(run.starts)
        k = np.arange(len(xs), dtype=float) - (n0 - 1)
        step = np.concatenate([[np.nan], np.abs(np.diff(xs))]) if len(xs) else _EMPTY
        resid = np.abs(np.asarray(run.values, dtype=float))
        error = np.full(len(xs), np.nan)
        label = ""
        if estimate is not None and getattr(estimate, "root", None) is not None and len(estimate.errors) == len(xs):
            error = np.asarray(estimate.errors, dtype=float)
            label = f"error |xₖ − r|, r from {estimate.reference}"
        return cls(k, np.asarray(run.evals_at_iterates, dtype=float), step, resid, error, label)

    def plot(self, ax: Any = None, ax_evals: Any = None, *, legend: bool = True) -> ProgressDisplay:
        """Draw against iteration on ``ax`` and against evaluations on ``ax_evals`` (new figure if None).

        ``legend=False`` leaves the legend out (the explorer shows its own, outside the figure).
        """
        if ax is None or ax_evals is None:
            from matplotlib.figure import Figure

            fig = Figure(figsize=(4.0, 4.0), layout="constrained")
            ax, ax_evals = fig.subplots(2, 1)
        self.ax_, self.figure_ = ax, ax.figure
        c = COLOURS
        a: dict[str, Any] = {}
        from matplotlib.ticker import FuncFormatter, LogLocator, MaxNLocator, NullFormatter

        for where, axis in (("it", ax), ("ev", ax_evals)):
            axis.set_yscale("log")
            axis.yaxis.set_major_locator(LogLocator(base=10.0, numticks=5))
            axis.yaxis.set_major_formatter(FuncFormatter(_power_label))  # plain text: cheaper than mathtext
            axis.yaxis.set_minor_formatter(NullFormatter())
            axis.xaxis.set_major_locator(MaxNLocator(integer=True, nbins=6))
            axis.grid(True, which="major", color=c["grid"], lw=0.6)
            axis.tick_params(labelsize=9)
            (a[f"step_{where}"],) = axis.plot([], [], "o-", color=c["step"], ms=3, lw=1.2, label="step |xₖ − xₖ₋₁|")
            (a[f"resid_{where}"],) = axis.plot([], [], "^-", color=c["resid"], ms=3, lw=1.0, label="|f(xₖ)|")
            (a[f"error_{where}"],) = axis.plot([], [], "s-", color=c["error"], ms=3, lw=1.2, label="error |xₖ − r|")
        for axis, text in ((ax, "iteration k"), (ax_evals, "function evaluations")):
            _fixed_labels(axis, text, 9)
        ax.set_title("How fast it closes in (log scale)", fontsize=9, loc="left", color=c["ink"], y=1.0, pad=4)
        a["legend"] = None
        if legend:
            # in the title row, over the right-hand axes: next to what it explains, clear of the tick labels
            a["legend"] = ax_evals.legend(fontsize=9, loc="lower right", bbox_to_anchor=(1.0, 1.0), ncol=3,
                                          frameon=False, handlelength=1.5, columnspacing=0.8, borderaxespad=0.2)
        a["ax_evals"] = ax_evals
        self.lines_ = a
        return self._apply()

    def update(self, other: ProgressDisplay) -> ProgressDisplay:
        """Move the drawn artists to ``other``'s data; returns self."""
        if self.ax_ is None:
            raise RuntimeError("update() needs a display that was plotted first; call plot() before update().")
        for name in ("k", "evals", "step", "resid", "error", "error_label"):
            setattr(self, name, getattr(other, name))
        return self._apply()

    def _apply(self) -> ProgressDisplay:
        a = self.lines_
        for where, xs in (("it", self.k), ("ev", self.evals)):
            for series in ("step", "resid", "error"):
                ys = np.asarray(getattr(self, series), dtype=float)
                a[f"{series}_{where}"].set_data(xs, np.where(ys > 0, ys, np.nan))
        vals = [np.asarray(v, dtype=float) for v in (self.step, self.resid, self.error)]
        pos = np.concatenate([v[np.isfinite(v) & (v > 0)] for v in vals])
        if pos.size:  # whole decades, the bottom in steps of two: the ranges change seldom while stepping
            top = math.ceil(math.log10(float(pos.max())) + 0.3)
            bottom = 2 * math.floor((math.log10(float(pos.min())) - 0.3) / 2)
            ylo, yhi = 10.0**bottom, 10.0 ** max(top, bottom + 1)
        else:
            ylo, yhi = 1e-16, 1.0
        for axis, xs in ((self.ax_, np.asarray(self.k, float)), (a["ax_evals"], np.asarray(self.evals, float))):
            lo, hi = (float(xs.min()), float(xs.max())) if len(xs) else (0.0, 1.0)
            axis.set_xlim(lo - 0.5, _nice_ceiling(max(hi, lo + 1) + 0.5))
            axis.set_ylim(ylo, yhi)
        if a["legend"] is not None:
            a["legend"].get_texts()[2].set_text("error |xₖ − r|" if self.error_label else "error (no root yet)")
        return self

    @classmethod
    def empty(cls) -> ProgressDisplay:
        """A display with no data (to plot first and :meth:`update` later)."""
        return cls(_EMPTY, _EMPTY, _EMPTY, _EMPTY, _EMPTY)

    def __repr__(self) -> str:
        return f"<ProgressDisplay {len(self.k)} iterates>"
