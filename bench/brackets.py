"""Bracket search from a guess: convdiag.find_brackets against scipy.optimize.elementwise.bracket_root.

For each function and guess, both start from the same guess; we count the evaluations (points) each
spends until it holds a valid bracket: a strict sign change that contains a true root (a reference
root listed with the case). scipy's ``bracket_root`` grows [x0, x0 + 1] by a factor 2 and does not
tell poles from roots: where its "bracket" holds a pole and no root, the table says so. convdiag
expands both ways from the guess (first step 0.1·max(1, |x0|), doubling), then halves each sign
change 10 times to judge it root/pole/jump, and checks the recommended starts; the table shows the
evaluations when the sign change was first seen, when it was judged a root, and in total.

Run: python bench/brackets.py [--json]
"""

from __future__ import annotations

import argparse
import json
import math
import sys
import warnings
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from convdiag.core._brackets import find_brackets


@dataclass(frozen=True)
class Case:
    name: str
    f: Callable[[Any], Any]
    guesses: tuple[float, ...]
    roots: tuple[float, ...]  # reference roots, source in the comment where the case is built
    poles: tuple[float, ...] = ()


def _colebrook(re: float, rel: float) -> Callable[[Any], Any]:
    # Colebrook–White in the Darcy friction factor f (undefined for f <= 0).
    def f(x: Any) -> Any:
        with np.errstate(all="ignore"):
            x = np.asarray(x, dtype=float)
            out = 1 / np.sqrt(x) + 2 * np.log10(rel / 3.7 + 2.51 / (re * np.sqrt(x)))
        return out[()] if out.ndim == 0 else out

    return f


def _kepler(m: float, e: float) -> Callable[[Any], Any]:
    return lambda x: x - e * np.sin(x) - m


def cases() -> list[Case]:
    cubic_root = float(max(r.real for r in np.roots([1, 0, -2, -5]) if abs(r.imag) < 1e-12))  # numpy.roots
    return [
        Case("x^3 - 2x - 5", lambda x: x**3 - 2 * x - 5, (0.0, 2.0, -3.0, 10.0, 100.0), (cubic_root,)),
        # roots of exp(x) = 2 + x/3 from scipy.optimize.brentq in _exp_roots()
        Case("exp(x) - 2 - x/3", lambda x: np.exp(x) - 2 - x / 3, (0.0, 3.0, -3.0), _exp_roots()),
        # tan x = 2: atan(2) + k·pi; poles at pi/2 + k·pi (exact)
        Case(
            "tan(x) - 2", lambda x: np.tan(x) - 2, (1.4, 3.0, -1.0),
            tuple(math.atan(2) + k * math.pi for k in range(-100, 101)),
            tuple(math.pi / 2 + k * math.pi for k in range(-100, 101)),
        ),
        # 1/(x - 1) = 1/2 at x = 3 (exact); pole at 1
        Case("1/(x-1) - 1/2", lambda x: 1 / (x - 1) - 0.5, (0.5, 1.2, -2.0), (3.0,), (1.0,)),
        # Colebrook–White roots from /work/shared/REFERENCES.md §5 (recomputed there with brentq)
        Case("Colebrook Re=1e5 e/D=1e-4", _colebrook(1e5, 1e-4), (0.01, 0.02, 0.05), (0.0185138660775,)),
        Case("Colebrook Re=1e7 e/D=1e-5", _colebrook(1e7, 1e-5), (0.02, 0.005), (0.00899571174483,)),
        # Kepler's equation, radians, REFERENCES.md §5
        Case("Kepler M=1 e=0.5", _kepler(1.0, 0.5), (1.0, 0.0), (1.49870113351785,)),
        Case("Kepler M=3 e=0.8", _kepler(3.0, 0.8), (3.0, 0.0), (3.06289397434037,)),
        Case("Kepler M=0.1 e=0.99", _kepler(0.1, 0.99), (0.1, 2.0), (0.831660423791057,)),
    ]


def _exp_roots() -> tuple[float, ...]:
    from scipy.optimize import brentq

    def g(x: float) -> float:
        return math.exp(x) - 2 - x / 3

    return (brentq(g, -7.0, -5.0, xtol=1e-15), brentq(g, 0.0, 2.0, xtol=1e-15))


