"""The compare view: several methods on the same function and start, at equal work.

The view calls ``convdiag.compare_methods``: every method runs from the same start (bracketing
methods from the same bracket) and is measured against one common root. The figure is the
order module's equal-work display (error against function evaluations, the cost an engineer
pays); the table gives each method's stop reason, the evaluations it needed to reach the
tolerance, and its observed order and efficiency (Ostrowski's index p^(1/d)) beside the
theoretical ones.
"""

from __future__ import annotations

import html
import math
from collections.abc import Mapping, Sequence
from typing import Any

from ..core._methods import METHODS
from ..core._problem import as_problem
from ..errors import ParameterError
from ..report._text import fmt
from . import _adapters as ad
from ._controls import method_options
from ._host import Canvas, FigureHost, Job, error_box, need_widgets

__all__ = ["CompareView", "compare_table"]

_TD = "padding:1px 6px;border-bottom:1px solid #e3e8ec;text-align:right;white-space:nowrap;"
# headers may wrap (the numbers below them do not), so the table fits the view's width
_TH = ("padding:2px 6px;border-bottom:2px solid #9fb0bf;text-align:right;background:#f3f6f8;vertical-align:bottom;"
       "line-height:1.2;")


def _order(est: Any) -> tuple[str, str]:
    if not est.converged_estimate:
        return html.escape(est.label), ""
    text = f"{est.value:.3g} (superlinear)" if est.label == "superlinear" else est.label_text
    eff = fmt(est.efficiency, 3) if est.efficiency is not None and est.rate is None else ""
    return html.escape(text), eff


def compare_table(comparison: Any, colours: Mapping[str, str]) -> str:
    """One row per method: how it stopped, the work to reach the tolerance, observed and theoretical order."""
    tol = comparison.tol
    heads = ["method", "stopped", "evals to error ≤", "evals in all", "order seen", "efficiency seen",
             "order in theory", "efficiency in theory"]
    best = comparison.fastest()
    out = []
    for r in comparison.results:
        cls = METHODS[r.method]
        name = (f'<span style="color:{colours.get(r.method, "#243447")};font-weight:600;">■ '
                f"{html.escape(cls.title)}</span>")
        ok = r.run.converged
        stopped = f'<span style="color:{"#1d7a46" if ok else "#b3261e"};">{html.escape(r.run.stop_reason)}</span>'
        to_tol = "never" if r.evals_to_tol is None else str(r.evals_to_tol)
        if best is not None and r is best:
            to_tol = f"<b>{to_tol}</b> (fewest)"
        order, eff = _order(r.estimate)
        cells = [name, stopped, to_tol, str(r.run.evaluations), order, eff, fmt(cls.nominal_order, 4),
                 fmt(cls.efficiency_index(), 4)]
        out.append("<tr>" + "".join(f'<td style="{_TD}{"text-align:left;" if j == 0 else ""}">{c}</td>'
                                    for j, c in enumerate(cells)) + "</tr>")
    tol_text = f' <span style="white-space:nowrap;">{html.escape(f"{tol:g}")}</span>'  # "1e-10" in one piece
    head = "".join(f'<th style="{_TH}{"text-align:left;" if i == 0 else ""}">{html.escape(h)}'
                   f'{tol_text if i == 2 else ""}</th>' for i, h in enumerate(heads))
    lines = [html.escape(n) for n in comparison.notes]
    if comparison.reference != "best iterate":  # the notes already say which best iterate
        ref = comparison.reference + ("" if comparison.root is None else f" {fmt(comparison.root, 15)}")
        lines.insert(0, f"Errors are measured against the {html.escape(ref)}.")
    note = "".join(f"<div>{line}</div>" for line in lines)
    return (f'<div style="max-width:100%;overflow-x:auto;"><table class="cdx-compare-table" '
            f'style="border-collapse:collapse;font-size:12px;"><thead><tr>{head}</tr></thead>'
            f"<tbody>{''.join(out)}</tbody></table></div>"
            f'<div style="color:#6b7785;font-size:12px;margin-top:3px;max-width:100%;">{note}</div>')


