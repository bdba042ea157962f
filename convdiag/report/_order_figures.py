"""Figures for the order of convergence: error against iterations and evaluations, and equal work.

Display objects in the scikit-learn shape: a classmethod computes (numbers
only), ``plot(ax=None)`` draws, imports matplotlib inside, and keeps ``ax_``,
``figure_`` and ``lines_`` (a dict of the drawn lines by name).

>>> from convdiag import solve
>>> from convdiag.report._order_figures import OrderDisplay
>>> disp = OrderDisplay.from_run(solve("x**2 - 2", "newton", start=1.0))
>>> disp.label
'quadratic'
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from typing import Any, Literal

import numpy as np
from numpy.typing import NDArray

from ..core._order import Comparison, OrderEstimate, estimate_order

__all__ = ["EqualWorkDisplay", "OrderDisplay"]

Against = Literal["iteration", "evaluations", "both"]


def _series(e: OrderEstimate) -> tuple[NDArray[np.float64], NDArray[np.float64], NDArray[np.float64] | None]:
    """(k, error, evaluations) with errors that are zero or underflow left out."""
    L = np.asarray(e.log_errors, dtype=np.float64)
    k = np.arange(len(L), dtype=np.float64)
    keep = np.isfinite(L) & (L > -307)
    ev = None if e.evals is None else np.asarray(e.evals, dtype=np.float64)[keep]
    return k[keep], 10.0 ** L[keep], ev


class OrderDisplay:
    """Error against iteration and against function evaluations (log scale) for one run.

    The window the order rests on is marked, the rounding floor drawn as a dashed line, and a
    high-precision replay (if the estimate has one) drawn as a second, dotted line.

    Build with :meth:`from_estimate` or :meth:`from_run`; draw with :meth:`plot`.
    """

    def __init__(self, estimate: OrderEstimate) -> None:
        self.estimate = estimate
        run = estimate.in_run if estimate.in_run is not None else estimate
        self.k, self.errors, self.evals = _series(run)
        self.window = run.window if run.converged_estimate else None
        rep = estimate.replay
        self.replay_k: NDArray[np.float64] | None = None
        self.replay_errors: NDArray[np.float64] | None = None
        self.replay_evals: NDArray[np.float64] | None = None
        if rep is not None and rep is not run:
            self.replay_k, self.replay_errors, self.replay_evals = _series(rep)
        self.replay_window = rep.window if rep is not None and rep is not run and rep.converged_estimate else None
        self.floor = run.floor
        self.label = estimate.label
        self.title = f"{estimate.source}: {estimate.label_text}"
        self.ax_: Any = None
        self.figure_: Any = None
        self.lines_: dict[str, Any] = {}

    @classmethod
    def from_estimate(cls, estimate: OrderEstimate) -> OrderDisplay:
        """Compute the display data from an :class:`OrderEstimate` (no drawing)."""
        return cls(estimate)

    @classmethod
    def from_run(cls, run: Any, **kwargs: Any) -> OrderDisplay:
        """Estimate the order of ``run`` (keywords go to :func:`estimate_order`) and build the display."""
        return cls(estimate_order(run, **kwargs))

    def _draw(self, ax: Any, x: NDArray[np.float64] | None, xr: NDArray[np.float64] | None, tag: str, xlabel: str) -> None:
        if x is None:
            ax.text(0.5, 0.5, "no evaluation counts", transform=ax.transAxes, ha="center")
            return
        (line,) = ax.semilogy(x, self.errors, "o-", color="#1f5f8b", ms=4, lw=1.2, label="error |x_k − r|")
        self.lines_[f"error{tag}"] = line
        if self.window is not None:
            lo, hi = self.window
            sel = (self.k >= lo - 1) & (self.k <= hi + 1)
            (w,) = ax.semilogy(x[sel], self.errors[sel], "o", color="#d9822b", ms=7, mfc="none", mew=1.6,
                               label="window of the estimate")
            self.lines_[f"window{tag}"] = w
        if xr is not None and self.replay_errors is not None:
            (r,) = ax.semilogy(xr, self.replay_errors, ":", color="#555555", lw=1.2,
                               label=f"replay at {self.estimate.replay.digits if self.estimate.replay else ''} digits")
            self.lines_[f"replay{tag}"] = r
        if self.floor > 0 and math.isfinite(self.floor):
            fl = ax.axhline(self.floor, ls="--", color="#b3261e", lw=1.0, label="rounding floor")
            self.lines_[f"floor{tag}"] = fl
        ax.set_xlabel(xlabel)
        ax.set_ylabel("error")

    def plot(self, ax: Any = None, *, against: Against = "both") -> OrderDisplay:
        """Draw; ``against`` is ``"iteration"``, ``"evaluations"`` or ``"both"`` (two panels).

        ``ax`` is one Axes (or, for ``"both"``, a pair); default: a new figure.
        """
        import matplotlib.pyplot as plt

        if against not in ("iteration", "evaluations", "both"):
            from ..errors import ParameterError

            raise ParameterError.expected("against", "OrderDisplay.plot", "'iteration', 'evaluations' or 'both'", against)
        if ax is None:
            fig, axes = plt.subplots(1, 2 if against == "both" else 1, figsize=(10 if against == "both" else 5.5, 3.8))
            axes_list = list(np.atleast_1d(axes))
        else:
            axes_list = list(ax) if isinstance(ax, (list, tuple, np.ndarray)) else [ax]
            if against == "both" and len(axes_list) != 2:
                from ..errors import ParameterError

                raise ParameterError.expected("ax", "OrderDisplay.plot", "a pair of Axes for against='both'", ax)
            fig = axes_list[0].figure
        kinds = ["iteration", "evaluations"] if against == "both" else [against]
        for a, kind in zip(axes_list, kinds):
            if kind == "iteration":
                self._draw(a, self.k, self.replay_k, "", "iteration k")
            else:
                self._draw(a, self.evals, self.replay_evals, "@evals", "function evaluations")
        axes_list[0].set_title(self.title, fontsize=10, loc="left")
        axes_list[0].legend(fontsize=9, loc="lower left")
        self.ax_ = axes_list[0] if len(axes_list) == 1 else np.asarray(axes_list, dtype=object)
        self.figure_ = fig
        return self


class EqualWorkDisplay:
    """Error against function evaluations for several methods on one problem (equal work).

    Build with :meth:`from_comparison`; draw with :meth:`plot`. Each method's line is labelled
    with its observed order and efficiency index.
    """

    def __init__(self, names: Sequence[str], evals: Sequence[NDArray[np.float64]], errors: Sequence[NDArray[np.float64]],
                 labels: Sequence[str], *, tol: float | None = None, title: str = "") -> None:
        self.names = list(names)
        self.evals = list(evals)
        self.errors = list(errors)
        self.labels = list(labels)
        self.tol = tol
        self.title = title
        self.ax_: Any = None
        self.figure_: Any = None
        self.lines_: dict[str, Any] = {}

    @classmethod
    def from_comparison(cls, comparison: Comparison) -> EqualWorkDisplay:
        names, evs, errs, labels = [], [], [], []
        for r in comparison.results:
            e = np.asarray(r.errors, dtype=np.float64)
            ev = np.asarray(r.evals, dtype=np.float64)
            keep = np.isfinite(e) & (e > 0)
            names.append(r.method)
            evs.append(ev[keep])
            errs.append(e[keep])
            est = r.estimate
            eff = f", efficiency {est.efficiency:.3f}" if est.efficiency is not None and est.rate is None else ""
            labels.append(f"{r.method}: {est.label_text}{eff}")
        return cls(names, evs, errs, labels, tol=comparison.tol, title=f"equal work on {comparison.problem}")

    def plot(self, ax: Any = None) -> EqualWorkDisplay:
        import matplotlib.pyplot as plt

        if ax is None:
            fig, ax = plt.subplots(figsize=(6.5, 4.2))
        else:
            fig = ax.figure
        for name, ev, err, lab in zip(self.names, self.evals, self.errors, self.labels):
            (line,) = ax.semilogy(ev, err, "o-", ms=3.5, lw=1.2, label=lab)
            self.lines_[name] = line
        if self.tol is not None:
            self.lines_["tol"] = ax.axhline(self.tol, ls="--", color="#777777", lw=0.9, label=f"error {self.tol:g}")
        ax.set_xlabel("function evaluations (f, f' and f'' each count)")
        ax.set_ylabel("error |x − r|")
        ax.set_title(self.title, fontsize=10, loc="left")
        ax.legend(fontsize=9)
        self.ax_, self.figure_ = ax, fig
        return self