def _verdict(case: Case, lo: float, hi: float) -> str:
    lo, hi = min(lo, hi), max(lo, hi)
    fl, fh = float(case.f(lo)), float(case.f(hi))
    if not (fl < 0 < fh or fh < 0 < fl):
        return "no sign change"
    n_roots = sum(lo <= r <= hi for r in case.roots)
    n_poles = sum(lo <= p <= hi for p in case.poles)
    if n_roots and n_poles:
        return f"{n_roots} roots, {n_poles} poles"
    if n_roots:
        return "root"
    if n_poles:
        return "pole"
    return "other"


def run() -> dict[str, Any]:
    from scipy.optimize.elementwise import bracket_root

    rows: list[dict[str, Any]] = []
    for case in cases():
        for x0 in case.guesses:
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                res = bracket_root(case.f, x0)
            if int(res.status) == 0:
                s_verdict = _verdict(case, float(res.bracket[0]), float(res.bracket[1]))
                if s_verdict == "no sign change":
                    s_verdict += " (status 0)"
            else:
                s_verdict = f"failed (status {int(res.status)})"
            s_nfev = int(res.nfev)
            ours = find_brackets(case.f, near=x0)
            first = ours.roots[0] if ours.roots else None
            o_verdict = "none" if first is None else _verdict(case, first.lo, first.hi)
            seen = None if first is None else int(first.evidence["found_after"])
            judged = None if first is None else int(first.evidence.get("classified_after", seen or 0))
            poles = len(ours.of_kind("pole"))
            rows.append(
                {
                    "case": case.name,
                    "guess": x0,
                    "scipy_evals": s_nfev,
                    "scipy_result": s_verdict,
                    "ours_seen": seen,
                    "ours_judged": judged,
                    "ours_total": ours.evaluations,
                    "ours_result": o_verdict,
                    "ours_poles_named": poles,
                    "ratio_judged": None if judged is None or s_verdict != "root" else judged / s_nfev,
                }
            )
    ok = [r for r in rows if r["ratio_judged"] is not None]
    summary = {
        "cases": len(rows),
        "scipy_valid": sum(r["scipy_result"] == "root" for r in rows),
        "scipy_pole_as_bracket": sum(r["scipy_result"] == "pole" for r in rows),
        "ours_valid": sum(r["ours_result"] == "root" for r in rows),
        "median_ratio_judged": float(np.median([r["ratio_judged"] for r in ok])) if ok else None,
        "median_ratio_seen": float(np.median([r["ours_seen"] / r["scipy_evals"] for r in ok])) if ok else None,
    }
    return {"rows": rows, "summary": summary}


def _table(result: dict[str, Any]) -> str:
    headers = ["case", "guess", "scipy evals", "scipy bracket", "ours: seen", "judged", "total", "ours bracket",
               "ratio judged/scipy"]
    lines: list[list[str]] = []
    for r in result["rows"]:
        lines.append([
            r["case"], f"{r['guess']:g}", str(r["scipy_evals"]), r["scipy_result"], str(r["ours_seen"]),
            str(r["ours_judged"]), str(r["ours_total"]), r["ours_result"],
            "—" if r["ratio_judged"] is None else f"{r['ratio_judged']:.2f}",
        ])
    widths = [max(len(h), *(len(row[i]) for row in lines)) for i, h in enumerate(headers)]

    def fmt(row: list[str]) -> str:
        return "  ".join(c.ljust(w) if i in (0, 3, 7) else c.rjust(w) for i, (c, w) in enumerate(zip(row, widths)))

    out = [fmt(headers), "  ".join("-" * w for w in widths), *(fmt(row) for row in lines)]
    s = result["summary"]
    out.append("")
    out.append(
        f"valid root brackets: scipy {s['scipy_valid']}/{s['cases']} (a pole returned as a bracket: "
        f"{s['scipy_pole_as_bracket']}), convdiag {s['ours_valid']}/{s['cases']}"
    )
    if s["median_ratio_judged"] is not None:
        out.append(
            f"median ratio of evaluations ours/scipy where scipy's bracket is valid: {s['median_ratio_judged']:.2f} "
            f"to a judged root bracket, {s['median_ratio_seen']:.2f} to the first sign change"
        )
    return "\n".join(out)


def main(argv: list[str] | None = None) -> int:
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("--json", action="store_true", help="print one JSON object")
    args = p.parse_args(argv)
    result = run()
    print(json.dumps(result) if args.json else _table(result))
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
