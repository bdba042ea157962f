"""Plumbing shared by the views: a figure in the notebook, background jobs with progress and cancel.

:class:`FigureHost` puts a matplotlib figure into the notebook. With ipympl
(``canvas="ipympl"``, the default when it is installed) the figure is a live
canvas that reports mouse clicks in data coordinates; otherwise it is a PNG
in an ``ipywidgets.Image`` (no clicks). :class:`Job` runs long work (a run
to the end, a comparison, a basin map) in a thread, shows progress, and can
be cancelled between steps; errors are caught and handed to the view.
"""

from __future__ import annotations

import html
import io
import threading
import time
import warnings
from collections.abc import Callable, Sequence
from typing import Any, Literal

__all__ = ["FigureHost", "Job", "error_box", "need_widgets"]

Canvas = Literal["auto", "ipympl", "image"]


def need_widgets() -> Any:
    """Import ipywidgets, or say how to install it."""
    try:
        import ipywidgets
    except ImportError as exc:  # pragma: no cover - the test environment has it
        raise ImportError("convdiag's widgets need ipywidgets: pip install 'convdiag[notebook]'") from exc
    return ipywidgets


def error_box(title: str, text: str) -> str:
    """A small red-edged HTML box for problems shown inside a view (text is escaped)."""
    return (f'<div style="border-left:4px solid #b3261e;background:#fbeeed;padding:4px 8px;margin:2px 0;'
            f'font-size:12.5px;"><b>{html.escape(title)}</b> {html.escape(text)}</div>')


class FigureHost:
    """A matplotlib figure shown in a notebook, on an ipympl canvas or as a PNG image.

    Parameters
    ----------
    width, height : size in inches (at ``dpi`` dots per inch).
    canvas : "ipympl" (clickable), "image" (PNG) or "auto" (ipympl when installed).
    """

    def __init__(self, width: float, height: float, *, dpi: int = 100, canvas: Canvas = "auto") -> None:
        from matplotlib.figure import Figure

        ipw = need_widgets()
        self.figure = Figure(figsize=(width, height), dpi=dpi)
        self.kind: Literal["ipympl", "image"] = "image"
        if canvas in ("auto", "ipympl"):
            try:
                self._make_ipympl()
                self.kind = "ipympl"
            except ImportError:
                if canvas == "ipympl":
                    raise ImportError("canvas='ipympl' needs ipympl: pip install ipympl") from None
        if self.kind == "image":
            from matplotlib.backends.backend_agg import FigureCanvasAgg

            FigureCanvasAgg(self.figure)
            self.widget = ipw.Image(format="png", layout=ipw.Layout(width=f"{int(width * dpi)}px"))
        self.lock = threading.RLock()
        self._dynamic: list[Any] = []
        self._bg: Any = None
        self._bg_key: tuple[Any, ...] = ()
        self._capturing = False
        self._draw_cid: int | None = None

    def _make_ipympl(self) -> None:
        from ipympl.backend_nbagg import Canvas as MplCanvas
        from ipympl.backend_nbagg import FigureManager

        canvas = MplCanvas(self.figure)
        with warnings.catch_warnings():  # ipympl's toolbar passes an argument traitlets calls deprecated
            warnings.filterwarnings("ignore", message="Passing unrecognized arguments", category=DeprecationWarning)
            FigureManager(canvas, 0)
        canvas.header_visible = False
        canvas.footer_visible = False
        canvas.resizable = False
        canvas.toolbar_position = "right"
        canvas.capture_scroll = False
        self.widget = canvas

    @property
    def clickable(self) -> bool:
        return self.kind == "ipympl"

    def on_click(self, handler: Callable[[Any], None]) -> None:
        """Call ``handler(event)`` on a mouse press inside the figure (ipympl only).

        The handler is held strongly (matplotlib keeps only a weak reference to a bound method, and
        a view that nothing else holds would be collected with its click handling).
        """
        self.figure.canvas.mpl_connect("button_press_event", lambda event: handler(event))

    def busy_tool(self) -> bool:
        """True while a toolbar mode (zoom, pan) is on: clicks then belong to the toolbar."""
        toolbar: Any = getattr(self.figure.canvas, "toolbar", None)
        return bool(str(getattr(toolbar, "mode", "") or ""))

    def set_dynamic(self, artists: Sequence[Any]) -> None:
        """Artists that change on every update: they are redrawn over a cached background.

        The background (axes, ticks, labels) is drawn again only when an axis range changes; a
        step then costs a few lines and texts instead of a whole figure (matplotlib's blitting).
        """
        self._dynamic = sorted(artists, key=lambda a: a.get_zorder())
        self._bg = None
        if self._draw_cid is None:
            self._draw_cid = self.figure.canvas.mpl_connect("draw_event", self._on_draw)

    def _limits(self) -> tuple[Any, ...]:
        return (*((ax.get_xlim(), ax.get_ylim()) for ax in self.figure.axes), tuple(self.figure.bbox.bounds))

    def _on_draw(self, _event: Any) -> None:
        if not self._capturing:
            return
        canvas: Any = self.figure.canvas  # an Agg canvas (ipympl's is one too)
        self._bg = canvas.copy_from_bbox(self.figure.bbox)
        self._bg_key = self._limits()
        self._draw_dynamic()

    def _draw_dynamic(self) -> None:
        for a in self._dynamic:
            if a.get_visible():
                self.figure.draw_artist(a)

    def _full_draw(self) -> None:
        for a in self._dynamic:
            a.set_animated(True)  # left out of the background...
        self._capturing = True
        try:
            self.figure.canvas.draw()  # ...which _on_draw keeps, then draws them on top
        finally:
            self._capturing = False
            for a in self._dynamic:
                a.set_animated(False)  # downloads and the toolbar's own redraws show everything

    def redraw(self) -> None:
        """Show the figure's current state (the whole figure when a range changed, else the changes)."""
        with self.lock:
            canvas: Any = self.figure.canvas
            if self.kind == "ipympl" and getattr(canvas, "syncing_data_url", False):
                # no front end yet: it asks for a drawing when it starts. (Drawing now would store a
                # data URL without its "data:image/png;base64," prefix, which ipympl 0.10's front end
                # cannot load, and the figure would stay blank.)
                return
            # ipympl: draw now and push the image. Its front end drops draw requests that arrive
            # while it waits for an image, so draw_idle() after quick clicks could leave a stale picture.
            if not self._dynamic:
                canvas.draw()
            elif self._bg is None or self._bg_key != self._limits():
                self._full_draw()
            else:
                canvas.restore_region(self._bg)
                self._draw_dynamic()
                if self.kind == "ipympl":
                    canvas.blit(self.figure.bbox)
            if self.kind == "image":
                self.widget.value = self._png()

    def _png(self) -> bytes:
        import numpy as np
        from PIL import Image

        buf = io.BytesIO()
        canvas: Any = self.figure.canvas
        Image.fromarray(np.asarray(canvas.buffer_rgba())).save(buf, format="png")
        return buf.getvalue()

    def render_png(self) -> bytes:
        """Draw the whole figure and encode it as PNG (tests and benchmarks)."""
        with self.lock:
            self.figure.canvas.draw()
            return self._png()


