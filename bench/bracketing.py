"""Function evaluations of convdiag's ``hybrid`` against scipy's bracketing solvers.

Suites: the Alefeld–Potra–Shi set (ACM TOMS 21(3) 1995, 15 problems, 154 instances) and the
Chandrupatla set (Adv. Eng. Softw. 28(3) 1997, 9 functions x 5 brackets), coded in
``bench/_aps.py``. Tolerances: tight (xtol 1e-15, rtol 4·eps, the setting of the published
anchor below; scipy's own tests use xtol = rtol = 4·eps) and loose (xtol 1e-8, rtol 4·eps).
Every solver gets the same xtol and rtol; ``find_root`` keeps its default ``fatol`` (the
smallest normal number) and ``frtol`` 0; iteration limits are set high (``MAX_EVALS``), so a
solver that does not converge shows its full cost.

Evaluations are counted with ``convdiag.record`` around each peer's function, and as
``run.evaluations`` for the hybrid (both include the two end evaluations).

Every result is checked against an independent reference: the root polished at 50 digits by
``mpmath.findroot`` from the root the test set carries (exact for the multiple roots). A result
counts as correct within ``2·(xtol + rtol·|r|)`` plus twice the accuracy the double-precision
function allows (its rounding noise near r over |f^(m)(r)/m!|, to the power 1/m; shared/
REFERENCES.md §3). On the flat problems (x·exp(-1/x²), exactly zero in doubles for |x| < 0.037)
a solver that stops on the zero and calls it converged is counted under "flat claimed"; the
hybrid's run flags it (``convdiag.core._hybrid.zero_in_wide_bracket``), counted "flat flagged".

Stopping rules, read from scipy 1.17 sources: ``brentq``/``brenth`` stop when
``|xblk - xcur| < xtol + rtol·|xcur|`` (xcur the end with the smaller |f|; brentq.c compares
half-width with half the tolerance); ``bisect`` when the new width ``< xtol + rtol·|xm|``;
``find_root`` when ``|xr - xl| < xatol + xrtol·|xmin|`` or ``|f(xmin)| <= fatol``;
``toms748`` when ``|b - a| <= xtol + rtol·|b|``, checked after each full iteration, returning
the midpoint. convdiag's driver stops when ``b - a <= xtol + rtol·|best|``.

``python bench/bracketing.py`` prints the table and the targets; ``--json`` prints the same
figures as one JSON object.
"""

from __future__ import annotations

import argparse
import json
import math
import os
import sys
from collections.abc import Callable
from typing import Any

import numpy as np

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import _aps

import convdiag
from convdiag.core import _hybrid  # registers "hybrid"

EPS = float(np.finfo(float).eps)
TOLERANCES = {"tight": (1e-15, 4 * EPS), "loose": (1e-8, 4 * EPS)}
PEERS = ["find_root", "toms748", "brentq", "brenth", "ridder", "bisect"]
SOLVERS = ["hybrid", *PEERS]
ANCHOR = {"bisect": 8685, "ridder": 2914, "brenth": 2703, "brentq": 2734, "toms748": 2649}  # REFERENCES.md §6
TARGETS = {("APS", "tight"): 15.0, ("APS", "loose"): 14.5, ("CHANDRUPATLA", "tight"): 38.5}
MAX_EVALS = 5000


def run_hybrid(inst: _aps.Instance, xtol: float, rtol: float) -> dict[str, Any]:
    run = convdiag.solve(inst, "hybrid", bracket=inst.bracket, xtol=xtol, rtol=rtol, max_evals=MAX_EVALS)
    return {
        "x": float(run.root),
        "evals": run.evaluations,
        "converged": run.converged,
        "flagged": _hybrid.zero_in_wide_bracket(run) is not None,
    }


