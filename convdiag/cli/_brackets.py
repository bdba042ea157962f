"""``convdiag brackets``: where the roots are, which sign changes are poles or jumps, and starts."""

from __future__ import annotations

import argparse
import json
import re
from typing import Any

from ._common import function_arg, load_file_function, parse_params


def _cmd_brackets(args: argparse.Namespace) -> int:
    from ..core._brackets import find_brackets

    f = load_file_function(args.file) if args.file else function_arg(args.expr)
    fprime = function_arg(args.fprime, allow_file=bool(args.file)) if args.fprime else None
    search = find_brackets(
        f,
        domain=args.domain,
        near=args.near,
        max_evals=args.max_evals,
        params=parse_params(args.param),
        fprime=fprime,
        samples=args.samples,
    )
    if args.json:
        print(json.dumps(search.to_dict(), allow_nan=False))
    else:
        from ..report._brackets_text import brackets_text

        print(brackets_text(search))
    return 0 if search.roots else 1


def _check_brackets(args: argparse.Namespace) -> str:
    if not (args.expr or args.file):
        return "brackets needs EXPR or --file PATH.py:FUNCTION"
    if args.expr and args.file:
        return "give EXPR or --file, not both"
    return ""


#: what this subcommand reads as a negative number, not an option: argparse's own pattern takes "-2" and "-0.5"
#: only, so "--near -1e5" or "--near -inf" stopped with "expected one argument".
NEGATIVE_NUMBER = re.compile(r"^-(\d+\.?\d*|\.\d+)([eE][-+]?\d+)?$|^-(inf|infinity|nan)$", re.IGNORECASE)


def register(sub: Any) -> None:
    """Add ``brackets`` to the subcommand parsers."""
    b = sub.add_parser(
        "brackets",
        help="find root brackets, tell them from poles, jumps, touches and domain edges, and suggest starts",
        description=(
            "Search an interval (--domain A B) or outward from a guess (--near X) for sign changes and dips of |f|; "
            "judge each one root, pole, jump, touch or domain edge; recommend starts for Newton, the secant "
            "method and IQI. Exit status 0 when a root bracket was found, 1 when none, 2 for bad input."
        ),
    )
    b.add_argument("expr", nargs="?", metavar="EXPR", help="expression in x (read safely, never run)")
    b.add_argument("--file", metavar="PATH.py:FUNCTION", help="your own function, f(x) or f(x, **params)")
    where = b.add_mutually_exclusive_group(required=True)
    where.add_argument("--domain", type=float, nargs=2, metavar=("A", "B"), help="search the interval [A, B]")
    where.add_argument("--near", type=float, metavar="X", help="search outward from the guess X")
    b.add_argument("--max-evals", type=int, default=1000, metavar="N", help="evaluation budget (default 1000)")
    b.add_argument("--samples", type=int, default=201, metavar="N", help="first grid over --domain (default 201)")
    b.add_argument("--fprime", metavar="EXPR",
                   help="derivative, to check Newton starts: an expression (or PATH.py:FUNCTION with --file)")
    b.add_argument("--param", action="append", metavar="NAME=VALUE", help="model parameter (repeatable)")
    b.add_argument("--json", action="store_true", help="print one JSON object")
    b._negative_number_matcher = NEGATIVE_NUMBER  # the subcommand's parser reads its own arguments
    b.set_defaults(func=_cmd_brackets, check=_check_brackets)
