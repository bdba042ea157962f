"""Text and HTML forms of a run: the iterate table and a one-paragraph summary.

Pure string work (no matplotlib). Registered with core's display hook on
import, so ``Run`` objects show themselves in notebooks and terminals.
"""

from __future__ import annotations

import html
import math
from collections.abc import Sequence
from typing import Any

from ..core._run import Run
from ..core._show import register_formatter

__all__ = ["fmt", "html_table", "run_html", "run_text", "text_table"]


def fmt(v: Any, digits: int = 6) -> str:
    """A number for a table: ``digits`` significant digits, '—' for missing."""
    if v is None:
        return "—"
    try:
        f = float(v)
    except (TypeError, ValueError, OverflowError):
        try:
            z = complex(v)
        except (TypeError, ValueError):
            return str(v)
        return f"{z.real:.{digits}g}{z.imag:+.{digits}g}i"
    if math.isnan(f):
        return "NaN"
    if math.isinf(f):
        return "∞" if f > 0 else "−∞"
    if digits >= 17:
        return repr(f)  # the shortest text that reads back as the same double
    return f"{f:.{digits}g}"


def text_table(headers: Sequence[str], rows: Sequence[Sequence[str]], align: str | None = None) -> str:
    """A plain-text table with a rule under the header; ``align`` has one of 'l'/'r' per column."""
    align = align or "r" * len(headers)
    widths = [len(h) for h in headers]
    for row in rows:
        widths = [max(w, len(c)) for w, c in zip(widths, row)]

    def line(cells: Sequence[str]) -> str:
        out = [c.ljust(w) if a == "l" else c.rjust(w) for c, w, a in zip(cells, widths, align)]
        return "  ".join(out).rstrip()

    rule = "  ".join("─" * w for w in widths)
    return "\n".join([line(headers), rule, *(line(r) for r in rows)])


_CELL = "padding:2px 8px;border-bottom:1px solid #d8dee4;"
#: right-aligned cells hold numbers: never break one across lines ("-8.03801e-" / "14").
_NOWRAP = {"l": "", "r": "white-space:nowrap;"}


def html_table(
    headers: Sequence[str], rows: Sequence[Sequence[str]], align: str | None = None, caption: str = ""
) -> str:
    """A small HTML table with inline styles; every cell is escaped."""
    align = align or "r" * len(headers)
    side = {"l": "left", "r": "right"}
    head = "".join(
        f'<th style="{_CELL}text-align:{side[a]};background:#eef3f7;">{html.escape(h)}</th>'
        for h, a in zip(headers, align)
    )
    body = "".join(
        "<tr>"
        + "".join(
            f'<td style="{_CELL}text-align:{side[a]};font-family:monospace;{_NOWRAP[a]}">{html.escape(c)}</td>'
            for c, a in zip(r, align)
        )
        + "</tr>"
        for r in rows
    )
    cap = (
        f'<caption style="caption-side:top;text-align:left;font-weight:600;padding:4px 0;">{html.escape(caption)}</caption>'
        if caption
        else ""
    )
    return f'<table style="border-collapse:collapse;font-size:13px;margin:4px 0;">{cap}<tr>{head}</tr>{body}</table>'


def _state(run: Run) -> str:
    from ..core._hybrid import suspect_stop

    doubt = suspect_stop(run)
    if doubt:
        what = ("f is exactly zero over a stretch here (flat), not necessarily at a root" if doubt == "flat" else
                "|f| grew as the bracket closed in: a pole or jump, not a root")
        return f"stopped by its rule ({run.stop_reason}), but not at a confirmed root: {what}; see the diagnosis"
    if run.converged:
        return f"converged ({run.stop_reason}: {run.message})"
    return f"did not converge ({run.stop_reason}): {run.message}"


def _root_label(run: Run) -> str:
    from ..core._hybrid import suspect_stop

    if suspect_stop(run):
        return "stopped at x"
    return "root" if run.converged else "best point so far"


_EPS = 2.220446049250313e-16


