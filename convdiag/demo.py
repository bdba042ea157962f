"""``convdiag demo``: the main job on a bundled model, start to finish.

A water-network model solves the Colebrook–White equation for the friction
factor of pipe P-17 with Newton's method from f0 = 0.05, and the solve
fails. The demo shows the failing run, why it failed, and a run that works.
"""

from __future__ import annotations

import json
from typing import Any

from .core import solve
from .demos import PIPE_P17, colebrook_residual

__all__ = ["demo_runs", "run_demo"]

CAUTION = (
    "Illustration only: pipe sizing follows local codes and licensed engineering practice; "
    "the plant data are invented."
)


def demo_runs() -> dict[str, Any]:
    """The demo's runs: the failing Newton solve and the fix."""
    failing = solve(colebrook_residual, "newton", start=0.05, params=dict(PIPE_P17))
    fixed = solve(colebrook_residual, "illinois", bracket=(0.005, 0.1), params=dict(PIPE_P17))
    return {"failing": failing, "fixed": fixed}


def run_demo(*, report_dir: str | None = None, as_json: bool = False) -> int:
    from .report._text import run_text

    runs = demo_runs()
    if as_json:
        print(json.dumps({k: r.to_dict() for k, r in runs.items()} | {"caution": CAUTION}, allow_nan=False))
    else:
        print("Demo: friction factor of pipe P-17 (Colebrook–White, Re = 1e5, ε/D = 1e-4)")
        print(CAUTION)
        print()
        print("1. The model's Newton loop, started at f0 = 0.05:")
        print(run_text(runs["failing"]))
        print()
        print("2. The same equation on the bracket [0.005, 0.1]:")
        print(run_text(runs["fixed"]))
    if report_dir is not None:
        from .report import make_report

        report = make_report(
            runs["failing"], runs["fixed"], title="Pipe P-17 friction factor: why the Newton loop fails"
        )
        paths = report.save(report_dir)
        if not as_json:
            print()
            print(f"Report written: {paths['html']} (and {paths['markdown']})")
    return 0 if runs["fixed"].converged else 1