class Job:
    """Run work in a thread with a progress bar, a status line and a Cancel button.

    ``start(work, done)`` runs ``work(job)`` (which calls ``job.report(fraction, text)`` and stops
    when ``job.cancelled`` is set) and then ``done(result, error)``. With ``background=False``
    everything runs in the caller's thread (tests, scripts).
    """

    def __init__(self, *, background: bool = True) -> None:
        ipw = need_widgets()
        self.background = background
        self.progress = ipw.FloatProgress(value=0.0, min=0.0, max=1.0, layout=ipw.Layout(width="160px",
                                                                                          visibility="hidden"))
        self.cancel_button = ipw.Button(description="Cancel", icon="stop", disabled=True,
                                        tooltip="Stop after the current evaluation",
                                        layout=ipw.Layout(width="90px"))
        self.cancel_button.add_class("cdx-cancel")
        self.cancel_button.on_click(lambda _b: self.cancel())
        self.cancelled = threading.Event()
        self._thread: threading.Thread | None = None
        self._active = False
        self._last = 0.0
        self.on_report: Callable[[str], None] | None = None

    @property
    def running(self) -> bool:
        """Work is under way (False again by the time ``done`` is called)."""
        return self._active

    def cancel(self) -> None:
        self.cancelled.set()

    def report(self, fraction: float, text: str = "", *, force: bool = False) -> None:
        """Update the progress bar (at most every 0.1 s unless ``force``)."""
        now = time.perf_counter()
        if not force and now - self._last < 0.1:
            return
        self._last = now
        self.progress.value = min(max(float(fraction), 0.0), 1.0)
        if text and self.on_report is not None:
            self.on_report(text)

    def start(self, work: Callable[[Job], Any], done: Callable[[Any, BaseException | None], None]) -> None:
        """Start ``work``; ``done(result, error)`` runs when it ends (also after a cancel)."""
        if self.running:
            raise RuntimeError("a job is already running")
        self.cancelled.clear()
        self._active = True
        self._last = 0.0
        self.progress.value = 0.0
        self.progress.layout.visibility = "visible"
        self.cancel_button.disabled = False

        def body() -> None:
            result: Any = None
            error: BaseException | None = None
            try:
                result = work(self)
            except Exception as exc:  # noqa: BLE001  (shown by the view; the kernel and the widget carry on)
                error = exc
            finally:
                self.cancel_button.disabled = True
                self.progress.layout.visibility = "hidden"
                self._active = False
            done(result, error)

        if self.background:
            self._thread = threading.Thread(target=body, name="convdiag-widget-job", daemon=True)
            self._thread.start()
        else:
            body()

    def wait(self, timeout: float | None = 30.0) -> bool:
        """Wait for the job (and its ``done``) to finish; True when nothing is left running."""
        t = self._thread
        if t is not None:
            t.join(timeout)
            return not t.is_alive()
        return not self.running
