"""Text and HTML forms of a bracket search: one row per candidate, then advice and notes.

Pure string work (no matplotlib). Registered with core's display hook on
import, so ``BracketSearch`` results show themselves in notebooks and terminals.
"""

from __future__ import annotations

import html
import math
from typing import Any

from ..core._brackets import KINDS, BracketSearch, Candidate
from ..core._show import register_formatter
from ._text import fmt, html_table, text_table

__all__ = ["brackets_html", "brackets_rows", "brackets_text"]

_HEADERS = ["#", "kind", "lo", "hi", "x", "evidence", "Newton x0", "secant pair", "IQI triple"]
_ALIGN = "rlrrrlrll"

#: colour of each kind in the HTML table (also used by the figure).
KIND_COLOURS = {
    "root": "#1f6f43",
    "pole": "#b3261e",
    "jump": "#7b3fa0",
    "touch": "#c77700",
    "domain-edge": "#5f6b7a",
    "unclassified": "#333333",
}


def _evidence(c: Candidate) -> str:
    e = c.evidence
    if e.get("exact_zero") and c.kind in ("root", "touch"):
        return "f = 0 exactly"
    q = e.get("exponent", math.nan)
    if c.kind in ("root", "pole") and math.isfinite(q):
        return f"|f| ~ width^{q:.2f}"
    if c.kind == "pole":
        return "f infinite"
    if c.kind == "jump":
        return f"steps {fmt(c.f_lo, 3)} → {fmt(c.f_hi, 3)}"
    if c.kind == "touch":
        return f"min |f| = {fmt(e.get('min_abs_f'), 2)}"
    if c.kind == "domain-edge":
        return f"{'overflows' if e.get('overflow') else 'undefined'} on the {c.undefined_side}"
    return "budget ran out"


def _many(v: Any) -> str:
    return "" if v is None else ", ".join(fmt(t, 10) for t in v)


def brackets_rows(search: BracketSearch) -> tuple[list[str], list[list[str]], str]:
    """Headers, rows and alignment of the candidate table."""
    rows = []
    for c in search.candidates:
        rows.append(
            [
                "" if c.rank is None else str(c.rank),
                c.kind,
                fmt(c.lo, 10),
                fmt(c.hi, 10),
                fmt(c.x, 10),
                _evidence(c),
                "" if c.newton is None else fmt(c.newton, 12),
                _many(c.secant),
                _many(c.iqi),
            ]
        )
    return list(_HEADERS), rows, _ALIGN


def _title(search: BracketSearch) -> str:
    if search.domain is not None:
        return f"Bracket search on {search.problem} over [{fmt(search.domain[0])}, {fmt(search.domain[1])}]"
    return f"Bracket search on {search.problem} outward from x = {fmt(search.near)}"


def _counts(search: BracketSearch) -> str:
    plural = {"touch": "touches", "unclassified": "unclassified"}
    parts = []
    for kind in KINDS:
        n = len(search.of_kind(kind))
        if n:
            parts.append(f"{n} {kind if n == 1 else plural.get(kind, kind + 's')}")
    found = ", ".join(parts) or "nothing found"
    return f"{found}; {search.evaluations} evaluations (budget {search.max_evals})"


def _rule(search: BracketSearch) -> str:
    if not math.isfinite(search.scale):
        return ""
    return (
        f"scale of f: {fmt(search.scale, 3)} (median |f| over the samples); a dip without a sign change is a "
        "touch when |f| comes within 1e-8 of that scale"
    )


def _advice_lines(search: BracketSearch) -> list[str]:
    out = []
    for c in search.candidates:
        tag = f"{c.rank}." if c.rank is not None else "-"
        out.append(f"  {tag} [{c.kind}] {c.recommend}")
        out.append(f"     why: {c.reason}")
        for check in c.checks:
            out.append(f"     checked: {check}")
    return out


def brackets_text(search: BracketSearch) -> str:
    """The readable text form printed by ``convdiag brackets``."""
    headers, rows, align = brackets_rows(search)
    lines = [_title(search), f"  {_counts(search)}"]
    rule = _rule(search)
    if rule:
        lines.append(f"  {rule}")
    if rows:
        lines += ["", text_table(headers, rows, align)]
    if search.candidates:
        lines += ["", "What to do:"] + _advice_lines(search)
    for note in search.notes:
        lines.append(f"note: {note}")
    return "\n".join(lines)


def brackets_html(search: BracketSearch) -> str:
    headers, rows, align = brackets_rows(search)
    esc = html.escape
    parts = [
        '<div style="font-family:system-ui,sans-serif;font-size:13px;">',
        f'<div style="font-weight:600;">{esc(_title(search))}</div>',
        f"<div>{esc(_counts(search))}</div>",
    ]
    rule = _rule(search)
    if rule:
        parts.append(f'<div style="color:#555;">{esc(rule)}</div>')
    if rows:
        parts.append(html_table(headers, rows, align))
    if search.candidates:
        parts.append('<ul style="margin:4px 0;padding-left:18px;">')
        for c in search.candidates:
            colour = KIND_COLOURS.get(c.kind, "#333")
            checks = "".join(f"<br><small>checked: {esc(t)}</small>" for t in c.checks)
            parts.append(
                f'<li><b style="color:{colour};">{esc(c.kind)}</b> {esc(c.recommend)}'
                f'<br><small style="color:#555;">why: {esc(c.reason)}</small>{checks}</li>'
            )
        parts.append("</ul>")
    for note in search.notes:
        parts.append(f'<div style="color:#555;">note: {esc(note)}</div>')
    parts.append("</div>")
    return "".join(parts)


register_formatter(BracketSearch, text=brackets_text, html=brackets_html)
