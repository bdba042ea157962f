"""The explorer: step a method through any function and see what each step assumed.

Layout, top to bottom: the function's name; the method picker and the
start (a number field and a slider, or a bracket for bracketing methods);
one slider per model parameter; the Back / Step / Run to end / Start over
buttons with a progress bar and Cancel; the figure (f with the current
step's model on the left, how fast the run closes in on the right) with
its key; the "where it stands" panel (the order so far, why it stopped,
the verdict with its evidence and advice, and a button that tries the
fix); the iterate table; buttons that open the compare, bracket and basin
views of the same function below.

Everything the explorer shows comes from core: a :class:`~convdiag.Session`
for the steps, ``estimate_order`` for the order, ``diagnose`` for the
verdict (see ``_adapters``). Errors in the user's function are recorded by
the session (the history is kept); anything else that goes wrong is shown
in the explorer's message line, never raised into the kernel.
"""

from __future__ import annotations

import math
import threading
from collections.abc import Mapping, Sequence
from typing import Any

from ..core._methods import METHODS
from ..core._problem import as_problem
from ..core._session import start_session
from ..errors import ConvdiagError, ParameterError
from ..report._step_figures import F_FAILED, ProgressDisplay, StepDisplay, auto_xlim, sample_curve
from . import _adapters as ad
from ._controls import param_specs
from ._explorer_widgets import AXES_F, ExplorerWidgets, guarded
from ._host import Canvas, Job, need_widgets
from ._panels import iterate_table, legend_html, status_panel

__all__ = ["AXES_F", "Explorer"]

#: a step runs in the background (with Cancel) when one evaluation took longer than this on average.
SLOW_EVAL_SECONDS = 0.05


def _expression_params(f: Any) -> tuple[str, ...]:
    if isinstance(f, str):
        from ..core._expr import parse_expression

        return parse_expression(f).params
    if type(f).__module__.startswith("sympy"):
        from ..core._problem import _expression_from_sympy

        return tuple(_expression_from_sympy(f, None).params)
    return ()


def _mean_eval_seconds(s: Any, last: int = 5) -> float:
    """Mean wall time of the session's last few evaluations (0 before the first)."""
    rows = s.ev.rows[-last:]
    return sum(r[4] - r[3] for r in rows) / len(rows) if rows else 0.0


