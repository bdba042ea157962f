"""How each kind of result is documented in a report: its sections, figures and summary row."""

from __future__ import annotations

import html
import inspect
import math
from dataclasses import dataclass
from typing import Any

from ..errors import ParameterError
from ._document import Figure, Section, md_table, render_png
from ._text import fmt, html_table, tolerance_rule

__all__ = ["ItemDoc", "document_item"]

_EMPTY_SUMMARY = ("", "", "", "", "", "", "")


@dataclass(frozen=True)
class ItemDoc:
    """The sections of one documented result and its row in the report's summary."""

    sections: tuple[Section, ...]
    summary: tuple[str, ...]


# -- runs ------------------------------------------------------------------------------
def _source_of(run: Any) -> str:
    problem = getattr(run, "source", None)
    if problem is None or getattr(problem, "expression", None) is not None:
        return ""
    raw = getattr(problem, "raw", None)
    try:
        text = inspect.getsource(raw) if raw is not None else ""
    except (OSError, TypeError):
        return ""
    lines = text.splitlines()
    if len(lines) > 40:
        lines = lines[:40] + ["    ...  (truncated)"]
    return "\n".join(lines)


def _settings_rows(run: Any) -> list[list[str]]:
    s = run.settings
    rows = [
        ["function", str(run.problem)],
        ["method", f"{run.method_title} ({run.method})"],
        ["starts", ", ".join(fmt(v, 17) for v in run.starts)],
    ]
    if run.bracket is not None:
        rows.append(["bracket", f"[{fmt(run.bracket[0], 17)}, {fmt(run.bracket[1], 17)}]"])
    if run.params:
        rows.append(["parameters", ", ".join(f"{k} = {v:g}" for k, v in run.params.items())])
    rows += [
        ["stopping rule", tolerance_rule(run)],
        ["budgets", f"{s.max_evals} evaluations" + (f", {s.max_time:g} s" if s.max_time else "")],
    ]
    if run.derivative_source:
        rows.append(["derivative", run.derivative_source])
    if run.arithmetic != "real":
        rows.append(["arithmetic", f"{run.arithmetic}" + (f" ({run.digits} digits)" if run.digits else "")])
    rows.append(["stopped", f"{run.stop_reason}: {run.message}"])
    return rows


def _draw_run_step(run: Any, ax: Any, period: int = 1) -> None:
    """The last step with its model, the ``period - 1`` steps before it faintly (a cycle shows whole),
    and a failed evaluation marked where it happened."""
    from ._step_figures import StepDisplay, auto_xlim

    failure = run.failure
    fx = failure.x if failure is not None and failure.x is not None and math.isfinite(failure.x) else None
    known = [float(v) for v in run.iterates if math.isfinite(v)]
    xlim = None
    if fx is not None:
        xlim = auto_xlim(known + [fx], core=known + [fx])
    d = StepDisplay.from_run(run, xlim=xlim, samples=160)
    last = run.steps[-1] if run.steps else None
    if last is None:
        d.title = f"{run.method_title}: the start{'s' if len(run.starts) > 1 else ''}"
    else:
        d.title = f"Step {last.index} of {run.method_title} ({last.model.kind} model)"
    d.plot(ax)
    lo, hi = d.xlim
    for step in run.steps[-period:-1] if period > 1 else ():
        xs, ys = step.model.curve(lo, hi, 120)
        ax.plot(xs, ys, color="#d9822b", lw=1.0, ls=(0, (4, 3)), alpha=0.45, zorder=3)
    if fx is not None:
        ax.axvline(fx, color="#b3261e", ls=":", lw=1.3, zorder=2)
        ax.annotate(
            f"f failed at x = {fx:.4g}\n({failure.reason})",
            xy=(fx, 0.0),
            xytext=(6, 10),
            textcoords="offset points",
            fontsize=8,
            color="#b3261e",
        )


def _cycle_period(diagnosis: Any) -> int:
    finding = diagnosis.finding("cycle") if diagnosis is not None else None
    if finding is None:
        return 1
    try:
        return int(finding.value("period"))
    except (TypeError, ValueError, KeyError, AttributeError):
        return 1


def _pre_md(text: str) -> str:
    return "```text\n" + text.rstrip() + "\n```"


def _run_summary(run: Any, diagnosis: Any) -> tuple[str, ...]:
    outcome = "converged" if run.converged else f"stopped: {run.stop_reason}"
    verdict = diagnosis.verdict if diagnosis is not None else ""
    change = ""
    if diagnosis is not None and diagnosis.remedy is not None:
        change = diagnosis.remedy.describe()
    elif diagnosis is not None and diagnosis.verdict != "converged":
        change = diagnosis.primary.advice
    elif diagnosis is not None:
        change = "nothing"
    return (str(run.problem), run.method, outcome, verdict, fmt(run.root, 12), str(run.evaluations), change)


