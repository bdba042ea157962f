"""The ``convdiag`` command line.

Exit status: 0 when the run converged (or the command succeeded), 1 when
it did not (the output says why), 2 for bad input.

``EXPR`` is expression text, parsed by the safe expression language: it
never runs code. ``--file path.py:function`` imports *your own* Python
file, which runs that file's code, as ``python path.py`` would.

Each subcommand lives in its own module with a ``register(subparsers)``
function; add the module to ``_COMMANDS`` to add a subcommand.
"""

from __future__ import annotations

import argparse
import importlib
import os
import sys
from collections.abc import Sequence

from ..errors import ConvdiagError

__all__ = ["build_parser", "main"]

PROG = "convdiag"

_COMMANDS = ("_run", "_order", "_brackets", "_diagnose", "_demo")


def build_parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(
        prog=PROG,
        description="See why a root-finder stalls, choose a start and method that work, and document it.",
    )
    sub = p.add_subparsers(dest="command", metavar="COMMAND")
    for name in _COMMANDS:
        importlib.import_module(f"{__name__}.{name}").register(sub)
    return p


def _guard_expressions(argv: Sequence[str]) -> list[str]:
    """Expression text that starts with '-' ('-sin(x) - 1') would be read by argparse as an option: give it a
    leading space (the expression reader ignores it). Only text no option can look like is touched: it holds
    one of ( ) * / + ^ or a space."""
    return [f" {a}" if a.startswith("-") and any(c in a for c in "()*/+^ ") else a for a in argv]


def main(argv: Sequence[str] | None = None) -> int:
    parser = build_parser()
    args = parser.parse_args(_guard_expressions(sys.argv[1:] if argv is None else argv))
    if args.command is None:
        parser.print_help()
        return 2
    check = getattr(args, "check", None)
    if check is not None:
        message = check(args)
        if message:
            parser.error(message)
    try:
        return int(args.func(args))
    except ConvdiagError as exc:
        print(f"{PROG}: error: {exc}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        print(f"{PROG}: interrupted", file=sys.stderr)
        return 1
    except BrokenPipeError:  # the reader went away (`convdiag run ... | head`): stop quietly, as other tools do
        devnull = os.open(os.devnull, os.O_WRONLY)  # Python flushes stdout at exit: point it somewhere harmless
        os.dup2(devnull, sys.stdout.fileno())
        return 1
