"""Explorer responsiveness: the Step button's handler with the figure redraw, against a bare redraw.

Server side, headless: an :class:`convdiag.widgets.Explorer` on an ipympl canvas (the default;
``--canvas image`` for the PNG fallback) steps bisection on x**3 - 2x - 5 over [0, 3] (about 50
steps, each a new point, a new table and a new order estimate). One timed step is

    explorer.step_button.click(),

which includes drawing the figure and encoding the PNG the browser receives (ipympl: the
changed pixels; image: the whole figure),

the median over ``--steps`` steps (30). The peer, measured in the same run and interleaved, is a
bare matplotlib redraw of the same figure to PNG with nothing changed. Figures: the median step
(target: at most 150 ms), the bare redraw, and their ratio (the explorer's own overhead).
``--json`` prints the same figures as one JSON object.
"""

from __future__ import annotations

import argparse
import io
import json
import statistics
import sys
import time
from typing import Any

TARGET_STEP_MS = 150.0


def _bare_png(fig: Any) -> float:
    """A bare matplotlib redraw of the figure, encoded to PNG as in ``FigureHost.render_png``."""
    import numpy as np
    from PIL import Image

    t = time.perf_counter()
    fig.canvas.draw()
    buf = io.BytesIO()
    Image.fromarray(np.asarray(fig.canvas.buffer_rgba())).save(buf, format="png")
    return time.perf_counter() - t


def measure(steps: int = 30, canvas: str = "ipympl") -> dict[str, float]:
    import matplotlib

    matplotlib.use("Agg")
    from convdiag.widgets import Explorer

    ex = Explorer("x**3 - 2*x - 5", "bisection", bracket=(0.0, 3.0), max_evals=200, canvas=canvas,  # type: ignore[arg-type]
                  background=False)
    canvas = ex.host.figure.canvas
    if hasattr(canvas, "syncing_data_url"):
        canvas.syncing_data_url = False  # as after the browser's "initialized" message: draws go out as images
    ex.host.render_png()  # warm up: fonts, caches
    _bare_png(ex.host.figure)
    step_s, bare_s = [], []
    for _ in range(steps):
        t = time.perf_counter()
        ex.step_button.click()  # the handler draws and encodes the image it sends (both hosts)
        step_s.append(time.perf_counter() - t)
        bare_s.append(_bare_png(ex.host.figure))
    if ex.message:
        raise RuntimeError(f"the explorer reported a problem: {ex.message}")
    if ex.session.position != steps:
        raise RuntimeError(f"expected {steps} steps, the explorer is at {ex.session.position}")
    step_ms = statistics.median(step_s) * 1e3
    bare_ms = statistics.median(bare_s) * 1e3
    return {
        "steps": float(steps),
        "step_median_ms": step_ms,
        "step_p90_ms": sorted(step_s)[int(0.9 * (len(step_s) - 1))] * 1e3,
        "bare_redraw_median_ms": bare_ms,
        "ratio_step_to_bare": step_ms / bare_ms,
    }


def main(argv: list[str] | None = None) -> int:
    p = argparse.ArgumentParser(description=(__doc__ or "").splitlines()[0])
    p.add_argument("--json", action="store_true", help="print one JSON object")
    p.add_argument("--steps", type=int, default=30, help="steps to time (default 30)")
    p.add_argument("--canvas", choices=("ipympl", "image"), default="ipympl", help="figure host (default ipympl)")
    args = p.parse_args(argv)
    r = measure(args.steps, args.canvas)
    target = {"value": r["step_median_ms"], "target": TARGET_STEP_MS, "met": r["step_median_ms"] <= TARGET_STEP_MS}
    if args.json:
        print(json.dumps({"figures": r, "canvas": args.canvas, "targets": {"step_median_ms": target}}))
        return 0
    rows = [
        (f"Step handler + figure to PNG, median of {args.steps} ({args.canvas})", f"{r['step_median_ms']:.1f} ms",
         f"≤ {TARGET_STEP_MS:g} ms"),
        ("  90th percentile", f"{r['step_p90_ms']:.1f} ms", ""),
        ("bare matplotlib redraw of the same figure to PNG", f"{r['bare_redraw_median_ms']:.1f} ms", ""),
        ("step / bare redraw", f"{r['ratio_step_to_bare']:.2f}", ""),
    ]
    w = max(len(a) for a, _, _ in rows)
    print(f"{'measure'.ljust(w)}  {'figure':>10}  target")
    print(f"{'─' * w}  {'─' * 10}  {'─' * 10}")
    for a, b, c in rows:
        print(f"{a.ljust(w)}  {b:>10}  {c}")
    print(f"step_median_ms: {'met' if target['met'] else 'NOT met'} ({r['step_median_ms']:.1f} vs {TARGET_STEP_MS:g})")
    return 0


if __name__ == "__main__":
    sys.exit(main())
