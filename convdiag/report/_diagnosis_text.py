"""Text and HTML forms of a diagnosis: the verdict in a sentence, the numbers in a table, what to change.

Pure string work (no matplotlib). Registered with core's display hook on
import, so :class:`~convdiag.core._diagnose.Diagnosis` shows itself in
terminals and notebooks. The layout: a headline with the verdict, the primary
finding (what happened, the evidence table, what to change and how to apply
it: ``diagnosis.remedy.solve(f)`` from Python, and for an expression also the
``convdiag`` command line with the expression's text and parameters; a callable
exists only in the Python session), then the other findings more briefly, then
the observed order and notes. Numbers show 7 significant digits, more (up to 17)
when the numbers of one evidence row would otherwise look equal.
"""

from __future__ import annotations

import html
from typing import Any

from ..core._diagnose import Diagnosis
from ..core._findings import Finding
from ..core._show import register_formatter
from ._text import fmt, html_table, text_table

__all__ = ["diagnosis_html", "diagnosis_text", "evidence_rows"]

_HEADERS = ["evidence", "value", "what it says"]
#: colour of the verdict in HTML (green only for a clean convergence)
_GOOD, _WARN, _BAD = "#1b7f3b", "#8a5a00", "#b3261e"
_WARN_KINDS = {"slow", "budget", "unattainable-tolerance", "noise-floor", "multiple-root"}

_WORDS = {
    "converged": "Converged",
    "cycle": "Caught in a cycle",
    "divergence": "Ran away",
    "multiple-root": "Slowed by a multiple root",
    "wrong-derivative": "Wrong derivative",
    "noise-floor": "Stalled at the noise floor",
    "pole": "A pole, not a root",
    "domain-error": "Outside the domain of f",
    "flat": "A flat spot of f",
    "slow": "Slow convergence",
    "unattainable-tolerance": "Tolerance out of reach",
    "budget": "Out of budget",
}


def _value(v: Any, digits: int = 7) -> str:
    if isinstance(v, str):
        return v
    if isinstance(v, bool):
        return "yes" if v else "no"
    if isinstance(v, int):
        return str(v)
    if isinstance(v, (tuple, list)):
        d = _distinct_digits(v)
        return ", ".join(_value(u, d) for u in v)
    try:
        f = float(v)
    except (TypeError, ValueError, OverflowError):
        return str(v)
    return fmt(f, digits)


def _distinct_digits(values: Any) -> int:
    """Significant digits (7 to 17) that show numbers of one evidence row apart when they differ."""
    nums: set[float] = set()
    for u in values:
        if isinstance(u, (int, float)) and not isinstance(u, bool):
            nums.add(float(u))
    for digits in range(7, 17):
        if len({fmt(u, digits) for u in nums}) == len(nums):
            return digits
    return 17


def evidence_rows(finding: Finding) -> list[list[str]]:
    """The evidence of a finding as table rows (label, value, note); the numbers of a row that differ show apart."""
    return [[label, _value(value), note] for label, value, note in finding.evidence]


def _headline(d: Diagnosis) -> str:
    tag = f" ({d.primary.tag})" if d.primary.tag else ""
    return f"{_WORDS.get(d.verdict, d.verdict)} — verdict: {d.verdict}{tag}"


def _source(d: Diagnosis) -> str:
    what = {"run": "run", "recording": "recording of a solver", "sequence": "sequence of iterates"}[d.source_kind]
    parts = [what]
    if d.evaluations is not None:
        parts.append(f"{d.evaluations} evaluations")
    if d.probes:
        parts.append(f"{d.probes} extra evaluations by the diagnosis")
    return f"Diagnosis of {d.label} ({', '.join(parts)})"


def _apply(d: Diagnosis, f: Finding) -> str:
    """How to apply the remedy: from Python always; as a command line when f is an expression."""
    r = f.remedy
    if r is None:
        return ""
    if d.expression is None:  # a callable: it exists only in the Python session
        return "diagnosis.remedy.solve(f)"
    return f"diagnosis.remedy.solve(f)  ·  {r.command_line(d.expression, dict(d.params))}"


def _order_line(d: Diagnosis) -> str:
    e = d.order
    if e is None:
        return ""
    where = f"; a replay of the run at {e.digits} digits" if getattr(e, "basis", "run") == "replay" else ""
    return f"Observed order: {e.label_text} (reference: {e.reference}{where})"


def diagnosis_text(d: Diagnosis) -> str:
    """The readable text form (also what ``convdiag diagnose`` prints)."""
    p = d.primary
    out = [_source(d), "", _headline(d), f"  {p.summary}"]
    if p.evidence:
        out += ["", _indent(text_table(_HEADERS, evidence_rows(p), "lrl"))]
    if p.advice:
        out += ["", f"  What to change: {p.advice}"]
    if p.remedy is not None:
        out.append(f"  Apply it: {_apply(d, p)}")
    others = d.findings[1:]
    if others:
        out += ["", "Also found:"]
        for f in others:
            tag = f" ({f.tag})" if f.tag else ""
            out += ["", f"  {f.kind}{tag}: {f.summary}"]
            if f.evidence:
                out.append(_indent(text_table(_HEADERS, evidence_rows(f), "lrl"), 4))
            if f.advice:
                out.append(f"    What to change: {f.advice}")
    line = _order_line(d)
    if line:
        out += ["", line]
    for n in d.notes:
        out.append(f"note: {n}")
    return "\n".join(out)


def _indent(text: str, n: int = 2) -> str:
    return "\n".join(" " * n + ln if ln else ln for ln in text.splitlines())


def _colour(verdict: str) -> str:
    if verdict == "converged":
        return _GOOD
    return _WARN if verdict in _WARN_KINDS else _BAD


def _finding_html(d: Diagnosis, f: Finding, *, primary: bool) -> str:
    esc = html.escape
    tag = f" ({f.tag})" if f.tag else ""
    head = (f'<div style="margin-top:6px;"><b>{esc(f.kind)}{esc(tag)}</b>: {esc(f.summary)}</div>' if not primary
            else f'<div style="margin-top:4px;">{esc(f.summary)}</div>')
    parts = [head]
    if f.evidence:
        parts.append(html_table(_HEADERS, evidence_rows(f), "lrl"))
    if f.advice:
        parts.append(f'<div><b>What to change:</b> {esc(f.advice)}</div>')
    if f.remedy is not None and primary:
        parts.append(f'<div style="color:#555;">Apply it: <code>{esc(_apply(d, f))}</code></div>')
    return "".join(parts)


def diagnosis_html(d: Diagnosis) -> str:
    """A small HTML block (inline styles, no JavaScript; every user string escaped)."""
    esc = html.escape
    parts = [
        '<div style="font-family:system-ui,sans-serif;font-size:13px;max-width:60em;">',
        f'<div style="color:#555;">{esc(_source(d))}</div>',
        f'<div style="font-weight:600;font-size:14px;color:{_colour(d.verdict)};">{esc(_headline(d))}</div>',
        _finding_html(d, d.primary, primary=True),
    ]
    if len(d.findings) > 1:
        parts.append('<div style="margin-top:8px;font-weight:600;">Also found</div>')
        parts += [_finding_html(d, f, primary=False) for f in d.findings[1:]]
    line = _order_line(d)
    if line:
        parts.append(f'<div style="margin-top:6px;">{esc(line)}</div>')
    parts += [f'<div style="color:#555;">note: {esc(n)}</div>' for n in d.notes]
    parts.append("</div>")
    return "".join(parts)


register_formatter(Diagnosis, text=diagnosis_text, html=diagnosis_html)
