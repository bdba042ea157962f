"""Text and HTML forms of order estimates and equal-work comparisons.

Pure string work (no matplotlib). Registered with core's display hook on
import, so :class:`~convdiag.core._order.OrderEstimate` and
:class:`~convdiag.core._order.Comparison` show themselves in terminals and
notebooks.
"""

from __future__ import annotations

import html
import math

from ..core._order import Comparison, OrderEstimate
from ..core._show import register_formatter
from ._text import fmt, html_table, text_table

__all__ = ["comparison_html", "comparison_text", "order_html", "order_text"]

_BASIS = {"run": "the run's own iterates", "sequence": "the sequence as given"}
_MAX_ROWS = 24


def _basis(e: OrderEstimate) -> str:
    if e.basis == "replay":
        return f"a high-precision replay of the run at {e.digits} digits"
    if e.basis == "run" and e.digits:
        return f"the run's own iterates ({e.digits} digits)"
    return _BASIS.get(e.basis, e.basis)


def _headline(e: OrderEstimate) -> str:
    if not e.converged_estimate:
        return f"Observed order: {e.label}"
    spread = f" ± {e.spread:.2g}" if math.isfinite(e.spread) else ""
    return f"Observed order {e.value:.3f}{spread}: {e.label_text}"


def _window(e: OrderEstimate) -> str:
    if e.window is None:
        return f"none ({e.points} points)"
    pts = f"{e.points} point{'s' if e.points != 1 else ''}"
    if "growth" in e.centre or "Theil" in e.centre:
        return f"steps k = {e.window[0]} … {e.window[1]}: {pts}, {e.centre}"
    sym = "ρ" if e.rate is not None else "q"
    return f"{sym}_{e.window[0]} … {sym}_{e.window[1]}: {pts}, {e.centre}"


def _short(e: OrderEstimate) -> str:
    if not e.converged_estimate:
        return f"{e.label} ({e.points} points)"
    if e.rate is not None:
        return f"{e.label_text} from {e.points} points"
    return f"{e.label_text}, {e.value:.3f} from {e.points} points"


def _facts(e: OrderEstimate) -> list[tuple[str, str]]:
    rows = [("window", _window(e)), ("reference", f"{e.reference}: {e.reference_note}" if e.reference_note else e.reference)]
    rows.append(("measured on", e.source or _basis(e)))
    if e.alternative is not None:
        alt = e.alternative
        other = "the run itself" + (" (double precision)" if not alt.digits else "") if alt.basis == "run" else (
            f"the replay at {alt.digits} digits")
        rows.append(("label rests on", f"{_basis(e)}; {other}: {_short(alt)}"))
    if e.rate is not None:
        spread = f" ± {e.rate_spread:.2g}" if e.rate_spread is not None and math.isfinite(e.rate_spread) else ""
        rows.append(("linear rate", f"{e.rate:.4g}{spread}"))
    if e.multiplicity is not None or e.multiplicity_note:
        m = "unknown" if e.multiplicity is None else str(e.multiplicity)
        rows.append(("multiplicity", f"{m}" + (f" ({e.multiplicity_note})" if e.multiplicity_note else "")))
    if e.method:
        nominal = f", theoretical order {e.nominal_order:.4g}" if e.nominal_order is not None else ""
        rows.append(("method", f"{e.method}{nominal}"))
    if e.efficiency is not None or e.efficiency_theory is not None:
        per = (f" ({e.evals_per_step:g} evaluation{'' if e.evals_per_step == 1 else 's'} per step)"
               if e.evals_per_step is not None else "")
        obs = f"{e.efficiency:.4g}{per}" if e.efficiency is not None else "—"
        if e.rate is not None and e.evals_per_step:
            obs = f"order 1; rate per evaluation {e.rate ** (1 / e.evals_per_step):.4g}{per}"
        theory = f"; theory {e.efficiency_theory:.4g}" if e.efficiency_theory is not None else ""
        rows.append(("efficiency p^(1/d)", obs + theory))
    if e.error_constant is not None:
        theory = f", theory {e.error_constant_theory:.4g}" if e.error_constant_theory is not None else ""
        rows.append(("error constant", f"{e.error_constant:.4g}{theory} ({e.error_constant_note})"))
    why = f"; {e.floor_note}" if e.floor_note else ""
    if e.floor > 0:
        rows.append(("rounding floor", f"{e.floor:.3g} (errors below 10× this are not used{why})"))
    else:
        rows.append(("rounding floor", e.floor_note or "none known (only exact zeros are left out)"))
    return rows


