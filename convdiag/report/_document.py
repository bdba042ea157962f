"""Reports that document a solver's behaviour: Markdown and self-contained HTML.

:func:`make_report` turns runs, diagnoses, comparisons, bracket searches and
sweeps into a :class:`Report`: tables plus PNG figures, the function, the
method and its settings, the iterates, the observed order with its window,
the verdict with evidence and advice, and the software versions. It renders
inline in a notebook and saves to a folder (``report.md``, ``report.html``
and ``figures/*.png``); the HTML file embeds its figures, so it can be mailed
on its own.
"""

from __future__ import annotations

import base64
import datetime as _dt
import html
import inspect
import io
import os
import platform
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from typing import Any

from ..errors import ParameterError

__all__ = ["Figure", "Report", "Section", "make_report"]

CAUTION = (
    "Numbers in this report describe how the solver behaved on this function. Where they feed "
    "engineering decisions (pipe sizing, pressure vessels, orbits), those decisions follow local "
    "codes and licensed professional practice."
)


@dataclass(frozen=True)
class Figure:
    """One PNG figure of a report."""

    name: str
    png: bytes
    caption: str

    def data_uri(self) -> str:
        return "data:image/png;base64," + base64.b64encode(self.png).decode("ascii")


@dataclass(frozen=True)
class Section:
    """A heading, its Markdown and HTML bodies, and its figures."""

    heading: str
    markdown: str
    html: str
    figures: tuple[Figure, ...] = ()


@dataclass(frozen=True)
class Report:
    """A document about one or more results. Show it in a notebook, or :meth:`save` it."""

    title: str
    sections: tuple[Section, ...]
    versions: tuple[tuple[str, str], ...]
    created: str
    caution: str = CAUTION
    files: dict[str, str] = field(default_factory=dict, compare=False)

    @property
    def figures(self) -> list[Figure]:
        return [fig for s in self.sections for fig in s.figures]

    # -- Markdown -------------------------------------------------------------------
    def to_markdown(self, *, figure_dir: str | None = None) -> str:
        """Markdown; figures link to ``figure_dir/<name>.png`` (or are embedded as data URIs)."""
        out = [f"# {self.title}", "", f"_Created {self.created}._", ""]
        for s in self.sections:
            out += [f"## {s.heading}", "", s.markdown.rstrip(), ""]
            for fig in s.figures:
                src = f"{figure_dir}/{fig.name}.png" if figure_dir else fig.data_uri()
                out += [f"![{fig.caption}]({src})", "", f"*{fig.caption}*", ""]
        out += ["## Software", "", md_table(["package", "version"], [list(v) for v in self.versions]), ""]
        out += [f"> {self.caution}", ""]
        return "\n".join(out)

    # -- HTML -----------------------------------------------------------------------
    def body_html(self) -> str:
        esc = html.escape
        parts = [
            '<div class="convdiag-report" style="font-family:system-ui,sans-serif;font-size:14px;'
            'max-width:980px;line-height:1.45;">',
            f'<h1 style="font-size:22px;margin:6px 0;">{esc(self.title)}</h1>',
            f'<div style="color:#555;">Created {esc(self.created)}.</div>',
        ]
        for s in self.sections:
            parts.append(f'<h2 style="font-size:17px;margin:18px 0 6px;border-bottom:2px solid #2b6f8f;">{esc(s.heading)}</h2>')
            parts.append(s.html)
            for fig in s.figures:
                parts.append(
                    f'<figure style="margin:10px 0;"><img alt="{esc(fig.caption)}" src="{fig.data_uri()}" '
                    f'style="max-width:100%;"><figcaption style="color:#444;font-size:13px;">{esc(fig.caption)}'
                    "</figcaption></figure>"
                )
        rows = "".join(f"<tr><td>{esc(a)}</td><td><code>{esc(b)}</code></td></tr>" for a, b in self.versions)
        parts.append('<h2 style="font-size:17px;margin:18px 0 6px;border-bottom:2px solid #2b6f8f;">Software</h2>')
        parts.append(f'<table style="border-collapse:collapse;font-size:13px;">{rows}</table>')
        parts.append(f'<p style="color:#7a4b00;background:#fff6e0;padding:6px 10px;">{esc(self.caution)}</p>')
        parts.append("</div>")
        return "".join(parts)

    def to_html(self) -> str:
        """A complete, self-contained HTML document (figures embedded)."""
        return (
            "<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\">"
            f"<title>{html.escape(self.title)}</title></head><body>{self.body_html()}</body></html>\n"
        )

    def _repr_html_(self) -> str:
        return self.body_html()

    def __repr__(self) -> str:
        return f"<Report {self.title!r}: {len(self.sections)} sections, {len(self.figures)} figures>"

    # -- files ----------------------------------------------------------------------
    def save(self, directory: str | os.PathLike[str]) -> dict[str, str]:
        """Write ``report.md``, ``report.html`` and ``figures/*.png`` into ``directory``.

        Returns the paths written (also kept in ``self.files``).
        """
        d = os.fspath(directory)
        try:
            os.makedirs(os.path.join(d, "figures"), exist_ok=True)
        except OSError as exc:
            raise ParameterError(f"Could not create the report folder {d!r}: {exc}. Choose a writable folder.") from exc
        paths: dict[str, str] = {}
        for fig in self.figures:
            p = os.path.join(d, "figures", f"{fig.name}.png")
            with open(p, "wb") as fh:
                fh.write(fig.png)
            paths[fig.name] = p
        md = os.path.join(d, "report.md")
        with open(md, "w", encoding="utf-8") as fh:
            fh.write(self.to_markdown(figure_dir="figures"))
        page = os.path.join(d, "report.html")
        with open(page, "w", encoding="utf-8") as fh:
            fh.write(self.to_html())
        paths["markdown"], paths["html"] = md, page
        self.files.clear()
        self.files.update(paths)
        return paths


