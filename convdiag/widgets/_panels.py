"""HTML panels of the explorer: the iterate table and the "where it stands" panel.

Pure string work on a run (cut at the cursor), its order estimate and its
diagnosis; every user string is escaped.
"""

from __future__ import annotations

import html
import math
from typing import Any

from ..core._run import CONVERGED
from ..report._step_figures import COLOURS, MODEL_NAMES
from ..report._text import fmt

__all__ = ["iterate_table", "legend_html", "status_panel"]

_TD = "padding:1px 7px;border-bottom:1px solid #e3e8ec;text-align:right;font-family:monospace;white-space:nowrap;"
_TH = ("padding:2px 7px;border-bottom:2px solid #9fb0bf;text-align:right;font-weight:600;color:#243447;"
       "white-space:nowrap;background:#f3f6f8;")
MAX_ROWS = 12


def _orders_for(est: Any, n: int) -> tuple[list[float], list[float], tuple[int, int] | None, int]:
    """Errors and single-step orders aligned with the n iterates, the estimate's window and the offset."""
    if est is None:
        return [math.nan] * n, [math.nan] * n, None, 0
    errs, ords = list(est.errors), list(est.orders)
    off = n - len(ords) if 0 <= n - len(ords) <= 1 else 0
    pad = [math.nan] * off
    e = (pad + errs)[:n] if est.root is not None else [math.nan] * n
    q = (pad + ords)[:n]
    return e + [math.nan] * (n - len(e)), q + [math.nan] * (n - len(q)), est.window, off


def iterate_table(run: Any, est: Any = None) -> str:
    """The iterates up to the cursor: x, f(x), step, error, log-error ratio, evaluations, what the step did."""
    xs, fs = list(run.iterates), list(run.values)
    n0, n = len(run.starts), len(xs)
    errs, ords, window, off = _orders_for(est, n)
    show_err = est is not None and est.root is not None
    heads = ["k", "xₖ", "f(xₖ)", "step |xₖ − xₖ₋₁|"] + (["error |xₖ − r|"] if show_err else [])
    heads += ["log-error ratio", "evals", "what the step did"]
    tips = {"log-error ratio": "q = log(eₖ₊₁/eₖ) / log(eₖ/eₖ₋₁): settles at the order of convergence "
                               "(2 for Newton at a simple root). Bold: the values the order estimate uses.",
            "evals": "function evaluations so far, derivatives included"}
    head = "".join(f'<th style="{_TH}{"text-align:left;" if h == heads[-1] else ""}" '
                   f'title="{html.escape(tips.get(h, ""))}">{html.escape(h)}</th>' for h in heads)
    rows = []
    evals = list(run.evals_at_iterates)
    first = 0 if n - n0 <= MAX_ROWS else n - MAX_ROWS
    for i in range(n):
        if n0 <= i < first:
            if i == n0:
                rows.append(f'<tr><td colspan="{len(heads)}" style="{_TD}text-align:center;color:#6b7785;">'
                            f"… {first - n0} earlier steps …</td></tr>")
            continue
        k = i - (n0 - 1)
        step = "" if i == 0 else fmt(abs(xs[i] - xs[i - 1]), 3)
        q = ords[i]
        in_window = window is not None and window[0] <= i - off <= window[1] and math.isfinite(q)
        qtxt = "" if not math.isfinite(q) else (f"<b>{q:.3f}</b>" if in_window else f"{q:.3f}")
        what = "start" if i < n0 else run.steps[i - n0].reason
        cells = [f"{k}", fmt(xs[i], 12), fmt(fs[i], 4), step]
        if show_err:
            cells.append("" if not math.isfinite(errs[i]) else fmt(errs[i], 3))
        current = i == n - 1
        style = "background:#fff4d6;" if current else ""
        tds = "".join(f'<td style="{_TD}">{html.escape(c)}</td>' for c in cells)
        tds += f'<td style="{_TD}">{qtxt}</td><td style="{_TD}">{evals[i]}</td>'
        tds += f'<td style="{_TD}text-align:left;font-family:inherit;color:#3b4a5a;">{html.escape(what)}</td>'
        rows.append(f'<tr class="cdx-row" style="{style}">{tds}</tr>')
    fail = run.failure
    if fail is not None and fail.x is not None:
        rows.append(f'<tr><td style="{_TD}color:#b3261e;">✗</td><td style="{_TD}color:#b3261e;">'
                    f'{html.escape(fmt(fail.x, 12))}</td><td colspan="{len(heads) - 2}" style="{_TD}'
                    f'text-align:left;color:#b3261e;font-family:inherit;">f failed here: {html.escape(fail.reason)}'
                    "</td></tr>")
    return ('<div style="max-height:300px;overflow:auto;"><table class="cdx-table" style="border-collapse:collapse;'
            f'font-size:12px;"><thead><tr>{head}</tr></thead><tbody>{"".join(rows)}</tbody></table></div>')


def _line(label: str, body: str, colour: str = "#243447") -> str:
    return (f'<div style="margin:3px 0;"><span style="color:#6b7785;">{html.escape(label)}</span> '
            f'<span style="color:{colour};">{body}</span></div>')


def _order_text(run: Any, est: Any, order_available: bool) -> str:
    nominal = run.nominal_order
    theory = (f"{run.method_title}'s order at a simple root: {nominal:.3g}" if math.isfinite(nominal) else "")
    if not order_available:
        return "the order estimate is not available yet in this version of convdiag"
    if est is None:
        return "needs at least three iterates. " + html.escape(theory)
    if not est.converged_estimate:
        return f"{html.escape(est.label)} so far. {html.escape(theory)}"
    pts = f"{est.points} value{'s' if est.points != 1 else ''}"
    return f"<b>{html.escape(est.label_text)}</b>, from {pts} ({html.escape(est.reference)}). {html.escape(theory)}"