def tolerance_rule(run: Run) -> str:
    """The stopping rule in words: 'step < 8.9e-16·|x| (4 machine epsilons)', or with an absolute part."""
    s = run.settings
    bracketing = run.bracket is not None and bool(run.steps) and run.steps[0].bracket is not None
    rule = "bracket width" if bracketing else "step"
    rel = f"{s.rtol:.2g}·|x|"
    if run.arithmetic != "mpmath" and 0 < s.rtol < 1 and abs(s.rtol / _EPS - round(s.rtol / _EPS)) < 1e-9:
        rel += f" ({round(s.rtol / _EPS)} machine epsilons)"
    if s.xtol == 0:
        text = f"{rule} < {rel}" if s.rtol > 0 else f"{rule} = 0"
    elif s.rtol == 0:
        text = f"{rule} < {s.xtol:g}"
    else:
        text = f"{rule} < {s.xtol:g} + {rel}"
    if s.ftol > 0:
        text += f", or |f| ≤ {s.ftol:g}"
    return text + ", or f = 0 exactly"


def _tolerance_line(run: Run) -> str:
    s = run.settings
    parts = ["stop when " + tolerance_rule(run)]
    parts.append(f"budget {s.max_evals} evaluations")
    if s.max_time is not None:
        parts.append(f"{s.max_time:g} s")
    return ", ".join(parts)


def run_rows(run: Run) -> tuple[list[str], list[list[str]], str]:
    """Headers, rows and alignment of the iterate table."""
    bracketing = any(s.bracket is not None for s in run.steps)
    headers = ["k", "x_k", "f(x_k)", "|x_k − x_k−1|"]
    if bracketing:
        headers.append("bracket width")
    headers += ["evals", "what the step did"]
    rows: list[list[str]] = []
    prev: Any = None
    for i, (x, fx) in enumerate(zip(run.starts, run.start_values)):
        row = [f"s{i}", fmt(x, 17), fmt(fx, 6), ""]
        if bracketing:
            row.append("")
        row += [str(i + 1), "start" if not bracketing else ("bracket end")]
        rows.append(row)
        prev = x
    for s in run.steps:
        try:
            dx = fmt(abs(s.x - prev), 3)
        except TypeError:
            dx = ""
        row = [str(s.index), fmt(s.x, 17), fmt(s.fx, 6), dx]
        if bracketing:
            row.append("" if s.bracket is None else fmt(s.bracket[1] - s.bracket[0], 3))
        row += [str(s.evals), f"{s.model.kind}: {s.reason}"]
        rows.append(row)
        prev = s.x
    f = run.failure
    if f is not None and f.x is not None and f.evaluation is not None:
        # the point the run could not get past (not an iterate: f failed there)
        row = ["✗", fmt(f.x, 17), "failed", ""]
        if bracketing:
            row.append("")
        row += [str(f.evaluation), f.reason]
        rows.append(row)
    align = "rrrr" + ("r" if bracketing else "") + "rl"
    return headers, rows, align


def run_text(run: Run) -> str:
    """The readable text form printed by ``convdiag run`` and shown in terminals."""
    headers, rows, align = run_rows(run)
    lines = [
        f"{run.method_title} on {run.problem}",
        f"  {_state(run)}",
        f"  {_root_label(run)} ≈ {fmt(run.root, 17)}   after {len(run.steps)} steps and {run.evaluations} evaluations",
        f"  {_tolerance_line(run)}",
    ]
    if run.derivative_source:
        lines.append(f"  derivative: {run.derivative_source}")
    if run.failure is not None and run.failure.advice:
        lines.append(f"  what to try: {run.failure.advice}")
    for note in run.notes:
        lines.append(f"  note: {note}")
    lines += ["", text_table(headers, rows, align)]
    return "\n".join(lines)


def run_html(run: Run) -> str:
    headers, rows, align = run_rows(run)
    colour = "#1b7f3b" if run.converged else "#b3261e"
    esc = html.escape
    parts = [
        '<div style="font-family:system-ui,sans-serif;font-size:13px;">',
        f'<div style="font-weight:600;">{esc(run.method_title)} on <code>{esc(run.problem)}</code></div>',
        f'<div style="color:{colour};">{esc(_state(run))}</div>',
        (f"<div>{_root_label(run)} ≈ <code>{esc(fmt(run.root, 17))}</code> after {len(run.steps)} steps and "
         f"{run.evaluations} evaluations; {esc(_tolerance_line(run))}</div>"),
    ]
    if run.derivative_source:
        parts.append(f"<div>derivative: {esc(run.derivative_source)}</div>")
    if run.failure is not None and run.failure.advice:
        parts.append(f"<div><b>What to try:</b> {esc(run.failure.advice)}</div>")
    for note in run.notes:
        parts.append(f'<div style="color:#555;">note: {esc(note)}</div>')
    parts.append(html_table(headers, rows, align))
    parts.append("</div>")
    return "".join(parts)


register_formatter(Run, text=run_text, html=run_html)
