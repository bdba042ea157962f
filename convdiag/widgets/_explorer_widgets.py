"""The explorer's widgets: building them, keeping them in step with the state, and their callbacks.

:class:`ExplorerWidgets` is a mixin of :class:`~convdiag.widgets.Explorer`: it builds the controls,
the figure and the panels, puts the explorer's state into the controls (without firing their
callbacks) and turns control events (a new method, a typed start, a slider, a click on the plot)
into the explorer's actions (``set_method``, ``set_start``, ``set_bracket``, ``set_param``).
"""

from __future__ import annotations

import functools
import html
import math
from collections.abc import Callable, Sequence
from typing import Any, TypeVar

from ..core._methods import METHODS
from ..errors import ConvdiagError
from ..report._step_figures import ProgressDisplay, StepDisplay, sample_curve
from ._controls import ParamSpec, method_options, param_slider
from ._host import Canvas, FigureHost, Job, error_box

__all__ = ["AXES_F", "ExplorerWidgets", "guarded"]

F = TypeVar("F", bound=Callable[..., Any])
#: where the function plot sits in the figure (left, bottom, width, height as fractions).
AXES_F = (0.06, 0.12, 0.56, 0.78)


def guarded(fn: F) -> F:
    """Run a handler; show any error in the explorer's message line instead of raising it."""

    @functools.wraps(fn)
    def wrapper(self: Any, *args: Any, **kwargs: Any) -> Any:
        try:
            return fn(self, *args, **kwargs)
        except Exception as exc:  # noqa: BLE001  (the kernel and the widget carry on; the history is kept)
            self.show_error("Could not do that:" if isinstance(exc, ConvdiagError) else "Something went wrong:",
                            f"{type(exc).__name__ + ': ' if not isinstance(exc, ConvdiagError) else ''}{exc}")
            return None

    return wrapper  # type: ignore[return-value]


def _set_range(slider: Any, lo: float, hi: float) -> None:
    """Set a slider's range in an order that never has min > max on the way."""
    if lo >= slider.max:
        slider.max, slider.min = hi, lo
    else:
        slider.min, slider.max = lo, hi
    slider.step = (hi - lo) / 1000


def _nice(x: float, width: float) -> float:
    digits = max(0, 3 - math.floor(math.log10(width))) if width > 0 else 6
    return round(float(x), digits)


