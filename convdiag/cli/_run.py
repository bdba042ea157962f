"""``convdiag run`` (with the diagnosis of the run) and ``convdiag methods``."""

from __future__ import annotations

import argparse
import json
import sys
from typing import Any

from ..errors import InputFileError
from ._common import function_arg, load_file_function, parse_params


# -- commands ----------------------------------------------------------------------
def _cmd_run(args: argparse.Namespace) -> int:
    from ..core import solve

    f = load_file_function(args.file) if args.file else function_arg(args.expr)
    fprime = function_arg(args.fprime, allow_file=bool(args.file)) if args.fprime else None
    start: Any = None
    if args.start:
        start = args.start if len(args.start) > 1 else args.start[0]
    method: Any = args.method
    if args.multiplicity is not None:
        from ..core import METHODS

        method = METHODS[args.method](multiplicity=args.multiplicity)  # type: ignore[call-arg]
    run = solve(
        f,
        method,
        start=start,
        bracket=args.bracket,
        fprime=fprime,
        params=parse_params(args.param),
        xtol=args.tol if args.tol is not None else 0.0,
        max_evals=args.max_evals,
        max_time=args.max_time,
        digits=args.digits,
    )
    from ..core._diagnose import diagnose
    from ..core._order import estimate_order, order_json

    try:
        estimate = estimate_order(run, root=args.root)
    except (TypeError, ValueError, ArithmeticError) as exc:  # a reference root that could not be computed
        print(f"convdiag: note: no high-precision reference ({type(exc).__name__}: {exc}); the order is measured "
              "from successive differences", file=sys.stderr)
        estimate = estimate_order(run, root=args.root, reference="differences", replay=False)
    diagnosis = diagnose(run, root=args.root, order=estimate)  # shows the same estimate as the order section
    if args.json:
        out = run.to_dict()
        if args.root is not None:
            out["known_root"] = args.root
        measured = order_json(estimate)
        out.update({key: measured[key] for key in ("order", "rate", "multiplicity", "efficiency")})
        # which iterates the order's window counts: the run's own ("run") or a high-precision replay of it
        out["order"]["basis"], out["order"]["digits"] = measured["basis"], measured["digits"]
        out["verdict"] = diagnosis.verdict
        out["findings"] = [f.to_dict() for f in diagnosis.findings]
        out["probes"] = diagnosis.probes
        print(json.dumps(out, allow_nan=False))
    else:
        from ..report._diagnosis_text import diagnosis_text
        from ..report._order_text import order_text
        from ..report._text import run_text

        print(run_text(run))
        if args.root is not None:
            err = abs(float(run.root) - args.root)
            print(f"\n|root − given root {args.root:.17g}| = {err:.3g}")
        print()
        print(order_text(estimate))
        print()
        print(diagnosis_text(diagnosis))
    if args.report:
        _write_report(run, diagnosis, args.report)
    # a sign change that is a pole, or an exact zero on a flat stretch, met the rule but is no root
    return 0 if run.converged and diagnosis.verdict not in ("flat", "pole") else 1


def _write_report(run: Any, diagnosis: Any, folder: str) -> None:
    """The run with its diagnosis and order estimate as a report in ``folder``; the paths go to stderr."""
    from ..report import make_report

    title = f"{run.method_title} on {run.problem}"
    try:
        written = make_report(diagnosis, title=title).save(folder)
    except OSError as exc:
        raise InputFileError(f"Could not write the report into {folder!r}: {exc.strerror or exc}. The run above is "
                             "complete; choose a folder you can write to and run again.") from None
    html = written.get("html", next(iter(written.values())))
    print(f"Report written: {html} (and {written.get('markdown', 'the Markdown file')})", file=sys.stderr)


def _check_run(args: argparse.Namespace) -> str:
    if not (args.expr or args.file):
        return "run needs EXPR or --file PATH.py:FUNCTION"
    if args.expr and args.file:
        return "give EXPR or --file, not both"
    if args.multiplicity is not None and args.method != "newton-m":
        return "--multiplicity is a setting of --method newton-m"
    if args.multiplicity is not None and args.multiplicity < 1:
        return f"--multiplicity must be an int >= 1, got {args.multiplicity}"
    return ""


def _cmd_methods(args: argparse.Namespace) -> int:
    from ..core import METHODS
    from ..report._text import text_table

    rows = []
    for name, m in METHODS.items():
        rows.append(
            [
                name,
                m.title,
                f"{m.nominal_order:.3f}",
                str(m.evals_per_step),
                f"{m.efficiency_index():.3f}",
                "bracket" if m.needs_bracket else f"{m.n_starts} start(s)",
            ]
        )
    if args.json:
        print(json.dumps([dict(zip(["name", "title", "order", "evals_per_step", "efficiency", "needs"], r)) for r in rows]))
    else:
        print(text_table(["name", "method", "order", "evals/step", "efficiency p^(1/d)", "needs"], rows, "llrrrl"))
    return 0


def register(sub: Any) -> None:
    """Add ``run`` and ``methods`` to the subcommand parsers."""
    from ..core import METHODS, _modified  # noqa: F401  (_modified registers newton-m and newton-ratio)

    r = sub.add_parser(
        "run",
        help="run one method on an expression or your function and print every iterate",
        description="Run one method and print every iterate. EXPR is math text in x, e.g. 'x**3 - 2*x + 2'.",
    )
    r.add_argument("expr", nargs="?", metavar="EXPR", help="expression in x (read safely, never run)")
    r.add_argument("--file", metavar="PATH.py:FUNCTION", help="your own function, f(x) or f(x, **params)")
    r.add_argument("--method", "-m", default="newton", choices=sorted(METHODS), help="method (default newton)")
    r.add_argument("--start", type=float, action="append", metavar="X", help="starting point (repeat for more)")
    r.add_argument("--bracket", type=float, nargs=2, metavar=("A", "B"), help="bracket with a sign change")
    r.add_argument("--fprime", metavar="EXPR",
                   help="derivative: an expression in x (or PATH.py:FUNCTION together with --file)")
    r.add_argument("--param", action="append", metavar="NAME=VALUE", help="model parameter (repeatable)")
    r.add_argument("--tol", type=float, metavar="T", help="absolute tolerance on the step or bracket width")
    r.add_argument("--max-evals", type=int, default=100, metavar="N", help="evaluation budget (default 100)")
    r.add_argument("--max-time", type=float, metavar="S", help="wall-time budget in seconds")
    r.add_argument("--digits", type=int, metavar="D", help="run in mpmath arithmetic with D digits")
    r.add_argument("--multiplicity", type=int, metavar="M",
                   help="multiplicity setting of --method newton-m (the root's multiplicity)")
    r.add_argument("--root", type=float, metavar="R", help="the true root, if known")
    r.add_argument("--json", action="store_true", help="print one JSON object")
    r.add_argument("--report", metavar="DIR",
                   help="also write a report (Markdown, self-contained HTML, PNG figures) into DIR")
    r.set_defaults(func=_cmd_run, check=_check_run)

    m = sub.add_parser("methods", help="list the methods with their order and efficiency")
    m.add_argument("--json", action="store_true")
    m.set_defaults(func=_cmd_methods)