def run_peer(
    name: str, inst: _aps.Instance, xtol: float, rtol: float, f: Callable[..., Any] | None = None
) -> dict[str, Any]:
    from scipy import optimize

    rec = convdiag.record(f if f is not None else inst)
    a, b = inst.bracket
    if name == "find_root":
        from scipy.optimize.elementwise import find_root

        res = find_root(np.vectorize(rec, otypes=[float]), (a, b), tolerances={"xatol": xtol, "xrtol": rtol})
        x, ok = float(res.x), bool(res.success)
    else:
        x, r = getattr(optimize, name)(rec, a, b, xtol=xtol, rtol=rtol, maxiter=MAX_EVALS, full_output=True, disp=False)
        ok = bool(r.converged)
    return {"x": float(x), "evals": len(rec.log), "converged": ok, "flagged": False}


def reference(inst: _aps.Instance, carried: dict[str, float]) -> tuple[Any, float]:
    """(50-digit root, accuracy the double-precision function allows near it)."""
    import mpmath

    with mpmath.workdps(50):
        r0 = inst.root if inst.root is not None else carried[inst.id]
        if inst.multiplicity > 1 or inst.flat:
            r = mpmath.mpf(r0)  # exact
        else:
            r = mpmath.findroot(inst.mp, mpmath.mpf(r0), tol=mpmath.mpf(10) ** -45)
        if inst.flat:
            return r, 0.0
        m = inst.multiplicity
        rf = float(r)
        step = max(math.ulp(rf), 1e-300)
        noise = max(abs(inst(rf + k * step) - float(inst.mp(mpmath.mpf(rf + k * step)))) for k in range(-16, 17))
        c = abs(mpmath.diff(inst.mp, r, m)) / math.factorial(m)
        return r, float((noise / c) ** (1.0 / m)) if c > 0 else 0.0


def carried_roots() -> dict[str, float]:
    """The roots scipy's copy of the test sets carries (starting points for the 50-digit polish)."""
    from scipy.optimize import _tstutils as T

    out = {d["ID"]: float(d["root"]) for d in T._APS_TESTS_DICTS}
    for i, d in zip(_aps.CHANDRUPATLA, T._CHANDRUPATLA_TESTS_DICTS):
        out[i.id] = float(d["root"])
    return out


def measure() -> dict[str, Any]:
    carried = carried_roots()
    refs = {i.id: reference(i, carried) for i in _aps.APS + _aps.CHANDRUPATLA}
    table: dict[str, Any] = {}
    per: dict[str, dict[str, list[int]]] = {}
    for suite in ("APS", "CHANDRUPATLA"):
        insts = getattr(_aps, suite)
        for tname, (xtol, rtol) in TOLERANCES.items():
            key = f"{suite}/{tname}"
            table[key] = {}
            per[key] = {}
            for solver in SOLVERS:
                counts, failures, claimed, flagged, lost = [], [], 0, 0, 0
                for inst in insts:
                    res = run_hybrid(inst, xtol, rtol) if solver == "hybrid" else run_peer(solver, inst, xtol, rtol)
                    counts.append(res["evals"])
                    r, allow = refs[inst.id]
                    err = abs(res["x"] - float(r))
                    if inst.flat:
                        if res["flagged"]:
                            flagged += 1
                        elif res["converged"] and err > 2 * (xtol + rtol * abs(float(r))):
                            claimed += 1
                        elif not res["converged"]:
                            lost += 1
                        continue
                    if not res["converged"] or err > 2 * (xtol + rtol * abs(float(r))) + 2 * allow:
                        failures.append(inst.id)
                table[key][solver] = {
                    "total": int(sum(counts)),
                    "mean": float(np.mean(counts)),
                    "max": int(max(counts)),
                    "failures": failures,
                    "flat_claimed": claimed,
                    "flat_flagged": flagged,
                    "flat_not_converged": lost,
                }
                per[key][solver] = counts
    return {"table": table, "per_instance": per, "anchor": anchor(), "targets": targets(table, per)}


def anchor() -> dict[str, Any]:
    """The REFERENCES.md §6 anchor, with scipy's own copy of the APS functions (and with ours)."""
    from scipy.optimize import _tstutils as T

    xtol, rtol = TOLERANCES["tight"]
    theirs = {}
    for name in ANCHOR:
        theirs[name] = sum(
            run_peer(name, i, xtol, rtol, f=lambda x, d=d: d["f"](x, *d["args"]))["evals"]
            for i, d in zip(_aps.APS, T._APS_TESTS_DICTS)
        )
    ours = {name: sum(run_peer(name, i, xtol, rtol)["evals"] for i in _aps.APS) for name in ANCHOR}
    return {"published": ANCHOR, "scipy_functions": theirs, "our_copy": ours, "reproduced": theirs == ANCHOR}