class CompareView:
    """Several methods on one function and start, error against function evaluations.

    Parameters
    ----------
    f : callable, str or sympy expression
    methods : method names to compare (default: Newton, secant, IQI, Illinois, bisection).
    start : the start of the open methods.
    bracket : (a, b), the bracket of the bracketing methods (they are left out without one).
    params : model parameter values passed to f.
    max_evals : the evaluation budget of each run.
    tol : the error at which a method counts as done (the table's "evaluations to error ≤ tol").
    canvas, background : as for :class:`~convdiag.widgets.Explorer`.

    Examples
    --------
    >>> view = CompareView("x**2 - 2", ["newton", "secant"], start=1.0, canvas="image", background=False)
    >>> [r.run.converged for r in view.comparison.results]
    [True, True]
    """

    def __init__(
        self, f: Any, methods: Sequence[str] = ("newton", "secant", "iqi", "illinois", "bisection"), *,
        start: float = 1.0, bracket: Sequence[float] | None = None, params: Mapping[str, float] | None = None,
        max_evals: int = 100, tol: float = 1e-10, canvas: Canvas = "auto", background: bool = True,
    ) -> None:
        ipw = need_widgets()
        for m in methods:
            if m not in METHODS:
                raise ParameterError.expected("methods", "CompareView", f"names from {', '.join(sorted(METHODS))}", m)
        self.problem = as_problem(f, params=dict(params) if params else None)
        self.f, self.params = f, dict(params or {})
        self.start = float(start)
        self.bracket = None if bracket is None else (float(bracket[0]), float(bracket[1]))
        self.max_evals, self.tol = int(max_evals), float(tol)
        self.comparison: Any = None
        self.job = Job(background=background)
        hints = {n: lbl for lbl, n in method_options()}
        order = list(dict.fromkeys([*methods, *(n for _, n in method_options())]))
        self.pickers = {n: ipw.Checkbox(value=n in methods, description=METHODS[n].title[:1].upper() +
                                        METHODS[n].title[1:], indent=False, tooltip=hints[n],
                                        layout=ipw.Layout(width="auto", margin="0 14px 0 0")) for n in order}
        self.start_field = ipw.FloatText(value=self.start, description="Start x₀", layout=ipw.Layout(width="190px"))
        self.a_field = ipw.FloatText(value=self.bracket[0] if self.bracket else math.nan, description="Bracket a",
                                     layout=ipw.Layout(width="190px"))
        self.b_field = ipw.FloatText(value=self.bracket[1] if self.bracket else math.nan, description="b",
                                     layout=ipw.Layout(width="150px"), style={"description_width": "20px"})
        self.compare_button = ipw.Button(description="Compare", icon="play", button_style="primary")
        self.compare_button.add_class("cdx-compare")
        self.compare_button.on_click(lambda _b: self.compare())
        self.host = FigureHost(9.6, 3.8, canvas=canvas)
        self.ax = self.host.figure.add_axes((0.07, 0.14, 0.5, 0.76))
        self.table = ipw.HTML()
        self.message_line = ipw.HTML()
        self.widget = ipw.VBox([
            ipw.HTML(f'<div style="font-size:14px;color:#243447;"><b>Comparing methods at equal work</b> on '
                     f"f(x) = <code>{html.escape(self.problem.label)}</code></div>"),
            ipw.HBox(list(self.pickers.values()), layout=ipw.Layout(flex_flow="row wrap")),
            ipw.HBox([self.start_field, self.a_field, self.b_field, self.compare_button, self.job.progress,
                      self.job.cancel_button]),
            self.host.widget, self.message_line, self.table])
        self.widget.add_class("cdx-compare-view")
        self.compare()

    def _repr_mimebundle_(self, **kwargs: Any) -> dict[str, Any]:
        bundle: dict[str, Any] = self.widget._repr_mimebundle_(**kwargs)
        bundle["text/plain"] = repr(self)
        return bundle

    def __repr__(self) -> str:
        return f"<CompareView {', '.join(self.methods)} on {self.problem.label}>"

    def wait(self, timeout: float | None = 30.0) -> bool:
        return self.job.wait(timeout)

    @property
    def methods(self) -> list[str]:
        """The methods ticked in the view."""
        return [n for n, box in self.pickers.items() if box.value]

    def compare(self) -> None:
        """Run the ticked methods (in the background) and redraw; Cancel discards the result."""
        if self.job.running:
            return
        self.message_line.value = ""
        self.start = float(self.start_field.value)
        a, b = float(self.a_field.value), float(self.b_field.value)
        self.bracket = (min(a, b), max(a, b)) if math.isfinite(a) and math.isfinite(b) and a != b else None
        names = [n for n in self.methods if self.bracket is not None or not METHODS[n].needs_bracket]
        left_out = [n for n in self.methods if n not in names]
        if left_out:
            self.message_line.value = error_box("Left out:", f"{', '.join(left_out)} need a bracket a, b.")
        if not names:
            return
        self.compare_button.disabled = True

        def work(job: Job) -> Any:
            job.report(0.5, f"running {len(names)} methods", force=True)
            return ad.compare(self.f, names, start=self.start, bracket=self.bracket, params=self.params or None,
                              max_evals=self.max_evals, tol=self.tol)

        def done(result: Any, error: BaseException | None) -> None:
            self.compare_button.disabled = False
            if self.job.cancelled.is_set():
                self.message_line.value = error_box("Cancelled:", "the comparison was discarded.")
            elif isinstance(error, ad.Unavailable):
                self.message_line.value = f'<div style="color:#6b7785;">Not available yet: {html.escape(str(error))}.</div>'
            elif error is not None:
                self.message_line.value = error_box("Could not compare:", f"{error}")
            else:
                self.comparison = result
                self.draw()

        self.job.start(work, done)

    def draw(self) -> None:
        """Redraw the figure (the equal-work display) and the table from ``comparison``."""
        from ..report._order_figures import EqualWorkDisplay

        with self.host.lock:
            self.ax.clear()
            disp = EqualWorkDisplay.from_comparison(self.comparison).plot(self.ax)
            self.ax.set_title("Error against work: the lower line at a given cost wins", fontsize=9.5, loc="left")
            self.ax.legend(fontsize=8, loc="upper left", bbox_to_anchor=(1.01, 1.0), frameon=False)
            self.ax.tick_params(labelsize=8)
            self.ax.xaxis.label.set_fontsize(9)
            self.ax.yaxis.label.set_fontsize(9)
        from matplotlib.colors import to_hex

        colours = {n: to_hex(ln.get_color()) for n, ln in disp.lines_.items() if n != "tol"}
        self.host.redraw()
        self.table.value = compare_table(self.comparison, colours)
