"""Text and HTML forms of lanes, basin maps and sweeps, and the text progress bar of long sweeps.

Pure string work (no matplotlib). Importing this module registers the
formatters with core's display hook and installs :class:`TextProgressBar` as
what ``sweep(progress=True)`` shows (core itself never prints).
"""

from __future__ import annotations

import html
import sys
import time
from collections.abc import Mapping
from typing import Any, TextIO

import numpy as np

from ..core._basin import BasinMap
from ..core._show import register_formatter
from ..core._sweep import SweepResult, set_progress_factory
from ..core._vector import OUTCOME_MEANING, OUTCOMES, Lanes
from ._text import fmt, html_table, text_table

__all__ = ["OUTCOME_COLOURS", "TextProgressBar", "basin_html", "basin_text", "lanes_text", "sweep_html", "sweep_text"]

#: colour of each outcome class in tables and figures (roots get their own colours in basin maps).
OUTCOME_COLOURS: dict[str, str] = {
    "converged": "#3c8d5a",
    "cycle": "#6b4c9a",
    "divergence": "#c0392b",
    "flat": "#e08e0b",
    "domain-error": "#34495e",
    "budget": "#8fa5b8",
    "slow": "#b7950b",
    "multiple-root": "#1b7f8c",
    "stalled": "#a0522d",
    "no-bracket": "#7f8c8d",
    "timeout": "#f1948a",
    "not-run": "#d5d8dc",
    "pole": "#7b241c",
}


def _n(k: int) -> str:
    return f"{k:,}"


def _outcome_rows(outcome: np.ndarray, evals: np.ndarray) -> list[list[str]]:
    total = max(int(outcome.size), 1)
    rows = []
    for o in OUTCOMES:
        sel = outcome == o
        k = int(np.count_nonzero(sel))
        if not k:
            continue
        ev = evals[sel]
        rows.append([o, _n(k), f"{k / total:.2%}", f"{int(np.median(ev))} / {int(ev.max())}", OUTCOME_MEANING[o]])
    return rows


_OUT_HEAD = ["outcome", "points", "share", "evals median / max", "meaning"]


def lanes_text(lanes: Lanes) -> str:
    """Counts per outcome of a :class:`Lanes` result."""
    rows = _outcome_rows(lanes.outcome.ravel(), lanes.evals.ravel())
    head = f"{lanes.method}: {_n(lanes.size)} lanes (derivative: {lanes.derivative_source})"
    lines = [head, "", text_table(_OUT_HEAD, rows, "lrrrl")]
    lines += [f"note: {n}" for n in lanes.notes]
    return "\n".join(lines)


def _where(bm: BasinMap) -> str:
    if bm.kind == "rectangle" and bm.extent is not None:
        r0, r1, i0, i1 = bm.extent
        return f"rectangle [{fmt(r0)}, {fmt(r1)}] × [{fmt(i0)}, {fmt(i1)}]i, {bm.shape[0]} × {bm.shape[1]} starts"
    if bm.kind == "interval" and bm.extent is not None:
        return f"interval [{fmt(bm.extent[0])}, {fmt(bm.extent[1])}], {_n(bm.starts.size)} starts"
    return f"{_n(bm.starts.size)} starts"


def _root_rows(bm: BasinMap) -> list[list[str]]:
    counts = bm.root_counts()
    ids, ev = bm.root_id.ravel(), bm.evals.ravel()
    total = max(int(bm.starts.size), 1)
    rows = []
    for k, r in enumerate(bm.roots):
        e = ev[ids == k]
        rows.append([str(k), fmt(r.item(), 12), _n(int(counts[k])), f"{counts[k] / total:.2%}",
                     f"{int(np.median(e))} / {int(e.max())}" if e.size else "—"])
    return rows


_ROOT_HEAD = ["#", "root", "starts", "share", "evals median / max"]


def basin_text(bm: BasinMap) -> str:
    """Roots found with the share of starts that reach each, then the outcome counts."""
    lines = [f"Basin map of {bm.method} on {bm.label}: {_where(bm)}", ""]
    if bm.roots.size:
        lines += [text_table(_ROOT_HEAD, _root_rows(bm), "rlrrr"), ""]
    else:
        lines += ["no start converged", ""]
    lines.append(text_table(_OUT_HEAD, _outcome_rows(bm.outcome.ravel(), bm.evals.ravel()), "lrrrl"))
    lines += [f"note: {n}" for n in bm.lanes.notes]
    return "\n".join(lines)


def _badge(o: str) -> str:
    return (f'<span style="display:inline-block;width:0.8em;height:0.8em;background:{OUTCOME_COLOURS[o]};'
            'margin-right:4px;vertical-align:middle;"></span>')


def _html_outcomes(rows: list[list[str]]) -> str:
    table = html_table(_OUT_HEAD, rows, "lrrrl")
    for r in rows:  # a colour swatch before each outcome name (names are from a fixed list)
        table = table.replace(f">{r[0]}</td>", f">{_badge(r[0])}{r[0]}</td>", 1)
    return table