# -- helpers ---------------------------------------------------------------------------
def md_table(headers: Sequence[str], rows: Sequence[Sequence[str]]) -> str:
    def cell(c: str) -> str:
        return str(c).replace("|", "\\|").replace("\n", " ")

    lines = ["| " + " | ".join(cell(h) for h in headers) + " |", "|" + "---|" * len(headers)]
    lines += ["| " + " | ".join(cell(c) for c in r) + " |" for r in rows]
    return "\n".join(lines)


def _versions() -> tuple[tuple[str, str], ...]:
    from importlib import metadata

    out = [("python", platform.python_version()), ("platform", platform.platform(terse=True))]
    for name in ("convdiag", "numpy", "sympy", "mpmath", "scipy", "matplotlib"):
        try:
            out.append((name, metadata.version(name)))
        except metadata.PackageNotFoundError:
            out.append((name, "not installed"))
    return tuple(out)


def render_png(draw: Callable[[Any], Any], *, size: tuple[float, float] = (7.0, 4.2), dpi: int = 110) -> bytes:
    """Draw with ``draw(figure)`` on a fresh Agg figure (no pyplot state) and return PNG bytes."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure as MplFigure

    fig = MplFigure(figsize=size, dpi=dpi, layout="constrained")
    FigureCanvasAgg(fig)
    draw(fig)
    buf = io.BytesIO()
    fig.savefig(buf, format="png")
    return buf.getvalue()


def _source_of(run: Any) -> str:
    problem = getattr(run, "source", None)
    if problem is None:
        return ""
    if getattr(problem, "expression", None) is not None:
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
    from ._text import fmt

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
        ["stopping rule", f"step or bracket width < {s.xtol:g} + {s.rtol:.3g}·|x|" + (f", or |f| ≤ {s.ftol:g}" if s.ftol else "")],
        ["budgets", f"{s.max_evals} evaluations" + (f", {s.max_time:g} s" if s.max_time else "")],
    ]
    if run.derivative_source:
        rows.append(["derivative", run.derivative_source])
    if run.arithmetic != "real":
        rows.append(["arithmetic", f"{run.arithmetic}" + (f" ({run.digits} digits)" if run.digits else "")])
    rows.append(["stopped", f"{run.stop_reason}: {run.message}"])
    return rows


# -- section builders ------------------------------------------------------------------
def _run_sections(run: Any, name: str, diagnosis: Any = None) -> list[Section]:
    from ..core._order import estimate_order
    from ._order_text import order_html, order_text
    from ._step_figures import ProgressDisplay
    from ._text import html_table, run_html, run_rows

    sections: list[Section] = []
    rows = _settings_rows(run)
    source = _source_of(run)
    md = md_table(["setting", "value"], rows)
    page = html_table(["setting", "value"], rows, "ll")
    if source:
        md += f"\n\nThe function's source:\n\n```python\n{source}\n```"
        page += f'<pre style="background:#f4f6f8;padding:8px;font-size:12px;">{html.escape(source)}</pre>'
    sections.append(Section(f"{run.method_title} on {run.problem}: setup", md, page))

    headers, table_rows, _ = run_rows(run)
    figures: list[Figure] = []
    if run.source is not None and (run.steps or run.starts):
        def draw_step(fig: Any) -> None:
            _draw_run_step(run, fig.add_subplot(1, 1, 1))

        figures.append(Figure(f"{name}-function", render_png(draw_step), "f near the iterates, with the last step's local model."))
    sections.append(
        Section(
            "Iterates",
            md_table(headers, table_rows),
            run_html(run),
            tuple(figures),
        )
    )

    estimate = estimate_order(run)

    def draw_progress(fig: Any) -> None:
        ax1, ax2 = fig.subplots(1, 2)
        ProgressDisplay.from_run(run, estimate).plot(ax1, ax2)

    progress = Figure(
        f"{name}-progress", render_png(draw_progress, size=(9.0, 3.6)),
        "Step size, |f| and error on a log scale against iteration (left) and function evaluations (right).",
    )
    sections.append(Section("Observed order of convergence", _pre_md(order_text(estimate)), order_html(estimate), (progress,)))

    if diagnosis is None:
        diagnosis = _diagnose(run)
    if diagnosis is not None:
        sections.append(Section("Diagnosis", _pre_md(diagnosis.to_text()), diagnosis.to_html()))
    return sections


def _draw_run_step(run: Any, ax: Any) -> None:
    """The last step with its model; a failed evaluation is marked where it happened."""
    import math

    from ._step_figures import StepDisplay, auto_xlim

    failure = run.failure
    fx = failure.x if failure is not None and failure.x is not None and math.isfinite(failure.x) else None
    xlim = None
    if fx is not None:
        known = [float(v) for v in run.iterates if math.isfinite(v)]
        xlim = auto_xlim(known + [fx], core=known + [fx])
    d = StepDisplay.from_run(run, xlim=xlim)
    if not run.steps:
        d.title = f"{run.method_title}: the start{'s' if len(run.starts) > 1 else ''}"
    d.plot(ax)
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


def _diagnose(run: Any) -> Any:
    try:
        from ..core._diagnose import diagnose
    except ImportError:  # the diagnosis layer is optional at this point
        return None
    return diagnose(run)


def _pre_md(text: str) -> str:
    return "```text\n" + text.rstrip() + "\n```"


def _generic_section(item: Any, heading: str, figure: Figure | None = None) -> Section:
    return Section(heading, _pre_md(item.to_text()), item.to_html(), (figure,) if figure is not None else ())


def _sections_for(item: Any, index: int) -> list[Section]:
    kind = type(item).__name__
    name = f"item{index}"
    if kind == "Run":
        return _run_sections(item, name)
    if kind == "Diagnosis":
        run = getattr(item, "run", None)
        if run is not None:
            return _run_sections(run, name, diagnosis=item)
        return [_generic_section(item, "Diagnosis")]
    if kind == "Comparison":
        from ._order_figures import EqualWorkDisplay

        fig = Figure(
            f"{name}-equal-work",
            render_png(lambda f: EqualWorkDisplay.from_comparison(item).plot(f.add_subplot(1, 1, 1))),
            "Error against function evaluations for each method (the equal-work view).",
        )
        return [_generic_section(item, f"Methods compared on {item.problem}", fig)]
    if kind == "BracketSearch":
        from ._brackets_figures import BracketsDisplay

        fig = Figure(
            f"{name}-brackets",
            render_png(lambda f: BracketsDisplay.from_search(item).plot(f.add_subplot(1, 1, 1))),
            "f over the searched range, each candidate marked by kind.",
        )
        return [_generic_section(item, f"Brackets for {item.problem}", fig)]
    if kind == "OrderEstimate":
        return [_generic_section(item, "Observed order of convergence")]
    if hasattr(item, "to_text") and hasattr(item, "to_html"):
        figure = None
        draw = getattr(item, "report_figure", None)
        if callable(draw):
            figure = Figure(f"{name}-figure", render_png(draw), getattr(item, "report_caption", kind))
        return [_generic_section(item, getattr(item, "report_heading", kind), figure)]
    raise ParameterError(
        f"make_report cannot document a {kind}. Pass runs, diagnoses, comparisons, bracket searches, "
        "order estimates or sweeps."
    )


def make_report(*items: Any, title: str | None = None) -> Report:
    """Document runs, diagnoses, comparisons, bracket searches and sweeps in one report.

    Parameters
    ----------
    *items : results to document, in order.
    title : str, optional
        Defaults to a title built from the first item.

    Returns
    -------
    Report
        Shows itself in a notebook; ``report.save(folder)`` writes Markdown, HTML and PNGs.

    Examples
    --------
    >>> import convdiag
    >>> from convdiag.report import make_report
    >>> run = convdiag.solve("x**2 - 2", "secant", start=1.0)
    >>> rep = make_report(run)
    >>> [s.heading for s in rep.sections][:2]
    ['secant on x**2 - 2: setup', 'Iterates']
    """
    if not items:
        raise ParameterError("make_report needs at least one result to document (a run, a diagnosis, ...).")
    sections: list[Section] = []
    for i, item in enumerate(items):
        sections.extend(_sections_for(item, i))
    if title is None:
        first = items[0]
        label = getattr(first, "problem", None) or getattr(getattr(first, "run", None), "problem", None) or ""
        title = f"Solver behaviour: {label}" if label else "Solver behaviour"
    created = _dt.datetime.now(_dt.timezone.utc).replace(microsecond=0).isoformat()
    return Report(title, tuple(sections), _versions(), created)