def targets(table: dict[str, Any], per: dict[str, dict[str, list[int]]]) -> list[dict[str, Any]]:
    out = []
    for (suite, tname), limit in TARGETS.items():
        mean = table[f"{suite}/{tname}"]["hybrid"]["mean"]
        out.append({"target": f"{suite} {tname}: mean evaluations <= {limit}", "value": mean, "met": mean <= limit})
    worst = 0.0
    for tname in TOLERANCES:
        key = f"CHANDRUPATLA/{tname}"
        for inst, h, b in zip(_aps.CHANDRUPATLA, per[key]["hybrid"], per[key]["bisect"]):
            if inst.multiplicity >= 3:
                worst = max(worst, h / b)
    out.append({"target": "multiplicity >= 3: hybrid <= 1.2 x bisection, every instance", "value": worst,
                "met": worst <= 1.2})
    fails = sum(len(v["hybrid"]["failures"]) for v in table.values())
    out.append({"target": "hybrid: no failures", "value": fails, "met": fails == 0})
    flat_total = 2 * sum(1 for i in _aps.APS + _aps.CHANDRUPATLA if i.flat)
    flagged = sum(v["hybrid"]["flat_flagged"] for v in table.values())
    out.append({"target": "flat zero sets flagged for the diagnosis, not claimed", "value": f"{flagged}/{flat_total}",
                "met": flagged == flat_total})
    return out


def show(res: dict[str, Any]) -> str:
    lines = []
    for key, rows in res["table"].items():
        suite, tname = key.split("/")
        xtol, rtol = TOLERANCES[tname]
        n = len(getattr(_aps, suite))
        lines.append(f"{suite} ({n} instances), xtol {xtol:g}, rtol {rtol / EPS:g}·eps")
        lines.append(f"  {'solver':10s} {'total':>6s} {'mean':>7s} {'max':>5s} {'failures':>9s} {'flat':>22s}")
        for solver, r in rows.items():
            flat = f"{r['flat_flagged']} flagged" if solver == "hybrid" else f"{r['flat_claimed']} claimed"
            if r["flat_not_converged"]:
                flat += f", {r['flat_not_converged']} ran out"
            fl = ",".join(r["failures"][:3]) + ("…" if len(r["failures"]) > 3 else "")
            lines.append(
                f"  {solver:10s} {r['total']:6d} {r['mean']:7.2f} {r['max']:5d} {len(r['failures']):9d} {flat:>22s}"
                + (f"  ({fl})" if fl else "")
            )
        lines.append("")
    a = res["anchor"]
    lines.append(
        "APS anchor (scipy's own copy of the functions, tight tolerance): "
        + ", ".join(f"{k} {v}" for k, v in a["scipy_functions"].items())
        + f" -- published {', '.join(f'{k} {v}' for k, v in a['published'].items())}: "
        + ("reproduced" if a["reproduced"] else "NOT reproduced")
    )
    lines.append(
        "  with bench/_aps.py's own copy of the problems (last-bit rounding differs from scipy's copy): "
        + ", ".join(f"{k} {v}" for k, v in a["our_copy"].items())
    )
    for t in res["targets"]:
        v = t["value"]
        val = f"{v:.2f}" if isinstance(v, float) else str(v)
        lines.append(f"target {t['target']}: {'met' if t['met'] else 'NOT met'} ({val})")
    return "\n".join(lines)


def main(argv: list[str] | None = None) -> int:
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("--json", action="store_true", help="print the figures as one JSON object")
    args = p.parse_args(argv)
    res = measure()
    if args.json:
        print(json.dumps(res))
    else:
        print(show(res))
    return 0


if __name__ == "__main__":
    sys.exit(main())