def basin_html(bm: BasinMap) -> str:
    esc = html.escape
    parts = ['<div style="font-family:system-ui,sans-serif;font-size:13px;">',
             f'<div style="font-weight:600;">Basin map of {esc(bm.method)} on {esc(bm.label)}</div>',
             f"<div>{esc(_where(bm))}</div>"]
    if bm.roots.size:
        parts.append(html_table(_ROOT_HEAD, _root_rows(bm), "rlrrr", caption="roots found"))
    parts.append(_html_outcomes(_outcome_rows(bm.outcome.ravel(), bm.evals.ravel())))
    parts += [f'<div style="color:#555;">note: {esc(n)}</div>' for n in bm.lanes.notes]
    parts.append("</div>")
    return "".join(parts)


def _failure_rows(res: SweepResult, limit: int) -> tuple[list[str], list[list[str]]]:
    bad = res.table[(res.table["outcome"] != "converged") & (res.table["outcome"] != "not-run")][:limit]
    head = ["point", *res.params, "start", "outcome", "stop reason", "evals"]
    rows = [[str(r["point"]), *(fmt(r[p], 8) for p in res.params), fmt(r["start"], 8), str(r["outcome"]),
             str(r["stop_reason"]), str(r["evals"])] for r in bad]
    return head, rows


def _sweep_head(res: SweepResult) -> tuple[str, str]:
    where = f"{_n(len(res))} points over ({', '.join(res.params)})"
    if res.grid is not None:
        where += f", a {' × '.join(map(str, res.grid.shape))} grid"
    how = f"{res.runner}, {res.chunks_done} of {res.chunks} chunks, {res.seconds:.3g} s"
    return f"Sweep of {res.method} on {res.label}: {where}", how


def sweep_text(res: SweepResult, limit: int = 8) -> str:
    """Outcome counts, the first failing points, and whether the sweep was interrupted."""
    title, how = _sweep_head(res)
    lines = [title, f"  {how}", ""]
    table = res.table
    lines.append(text_table(_OUT_HEAD, _outcome_rows(table["outcome"], table["evals"]), "lrrrl"))
    head, rows = _failure_rows(res, limit)
    if rows:
        lines += ["", f"first points that did not converge (of {_n(len(res.failures()))}):",
                  text_table(head, rows, "r" * (len(head) - 3) + "llr")]
    if res.interrupted:
        left = int(np.count_nonzero(table["outcome"] == "not-run"))
        lines += ["", f"interrupted: {_n(left)} points not run (outcome 'not-run'); the finished chunks are kept"]
    lines += [f"note: {n}" for n in res.notes]
    return "\n".join(lines)


def sweep_html(res: SweepResult, limit: int = 8) -> str:
    esc = html.escape
    title, how = _sweep_head(res)
    parts = ['<div style="font-family:system-ui,sans-serif;font-size:13px;">',
             f'<div style="font-weight:600;">{esc(title)}</div>', f'<div style="color:#555;">{esc(how)}</div>',
             _html_outcomes(_outcome_rows(res.table["outcome"], res.table["evals"]))]
    head, rows = _failure_rows(res, limit)
    if rows:
        parts.append(html_table(head, rows, "r" * (len(head) - 3) + "llr", caption="first points that did not converge"))
    if res.interrupted:
        parts.append('<div style="color:#b3261e;">interrupted: the points not run are marked not-run</div>')
    parts += [f'<div style="color:#555;">note: {esc(n)}</div>' for n in res.notes]
    parts.append("</div>")
    return "".join(parts)


class TextProgressBar:
    """A one-line progress bar on stderr (works in terminals and notebooks: it rewrites with '\\r').

    Nothing is drawn until ``delay`` seconds have passed, so quick sweeps stay quiet; redraws are
    at most ten per second.
    """

    def __init__(self, total: int, *, stream: TextIO | None = None, delay: float = 1.0, width: int = 28) -> None:
        self.total, self.stream, self.delay, self.width = total, stream, delay, width
        self.t0 = time.perf_counter()
        self.last = 0.0
        self.drawn = False

    def line(self, done: int, total: int) -> str:
        frac = done / total if total else 1.0
        full = round(frac * self.width)
        secs = time.perf_counter() - self.t0
        return f"sweep [{'#' * full}{'.' * (self.width - full)}] {frac:6.1%}  {_n(done)}/{_n(total)} points  {secs:.1f} s"

    def update(self, done: int, total: int) -> None:
        now = time.perf_counter()
        if now - self.t0 < self.delay or (now - self.last < 0.1 and done < total):
            return
        self.last, self.drawn = now, True
        out = self.stream or sys.stderr
        out.write("\r" + self.line(done, total))
        out.flush()

    def close(self) -> None:
        if self.drawn:
            (self.stream or sys.stderr).write("\n")


def _register(table: Mapping[type, tuple[Any, Any]]) -> None:
    for cls, (text, page) in table.items():
        register_formatter(cls, text=text, html=page)


_register({SweepResult: (sweep_text, sweep_html), BasinMap: (basin_text, basin_html), Lanes: (lanes_text, None)})
set_progress_factory(TextProgressBar)