def _table(e: OrderEstimate) -> tuple[list[str], list[list[str]]]:
    n = len(e.log_errors)
    lo, hi = e.window if e.window else (n, -1)
    keep = set(range(min(3, n))) | set(range(max(0, n - 3), n))
    span = list(range(max(lo - 1, 0), min(hi + 2, n)))
    keep |= set(span if len(span) <= 14 else span[:7] + span[-7:])
    rows: list[list[str]] = []
    last = -1
    for k in sorted(keep)[: _MAX_ROWS + 6]:
        if k > last + 1:
            rows.append(["…", "", "", "", ""])
        last = k
        L = e.log_errors[k]
        err = "0" if L == -math.inf else (_tiny(L) if math.isfinite(L) and L < -300 else fmt(e.errors[k], 4))
        q = e.orders[k] if k < len(e.orders) else math.nan
        rho = e.log_errors[k + 1] - L if k + 1 < n else math.nan
        rho_s = fmt(10.0**rho, 4) if math.isfinite(rho) and rho < 300 else ""
        mark = "◂" if lo <= k <= hi else ""
        rows.append([str(k), err, fmt(q, 4) if math.isfinite(q) else "", rho_s, mark])
    what = {"successive differences": "|x_(k+1) − x_k|", "residuals": "|f(x_k)|"}.get(e.reference, "e_k")
    return ["k", what, "q_k", "ratio to next", "window"], rows


def _tiny(log10_value: float) -> str:
    """A number below double range from its log10: 10**-335.8 -> '1.58e-336'."""
    exponent = math.floor(log10_value)
    mantissa = 10 ** (log10_value - exponent)
    return f"{mantissa:.3g}e{exponent}"


def order_text(e: OrderEstimate) -> str:
    """The readable text form of an :class:`OrderEstimate`."""
    width = max(len(k) for k, _ in _facts(e))
    lines = [_headline(e)]
    lines += [f"  {k.ljust(width)}  {v}" for k, v in _facts(e)]
    lines += [f"  note: {n}" for n in e.notes]
    if e.log_errors:
        headers, rows = _table(e)
        lines += ["", text_table(headers, rows, "rrrrl")]
    return "\n".join(lines)


def order_html(e: OrderEstimate) -> str:
    """A small HTML block (inline styles, no JavaScript; every user string escaped)."""
    esc = html.escape
    colour = "#1b7f3b" if e.converged_estimate else "#8a5a00"
    facts = "".join(
        f'<tr><td style="padding:1px 8px 1px 0;color:#555;vertical-align:top;">{esc(k)}</td>'
        f'<td style="padding:1px 0;">{esc(v)}</td></tr>'
        for k, v in _facts(e)
    )
    parts = [
        '<div style="font-family:system-ui,sans-serif;font-size:13px;">',
        f'<div style="font-weight:600;color:{colour};">{esc(_headline(e))}</div>',
        f'<table style="border-collapse:collapse;margin:4px 0;">{facts}</table>',
    ]
    parts += [f'<div style="color:#555;">note: {esc(n)}</div>' for n in e.notes]
    if e.log_errors:
        headers, rows = _table(e)
        parts.append(html_table(headers, rows, "rrrrl"))
    parts.append("</div>")
    return "".join(parts)


def _comparison_rows(c: Comparison) -> tuple[list[str], list[list[str]]]:
    headers = ["method", "observed order", "evals/step", "efficiency", "theory", f"evals to {c.tol:g}", "stop"]
    order = sorted(c.results, key=lambda r: (r.evals_to_tol is None, r.evals_to_tol or 0, r.method))
    rows = []
    for r in order:
        e = r.estimate
        rows.append([
            r.method,
            e.label_text if not e.converged_estimate or e.label in ("linear", "sublinear") else f"{e.value:.3f} ({e.label})",
            fmt(e.evals_per_step, 3),
            fmt(e.efficiency, 4),
            fmt(e.efficiency_theory, 4),
            "—" if r.evals_to_tol is None else str(r.evals_to_tol),
            str(getattr(r.run, "stop_reason", "")),
        ])
    return headers, rows


def comparison_text(c: Comparison) -> str:
    """Equal-work comparison as a text table, fastest first."""
    root = f" (root {c.root:.17g}, {c.reference})" if c.root is not None else ""
    head = [f"Equal-work comparison on {c.problem}{root}", "  efficiency = observed order^(1/evaluations per step)"]
    head += [f"  note: {n}" for n in c.notes]
    headers, rows = _comparison_rows(c)
    return "\n".join([*head, "", text_table(headers, rows, "lrrrrrl")])


def comparison_html(c: Comparison) -> str:
    esc = html.escape
    root = f" (root {c.root:.17g}, {c.reference})" if c.root is not None else ""
    headers, rows = _comparison_rows(c)
    notes = "".join(f'<div style="color:#555;">note: {esc(n)}</div>' for n in c.notes)
    return (
        '<div style="font-family:system-ui,sans-serif;font-size:13px;">'
        f'<div style="font-weight:600;">Equal-work comparison on <code>{esc(c.problem)}</code>{esc(root)}</div>'
        f"{notes}{html_table(headers, rows, 'lrrrrrl')}"
        '<div style="color:#555;">efficiency = observed order^(1/evaluations per step)</div></div>'
    )


def _register() -> None:
    register_formatter(OrderEstimate, text=order_text, html=order_html)
    register_formatter(Comparison, text=comparison_text, html=comparison_html)


_register()
