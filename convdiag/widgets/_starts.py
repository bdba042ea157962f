"""Where to start: the bracket view and the basin view, each a door into the explorer.

:class:`BracketView` runs ``find_brackets`` over a domain and draws what it
found (roots, poles, jumps, touches, domain edges) with one button per root
bracket. :class:`BasinView` draws which root each start on a grid reaches
and in how many steps. Clicking a start on either plot (or a bracket's
button) opens it in an :class:`~convdiag.widgets.Explorer`.
"""

from __future__ import annotations

import html
from collections.abc import Mapping, Sequence
from typing import Any

from ..core._methods import METHODS
from ..core._problem import as_problem
from ..errors import ParameterError
from . import _adapters as ad
from ._host import Canvas, FigureHost, Job, error_box, need_widgets

__all__ = ["BasinView", "BracketView"]

def _domain(domain: Any, owner: str) -> tuple[float, float]:
    if not isinstance(domain, (tuple, list)) or len(domain) != 2 or not float(domain[0]) < float(domain[1]):
        raise ParameterError.expected("domain", owner, "a pair (lo, hi) with lo < hi", domain)
    return float(domain[0]), float(domain[1])


class _StartsView:
    """Shared parts: a figure, a job, a message line and the explorer a click opens."""

    title = ""

    def draw(self) -> None:
        raise NotImplementedError

    def __init__(self, f: Any, domain: Any, params: Mapping[str, float] | None, explorer: Any, method: str,
                 canvas: Canvas, background: bool) -> None:
        ipw = need_widgets()
        if method not in METHODS:
            raise ParameterError.expected("method", type(self).__name__, f"one of {', '.join(sorted(METHODS))}",
                                          method)
        self.domain = _domain(domain, type(self).__name__)
        self.f, self.params, self.method = f, dict(params or {}), method
        self.problem = as_problem(f, params=self.params or None)
        self.explorer = explorer
        self.result: Any = None
        self.job = Job(background=background)
        self.host = FigureHost(8.4, 3.4, canvas=canvas)
        self.ax = self.host.figure.add_axes((0.09, 0.15, 0.66, 0.72))
        self.click_axes = [self.ax]
        if self.host.clickable:
            self.host.on_click(self.on_plot_click)
        self.message_line = ipw.HTML()
        self.extra = ipw.VBox()
        self.explorer_box = ipw.VBox()
        hint = "Click the plot to explore from that start." if self.host.clickable else ""
        self.widget = ipw.VBox([
            ipw.HTML(f'<div style="font-size:14px;color:#243447;"><b>{self.title}</b> f(x) = '
                     f'<code>{html.escape(self.problem.label)}</code> on [{self.domain[0]:g}, {self.domain[1]:g}]'
                     f' <span style="color:#6b7785;">{hint}</span></div>'),
            ipw.HBox([self.job.progress, self.job.cancel_button]), self.host.widget, self.message_line,
            self.extra, self.explorer_box])

    def _repr_mimebundle_(self, **kwargs: Any) -> dict[str, Any]:
        bundle: dict[str, Any] = self.widget._repr_mimebundle_(**kwargs)
        bundle["text/plain"] = repr(self)
        return bundle

    def wait(self, timeout: float | None = 60.0) -> bool:
        return self.job.wait(timeout)

    def open(self, *, start: float | list[float] | None = None, bracket: tuple[float, float] | None = None) -> Any:
        """Open a start (or a bracket) in the explorer, creating one below the view if needed."""
        from ._explorer import Explorer

        method = self.method
        if bracket is not None and not METHODS[method].needs_bracket and start is None:
            method = "illinois"
        if self.explorer is None:
            self.explorer = Explorer(self.f, method, start=start if start is not None else self.domain[0],
                                     bracket=bracket, params=self.params or None, canvas=self.host.kind,
                                     background=self.job.background)
            self.explorer_box.children = (self.explorer.widget,)
            return self.explorer
        if bracket is not None:
            if not METHODS[self.explorer.method].needs_bracket:
                self.explorer.bracket = bracket
                self.explorer.set_method(method)
            else:
                self.explorer.set_bracket(*bracket)
        elif start is not None:
            self.explorer.set_start(start)
        return self.explorer

    def on_plot_click(self, event: Any) -> None:
        """A click on the plot opens that start in the explorer."""
        if event.inaxes not in self.click_axes or event.xdata is None or self.host.busy_tool():
            return
        try:
            self.open(start=round(float(event.xdata), 6))
        except Exception as exc:  # noqa: BLE001  (shown, never raised into the kernel)
            self.message_line.value = error_box("Could not open that start:", f"{type(exc).__name__}: {exc}")

    def _start_job(self, compute: Any, busy: str) -> None:
        self.message_line.value = f'<span style="color:#1d5f8a;">{html.escape(busy)}</span>'

        def done(result: Any, error: BaseException | None) -> None:
            if self.job.cancelled.is_set():
                self.message_line.value = error_box("Cancelled:", "nothing was drawn.")
            elif isinstance(error, ad.Unavailable):
                self.message_line.value = (f'<div style="color:#6b7785;">Not available yet: {html.escape(str(error))}.'
                                           "</div>")
            elif error is not None:
                self.message_line.value = error_box("Something went wrong:", f"{type(error).__name__}: {error}")
            else:
                self.message_line.value = ""
                self.result = result
                self.draw()

        self.job.start(lambda job: compute(), done)