class Explorer(ExplorerWidgets):
    """Step a root-finding method through a function in a notebook, one click at a time.

    Parameters
    ----------
    f : callable, str or sympy expression
        ``f(x)`` or ``f(x, **params)``, or expression text such as ``"x**3 - 2*x + 2"``.
    method : str
        The method to start with (any name in ``convdiag.METHODS``); the picker changes it.
    start : float or sequence of floats, optional
        Start(s) of an open method (default: the middle of ``xlim``, else 1.0).
    bracket : (a, b), optional
        Bracket of a bracketing method (default: found near the start with ``find_brackets``).
    params : mapping, optional
        Model parameters: a value, a range ``(lo, hi)`` or ``(lo, hi, value)`` per name. A callable's
        keyword parameters with float defaults get a slider without being named here.
    fprime, fprime2 : optional
        Derivatives (otherwise symbolic, complex step or central difference, as in ``solve``).
    xlim : (lo, hi), optional
        Fix the x-range of the function plot (default: fitted to the starts and iterates).
    max_evals, xtol, rtol, ftol : the run's budget and tolerances (see ``convdiag.solve``).
    samples : int
        Points at which the function curve is drawn (these calls are not part of the run).
    canvas : "auto", "ipympl" or "image"
        ipympl gives a live figure you can click to pick a start; "image" shows PNGs.
    background : bool
        Run long work (run to the end, a parameter change) in a thread with progress and Cancel.

    Examples
    --------
    >>> ex = Explorer("x**3 - 2*x + 2", "newton", start=0.0, canvas="image", background=False)
    >>> ex.step(); ex.step(); ex.session.position
    2
    >>> [round(float(v), 6) for v in ex.session.run.iterates]
    [0.0, 1.0, 0.0]
    """

    def __init__(
        self, f: Any, method: str = "newton", *, start: Any = None, bracket: Sequence[float] | None = None,
        params: Mapping[str, Any] | None = None, fprime: Any = None, fprime2: Any = None,
        xlim: tuple[float, float] | None = None, max_evals: int = 100, xtol: float = 0.0,
        rtol: float | None = None, ftol: float = 0.0, samples: int = 300, canvas: Canvas = "auto",
        background: bool = True,
    ) -> None:
        ipw = need_widgets()
        if method not in METHODS:
            raise ParameterError.expected("method", "Explorer", f"one of {', '.join(sorted(METHODS))}", method)
        if xlim is not None and not (len(xlim) == 2 and float(xlim[0]) < float(xlim[1])):
            raise ParameterError.expected("xlim", "Explorer", "a pair (lo, hi) with lo < hi", xlim)
        self.specs = param_specs(f, params, _expression_params(f))
        self.values = {s.name: s.value for s in self.specs}
        self.problem = as_problem(f, fprime=fprime, fprime2=fprime2, params=self.values or None)
        self.method = method
        self.settings: dict[str, Any] = {"max_evals": max_evals, "xtol": xtol, "rtol": rtol, "ftol": ftol}
        self.samples = int(samples)
        self._fixed_view = None if xlim is None else (float(xlim[0]), float(xlim[1]))
        if start is None:
            start = (self._fixed_view[0] + self._fixed_view[1]) / 2 if self._fixed_view else 1.0
        self.starts: list[float] = [float(v) for v in start] if isinstance(start, (list, tuple)) else [float(start)]
        self.bracket: tuple[float, float] | None = None if bracket is None else (float(bracket[0]), float(bracket[1]))
        self.session: Any = None
        self.message = ""
        self._serial = 0
        self._cache: dict[tuple[int, int, bool], Any] = {}
        self._diag: Any = None
        self._method_object: Any = None
        self._view: tuple[float, float] | None = None
        self._curve: Any = None
        self._zoomed = False
        self._quiet = False
        self._lock = threading.RLock()
        self.job = Job(background=background)
        self.job.on_report = self._on_progress
        self._build_widgets(ipw, canvas)
        if METHODS[method].needs_bracket and self.bracket is None:
            self.bracket = self._bracket_near(self.starts[0])
        self._new_session()
        self._tip()
        self._sync_controls()
        self.refresh()

    def _repr_mimebundle_(self, **kwargs: Any) -> dict[str, Any]:
        bundle: dict[str, Any] = self.widget._repr_mimebundle_(**kwargs)
        bundle["text/plain"] = repr(self)
        return bundle

    def __repr__(self) -> str:
        return f"<Explorer {self.method} on {self.problem.label}>"

    # -- sessions ------------------------------------------------------------------------
    def _bracket_near(self, x0: float) -> tuple[float, float]:
        """A bracket for a bracketing method: the root bracket found nearest x0, else x0 ± 1."""
        return self.found_bracket(x0) or (x0 - 1.0, x0 + 1.0)

    def found_bracket(self, x0: float) -> tuple[float, float] | None:
        """The root bracket nearest x0 that ``find_brackets`` finds around the plotted range (None if none)."""
        try:
            w = self._view[1] - self._view[0] if self._view else 2.0
            found = ad.find_brackets(self.problem, domain=(x0 - w, x0 + w), max_evals=300)
        except (ad.Unavailable, ConvdiagError):
            return None
        if not found.roots:
            return None
        best = min(found.roots, key=lambda c: abs(c.x - x0))
        return (float(best.lo), float(best.hi))

    def _new_session(self) -> bool:
        """Start a new session from the current method, starts, bracket and parameters."""
        m = METHODS[self.method]
        kwargs: dict[str, Any] = dict(self.settings)
        if m.needs_bracket:
            kwargs["bracket"] = self.bracket
        else:
            kwargs["start"] = self.starts[0] if len(self.starts) == 1 else list(self.starts[: m.n_starts])
        method: Any = self.method
        if getattr(self._method_object, "name", None) == self.method:
            method = self._method_object  # a remedy's method with its settings (a multiplicity, say)
        try:
            session = start_session(self.problem, method, **kwargs)
        except ConvdiagError as exc:
            self.show_error("Could not start:", str(exc))
            return False
        self._clear_message()
        with self._lock:
            self.session = session
            self._serial += 1
            self._diag = None
            if not self._zoomed and self._fixed_view is None:
                self._view = None
        return True

    # -- actions (also the button handlers) --------------------------------------------
    @guarded
    def step(self) -> None:
        """One step forward (computes it, or shows the next one already computed)."""
        s = self.session
        if s is None or self.job.running:
            return
        slow = s.position == len(s.steps) and _mean_eval_seconds(s) > SLOW_EVAL_SECONDS
        if slow:
            def work(job: Job) -> None:
                s.forward()
                if s.at_end:
                    self._finish(s, job)

            self.refresh(busy="computing the next step…", running=True)
            self.job.start(work, lambda _r, err: self._after_job(err))
            return
        if s.forward() is None and s.at_end:
            self.hint.value = '<span style="color:#6b7785;">The run has stopped; see why below.</span>'
        self._after_move()

    @guarded
    def back(self) -> None:
        """One step back (computed steps are kept)."""
        if self.session is not None and not self.job.running:
            self.session.back()
            self.refresh()

    @guarded
    def reset(self) -> None:
        """Back to the start (computed steps are kept; Step replays them)."""
        if self.session is not None and not self.job.running:
            self.session.reset()
            self.refresh()

    @guarded
    def run_to_end(self) -> None:
        """Step until the method stops (in the background with progress and Cancel)."""
        s = self.session
        if s is None or self.job.running:
            return
        budget = max(1, int(self.settings["max_evals"]))

        def work(job: Job) -> None:
            while not job.cancelled.is_set():
                if s.forward() is None:
                    break
                job.report(s.ev.count / budget, f"step {s.position}, {s.ev.count} of {budget} evaluations")
            if s.at_end and not job.cancelled.is_set():
                self._finish(s, job)

        self.refresh(busy="running to the end…", running=True)
        self.job.start(work, lambda _r, err: self._after_job(err))

    def _finish(self, s: Any, job: Job | None = None) -> None:
        """The full order estimate (with its high-precision replay) and the verdict, once a run has ended."""
        run = s.run
        key = (self._serial, s.position, True)
        if key not in self._cache:
            self._cache[key] = ad.order_estimate(run, final=True)
        if job is None or not job.cancelled.is_set():
            try:
                self._diag = ad.diagnose(run)
            except ConvdiagError as exc:  # too little to go on: say so in the verdict line
                self._diag = exc

    def _after_move(self) -> None:
        s = self.session
        if s.at_end and (self._serial, s.position, True) not in self._cache:
            self.refresh(busy="measuring the order and writing the verdict…", running=True)
            self.job.start(lambda job: self._finish(s, job), lambda _r, err: self._after_job(err))
            return
        self.refresh()

    def _after_job(self, error: BaseException | None) -> None:
        if self.job.cancelled.is_set():
            self.hint.value = '<span style="color:#6b7785;">Cancelled; everything computed so far is kept.</span>'
        else:
            self._tip()
        self.refresh()
        if error is not None:
            self.show_error("Something went wrong:", f"{type(error).__name__}: {error}")

    def wait(self, timeout: float | None = 30.0) -> bool:
        """Wait for background work (a run to the end, a re-run) to finish; True if none is left."""
        return self.job.wait(timeout)

    def _stop_job(self) -> bool:
        if self.job.running:
            self.job.cancel()
            if not self.job.wait(5.0):
                self.show_error("Busy:", "the last evaluation is still running; try again when it returns.")
                return False
        return True

    @guarded
    def set_method(self, name: str) -> None:
        """Switch to another method (same start; a bracket is found near it for bracketing methods)."""
        if name not in METHODS:
            raise ParameterError.expected("method", "Explorer", f"one of {', '.join(sorted(METHODS))}", name)
        if not self._stop_job():
            return
        self.method = name
        if METHODS[name].needs_bracket and self.bracket is None:
            self.bracket = self._bracket_near(self.starts[0])
        self._restart()

    @guarded
    def set_start(self, x: float | Sequence[float]) -> None:
        """Start the method from x (open methods; extra starts are added next to it)."""
        if not self._stop_job():
            return
        self.starts = [float(v) for v in x] if isinstance(x, Sequence) else [float(x)]
        if METHODS[self.method].needs_bracket:
            self.method_picker.value = "newton"  # a start is a start: switch to an open method
            return
        self._restart()

    @guarded
    def set_bracket(self, a: float, b: float) -> None:
        """Use the bracket [a, b] (bracketing methods)."""
        if not self._stop_job():
            return
        self.bracket = (float(min(a, b)), float(max(a, b)))
        self._restart()

    @guarded
    def set_param(self, name: str, value: float) -> None:
        """Change a model parameter and run the method again to the end."""
        if name not in self.values:
            raise ParameterError.expected("name", "Explorer.set_param", f"one of {sorted(self.values)}", name)
        if not self._stop_job():
            return
        self.values[name] = float(value)
        self.problem = self.problem.with_params(**self.values)
        self._sync_controls()
        if self._new_session():
            self.run_to_end()
        else:
            self.refresh()

    @guarded
    def try_remedy(self) -> None:
        """Apply the diagnosis's remedy: its method, start or bracket and settings, then run to the end."""
        remedy = getattr(self._diag, "remedy", None)
        if remedy is None or not self._stop_job():
            return
        if remedy.method not in METHODS:
            raise ParameterError(f"The remedy's method {remedy.method!r} is not registered in this version.")
        if remedy.drop_fprime:  # the supplied derivative is wrong: let convdiag differentiate f
            raw = self.problem.raw if self.problem.raw is not None else self.problem.label
            self.problem = as_problem(raw, params=self.values or None)
        for key in ("xtol", "rtol", "ftol", "max_evals"):
            if getattr(remedy, key) is not None:
                self.settings[key] = getattr(remedy, key)
        self._method_object = remedy.method_object()
        self.method = remedy.method
        if METHODS[remedy.method].needs_bracket:
            self.bracket = remedy.resolve_bracket(self.problem)
        elif remedy.start is not None:
            self.starts = [float(v) for v in remedy.start]
        self._tip()
        self._sync_controls()
        if self._new_session():
            self.run_to_end()

    def _restart(self) -> None:
        self._tip()
        self._sync_controls()
        self._new_session()
        self.refresh()

    # -- drawing -------------------------------------------------------------------------
    def _estimate(self, run: Any) -> Any:
        s = self.session
        final = (self._serial, s.position, True)
        if s.at_end and final in self._cache:
            return self._cache[final]
        key = (self._serial, s.position, False)
        if key not in self._cache:
            self._cache[key] = ad.order_estimate(run, final=False)
        return self._cache[key]

    def _fit_view(self) -> tuple[float, float]:
        s = self.session
        if self._fixed_view is not None:
            return self._fixed_view
        if self._zoomed and self._view is not None:
            return self._view
        xs = [float(v) for v in s.run.iterates[: len(s.starts) + s.position]]
        core = xs[: len(s.starts)] + (list(map(float, s.bracket)) if s.bracket is not None else [])
        failed = getattr(s.failure, "x", None) if s.at_end and getattr(s.failure, "reason", "") in F_FAILED else None
        if failed is not None and math.isfinite(failed):
            xs.append(float(failed))  # where f failed is shown (when it is not far off)
        new = auto_xlim(xs, core=core)
        if self._view is not None:
            new = (min(new[0], self._view[0]), max(new[1], self._view[1]))
        return new

    def refresh(self, busy: str = "", *, running: bool = False) -> None:
        """Redraw the figure and the panels from the session's current step.

        ``busy`` says what background work is about to start (``running``: keep the buttons off).
        """
        with self._lock:
            s = self.session
            if s is None:
                return
            run = ad.run_prefix(s)
            est = self._estimate(run)
            view = self._fit_view()
            if self._curve is None or self._curve[:2] != view:
                self._curve = (view[0], view[1], sample_curve(self.problem.f, view[0], view[1], self.samples))
            if view != self._view:
                self._view = view
                self._sync_controls()
            self._quiet = True
            try:
                self.step_display.update(StepDisplay.from_session(s, xlim=view, curve=self._curve[2]))
            finally:
                self._quiet = False
            self.progress_display.update(ProgressDisplay.from_run(run, est))
            self.host.redraw()
            self.table.value = iterate_table(run, est)
            self.legend.value = legend_html(self.step_display.model_kind, s.bracket is not None)
            self.status.value = status_panel(
                run, computed=len(s.steps), est=est, diag=self._diag if s.at_end else None,
                order_available=ad.available("order"), diag_available=ad.available("diagnose"),
                finished=s.at_end, busy=busy)
            remedy = getattr(self._diag, "remedy", None) if s.at_end else None
            self.remedy_button.layout.display = "" if remedy is not None and self._diag.verdict != "converged" else "none"
            if remedy is not None:
                self.remedy_button.description = f"Try the fix: {remedy.describe()}"
            running = running or self.job.running
            self.back_button.disabled = running or s.position == 0
            self.reset_button.disabled = running or s.position == 0
            self.step_button.disabled = running or s.at_end
            self.run_button.disabled = running or s.at_end
