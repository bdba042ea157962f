"""The setup tables of a report: how a run, a comparison or a sweep was set up, enough to run it again.

Pure string work (no matplotlib): the settings of each kind of result as (setting, value) rows, and how
function-valued settings read (an expression's text, a function's name, a lambda's own source).
"""

from __future__ import annotations

import html
import inspect
import math
from typing import Any

from ._document import md_table
from ._text import fmt, html_table, tolerance_rule

__all__ = ["callable_text", "comparison_setup", "run_setup_rows", "source_html", "source_of", "sweep_label",
           "sweep_setup"]


def callable_text(obj: Any) -> str:
    """How a function-valued setting reads in a report: an expression's text, a function's name, a lambda's source.

    Examples
    --------
    >>> callable_text(lambda M, e: M + e * 0.5)
    'lambda M, e: M + e * 0.5'
    >>> callable_text(abs), callable_text("x**2 - a"), callable_text(None)
    ('abs', 'x**2 - a', '')
    """
    if obj is None:
        return ""
    if isinstance(obj, str) or type(obj).__module__.startswith("sympy"):
        return str(obj)
    name = getattr(obj, "__name__", None)
    if name == "<lambda>":
        return _lambda_source(obj) or "a lambda (its source is not available)"
    return str(name or type(obj).__name__)


def _lambda_source(fn: Any) -> str:
    """The text of a lambda on its line of source: the longest ``lambda ...`` that compiles to the same code."""
    import ast
    import linecache

    code = getattr(fn, "__code__", None)
    if code is None:
        return ""
    lines = linecache.getlines(code.co_filename)[code.co_firstlineno - 1: code.co_firstlineno + 15]
    text = "".join(lines)[:4000]
    best = ""
    first = len(lines[0]) if lines else 0
    for start in (i for i in range(first) if text.startswith("lambda", i)):  # it starts on its first line
        for end in range(len(text), start, -1):
            if end < len(text) and text[end] not in ",)]}\n;#":
                continue
            seg = text[start:end]
            try:
                node = ast.parse(seg.strip(), mode="eval").body
                made = compile(seg.strip(), "<lambda>", "eval").co_consts
            except (SyntaxError, ValueError):
                continue
            if not isinstance(node, ast.Lambda):
                continue  # "lambda x: a, b" reads as a tuple: shorter
            if any(_same_code(c, code) for c in made):
                best = " ".join(seg.split())
            break  # the longest lambda that parses from this start
    return best


def _same_code(a: Any, b: Any) -> bool:
    """Same names, arguments and constants (bytecode itself differs between how a line was compiled)."""
    def key(c: Any) -> tuple[Any, ...]:
        consts = tuple(repr(v) for v in c.co_consts if v is not None and not hasattr(v, "co_code"))
        return c.co_names, c.co_varnames, c.co_argcount, consts

    return hasattr(a, "co_names") and key(a) == key(b)


def _lambda_of(run: Any) -> str:
    """The source of a run's function when it is a lambda (its label then reads only "function")."""
    raw = getattr(getattr(run, "source", None), "raw", None)
    return _lambda_source(raw) if getattr(raw, "__name__", "") == "<lambda>" else ""


def source_of(run: Any) -> str:
    """The source of a run's Python function (its first 40 lines); "" for expressions, lambdas and builtins."""
    problem = getattr(run, "source", None)
    if problem is None or getattr(problem, "expression", None) is not None or _lambda_of(run):
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