def _value(v: Any) -> str:
    if isinstance(v, (tuple, list)):
        return ", ".join(_value(x) for x in v)
    return v if isinstance(v, str) else fmt(v, 6)


def _finding_html(fnd: Any, primary: bool) -> str:
    tag = f" ({fnd.tag})" if getattr(fnd, "tag", "") else ""
    rows = "".join(
        f'<tr><td style="padding:0 8px 0 0;color:#6b7785;">{html.escape(str(label))}</td>'
        f'<td style="padding:0 8px 0 0;font-family:monospace;">{html.escape(_value(value))}</td>'
        f'<td style="color:#6b7785;">{html.escape(str(note))}</td></tr>'
        for label, value, note in getattr(fnd, "evidence", ()))
    evidence = f'<table style="font-size:11.5px;margin:1px 0 2px 0;">{rows}</table>' if rows else ""
    advice = getattr(fnd, "advice", "")
    todo = f'<div><span style="color:#1d5f8a;">What to try:</span> {html.escape(advice)}</div>' if advice else ""
    weight = "600" if primary else "400"
    return (f'<div style="margin:3px 0 3px 12px;"><span style="font-weight:{weight};">• {html.escape(fnd.kind)}'
            f"{html.escape(tag)}</span>: {html.escape(fnd.summary)}{evidence}{todo}</div>")


def _diagnosis_html(diag: Any, diag_available: bool, finished: bool) -> str:
    if not diag_available:
        return _line("Verdict:", "the diagnosis is not available yet in this version of convdiag", "#6b7785")
    if diag is None:
        why = "working it out…" if finished else "step to the end (or press Run to end) to get the verdict"
        return _line("Verdict:", html.escape(why), "#6b7785")
    if isinstance(diag, Exception):
        return _line("Verdict:", f"none: {html.escape(str(diag))}", "#6b7785")
    colour = "#1d7a46" if diag.verdict == "converged" else "#b3261e"
    parts = [_line("Verdict:", f"<b>{html.escape(diag.verdict)}</b>", colour)]
    parts += [_finding_html(f, i == 0) for i, f in enumerate(diag.findings)]
    return "".join(parts)


def status_panel(run: Any, *, computed: int, est: Any, diag: Any, order_available: bool,
                 diag_available: bool, finished: bool, busy: str = "") -> str:
    """Where the run stands: the current point, the order so far, why it stopped, the verdict."""
    xs, fs = run.iterates, run.values
    k = len(run.steps)
    here = (f"step {k} of {computed} computed" if k else "at the start") + f", {run.evals_at_iterates[-1]} evaluations"
    parts = [f'<div style="font-size:12.5px;line-height:1.35;color:{COLOURS["ink"]};">',
             '<div style="font-weight:600;font-size:13px;margin-bottom:2px;">Where it stands</div>',
             _line("Now:", html.escape(f"{here}; x = {fmt(xs[-1], 12)}, f(x) = {fmt(fs[-1], 4)}"))]
    if busy:
        parts.append(_line("Working:", html.escape(busy), "#1d5f8a"))
    parts.append(_line("Observed order:", _order_text(run, est, order_available)))
    for note in getattr(run, "notes", ()):
        parts.append(_line("Note:", html.escape(note), "#6b7785"))
    if finished:
        reason = run.stop_reason
        ok = reason in CONVERGED
        colour = "#1d7a46" if ok else "#b3261e"
        state = ("converged" if ok else "did not converge") + f" ({reason}): {run.message}"
        parts.append(_line("Stopped:", html.escape(state), colour))
        if ok:
            parts.append(_line("Root:", f"<b>{html.escape(fmt(run.root, 15))}</b>"))
        if run.failure is not None and run.failure.advice:
            parts.append(_line("What to try:", html.escape(run.failure.advice)))
    parts.append(_diagnosis_html(diag, diag_available, finished))
    parts.append("</div>")
    return "".join(parts)


def _key(symbol: str, colour: str, text: str) -> str:
    return (f'<span style="margin-right:10px;white-space:nowrap;"><span style="color:{colour};font-weight:700;">'
            f"{symbol}</span> {html.escape(text)}</span>")


def legend_html(model_kind: str, bracket: bool) -> str:
    """The figure's key, in HTML under the figure (sharper and cheaper than a drawn legend)."""
    c = COLOURS
    left = [_key("━", c["ink"], "f(x)"),
            _key("╍", c["model"], MODEL_NAMES.get(model_kind, "the step's model") if model_kind else "the step's model"),
            _key("✕", c["model"], "where the model is zero"), _key("◆", c["new"], "new point"),
            _key("●", c["past"], "earlier points")]
    if bracket:
        left.append(_key("▮", c["bracket"], "bracket (light: before the step)"))
    right = [_key("●", c["step"], "step |xₖ − xₖ₋₁|"), _key("▲", c["resid"], "|f(xₖ)|"),
             _key("■", c["error"], "error |xₖ − r|")]
    return (f'<div style="display:flex;justify-content:space-between;flex-wrap:wrap;font-size:11.5px;'
            f'color:{c["ink"]};max-width:960px;margin:-2px 0 4px 0;"><div style="margin-left:50px;">{"".join(left)}'
            f'</div><div>{"".join(right)}</div></div>')
