"""A sweep's progress as a bar in the notebook.

``%load_ext convdiag`` installs :class:`WidgetProgressBar` as what ``sweep(progress=True)``
shows (outside notebooks the text bar on stderr stays). Like the text bar it appears only
after ``delay`` seconds, so quick sweeps stay quiet. To stop a sweep, interrupt the kernel:
the sweep returns what it finished, marked interrupted, and the bar says so.
"""

from __future__ import annotations

import time
from typing import Any

__all__ = ["WidgetProgressBar"]


class WidgetProgressBar:
    """Progress of a sweep over ``total`` points: a bar, the count and the time so far.

    Examples
    --------
    >>> bar = WidgetProgressBar(2000, delay=0.0, show=False)
    >>> bar.update(500, 2000)
    >>> bar.bar.value, bar.label.value.split("  ")[0]
    (500, '500 of 2,000 points')
    >>> bar.update(2000, 2000); bar.close(); bar.bar.bar_style
    'success'
    """

    def __init__(self, total: int, *, delay: float = 1.0, show: bool = True) -> None:
        import ipywidgets as w

        self.total, self.delay, self.show = int(total), float(delay), show
        self.t0 = time.perf_counter()
        self.done = 0
        self.bar = w.IntProgress(value=0, min=0, max=max(self.total, 1), description="sweep", bar_style="info")
        self.label = w.Label("")
        self.box = w.HBox([self.bar, self.label])
        self.shown = False

    def _show(self) -> None:
        if not self.shown:
            self.shown = True
            if self.show:
                from IPython.display import display

                display(self.box)  # type: ignore[no-untyped-call]

    def update(self, done: int, total: int) -> None:
        self.done = int(done)
        self.bar.max, self.bar.value = max(int(total), 1), self.done
        secs = time.perf_counter() - self.t0
        self.label.value = f"{self.done:,} of {int(total):,} points  {secs:.1f} s"
        if secs >= self.delay:
            self._show()

    def close(self) -> None:
        finished = self.done >= self.total
        self.bar.bar_style = "success" if finished else "warning"
        if not finished:  # interrupted, or out of time: what was finished is in the result
            self.label.value += "  stopped: the finished points are in the result"
