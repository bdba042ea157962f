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
import io
import os
import platform
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from typing import Any

from ..errors import ParameterError
from ._text import html_table

__all__ = ["Figure", "Report", "Section", "make_report"]

SUMMARY_HEADERS = ("#", "what", "method", "outcome", "verdict", "root (or best point)", "evaluations", "what to change")

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
    """A heading, its Markdown and HTML bodies, and its figures.

    ``level`` 2 is a top-level part of the report (one per documented
    result); level 3 is a part of it.
    """

    heading: str
    markdown: str
    html: str
    figures: tuple[Figure, ...] = ()
    level: int = 2


@dataclass(frozen=True)
class Report:
    """A document about one or more results. Show it in a notebook, or :meth:`save` it."""

    title: str
    sections: tuple[Section, ...]
    versions: tuple[tuple[str, str], ...]
    created: str
    caution: str = CAUTION
    summary: tuple[tuple[str, ...], ...] = ()
    files: dict[str, str] = field(default_factory=dict, compare=False)

    @property
    def figures(self) -> list[Figure]:
        return [fig for s in self.sections for fig in s.figures]

    # -- Markdown -------------------------------------------------------------------
    def to_markdown(self, *, figure_dir: str | None = None) -> str:
        """Markdown; figures link to ``figure_dir/<name>.png`` (or are embedded as data URIs)."""
        out = [f"# {self.title}", "", f"_Created {self.created}._", ""]
        if self.summary:
            out += ["## Summary", "", md_table(list(SUMMARY_HEADERS), [list(r) for r in self.summary]), ""]
        tops = [sec.heading for sec in self.sections if sec.level == 2]
        if len(tops) > 1:
            out += ["Contents: " + " · ".join(tops), ""]
        for sec in self.sections:
            out += [f"{'#' * sec.level} {sec.heading}", "", sec.markdown.rstrip(), ""]
            for fig in sec.figures:
                src = f"{figure_dir}/{fig.name}.png" if figure_dir else fig.data_uri()
                out += [f"![{fig.caption}]({src})", "", f"*{fig.caption}*", ""]
        out += ["## Software", "", md_table(["package", "version"], [list(v) for v in self.versions]), ""]
        out += [f"> {self.caution}", ""]
        return "\n".join(out)

    # -- HTML -----------------------------------------------------------------------
    def body_html(self) -> str:
        esc = html.escape
        h2 = "font-size:18px;margin:22px 0 6px;border-bottom:2px solid #2b6f8f;"
        h3 = "font-size:15px;margin:14px 0 4px;color:#1f4e66;"
        parts = [
            ('<div class="convdiag-report" style="font-family:system-ui,sans-serif;font-size:14px;'
             'max-width:1000px;line-height:1.45;">'),
            f'<h1 style="font-size:22px;margin:6px 0;">{esc(self.title)}</h1>',
            f'<div style="color:#555;">Created {esc(self.created)}.</div>',
        ]
        if self.summary:
            parts.append(f'<h2 style="{h2}">Summary</h2>')
            parts.append(html_table(list(SUMMARY_HEADERS), [list(r) for r in self.summary], "rllllrrl"))
        for i, sec in enumerate(self.sections):
            style = h2 if sec.level == 2 else h3
            tag = "h2" if sec.level == 2 else "h3"
            parts.append(f'<{tag} id="part-{i}" style="{style}">{esc(sec.heading)}</{tag}>')
            parts.append(sec.html)
            for fig in sec.figures:
                parts.append(
                    f'<figure style="margin:10px 0;"><img alt="{esc(fig.caption)}" src="{fig.data_uri()}" '
                    f'style="max-width:100%;"><figcaption style="color:#444;font-size:13px;">{esc(fig.caption)}'
                    "</figcaption></figure>"
                )
        rows = "".join(f"<tr><td>{esc(a)}</td><td><code>{esc(b)}</code></td></tr>" for a, b in self.versions)
        parts.append(f'<h2 style="{h2}">Software</h2>')
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


def render_png(draw: Callable[[Any], Any], *, size: tuple[float, float] = (7.0, 4.0), dpi: int = 100) -> bytes:
    """Draw with ``draw(figure)`` on a fresh Agg figure (no pyplot state) and return PNG bytes."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure as MplFigure

    fig = MplFigure(figsize=size, dpi=dpi, layout="constrained")
    FigureCanvasAgg(fig)
    draw(fig)
    buf = io.BytesIO()
    fig.savefig(buf, format="png")
    return buf.getvalue()


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
    >>> [s.heading for s in rep.sections]
    ['secant on x**2 - 2', 'Setup', 'Diagnosis', 'Iterates', 'Observed order of convergence']
    >>> rep.summary[0][4]  # the verdict
    'converged'
    """
    if not items:
        raise ParameterError("make_report needs at least one result to document (a run, a diagnosis, ...).")
    from ._document_items import document_item

    sections: list[Section] = []
    summary: list[tuple[str, ...]] = []
    for i, item in enumerate(items):
        doc = document_item(item, i, numbered=len(items) > 1)
        sections.extend(doc.sections)
        summary.append((str(i + 1), *doc.summary))
    if title is None:
        first = items[0]
        label = getattr(first, "problem", None) or getattr(getattr(first, "run", None), "problem", None) or ""
        title = f"Solver behaviour: {label}" if label else "Solver behaviour"
    created = _dt.datetime.now(_dt.timezone.utc).replace(microsecond=0).isoformat()
    return Report(title, tuple(sections), _versions(), created, summary=tuple(summary))
