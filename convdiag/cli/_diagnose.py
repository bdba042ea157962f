"""``convdiag diagnose FILE``: why an iteration logged in a file stalled, with the evidence and a fix.

FILE is a CSV (or whitespace-separated) or JSON log of iterates and/or
residuals: from your own solver's log, or the output of ``convdiag run --json``.
With ``--function`` the diagnosis may also evaluate f a few times (noise level,
derivative check, bracket for the advice).
Exit status: 0 when the verdict is "converged", 1 for any other verdict,
2 for a bad file or bad options.
"""

from __future__ import annotations

import argparse
import json
import math
from typing import Any

__all__ = ["register"]


def _cmd_diagnose(args: argparse.Namespace) -> int:
    from ..core._diagnose import diagnose
    from ..core._sequence import load_sequence
    from ._common import function_arg

    seq = load_sequence(args.file, kind=args.kind)
    f = function_arg(args.function) if args.function else None
    fprime = function_arg(args.fprime) if args.fprime else None
    d = diagnose(seq, f=f, fprime=fprime, root=args.root, xtol=args.xtol, ftol=args.ftol, method=args.method,
                 bracket=None if args.bracket is None else tuple(args.bracket), probe=not args.no_probe)
    if args.json:
        out: dict[str, Any] = d.to_dict()
        out["file"] = args.file
        out["entries"] = len(seq)
        print(json.dumps(out, allow_nan=False))
    else:
        from ..report._diagnosis_text import diagnosis_text

        print(f"{args.file}: {len(seq)} entries ({', '.join(seq.columns)})")
        print(diagnosis_text(d))
    return 0 if d.verdict == "converged" else 1


def _check(args: argparse.Namespace) -> str:
    if args.root is not None and not math.isfinite(args.root):
        return f"--root must be a finite number, got {args.root!r}"
    for name in ("xtol", "ftol"):
        v = getattr(args, name)
        if v is not None and not (v >= 0 and math.isfinite(v)):
            return f"--{name} must be a finite number >= 0, got {v!r}"
    if args.bracket is not None and not (all(math.isfinite(v) for v in args.bracket)
                                         and args.bracket[0] < args.bracket[1]):
        return f"--bracket needs two finite numbers LO < HI, got {args.bracket[0]!r} {args.bracket[1]!r}"
    if args.fprime and not args.function:
        return "--fprime needs --function (the derivative is checked against f)"
    return ""


def register(sub: Any) -> None:
    """Add ``diagnose`` to the subcommand parsers."""
    from ..core import METHODS, _modified  # noqa: F401  (_modified registers newton-m and newton-ratio)

    p = sub.add_parser(
        "diagnose",
        help="why an iteration stalled (cycle, divergence, multiple root, noise, ...), from a CSV or JSON log",
        description=(
            "Diagnose an iteration read from FILE: CSV with a header naming the columns (x, f, evals), one bare "
            "column of iterates, or JSON (a list, an object of columns, or the output of 'convdiag run --json'). "
            "Prints the verdict, the evidence and what to change."
        ),
    )
    p.add_argument("file", metavar="FILE", help="CSV or JSON file of iterates and/or residuals")
    p.add_argument("--method", "-m", choices=sorted(METHODS), help="the method that produced the iterates")
    p.add_argument("--function", metavar="EXPR", help="f as an expression (or PATH.py:FUNCTION), for extra checks")
    p.add_argument("--fprime", metavar="EXPR", help="the derivative your solver used (checked against f)")
    p.add_argument("--root", type=float, metavar="R", help="the true root, if known")
    p.add_argument("--bracket", type=float, nargs=2, metavar=("LO", "HI"),
                   help="where you expected the root; with --function, a remedy uses it when f changes sign there")
    p.add_argument("--xtol", type=float, metavar="T", help="the step tolerance your solver was given")
    p.add_argument("--ftol", type=float, metavar="T", help="the residual tolerance your solver was given")
    p.add_argument("--kind", choices=("auto", "iterates", "residuals"), default="auto",
                   help="how to read a single column (default: iterates)")
    p.add_argument("--no-probe", action="store_true", help="never evaluate f (only read the file)")
    p.add_argument("--json", action="store_true", help="print one JSON object")
    p.set_defaults(func=_cmd_diagnose, check=_check)
