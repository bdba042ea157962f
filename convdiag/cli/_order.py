"""``convdiag order FILE``: the observed order of convergence of iterates from a file.

FILE is a CSV (or whitespace-separated) or JSON log of iterates and/or
residuals, for example from your own solver or from ``convdiag run --json``.
Exit status: 0 when an order or rate was measured, 1 when there were not
enough points (the output says why), 2 for a bad file or bad options.
"""

from __future__ import annotations

import argparse
import json
import math
from typing import Any

__all__ = ["register"]


def _cmd_order(args: argparse.Namespace) -> int:
    from ..core._order import estimate_order, order_json
    from ..core._sequence import load_sequence

    seq = load_sequence(args.file, kind=args.kind)
    est = estimate_order(
        seq,
        root=args.root,
        method=args.method,
        reference=args.reference,
        floor=args.floor,
        evals_per_step=args.evals_per_step,
    )
    if args.json:
        out = order_json(est)
        out["file"] = args.file
        out["entries"] = len(seq)
        print(json.dumps(out, allow_nan=False))
    else:
        from ..report._order_text import order_text

        print(f"{args.file}: {len(seq)} entries ({', '.join(seq.columns)})")
        print(order_text(est))
    return 0 if est.converged_estimate else 1


def _check(args: argparse.Namespace) -> str:
    if args.root is not None and not math.isfinite(args.root):
        return f"--root must be a finite number, got {args.root!r}"
    if args.floor is not None and not args.floor >= 0:
        return f"--floor must be >= 0, got {args.floor!r}"
    if args.evals_per_step is not None and not args.evals_per_step > 0:
        return f"--evals-per-step must be > 0, got {args.evals_per_step!r}"
    return ""


def register(sub: Any) -> None:
    """Add ``order`` to the subcommand parsers."""
    from ..core import METHODS

    p = sub.add_parser(
        "order",
        help="observed order of convergence, rate and multiplicity of iterates in a CSV or JSON file",
        description=(
            "Measure the observed order of convergence of a sequence of iterates (or residuals) read from FILE: "
            "CSV with a header naming the columns (x, f, evals), one bare column of iterates, or JSON (a list, "
            "an object of columns, or the output of 'convdiag run --json')."
        ),
    )
    p.add_argument("file", metavar="FILE", help="CSV or JSON file of iterates and/or residuals")
    p.add_argument("--root", type=float, metavar="R", help="the true root, if known")
    p.add_argument("--method", "-m", choices=sorted(METHODS), help="the method that produced the iterates")
    p.add_argument("--kind", choices=("auto", "iterates", "residuals"), default="auto",
                   help="how to read a single column (default: iterates)")
    p.add_argument("--reference", choices=("auto", "best-iterate", "differences", "residuals"), default="auto",
                   help="what to measure errors against when no root is given (default: automatic)")
    p.add_argument("--floor", type=float, metavar="F", help="rounding floor of the errors (default: 4 ulps)")
    p.add_argument("--evals-per-step", type=float, metavar="D", help="evaluations per step, for the efficiency")
    p.add_argument("--json", action="store_true", help="print one JSON object")
    p.set_defaults(func=_cmd_order, check=_check)
