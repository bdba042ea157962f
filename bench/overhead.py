"""Recording overhead: convdiag.record against a bare call, measured in the same run.

Two figures, each the best of several interleaved repeats (the machines are shared and noisy);
each timed batch of recorded calls starts with a fresh recorder, as one recorded study would:

1. time added per evaluation: a recorded call of ``x*x - 2`` minus a bare call;
2. ``scipy.optimize.brentq`` on ``x*x - 2`` over [0, 2], with and without recording, as a ratio.

Targets: at most 0.5 µs added per evaluation; brentq with recording at most 1.35 times its bare
wall time. ``--json`` prints the same figures as one JSON object.
"""

from __future__ import annotations

import argparse
import gc
import json
import sys
import timeit

TARGET_ADDED_US = 0.5
TARGET_BRENTQ_RATIO = 1.35


def cheap(x: float) -> float:
    return x * x - 2


def per_call_seconds(fn: object, number: int, repeat: int) -> float:
    timer = timeit.Timer("fn(1.5)", globals={"fn": fn})
    return min(timer.repeat(repeat=repeat, number=number)) / number


def _best(stmt: str, setup: str, names: dict[str, object], number: int, repeat: int) -> float:
    """Best time per execution over ``repeat`` runs; ``setup`` runs before each (fresh recorder)."""
    timer = timeit.Timer(stmt, setup=setup, globals=names)
    return min(timer.repeat(repeat=repeat, number=number)) / number


def measure(quick: bool = False) -> dict[str, float]:
    """Interleaved rounds; each timed batch gets a fresh recorder (as one recorded study would)."""
    from scipy.optimize import brentq

    import convdiag

    names = {"cheap": cheap, "record": convdiag.record, "brentq": brentq}
    number = 20_000 if quick else 100_000
    bq_number = 500 if quick else 2_000
    rounds = 3 if quick else 9
    bare_call, rec_call, bare_bq, rec_bq = [], [], [], []
    for _ in range(rounds):  # interleave so that drift on a shared machine hits both sides
        bare_call.append(_best("cheap(1.5)", "", names, number, 3))
        rec_call.append(_best("rf(1.5)", "rf = record(cheap)", names, number, 3))
        bare_bq.append(_best("brentq(cheap, 0.0, 2.0)", "", names, bq_number, 3))
        rec_bq.append(_best("brentq(rf, 0.0, 2.0)", "rf = record(cheap)", names, bq_number, 3))
        gc.collect()
    rf = convdiag.record(cheap)
    brentq(rf, 0.0, 2.0)
    bare = min(bare_call)
    rec = min(rec_call)
    return {
        "bare_call_us": bare * 1e6,
        "recorded_call_us": rec * 1e6,
        "added_per_eval_us": (rec - bare) * 1e6,
        "brentq_bare_us": min(bare_bq) * 1e6,
        "brentq_recorded_us": min(rec_bq) * 1e6,
        "brentq_ratio": min(rec_bq) / min(bare_bq),
        "brentq_evals": float(len(rf)),
    }


def main(argv: list[str] | None = None) -> int:
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("--json", action="store_true", help="print one JSON object")
    p.add_argument("--quick", action="store_true", help="fewer repeats (for a smoke test)")
    args = p.parse_args(argv)
    r = measure(quick=args.quick)
    targets = {
        "added_per_eval_us": {"value": r["added_per_eval_us"], "target": TARGET_ADDED_US},
        "brentq_ratio": {"value": r["brentq_ratio"], "target": TARGET_BRENTQ_RATIO},
    }
    for t in targets.values():
        t["met"] = t["value"] <= t["target"]
    if args.json:
        print(json.dumps({"figures": r, "targets": targets}))
        return 0
    rows = [
        ("bare call of x*x - 2", f"{r['bare_call_us']:.3f} µs", ""),
        ("recorded call", f"{r['recorded_call_us']:.3f} µs", ""),
        ("added per evaluation", f"{r['added_per_eval_us']:.3f} µs", f"≤ {TARGET_ADDED_US} µs"),
        (f"brentq on [0, 2], bare ({r['brentq_evals']:.0f} evaluations)", f"{r['brentq_bare_us']:.2f} µs", ""),
        ("brentq on [0, 2], recorded", f"{r['brentq_recorded_us']:.2f} µs", ""),
        ("brentq recorded / bare", f"{r['brentq_ratio']:.3f}", f"≤ {TARGET_BRENTQ_RATIO}"),
    ]
    w = max(len(a) for a, _, _ in rows)
    print(f"{'measure'.ljust(w)}  {'figure':>12}  target")
    print(f"{'─' * w}  {'─' * 12}  {'─' * 10}")
    for a, b, c in rows:
        print(f"{a.ljust(w)}  {b:>12}  {c}")
    for name, t in targets.items():
        print(f"{name}: {'met' if t['met'] else 'NOT met'} ({t['value']:.3f} vs {t['target']})")
    return 0


if __name__ == "__main__":
    sys.exit(main())
