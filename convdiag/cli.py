"""The ``convdiag`` command line.

Exit status: 0 when the run converged (or the command succeeded), 1 when
it did not (the output says why), 2 for bad input.

``EXPR`` is expression text, parsed by the safe expression language: it
never runs code. ``--file path.py:function`` imports *your own* Python
file, which does run that file's code, as ``python path.py`` would.
"""

from __future__ import annotations

import argparse
import importlib.util
import json
import math
import os
import sys
from collections.abc import Callable, Sequence
from typing import Any

from .errors import ConvdiagError, InputFileError, ParameterError

__all__ = ["main"]

PROG = "convdiag"


# -- loading functions -----------------------------------------------------------
def load_file_function(spec: str) -> Callable[..., Any]:
    """Load ``path.py:function`` from the user's own file."""
    path, sep, name = spec.rpartition(":")
    if not sep or not path or not name:
        raise InputFileError(f"--file needs PATH.py:FUNCTION, for example model.py:residual. Got {spec!r}.")
    if not os.path.isfile(path):
        raise InputFileError(f"No such file: {path!r} (from --file {spec!r}).")
    mod_name = "convdiag_user_" + os.path.splitext(os.path.basename(path))[0].replace("-", "_")
    module_spec = importlib.util.spec_from_file_location(mod_name, path)
    if module_spec is None or module_spec.loader is None:
        raise InputFileError(f"Could not load {path!r} as a Python module.")
    module = importlib.util.module_from_spec(module_spec)
    try:
        module_spec.loader.exec_module(module)
    except Exception as exc:
        raise InputFileError(f"Importing {path!r} failed: {type(exc).__name__}: {exc}") from exc
    fn = getattr(module, name, None)
    if fn is None or not callable(fn):
        names = sorted(n for n, v in vars(module).items() if callable(v) and not n.startswith("_"))
        raise InputFileError(f"{path!r} has no function {name!r}; it defines {', '.join(names) or 'none'}.")
    return fn  # type: ignore[no-any-return]


def _function_arg(text: str) -> Any:
    """EXPR text, or PATH.py:FUNCTION."""
    head, sep, _ = text.rpartition(":")
    if sep and head.endswith(".py"):
        return load_file_function(text)
    return text


def _params(items: Sequence[str] | None) -> dict[str, float]:
    out: dict[str, float] = {}
    for item in items or ():
        name, sep, value = item.partition("=")
        name = name.strip()
        if not sep or not name.isidentifier():
            raise ParameterError(f"--param needs NAME=VALUE, for example --param Re=1e5. Got {item!r}.")
        try:
            out[name] = float(value)
        except ValueError:
            raise ParameterError(f"--param {name} needs a number after '='. Got {value!r}.") from None
        if not math.isfinite(out[name]):
            raise ParameterError(f"--param {name} must be finite. Got {value!r}.")
    return out


# -- commands ----------------------------------------------------------------------
def _cmd_run(args: argparse.Namespace) -> int:
    from .core import solve

    f = load_file_function(args.file) if args.file else _function_arg(args.expr)
    fprime = _function_arg(args.fprime) if args.fprime else None
    start: Any = None
    if args.start:
        start = args.start if len(args.start) > 1 else args.start[0]
    run = solve(
        f,
        args.method,
        start=start,
        bracket=args.bracket,
        fprime=fprime,
        params=_params(args.param),
        xtol=args.tol if args.tol is not None else 0.0,
        max_evals=args.max_evals,
        max_time=args.max_time,
        digits=args.digits,
    )
    if args.json:
        out = run.to_dict()
        if args.root is not None:
            out["known_root"] = args.root
        print(json.dumps(out, allow_nan=False))
    else:
        from .report._text import run_text

        print(run_text(run))
        if args.root is not None:
            err = abs(float(run.root) - args.root)
            print(f"\n|root − given root {args.root:.17g}| = {err:.3g}")
    return 0 if run.converged else 1


def _cmd_methods(args: argparse.Namespace) -> int:
    from .core import METHODS
    from .report._text import text_table

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


def _cmd_demo(args: argparse.Namespace) -> int:
    from .demo import run_demo

    return run_demo(report_dir=args.report, as_json=args.json)


# -- parser --------------------------------------------------------------------------
def build_parser() -> argparse.ArgumentParser:
    from .core import METHODS

    p = argparse.ArgumentParser(
        prog=PROG,
        description="See why a root-finder stalls, choose a start and method that work, and document it.",
    )
    sub = p.add_subparsers(dest="command", metavar="COMMAND")

    r = sub.add_parser(
        "run",
        help="run one method on an expression or your function and print every iterate",
        description="Run one method and print every iterate. EXPR is math text in x, e.g. 'x**3 - 2*x + 2'.",
    )
    r.add_argument("expr", nargs="?", metavar="EXPR", help="expression in x (or PATH.py:FUNCTION)")
    r.add_argument("--file", metavar="PATH.py:FUNCTION", help="your own function, f(x) or f(x, **params)")
    r.add_argument("--method", "-m", default="newton", choices=sorted(METHODS), help="method (default newton)")
    r.add_argument("--start", type=float, action="append", metavar="X", help="starting point (repeat for more)")
    r.add_argument("--bracket", type=float, nargs=2, metavar=("A", "B"), help="bracket with a sign change")
    r.add_argument("--fprime", metavar="EXPR", help="derivative: expression or PATH.py:FUNCTION")
    r.add_argument("--param", action="append", metavar="NAME=VALUE", help="model parameter (repeatable)")
    r.add_argument("--tol", type=float, metavar="T", help="absolute tolerance on the step or bracket width")
    r.add_argument("--max-evals", type=int, default=100, metavar="N", help="evaluation budget (default 100)")
    r.add_argument("--max-time", type=float, metavar="S", help="wall-time budget in seconds")
    r.add_argument("--digits", type=int, metavar="D", help="run in mpmath arithmetic with D digits")
    r.add_argument("--root", type=float, metavar="R", help="the true root, if known")
    r.add_argument("--json", action="store_true", help="print one JSON object")
    r.set_defaults(func=_cmd_run)

    m = sub.add_parser("methods", help="list the methods with their order and efficiency")
    m.add_argument("--json", action="store_true")
    m.set_defaults(func=_cmd_methods)

    d = sub.add_parser("demo", help="diagnose the bundled demo model (a pipe-friction solve that fails)")
    d.add_argument("--report", metavar="DIR", help="also write a report into DIR")
    d.add_argument("--json", action="store_true")
    d.set_defaults(func=_cmd_demo)
    return p


def main(argv: Sequence[str] | None = None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    if args.command is None:
        parser.print_help()
        return 2
    if args.command == "run" and not (args.expr or args.file):
        parser.error("run needs EXPR or --file PATH.py:FUNCTION")
    if args.command == "run" and args.expr and args.file:
        parser.error("give EXPR or --file, not both")
    try:
        return int(args.func(args))
    except ConvdiagError as exc:
        print(f"{PROG}: error: {exc}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        print(f"{PROG}: interrupted", file=sys.stderr)
        return 1
