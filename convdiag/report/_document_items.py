"""How each kind of result is documented in a report: its sections, figures and summary row."""

from __future__ import annotations

import html
import math
from dataclasses import dataclass, replace
from typing import Any

from ..errors import ParameterError
from ._document import Figure, Section, md_table, render_png
from ._setup_text import comparison_setup, run_setup_rows, source_html, source_of, sweep_label, sweep_setup
from ._text import fmt, html_table

__all__ = ["ItemDoc", "document_item", "merge_notes"]

_EMPTY_SUMMARY = ("", "", "", "", "", "", "")


@dataclass(frozen=True)
class ItemDoc:
    """The sections of one documented result and its row in the report's summary."""

    sections: tuple[Section, ...]
    summary: tuple[str, ...]


# -- runs ------------------------------------------------------------------------------
def _draw_run_step(run: Any, ax: Any, period: int = 1) -> None:
    """The last step with its model, the ``period - 1`` steps before it faintly (a cycle shows whole),
    and a failed evaluation marked where it happened."""
    from ._step_figures import F_FAILED, StepDisplay, auto_xlim

    failure = run.failure if run.failure is not None and run.failure.reason in F_FAILED else None
    fx = failure.x if failure is not None and failure.x is not None and math.isfinite(failure.x) else None
    known = [float(v) for v in run.iterates if math.isfinite(v)]
    xlim = None
    if fx is not None:
        xlim = auto_xlim(known + [fx], core=known + [fx])
    d = StepDisplay.from_run(run, xlim=xlim, samples=160)
    last = run.steps[-1] if run.steps else None
    if d.failure_reason:
        pass  # the display's title says where f failed
    elif last is None:
        d.title = f"{run.method_title}: the start{'s' if len(run.starts) > 1 else ''}"
    else:
        d.title = f"Step {last.index} of {run.method_title} ({last.model.kind} model)"
    d.plot(ax)
    lo, hi = d.xlim
    for step in run.steps[-period:-1] if period > 1 else ():
        xs, ys = step.model.curve(lo, hi, 120)
        ax.plot(xs, ys, color="#d9822b", lw=1.0, ls=(0, (4, 3)), alpha=0.45, zorder=3)


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
    mine = diagnosis is not None
    if diagnosis is None:
        diagnosis = _diagnose(run, estimate)
    head = f"{index + 1}. " if numbered else ""
    sections = [Section(f"{head}{run.method_title} on {run.problem}", "", "", level=2)]

    rows = run_setup_rows(run)
    md, page = md_table(["setting", "value"], rows), html_table(["setting", "value"], rows, "ll")
    source = source_of(run)
    if source:
        md += f"\n\nThe function's source:\n\n```python\n{source}\n```"
        page += source_html(source)
    sections.append(Section("Setup", md, page, level=3))

    if diagnosis is not None:
        md, page = _pre_md(diagnosis.to_text()), diagnosis.to_html()
        why = _order_basis_note(diagnosis.order, estimate) if mine else ""
        if why:
            md += f"\n\n*{why}*"
            page += f'<p style="color:#555;font-style:italic;margin:4px 0;">{html.escape(why)}</p>'
        sections.append(Section("Diagnosis", md, page, level=3))

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

    shown = replace(estimate, notes=merge_notes(estimate.notes))
    md, page = _pre_md(order_text(shown)), order_html(shown)
    finite = sum(1 for v in run.iterates if math.isfinite(float(v)))
    progress: tuple[Figure, ...] = ()
    if finite >= 3:

        def draw_progress(fig: Any) -> None:
            ax1, ax2 = fig.subplots(1, 2)
            ProgressDisplay.from_run(run, estimate).plot(ax1, ax2)

        caption = "Step size, |f| and error on a log scale against iteration (left) and function evaluations (right)."
        progress = (Figure(f"{name}-progress", render_png(draw_progress, size=(9.0, 3.6)), caption),)
    else:
        why = (f"No figure of how fast it closes in: the run has {finite} finite iterate{'s' if finite != 1 else ''}, "
               "too few to show a trend (it takes three).")
        md += f"\n\n{why}"
        page += f'<p style="margin:4px 0;">{html.escape(why)}</p>'
    sections.append(Section("Observed order of convergence", md, page, progress, level=3))
    return ItemDoc(tuple(sections), _run_summary(run, diagnosis))