def run_setup_rows(run: Any) -> list[list[str]]:
    """(setting, value) rows of a run: function, method, starts, bracket, parameters, stopping rule, budgets."""
    s = run.settings
    rows = [
        ["function", _lambda_of(run) or str(run.problem)],
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


def _table(rows: list[list[str]], headers: tuple[str, ...] = ("setting", "value"), align: str = "ll",
           caption: str = "") -> tuple[str, str]:
    return md_table(list(headers), rows), html_table(list(headers), rows, align, caption)


def comparison_setup(c: Any) -> tuple[str, str]:
    """One table of what every method shared, one row per method of what was its own."""
    runs = [r.run for r in c.results]
    first = runs[0]
    shared = [["function", _lambda_of(first) or str(c.problem)]]
    if first.params:
        shared.append(["parameters", ", ".join(f"{k} = {v:g}" for k, v in first.params.items())])
    opens = [r for r in runs if r.bracket is None]
    brackets = [r for r in runs if r.bracket is not None]
    if opens:
        shared.append(["start (open methods)", ", ".join(fmt(v, 17) for v in opens[0].starts)])
    if brackets:
        a, b = brackets[0].bracket
        shared.append(["bracket (bracketing methods)", f"[{fmt(a, 17)}, {fmt(b, 17)}]"])
    budgets = sorted({r.settings.max_evals for r in runs})
    shared += [
        ["budget", " / ".join(map(str, budgets)) + " evaluations per method"],
        ["work counted until", f"|x − r| ≤ {c.tol:g} (the evaluations each method needed)"],
        ["errors measured against", f"{c.reference}" + (f", r = {fmt(c.root, 17)}" if c.root is not None else "")],
    ]
    per = [[r.method, ", ".join(fmt(v, 17) for v in r.starts), tolerance_rule(r), r.derivative_source or "—",
            r.stop_reason] for r in runs]
    md, page = _table(shared, caption="the same for every method")
    md2, page2 = _table(per, ("method", "starts", "stopping rule", "derivative", "stopped"), "lrlll",
                        caption="each method")
    source = source_of(first)
    code = (f"\n\nThe function's source:\n\n```python\n{source}\n```", source_html(source)) if source else ("", "")
    return "The same for every method:\n\n" + md + "\n\nEach method:\n\n" + md2 + code[0], page + page2 + code[1]


def source_html(source: str) -> str:
    return f'<pre style="background:#f4f6f8;padding:8px;font-size:12px;">{html.escape(source)}</pre>'


def _axis_text(values: Any) -> str:
    import numpy as np

    v = np.unique(np.asarray(values, dtype=float))
    if v.size <= 6:
        return f"{v.size} value{'s' if v.size > 1 else ''}: " + ", ".join(fmt(x, 8) for x in v)
    d = np.diff(v)
    if np.allclose(d, d[0], rtol=1e-6, atol=0.0):
        spacing = ", evenly spaced"
    elif v[0] > 0 and np.allclose(np.diff(np.log(v)), math.log(v[1] / v[0]), rtol=1e-6, atol=0.0):
        spacing = ", evenly spaced on a log scale"
    else:
        spacing = ""
    return f"{v.size} values from {fmt(v[0], 8)} to {fmt(v[-1], 8)}{spacing}"


def sweep_setup(res: Any) -> tuple[str, str]:
    """The function, the points, the start or bracket rule, derivatives, tolerances and budgets of a sweep."""
    import numpy as np

    spec = res.settings
    rows = [["function", callable_text(spec.f) if spec is not None else str(res.label)], ["method", res.method]]
    if res.grid is not None:
        shape = " × ".join(map(str, res.grid.shape))
        rows.append(["points", f"{len(res):,}: a {shape} grid over ({', '.join(res.grid.names)})"])
        rows += [[f"parameter {n}", _axis_text(a)] for n, a in zip(res.grid.names, res.grid.axes)]
    else:
        rows.append(["points", f"{len(res):,}, one value of each parameter per point"])
        for n in res.params:
            col = res.table[n]
            spread = f"{np.unique(col).size} distinct values in [{fmt(col.min(), 8)}, {fmt(col.max(), 8)}]"
            rows.append([f"parameter {n}", spread if len(col) else "no points"])
    if spec is None:
        rows.append(["settings", "not recorded (this result was not made by convdiag.sweep)"])
        md, page = _table(rows)
        return md, page
    if spec.start is not None:
        s = spec.start
        text = (f"one per point ({np.size(s)} values in [{fmt(np.min(s), 8)}, {fmt(np.max(s), 8)}])"
                if isinstance(s, np.ndarray) and s.ndim == 1 else callable_text(s) if callable(s) else fmt(s, 17))
        rows.append(["start", text])
    if spec.bracket is not None:
        b = spec.bracket
        rows.append(["bracket", callable_text(b) if callable(b) else f"[{fmt(b[0], 17)}, {fmt(b[1], 17)}]"])
    for name, d in (("f′ (fprime)", spec.fprime), ("f″ (fprime2)", spec.fprime2)):
        if d is not None:
            rows.append([name, callable_text(d)])
    if spec.variable != "x":
        rows.append(["variable", spec.variable])
    rtol = "4 machine epsilons (8.9e-16)" if spec.rtol is None else f"{spec.rtol:g}"
    rows.append(["tolerances", f"xtol = {spec.xtol:g}, rtol = {rtol}, ftol = {spec.ftol:g}"])
    budget = f"{spec.max_evals} evaluations per point"
    if spec.max_steps is not None:
        budget += f", {spec.max_steps} steps per point"
    budget += f"; {res.max_time:g} s for the whole sweep" if res.max_time is not None else "; no time limit"
    rows.append(["budgets", budget])
    rows.append(["ran", f"{res.runner}, {res.chunks} chunk{'s' if res.chunks != 1 else ''}, {res.seconds:.3g} s"])
    return _table(rows)


def sweep_label(res: Any) -> str:
    """The sweep's label, or a lambda's own text (a short one) instead of "function"."""
    f = getattr(res.settings, "f", None)
    text = callable_text(f) if getattr(f, "__name__", "") == "<lambda>" else ""
    return text if text.startswith("lambda") and len(text) <= 60 else str(res.label)


