"""``convdiag demo``: the main job on a bundled model, start to finish.

A water-network model solves the Colebrook–White equation for the friction
factor of pipe P-17 with Newton's method from f0 = 0.05, and the solve
fails. The demo records the failing run, diagnoses it (the cause, the
evidence, the fix), applies the fix, and writes a report.
"""

from __future__ import annotations

import json
from typing import Any

from .core import diagnose, solve
from .demos import PIPE_P17, colebrook_residual

__all__ = ["demo_results", "run_demo"]

CAUTION = (
    "Illustration only: the plant data are invented, and pipe sizing follows local codes and "
    "licensed engineering practice."
)


def demo_results() -> dict[str, Any]:
    """The failing Newton solve, its diagnosis, and the run that applies the advice."""
    params = dict(PIPE_P17)
    failing = solve(colebrook_residual, "newton", start=0.05, params=params)
    diagnosis = diagnose(failing)
    fixed = diagnosis.remedy.solve(failing.source) if diagnosis.remedy is not None else None
    return {"failing": failing, "diagnosis": diagnosis, "fixed": fixed}


def run_demo(*, report_dir: str | None = None, as_json: bool = False) -> int:
    from .report._text import run_text

    res = demo_results()
    failing, diagnosis, fixed = res["failing"], res["diagnosis"], res["fixed"]
    if as_json:
        out = {
            "failing": failing.to_dict(),
            "diagnosis": diagnosis.to_dict(),
            "fixed": None if fixed is None else fixed.to_dict(),
            "caution": CAUTION,
        }
        print(json.dumps(out, allow_nan=False, default=str))
    else:
        print("Demo: friction factor of pipe P-17 (Colebrook–White, Re = 1e5, ε/D = 1e-4)")
        print(CAUTION)
        print()
        print("1. The network model's Newton loop, started at f0 = 0.05:")
        print()
        print(run_text(failing))
        print()
        print("2. Why it failed:")
        print()
        print(diagnosis.to_text())
        if fixed is not None:
            print()
            print("3. The advice applied:")
            print()
            print(run_text(fixed))
    if report_dir is not None:
        from .report import make_report

        items = [diagnosis] + ([fixed] if fixed is not None else [])
        report = make_report(*items, title="Pipe P-17 friction factor: why the Newton loop fails, and a fix")
        paths = report.save(report_dir)
        if not as_json:
            print()
            print(f"Report written: {paths['html']} (and {paths['markdown']})")
    return 0 if fixed is not None and fixed.converged else 1