_NO_ROOT, _NO_REPLAY = "no high-precision root: ", "no high-precision replay: "


def merge_notes(notes: tuple[str, ...]) -> tuple[str, ...]:
    """The notes once each: a replay note that repeats why there is no high-precision root joins that note.

    Examples
    --------
    >>> merge_notes(("no high-precision root: f is float-only", "x", "no high-precision replay: f is float-only", "x"))
    ('no high-precision root or replay: f is float-only', 'x')
    """
    out: list[str] = []
    why = next((n[len(_NO_ROOT):] for n in notes if n.startswith(_NO_ROOT)), None)
    for n in notes:
        if why is not None and n.startswith(_NO_REPLAY) and n[len(_NO_REPLAY):] in (why, "it needs a high-precision root"):
            out = [f"no high-precision root or replay: {why}" if m == _NO_ROOT + why else m for m in out]
        elif n not in out:
            out.append(n)
    return tuple(out)


def _basis_text(e: Any, reference: bool) -> str:
    if e.basis == "replay":
        text = f"a {e.digits}-digit replay of this run"
    elif e.basis == "run":
        text = "the run's " + ("double-precision iterates only" if e.digits is None else f"{e.digits}-digit iterates")
    else:
        text = "the iterates"
    return text + (f" against a {e.reference}" if reference else "")


def _order_basis_note(shown: Any, estimate: Any) -> str:
    """A sentence when a diagnosis passed in measured the order on another basis than the report's order part."""
    if shown is None or estimate is None or (shown.basis == estimate.basis and shown.reference == estimate.reference):
        return ""
    ref = shown.reference != estimate.reference
    head = (f"The order part below measures {_basis_text(estimate, ref)} ({estimate.label_text}); the diagnosis above "
            f"measured {_basis_text(shown, ref)} ({shown.label_text})")
    if shown.label_text == estimate.label_text:
        return head + ", and the two agree."
    if shown.basis == "run" and estimate.basis == "replay":
        return head + ": rounding leaves the double-precision iterates fewer usable errors, hence the difference."
    return head + ": they use different references, hence the difference."


def _diagnose(run: Any, estimate: Any = None) -> Any:
    from ..core._diagnose import diagnose

    return diagnose(run, order=estimate)  # the diagnosis shows the same order estimate as the report's order part


# -- comparisons and sweeps: their setup, then what they found ----------------------------------
def _with_setup(item: Any, heading: str, summary: tuple[str, ...], setup: tuple[str, str], figure: Figure) -> ItemDoc:
    """A part in three sections: the heading, how it was set up (enough to run it again), and what it found."""
    return ItemDoc((
        Section(heading, "", "", level=2),
        Section("Setup", setup[0], setup[1], level=3),
        Section("Results", _pre_md(item.to_text()), item.to_html(), (figure,), level=3),
    ), summary)


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
        return _with_setup(item, f"{head}Methods compared on {item.problem}", summary, comparison_setup(item), fig)
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
        label = sweep_label(item)
        summary = (label, item.method, counts, "", "", str(int(item.table["evals"].sum())), "")
        return _with_setup(item, f"{head}Parameter sweep of {label}", summary, sweep_setup(item), fig)
    if kind == "OrderEstimate":
        return _generic(item, f"{head}Observed order of convergence", _EMPTY_SUMMARY)
    raise ParameterError(
        f"make_report cannot document a {kind}. Pass runs, diagnoses, comparisons, bracket searches, "
        "order estimates or sweeps."
    )
