"""Figures of one step: the function with the step's local model, and how fast a run closes in.

:class:`StepDisplay` draws f over an x-range with what the current step
assumed (the tangent line, the line through two points, the sideways
parabola through three points, the hyperbola, or the bracket's middle),
the bracket shaded, the model's zero and the new iterate marked.
:class:`ProgressDisplay` (in ``_progress_figures``, re-exported here) draws
step sizes, |f| and (when a reference root is known) errors on a log scale
against iteration and against function evaluations. Both follow the display-object shape: ``from_...`` computes,
``plot(ax=None)`` draws; ``update(other)`` moves the drawn artists to
another display's data without creating new ones (the explorer widget
uses it to stay fast).

The function curve is sampled outside the run's record (the run's
evaluation count is unchanged): vectorised when f takes arrays, else point
by point, NaN where f fails, and through fewer points when f is slow
(about two seconds per curve).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from ..core._run import _float as _fl
from ._figure_style import (
    _EMPTY,
    COLOURS,
    FloatArray,
    _fixed_labels,
    parabola_turn,
    sample_curve,
    sideways_parabola,
)
from ._progress_figures import ProgressDisplay

__all__ = ["COLOURS", "MODEL_NAMES", "ProgressDisplay", "StepDisplay", "auto_xlim", "parabola_turn", "sample_curve",
           "sideways_parabola"]

#: plain names of the local models, by ``model.kind``.
MODEL_NAMES = {
    "tangent": "tangent line", "chord": "line through two points",
    "inverse-parabola": "sideways parabola through three points", "midpoint": "middle of the bracket",
    "tangent-hyperbola": "hyperbola matching f, f′ and f″",
}

#: stop reasons that mean f itself failed at a point (raised, NaN or infinity, not a real number).
F_FAILED = frozenset({"function-raised", "nonfinite-value", "bad-value"})


def auto_xlim(points: Sequence[float], *, core: Sequence[float] = (), reach: float = 25.0) -> tuple[float, float]:
    """An x-range showing ``core`` (starts, bracket) and the ``points`` not far from it, padded by 10 %.

    Points farther than ``reach`` core widths from the core's centre are left out (they are
    marked at the edge instead), so one wild step does not squash the picture.

    Examples
    --------
    >>> auto_xlim([1.5, 1.4, 80.0], core=[1.0])
    (0.675, 1.575)
    """
    base = [v for v in core if math.isfinite(v)] or [v for v in points if math.isfinite(v)][:1] or [0.0]
    lo, hi = min(base), max(base)
    if hi == lo:  # one start: half a unit (or half its size) around it
        half = 0.25 * max(1.0, abs(lo))
        lo, hi = lo - half, hi + half
    centre, width = (lo + hi) / 2, hi - lo
    for v in points:
        if math.isfinite(v) and abs(v - centre) <= reach * width:
            lo, hi = min(lo, v), max(hi, v)
    pad = 0.1 * (hi - lo)
    return (round(lo - pad, 12), round(hi + pad, 12))


def _ylim(ys: FloatArray, extra: Sequence[float] = ()) -> tuple[float, float]:
    fin = ys[np.isfinite(ys)]
    if fin.size == 0:
        vals = [v for v in extra if math.isfinite(v)]
        fin = np.array(vals or [-1.0, 1.0])
    lo, hi = float(np.percentile(fin, 2)), float(np.percentile(fin, 98))
    lo, hi = min(lo, 0.0), max(hi, 0.0)
    span = hi - lo or max(1.0, abs(lo))
    for v in extra:
        if math.isfinite(v) and lo - span <= v <= hi + span:
            lo, hi = min(lo, v), max(hi, v)
    pad = 0.08 * (hi - lo or 1.0)
    return lo - pad, hi + pad


@dataclass
class StepDisplay:
    """f near the iterates, with the current step's local model.

    Build it with :meth:`from_session` (the step a :class:`~convdiag.Session`'s cursor is on)
    or :meth:`from_run` (any step of a finished run), then :meth:`plot`.

    Attributes
    ----------
    curve_x, curve_y : f sampled over ``xlim`` (NaN where f failed).
    xlim, ylim : the ranges shown.
    past_x, past_y : the starts and earlier iterates (before the current step).
    index : the current step number (0: only the starts are known).
    model_kind : ``tangent``, ``chord``, ``inverse-parabola``, ``midpoint``, ``tangent-hyperbola`` or "".
    model_x, model_y : the model sampled over ``xlim``.
    anchor_x, anchor_y : the points the model was built from.
    zero_x : where the model meets zero.
    new_x, new_y : the new iterate and f there.
    bracket_before, bracket_after : the bracket before and after the step (bracketing methods).
    title : one line: the step number and what the method did (or where f failed, at the end of a failed run).
    offscreen : a note on iterates outside ``xlim``.
    failure_x, failure_reason : where f failed and why, when the display is at the end of a run that stopped
        because of it (NaN and "" otherwise); drawn as a dotted red line with a label.
    """

    curve_x: FloatArray
    curve_y: FloatArray
    xlim: tuple[float, float]
    ylim: tuple[float, float]
    past_x: FloatArray
    past_y: FloatArray
    index: int = 0
    model_kind: str = ""
    model_x: FloatArray = field(default_factory=lambda: _EMPTY)
    model_y: FloatArray = field(default_factory=lambda: _EMPTY)
    anchor_x: FloatArray = field(default_factory=lambda: _EMPTY)
    anchor_y: FloatArray = field(default_factory=lambda: _EMPTY)
    zero_x: float = math.nan
    new_x: float = math.nan
    new_y: float = math.nan
    bracket_before: tuple[float, float] | None = None
    bracket_after: tuple[float, float] | None = None
    title: str = ""
    label: str = "f"
    offscreen: str = ""
    failure_x: float = math.nan
    failure_reason: str = ""
    ax_: Any = field(default=None, init=False, repr=False)
    figure_: Any = field(default=None, init=False, repr=False)
    lines_: dict[str, Any] = field(default_factory=dict, init=False, repr=False)

    # -- computing -----------------------------------------------------------------
    @classmethod
    def from_session(
        cls, session: Any, *, xlim: tuple[float, float] | None = None, samples: int = 300,
        curve: tuple[FloatArray, FloatArray] | None = None,
    ) -> StepDisplay:
        """The step a session's cursor is on (``session.position``; 0 shows the starts).

        ``curve`` passes an already sampled (x, f(x)) over ``xlim`` to skip sampling again.
        """
        steps = list(session.steps[: session.position])
        failure = session.failure if session.at_end else None
        return cls._build(session.problem.f, session.problem.label, session.method.title, list(session.starts),
                          list(session.start_values), steps, session.bracket, xlim, samples, curve, failure)

    @classmethod
    def from_run(cls, run: Any, step: int | None = None, *, xlim: tuple[float, float] | None = None,
                 samples: int = 300) -> StepDisplay:
        """Step ``step`` (1-based; default the last) of a run; the curve needs ``run.source``.

        The last step of a run that stopped because f failed also shows where f failed.
        """
        n = len(run.steps) if step is None else max(0, min(int(step), len(run.steps)))
        f = run.source.f if run.source is not None else None
        failure = run.failure if n == len(run.steps) else None
        return cls._build(f, run.problem, run.method_title, list(run.starts), list(run.start_values),
                          list(run.steps[:n]), run.bracket, xlim, samples, None, failure)

    @classmethod
    def _build(cls, f: Callable[[Any], Any] | None, label: str, title: str, starts: list[Any], fstarts: list[Any],
               steps: list[Any], bracket: Any, xlim: tuple[float, float] | None, samples: int,
               curve: tuple[FloatArray, FloatArray] | None, failure: Any = None) -> StepDisplay:
        xs0 = [_fl(v) for v in starts]
        known_x = xs0 + [_fl(s.x) for s in steps]
        known_y = [_fl(v) for v in fstarts] + [_fl(s.fx) for s in steps]
        core = xs0 + ([_fl(bracket[0]), _fl(bracket[1])] if bracket is not None else [])
        if failure is not None and failure.reason not in F_FAILED:
            failure = None  # the run ran out of budget or could not step: not a failure of f at a point
        failed = [_fl(failure.x)] if failure is not None and failure.x is not None else []
        lim = xlim if xlim is not None else auto_xlim(known_x + failed, core=core)
        if curve is not None:
            cx, cy = curve
        elif f is not None:
            cx, cy = sample_curve(f, lim[0], lim[1], samples)
        else:
            cx, cy = _EMPTY, _EMPTY
        ylim = _ylim(cy, [known_y[i] for i, x in enumerate(known_x) if lim[0] <= x <= lim[1]])
        cur = steps[-1] if steps else None
        npast = len(known_x) - (1 if cur is not None else 0)
        d = cls(cx, cy, lim, ylim, np.array(known_x[:npast]), np.array(known_y[:npast]), index=len(steps),
                label=label)
        if cur is None:
            d.title = f"{title}: the start{'s' if len(starts) > 1 else ''}. Press Step to take the first step."
            if bracket is not None:
                d.bracket_after = (_fl(bracket[0]), _fl(bracket[1]))
        else:
            d._add_step(cur, title)
        d.offscreen = _offscreen(known_x[: npast + 1], lim, new=cur is not None)
        if cur is not None and d.model_kind == "inverse-parabola":  # two arms with the turn off the plot: say so
            turn = parabola_turn(cur.model.xs, cur.model.ys)
            if math.isfinite(turn) and not lim[0] <= turn <= lim[1]:
                side = "→" if turn > lim[1] else "←"
                d.offscreen = "; ".join(v for v in (d.offscreen, f"the parabola turns back at x = {turn:.4g} {side}") if v)
        if failure is not None:
            d._add_failure(failure, title)
        return d

    def _add_failure(self, failure: Any, title: str) -> None:
        """Where f failed (the run stopped there): the title says so, and the point is marked when it is known."""
        x = _fl(failure.x) if failure.x is not None else math.nan
        where = f"f failed at x = {x:.4g} ({failure.reason})" if math.isfinite(x) else f"f failed ({failure.reason})"
        if self.index == 0:
            self.title = f"{title}: {where} on the first step"
        else:
            self.title = self.title.rstrip(".") + f"; then {where}"
        self.failure_x, self.failure_reason = x, failure.reason
        if math.isfinite(x) and not self.xlim[0] <= x <= self.xlim[1]:
            self.offscreen = "; ".join(v for v in (self.offscreen, f"f failed at x = {x:.6g}, off the plot") if v)

    def _add_step(self, step: Any, title: str) -> None:
        m = step.model
        lo, hi = self.xlim
        self.model_kind = m.kind
        if m.kind == "inverse-parabola":
            mx, my = sideways_parabola(m.xs, m.ys, self.xlim, self.ylim)
        else:
            mx, my = m.curve(lo, hi, 200 if m.kind == "tangent-hyperbola" else 2)
        self.model_x, self.model_y = np.asarray(mx, dtype=float), np.asarray(my, dtype=float)
        anchors = {"tangent": lambda: [(m.x, m.y)], "tangent-hyperbola": lambda: [(m.x, m.y)],
                   "chord": lambda: [(m.xa, m.ya), (m.xb, m.yb)],
                   "inverse-parabola": lambda: list(zip(m.xs, m.ys))}.get(m.kind, list)()
        self.anchor_x = np.array([_fl(a) for a, _ in anchors], dtype=float)
        self.anchor_y = np.array([_fl(b) for _, b in anchors], dtype=float)
        with np.errstate(all="ignore"):
            try:
                self.zero_x = _fl(m.predict())
            except (ZeroDivisionError, ArithmeticError):
                self.zero_x = math.nan
        self.new_x, self.new_y = _fl(step.x), _fl(step.fx)
        if step.bracket_before is not None:
            self.bracket_before = (_fl(step.bracket_before[0]), _fl(step.bracket_before[1]))
        if step.bracket is not None:
            self.bracket_after = (_fl(step.bracket[0]), _fl(step.bracket[1]))
        self.title = f"Step {step.index} of {title}: {step.reason}"

    # -- drawing -------------------------------------------------------------------
    def plot(self, ax: Any = None, *, legend: bool = True) -> StepDisplay:
        """Draw on ``ax`` (a new figure if None); returns self. Artists are kept in ``lines_``.

        ``legend=False`` leaves the legend out (the explorer shows its own, outside the figure).
        """
        from matplotlib.lines import Line2D
        from matplotlib.patches import Rectangle

        if ax is None:
            from matplotlib.figure import Figure

            ax = Figure(figsize=(7.0, 4.0), layout="constrained").add_subplot()
        self.ax_, self.figure_ = ax, ax.figure
        c = COLOURS
        ax.axhline(0.0, color=c["grid"], lw=1.0, zorder=1)
        a: dict[str, Any] = {}
        trans = ax.get_xaxis_transform()
        a["before"] = ax.add_patch(Rectangle((0, 0), 0, 1, transform=trans, color=c["bracket"], alpha=0.10, lw=0))
        a["after"] = ax.add_patch(Rectangle((0, 0), 0, 1, transform=trans, color=c["bracket"], alpha=0.22, lw=0))
        (a["curve"],) = ax.plot([], [], color=c["ink"], lw=1.6, zorder=3)
        (a["model"],) = ax.plot([], [], color=c["model"], lw=1.5, ls=(0, (5, 2)), zorder=4)
        (a["anchors"],) = ax.plot([], [], "o", mfc="white", mec=c["model"], mew=1.5, ms=7, zorder=5)
        (a["past"],) = ax.plot([], [], "o", color=c["past"], ms=4, zorder=5)
        (a["drop"],) = ax.plot([], [], color=c["new"], lw=1.0, ls=":", zorder=4)
        (a["zero"],) = ax.plot([], [], "x", color=c["model"], ms=8, mew=2, zorder=6)
        (a["new"],) = ax.plot([], [], "D", color=c["new"], ms=7, zorder=7)
        a["failure"] = ax.plot([], [], color="#b3261e", ls=":", lw=1.3, zorder=2, transform=trans)[0]
        a["failure_text"] = ax.annotate("", xy=(0.0, 0.97), xycoords=trans, xytext=(5, 0), textcoords="offset points",
                                        fontsize=9, color="#b3261e", va="top", visible=False)
        a["title"] = ax.set_title("", fontsize=9, loc="left", color=c["ink"], y=1.0, pad=4)
        a["note"] = ax.text(0.99, 0.02, "", transform=ax.transAxes, ha="right", va="bottom", fontsize=9,
                            color=c["new"])
        handles = [Line2D([], [], color=c["ink"], lw=1.6), Line2D([], [], color=c["model"], lw=1.5, ls="--"),
                   Line2D([], [], marker="D", color=c["new"], ls=""), Line2D([], [], marker="o", color=c["past"], ls="")]
        a["legend"] = None
        if legend:
            a["legend"] = ax.legend(handles, ["f(x)", "the step's model", "new point", "earlier points"],
                                    fontsize=9, loc="upper center", bbox_to_anchor=(0.5, -0.13), ncol=4,
                                    frameon=False)
        _fixed_labels(ax, "x", 9)
        ax.tick_params(labelsize=9)
        self.lines_ = a
        return self._apply(limits=True)

    def update(self, other: StepDisplay) -> StepDisplay:
        """Move the artists drawn by :meth:`plot` to ``other``'s data; returns self."""
        if self.ax_ is None:
            raise RuntimeError("update() needs a display that was plotted first; call plot() before update().")
        limits = other.xlim != self.xlim or other.ylim != self.ylim
        for name in self.__dataclass_fields__:
            if not name.endswith("_"):
                setattr(self, name, getattr(other, name))
        return self._apply(limits=limits)

    def _apply(self, *, limits: bool) -> StepDisplay:
        a = self.lines_
        a["curve"].set_data(self.curve_x, self.curve_y)
        a["model"].set_data(self.model_x, self.model_y)
        a["anchors"].set_data(self.anchor_x, self.anchor_y)
        a["past"].set_data(self.past_x, self.past_y)
        lo, hi = self.xlim
        ymin, ymax = self.ylim
        nx = min(max(self.new_x, lo), hi) if math.isfinite(self.new_x) else math.nan
        ny = min(max(self.new_y, ymin), ymax) if math.isfinite(self.new_y) else math.nan
        a["new"].set_data([nx], [ny])
        a["new"].set_marker("D" if lo <= self.new_x <= hi else (">" if self.new_x > hi else "<"))
        a["zero"].set_data([self.zero_x], [0.0])
        a["drop"].set_data([self.zero_x, nx], [0.0, ny])
        for key, br in (("before", self.bracket_before), ("after", self.bracket_after)):
            a[key].set_x(br[0] if br else 0.0)
            a[key].set_width(br[1] - br[0] if br else 0.0)
        fx = self.failure_x
        shown = math.isfinite(fx) and lo <= fx <= hi
        a["failure"].set_data([fx, fx] if shown else [], [0.0, 1.0] if shown else [])
        a["failure_text"].set_visible(shown)
        if shown:  # at the top, on the side of the line with more room
            right = fx > lo + 0.6 * (hi - lo)
            a["failure_text"].xy = (fx, 0.97)
            a["failure_text"].set_horizontalalignment("right" if right else "left")
            a["failure_text"].set_position((-5 if right else 5, 0))
            a["failure_text"].set_text(f"f failed at x = {fx:.4g}\n({self.failure_reason})")
        a["title"].set_text(_wrap(self.title, 95))
        a["note"].set_text(self.offscreen)
        if a["legend"] is not None:
            a["legend"].get_texts()[1].set_text(MODEL_NAMES.get(self.model_kind, "the step's model"))
        if limits:
            self.ax_.set_xlim(*self.xlim)
            self.ax_.set_ylim(*self.ylim)
        return self

    @classmethod
    def empty(cls) -> StepDisplay:
        """A display with no data (to plot first and :meth:`update` later)."""
        return cls(_EMPTY, _EMPTY, (0.0, 1.0), (-1.0, 1.0), _EMPTY, _EMPTY)

    def __repr__(self) -> str:
        return f"<StepDisplay {self.label}: step {self.index}, model {self.model_kind or 'none'}>"


def _offscreen(xs: Sequence[float], lim: tuple[float, float], *, new: bool) -> str:
    """A note on the points outside the x-range: the new point first, then how many others."""
    out = [i for i, v in enumerate(xs) if not (math.isfinite(v) and lim[0] <= v <= lim[1])]
    if not out:
        return ""
    parts = []
    if new and out[-1] == len(xs) - 1:
        v = xs[-1]
        side = "→" if v > lim[1] else "←" if v < lim[0] else ""
        parts.append(f"new point x = {v:.6g} is off the plot {side}".rstrip())
        out = out[:-1]
    if out:
        parts.append(f"{len(out)} earlier point{'s' if len(out) > 1 else ''} off the plot")
    return "; ".join(parts)


def _wrap(text: str, width: int) -> str:
    if len(text) <= width:
        return text
    cut = text.rfind(" ", 0, width)
    cut = cut if cut > 0 else width
    return text[:cut] + "\n" + _wrap(text[cut:].lstrip(), width)