class BracketView(_StartsView):
    """Where the roots, poles, jumps and domain edges are over a domain, with a button per root bracket.

    Parameters
    ----------
    f : callable, str or sympy expression
    domain : (lo, hi), the interval searched by ``find_brackets``.
    params : model parameter values.
    explorer : an :class:`Explorer` to open starts in (default: a new one below the view).
    method : the method a new explorer starts with.
    max_evals : the search's evaluation budget.
    """

    title = "Brackets of"

    def __init__(self, f: Any, domain: Sequence[float], *, params: Mapping[str, float] | None = None,
                 explorer: Any = None, method: str = "newton", max_evals: int = 1000, canvas: Canvas = "auto",
                 background: bool = True) -> None:
        super().__init__(f, domain, params, explorer, method, canvas, background)
        self.widget.add_class("cdx-bracket-view")
        self._start_job(lambda: ad.find_brackets(self.f, domain=self.domain, params=self.params or None,
                                                 max_evals=max_evals), "searching for brackets…")

    def __repr__(self) -> str:
        return f"<BracketView {self.problem.label} on {self.domain}>"

    def draw(self) -> None:
        from ..report._brackets_figures import BracketsDisplay

        ipw = need_widgets()
        with self.host.lock:
            self.ax.clear()
            BracketsDisplay.from_search(self.result).plot(self.ax)
        self.host.redraw()
        buttons = []
        for c in self.result.roots:
            start = None if METHODS[self.method].needs_bracket else c.starts.get(self.method)
            b = ipw.Button(description=f"Explore [{c.lo:.6g}, {c.hi:.6g}]", tooltip=c.reason or c.recommend,
                           layout=ipw.Layout(width="auto"))
            b.add_class("cdx-open-bracket")
            if start is not None:
                b.on_click(lambda _b, s=start: self.open(start=list(s) if isinstance(s, tuple) else s))
            else:
                b.on_click(lambda _b, c=c: self.open(bracket=(c.lo, c.hi)))
            buttons.append(b)
        note = "" if buttons else '<span style="color:#6b7785;">No root bracket found on this domain.</span>'
        self.extra.children = (ipw.HTML(note), ipw.HBox(buttons, layout=ipw.Layout(flex_flow="row wrap")))


class BasinView(_StartsView):
    """Which root each start on a grid reaches, and what it cost; a click opens that start.

    Parameters
    ----------
    f : callable, str or sympy expression (taking numpy arrays: the starts run side by side).
    method : the open method whose basins are mapped (newton, secant, steffensen or halley).
    domain : (lo, hi), the starts.
    n : number of starts.
    params, explorer, max_evals, canvas, background : as for :class:`BracketView`.
    """

    title = "Basins of"

    def __init__(self, f: Any, method: str = "newton", *, domain: Sequence[float], n: int = 401,
                 params: Mapping[str, float] | None = None, explorer: Any = None, max_evals: int = 100,
                 canvas: Canvas = "auto", background: bool = True) -> None:
        super().__init__(f, domain, params, explorer, method, canvas, background)
        self.widget.add_class("cdx-basin-view")
        fig = self.host.figure
        self.ax.set_position((0.09, 0.62, 0.66, 0.25))
        self.ax_evals = fig.add_axes((0.09, 0.15, 0.66, 0.34), sharex=self.ax)
        self.click_axes.append(self.ax_evals)
        self._start_job(lambda: ad.basin_map(self.f, method, domain=self.domain, n=int(n),
                                             params=self.params or None, max_evals=max_evals),
                        "mapping the basins…")

    def __repr__(self) -> str:
        return f"<BasinView {self.method} on {self.problem.label}>"

    def draw(self) -> None:
        from ..report._basin_figures import BasinDisplay, EvaluationsDisplay

        with self.host.lock:
            for ax in (self.ax, self.ax_evals):
                ax.clear()
            BasinDisplay.from_basin(self.result).plot(self.ax)
            EvaluationsDisplay.from_basin(self.result).plot(self.ax_evals)
            self.ax.set_title("")
            self.ax.set_title(f"{METHODS[self.method].title}: which root each start reaches (colour); "
                              "below, the evaluations it took", fontsize=9.5, loc="left")
            self.ax_evals.set_title("")
            self.ax.set_xlim(*self.domain)
            for ax in (self.ax, self.ax_evals):
                ax.tick_params(labelsize=8)
                ax.xaxis.label.set_fontsize(9)
                ax.yaxis.label.set_fontsize(9)
        self.host.redraw()