def _run_doc(run: Any, index: int, numbered: bool, diagnosis: Any = None) -> ItemDoc:
    from ..core._order import estimate_order
    from ._order_text import order_html, order_text
    from ._progress_figures import ProgressDisplay
    from ._text import run_html, run_rows

    name = f"item{index}"
    estimate = estimate_order(run)
    if diagnosis is None:
        diagnosis = _diagnose(run, estimate)
    head = f"{index + 1}. " if numbered else ""
    sections = [Section(f"{head}{run.method_title} on {run.problem}", "", "", level=2)]

    rows = _settings_rows(run)
    md, page = md_table(["setting", "value"], rows), html_table(["setting", "value"], rows, "ll")
    source = _source_of(run)
    if source:
        md += f"\n\nThe function's source:\n\n```python\n{source}\n```"
        page += f'<pre style="background:#f4f6f8;padding:8px;font-size:12px;">{html.escape(source)}</pre>'
    sections.append(Section("Setup", md, page, level=3))

    if diagnosis is not None:
        sections.append(Section("Diagnosis", _pre_md(diagnosis.to_text()), diagnosis.to_html(), level=3))

    figures: list[Figure] = []
    if run.source is not None:
        period = _cycle_period(diagnosis)

        def draw_step(fig: Any) -> None:
            _draw_run_step(run, fig.add_subplot(1, 1, 1), period)

        caption = "f near the iterates, with the last step's local model"
        if period > 1:
            caption += f" and the {period - 1} step(s) before it (one full cycle)"
        figures.append(Figure(f"{name}-function", render_png(draw_step), caption + "."))
    headers, table_rows, _ = run_rows(run)
    sections.append(Section("Iterates", md_table(headers, table_rows), run_html(run), tuple(figures), level=3))

    def draw_progress(fig: Any) -> None:
        ax1, ax2 = fig.subplots(1, 2)
        ProgressDisplay.from_run(run, estimate).plot(ax1, ax2)

    progress = Figure(
        f"{name}-progress",
        render_png(draw_progress, size=(9.0, 3.4)),
        "Step size, |f| and error on a log scale against iteration (left) and function evaluations (right).",
    )
    sections.append(
        Section("Observed order of convergence", _pre_md(order_text(estimate)), order_html(estimate), (progress,), level=3)
    )
    return ItemDoc(tuple(sections), _run_summary(run, diagnosis))


def _diagnose(run: Any, estimate: Any = None) -> Any:
    from ..core._diagnose import diagnose

    return diagnose(run, order=estimate)  # the diagnosis shows the same order estimate as the report's order part


# -- everything else -------------------------------------------------------------------
def _generic(item: Any, heading: str, summary: tuple[str, ...], figure: Figure | None = None) -> ItemDoc:
    section = Section(heading, _pre_md(item.to_text()), item.to_html(), (figure,) if figure is not None else ())
    return ItemDoc((section,), summary)


def document_item(item: Any, index: int, *, numbered: bool = False) -> ItemDoc:
    """Sections and summary row for one result passed to :func:`make_report`."""
    kind = type(item).__name__
    name = f"item{index}"
    head = f"{index + 1}. " if numbered else ""
    if kind == "Run":
        return _run_doc(item, index, numbered)
    if kind == "Diagnosis":
        if item.run is not None:
            return _run_doc(item.run, index, numbered, diagnosis=item)
        summary = (item.label, item.method or "", "", item.verdict, fmt(item.root, 12), str(item.evaluations or ""), "")
        return _generic(item, f"{head}Diagnosis of {item.label}", summary)
    if kind == "Comparison":
        from ._order_figures import EqualWorkDisplay

        fig = Figure(
            f"{name}-equal-work",
            render_png(lambda f: EqualWorkDisplay.from_comparison(item).plot(f.add_subplot(1, 1, 1))),
            "Error against function evaluations for each method (the equal-work view).",
        )
        summary = (str(item.problem), ", ".join(r.method for r in item.results), "compared", "", "", "", "")
        return _generic(item, f"{head}Methods compared on {item.problem}", summary, fig)
    if kind == "BracketSearch":
        from ._brackets_figures import BracketsDisplay

        fig = Figure(
            f"{name}-brackets",
            render_png(lambda f: BracketsDisplay.from_search(item).plot(f.add_subplot(1, 1, 1))),
            "f over the searched range, each candidate marked by kind.",
        )
        kinds = ", ".join(f"{len(item.of_kind(k))} {k}" for k in ("root", "pole", "touch", "domain-edge") if item.of_kind(k))
        summary = (str(item.problem), "bracket search", kinds, "", "", str(item.evaluations), "")
        return _generic(item, f"{head}Brackets for {item.problem}", summary, fig)
    if kind == "SweepResult":
        from ._basin_figures import SweepDisplay

        fig = Figure(
            f"{name}-sweep",
            render_png(lambda f: SweepDisplay.from_sweep(item).plot(f.add_subplot(1, 1, 1)), size=(7.0, 5.0)),
            "Outcome at each parameter point.",
        )
        counts = ", ".join(f"{n} {k}" for k, n in item.counts().items() if n)
        summary = (str(item.label), item.method, counts, "", "", str(int(item.table["evals"].sum())), "")
        return _generic(item, f"{head}Parameter sweep of {item.label}", summary, fig)
    if kind == "OrderEstimate":
        return _generic(item, f"{head}Observed order of convergence", _EMPTY_SUMMARY)
    raise ParameterError(
        f"make_report cannot document a {kind}. Pass runs, diagnoses, comparisons, bracket searches, "
        "order estimates or sweeps."
    )
