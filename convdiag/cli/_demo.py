"""``convdiag demo``: the main job on the bundled demo model."""

from __future__ import annotations

import argparse
from typing import Any


def _cmd_demo(args: argparse.Namespace) -> int:
    from ..demo import run_demo

    return run_demo(report_dir=args.report, as_json=args.json)


def register(sub: Any) -> None:
    d = sub.add_parser("demo", help="diagnose the bundled demo model (a pipe-friction solve that fails)")
    d.add_argument("--report", metavar="DIR", help="also write a report into DIR")
    d.add_argument("--json", action="store_true")
    d.set_defaults(func=_cmd_demo)