class ExplorerWidgets:
    """Widgets and control callbacks of the explorer (see :class:`~convdiag.widgets.Explorer`)."""

    # state the explorer keeps (set in Explorer.__init__)
    problem: Any
    method: str
    starts: list[float]
    bracket: tuple[float, float] | None
    specs: list[ParamSpec]
    values: dict[str, float]
    samples: int
    job: Job
    host: FigureHost
    message: str
    _view: tuple[float, float] | None
    _fixed_view: tuple[float, float] | None
    _curve: Any
    _zoomed: bool
    _quiet: bool

    # actions the explorer provides
    def set_method(self, name: str) -> None:
        raise NotImplementedError

    def set_start(self, x: float | Sequence[float]) -> None:
        raise NotImplementedError

    def set_bracket(self, a: float, b: float) -> None:
        raise NotImplementedError

    def set_param(self, name: str, value: float) -> None:
        raise NotImplementedError

    def step(self) -> None:
        raise NotImplementedError

    def back(self) -> None:
        raise NotImplementedError

    def reset(self) -> None:
        raise NotImplementedError

    def run_to_end(self) -> None:
        raise NotImplementedError

    def found_bracket(self, x0: float) -> tuple[float, float] | None:
        raise NotImplementedError

    def try_remedy(self) -> None:
        raise NotImplementedError

    # -- widgets -------------------------------------------------------------------------
    def _build_widgets(self, ipw: Any, canvas: Canvas) -> None:
        doc = (getattr(self.problem.raw, "__doc__", None) or "").strip().splitlines()
        about = f' <span style="color:#6b7785;">— {html.escape(doc[0])}</span>' if doc else ""
        self.header = ipw.HTML(f'<div style="font-size:14px;color:#243447;"><b>Stepping through</b> '
                               f"f(x) = <code>{html.escape(self.problem.label)}</code>{about}</div>")
        self.method_picker = ipw.Dropdown(options=method_options(), value=self.method, description="Method",
                                          layout=ipw.Layout(width="380px"))
        self.start_field = ipw.FloatText(value=self.starts[0], description="Start x₀",
                                         layout=ipw.Layout(width="190px"))
        self.start_slider = ipw.FloatSlider(value=0.0, min=-1.0, max=1.0, step=0.001, readout=False,
                                            continuous_update=False, layout=ipw.Layout(width="260px"))
        self.a_field = ipw.FloatText(value=0.0, description="Bracket a", layout=ipw.Layout(width="190px"))
        self.b_field = ipw.FloatText(value=1.0, description="b", layout=ipw.Layout(width="150px"),
                                     style={"description_width": "20px"})
        self.bracket_slider = ipw.FloatRangeSlider(value=(0.0, 1.0), min=-1.0, max=2.0, step=0.001,
                                                   readout=False, continuous_update=False,
                                                   layout=ipw.Layout(width="260px"))
        for w, cls in ((self.method_picker, "cdx-method"), (self.start_field, "cdx-start"),
                       (self.start_slider, "cdx-start-slider"), (self.a_field, "cdx-a"), (self.b_field, "cdx-b")):
            w.add_class(cls)
        self.start_box = ipw.HBox([self.start_field, self.start_slider])
        self.bracket_box = ipw.HBox([self.a_field, self.b_field, self.bracket_slider])
        self.param_controls = {s.name: param_slider(s) for s in self.specs}
        self.back_button = ipw.Button(description="Back", icon="step-backward", tooltip="One step back")
        self.step_button = ipw.Button(description="Step", icon="step-forward", button_style="primary",
                                      tooltip="Take one step (or show the next one already computed)")
        self.run_button = ipw.Button(description="Run to end", icon="fast-forward",
                                     tooltip="Step until the method stops or the budget runs out")
        self.reset_button = ipw.Button(description="Start over", icon="undo", tooltip="Back to the start")
        for b, cls in ((self.back_button, "cdx-back"), (self.step_button, "cdx-step"),
                       (self.run_button, "cdx-run"), (self.reset_button, "cdx-reset")):
            b.add_class(cls)
            b.layout.width = "118px"
        self.hint = ipw.HTML("", layout=ipw.Layout(margin="0 0 0 12px", width="auto"))
        self.host = FigureHost(9.6, 3.9, canvas=canvas)
        fig = self.host.figure
        self.ax_f = fig.add_axes(AXES_F)
        ax_it = fig.add_axes((0.70, 0.60, 0.285, 0.30))
        ax_ev = fig.add_axes((0.70, 0.12, 0.285, 0.30))
        self.step_display = StepDisplay.empty().plot(self.ax_f, legend=False)
        self.progress_display = ProgressDisplay.empty().plot(ax_it, ax_evals=ax_ev, legend=False)
        self.legend = ipw.HTML()
        self.legend.add_class("cdx-legend")
        self.ax_f.callbacks.connect("xlim_changed", self._on_zoom)
        dynamic = [v for k, v in self.step_display.lines_.items() if k != "legend" and v is not None]
        dynamic += [v for k, v in self.progress_display.lines_.items() if k not in ("legend", "ax_evals") and v is not None]
        self.host.set_dynamic(dynamic)
        if self.host.clickable:
            self.host.on_click(self.on_plot_click)
        self.table = ipw.HTML(layout=ipw.Layout(overflow="auto"))
        self.table.add_class("cdx-table-box")
        self.status = ipw.HTML(layout=ipw.Layout(margin="2px 0 6px 0"))
        self.status.add_class("cdx-status")
        self.message_line = ipw.HTML()
        self.message_line.add_class("cdx-message")
        self.method_picker.observe(self._on_method, names="value")
        self.start_field.observe(self._on_start_field, names="value")
        self.start_slider.observe(self._on_start_field, names="value")
        self.a_field.observe(self._on_bracket_field, names="value")
        self.b_field.observe(self._on_bracket_field, names="value")
        self.bracket_slider.observe(self._on_bracket_field, names="value")
        for name, w in self.param_controls.items():
            w.observe(functools.partial(self._on_param, name), names="value")
        self.back_button.on_click(lambda _b: self.back())
        self.step_button.on_click(lambda _b: self.step())
        self.run_button.on_click(lambda _b: self.run_to_end())
        self.reset_button.on_click(lambda _b: self.reset())
        rows = [self.header, ipw.HBox([self.method_picker, self.start_box, self.bracket_box])]
        if self.param_controls:
            label = ipw.HTML('<span style="color:#6b7785;">Model parameters (changing one runs the method '
                             "again):</span>")
            rows += [label, ipw.HBox(list(self.param_controls.values()), layout=ipw.Layout(flex_flow="row wrap"))]
        rows += [ipw.HBox([self.back_button, self.step_button, self.run_button, self.reset_button,
                           self.job.progress, self.job.cancel_button, self.hint],
                          layout=ipw.Layout(align_items="center")),
                 self.host.widget, self.legend, self.message_line, self.status]
        self.remedy_button = ipw.Button(description="Try the fix", icon="wrench", button_style="success",
                                        layout=ipw.Layout(width="auto", display="none"))
        self.remedy_button.add_class("cdx-remedy")
        self.remedy_button.on_click(lambda _b: self.try_remedy())
        rows += [self.remedy_button, self.table]
        self.view_buttons: dict[str, Any] = {}
        for kind, text, tip in (("compare", "Compare methods", "Several methods from this start, at equal work"),
                                ("brackets", "Brackets in view", "Where f has roots, poles and jumps in the plotted range"),
                                ("basins", "Basins in view", "Which root each start in the plotted range reaches")):
            b = ipw.Button(description=text, tooltip=tip, layout=ipw.Layout(width="auto"))
            b.add_class(f"cdx-open-{kind}")
            b.on_click(functools.partial(lambda kind, _b: self.open_view(kind), kind))
            self.view_buttons[kind] = b
        self.views_box = ipw.VBox()
        self.views: dict[str, Any] = {}
        rows += [ipw.HBox([ipw.HTML('<span style="color:#6b7785;">Other views of this function:</span>'),
                           *self.view_buttons.values()], layout=ipw.Layout(align_items="center", margin="6px 0 0 0")),
                 self.views_box]
        self.widget = ipw.VBox(rows, layout=ipw.Layout(width="100%", max_width="1000px"))
        self.widget.add_class("cdx-explorer")

    @guarded
    def open_view(self, kind: str) -> Any:
        """Open the compare, bracket or basin view of this function below the explorer.

        The views share the explorer's function, parameters and plotted range; a start picked in
        the bracket or basin view comes back to this explorer.
        """
        from ._compare import CompareView
        from ._starts import BasinView, BracketView

        lo, hi = self._view or (self.starts[0] - 1.0, self.starts[0] + 1.0)
        # the user's own function (or expression text) and parameter values, so labels stay theirs
        f = self.problem.raw if self.problem.raw is not None else self.problem.label
        common: dict[str, Any] = {"canvas": self.host.kind, "background": self.job.background,
                                  "params": dict(self.values) or None}
        view: Any
        if kind == "compare":
            methods = list(dict.fromkeys([self.method, "newton", "secant", "illinois", "bisection"]))
            bracket = self.bracket or self.found_bracket(self.starts[0])
            view = CompareView(f, methods, start=self.starts[0], bracket=bracket, **common)
        elif kind == "brackets":
            view = BracketView(f, (lo, hi), explorer=self, method=self.method, **common)
        elif kind == "basins":
            method = self.method if self.method in ("newton", "secant", "steffensen", "halley") else "newton"
            view = BasinView(f, method, domain=(lo, hi), explorer=self, **common)
        else:
            raise ValueError(f"open_view takes 'compare', 'brackets' or 'basins'. Got {kind!r} instead.")
        self.views[kind] = view
        self.views_box.children = (view.widget,)
        return view

    # -- messages and progress -----------------------------------------------------------
    def show_error(self, title: str, text: str) -> None:
        """Show a problem in the explorer's message line (and keep everything else)."""
        self.message = f"{title} {text}"
        self.message_line.value = error_box(title, text)

    def _clear_message(self) -> None:
        self.message = ""
        self.message_line.value = ""

    def _on_progress(self, text: str) -> None:
        self.hint.value = f'<span style="color:#1d5f8a;white-space:nowrap;">{html.escape(text)}</span>'

    # -- control callbacks ---------------------------------------------------------------
    def _on_method(self, change: Any) -> None:
        if not self._quiet:
            self.set_method(change["new"])

    def _on_start_field(self, change: Any) -> None:
        if not self._quiet:
            self.set_start(float(change["new"]))

    def _on_bracket_field(self, change: Any) -> None:
        if self._quiet:
            return
        if change["owner"] is self.bracket_slider:
            self.set_bracket(*change["new"])
        else:
            self.set_bracket(self.a_field.value, self.b_field.value)

    def _on_param(self, name: str, change: Any) -> None:
        if not self._quiet:
            self.set_param(name, change["new"])

    def _on_zoom(self, ax: Any) -> None:
        if self._quiet:
            return
        lo, hi = ax.get_xlim()
        self._view, self._zoomed = (float(lo), float(hi)), True
        self._curve = (lo, hi, sample_curve(self.problem.f, lo, hi, self.samples))
        self.step_display.xlim = (float(lo), float(hi))
        self.step_display.lines_["curve"].set_data(*self._curve[2])

    def _sync_controls(self) -> None:
        """Put the state into the controls without triggering their callbacks."""
        self._quiet = True
        try:
            needs_bracket = METHODS[self.method].needs_bracket
            self.method_picker.value = self.method
            self.start_box.layout.display = "none" if needs_bracket else ""
            self.bracket_box.layout.display = "" if needs_bracket else "none"
            lo, hi = self._view or self._fixed_view or (self.starts[0] - 1.0, self.starts[0] + 1.0)
            x0 = self.starts[0]
            _set_range(self.start_slider, min(lo, x0), max(hi, x0))
            self.start_field.value = x0
            self.start_slider.value = x0
            if self.bracket is not None:
                a, b = self.bracket
                self.a_field.value, self.b_field.value = a, b
                _set_range(self.bracket_slider, min(lo, a), max(hi, b))
                self.bracket_slider.value = (a, b)
            for name, w in self.param_controls.items():
                w.value = self.values[name]
        finally:
            self._quiet = False

    def _tip(self) -> None:
        if self.host.clickable:
            what = "a bracket end" if METHODS[self.method].needs_bracket else "the start"
            self.hint.value = f'<span style="color:#6b7785;white-space:nowrap;">Tip: click the plot to move {what} there.</span>'
        else:
            self.hint.value = ""

    @guarded
    def on_plot_click(self, event: Any) -> None:
        """A click on the function plot starts the method there (moves the nearer bracket end)."""
        if event.inaxes is not self.ax_f or event.xdata is None or int(getattr(event, "button", 1)) != 1:
            return
        if self.host.busy_tool():
            return
        lo, hi = self.ax_f.get_xlim()
        x = _nice(event.xdata, hi - lo)
        if METHODS[self.method].needs_bracket and self.bracket is not None:
            a, b = self.bracket
            self.set_bracket(x, b) if abs(x - a) <= abs(x - b) else self.set_bracket(a, x)
        else:
            self.set_start(x)
