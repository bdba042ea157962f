"""The observed order of convergence, linear rate, multiplicity and efficiency of an iteration.

With errors e_k = |x_k − r|, the single-step order is
q_k = log(e_{k+1}/e_k) / log(e_k/e_{k−1}) (uses e_{k−1}, e_k, e_{k+1}) and the
single-step rate is ρ_k = e_{k+1}/e_k. :func:`estimate_order` measures them on
a run, a recorder's log or any plain sequence, picks the window where they
have settled, and names the regime.

Reference (what r is), chosen in this order unless ``reference`` says otherwise:
``given`` (``root=``), ``high-precision`` (a root computed and confirmed with
mpmath, see :mod:`convdiag.core._reference`), ``best-iterate`` (the run's own
best iterate, for runs that converged by their own rule; its own error,
estimated as a Newton step from it with the last secant slope, biases the
errors measured against it, so errors below 100 × that are dropped),
``differences`` (successive differences d_k = |x_{k+1} − x_k| in place of
errors: the approximated computational order of convergence, ACOC, of Cordero
and Torregrosa, 2007) and ``residuals`` (|f(x_k)| in place of errors: near a
simple root e_k ≈ |f(x_k)|/|f'(r)|, Grau-Sánchez et al., 2010).

Window rules (:func:`~convdiag.core._window._analyse`):

1. Usable errors: finite and above 10 × the rounding floor, which is the larger
   of the problem's floor (4 ulps of |r|, or the evaluation noise of f turned
   into an error of x, see :func:`~convdiag.core._reference.rounding_floor`)
   and 4 units of |x_(k−1)| (the rounding of the step itself; it matters at a
   root at 0). The first unusable error ends the usable part; so does the
   smallest error (nothing after it improved).
2. Superlinear: the longest run of single-step orders at the end of the usable
   part that all lie within max(0.1, 0.05·median) of their median, the errors
   decreasing throughout. With at least ``min_points`` values (4 when the
   errors go up and down, as bisection midpoints do) and a median ≥ 1.2, the
   order is the median of the later half of that run (the values nearest the
   asymptotic regime; methods with memory oscillate, so a median, not the last
   value): "quadratic" within 0.1 of 2, "cubic" within 0.15 of 3, else
   "superlinear". When the floor is unknown and the last single-step order
   drops out of line, the last error is taken as rounding-limited and dropped.
3. Linear: the longest run of steady single-step rates at the end (log-ratios
   within 15 % + 0.01 of their median), at least 4 of them; the rate is the
   median of the later half. With at least 8 usable errors whose single-step
   values scatter: if the order over blocks of p = 2, 3 or 4 steps,
   ((L_(k+p) − L_k)/(L_k − L_(k−p)))^(1/p) with L = log e, settles at ≥ 1.2
   (Illinois-type methods repeat a 3-step pattern) that is the order; else if
   |log(e_(k+1)/e_k)| grows steadily by ≥ 1.15 per step the order is that
   growth; otherwise the rate is the
   slope of a robust straight-line fit (Theil–Sen) of log e_k against k over
   the last two thirds (bisection), unless the trend is steeper than a factor
   10 per step (then too few points to tell). "Sublinear" when the rate is
   ≥ 0.9 and 1 − rate shrinks by a third or more from the window's first half
   to its second.
4. Anything else: "not enough points" (no number is invented), or "not
   converging" when no later error is smaller than the first usable one.

For a double-precision run of a function that computes in mpmath, the same
method is replayed from the same starts at ``digits`` digits (3× and 9× that
when the window still has fewer than 4 settled values); the label rests on the
replay when it gives an estimate, and both estimates are kept.

Layout: this module holds the result and the entry points; the window engine
is in ``_window``, the choice of reference in ``_refchoice``, the measuring of
runs and sequences in ``_measure`` and the equal-work comparison in
``_compare`` (re-exported here).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace
from typing import Any, Literal

from ..errors import ParameterError
from ._compare import Comparison, MethodResult, compare_methods
from ._show import Showable

__all__ = ["Comparison", "MethodResult", "OrderEstimate", "compare_methods", "estimate_order", "order_json"]

EPS = 2.220446049250313e-16
GOLDEN = (1 + 5**0.5) / 2
Reference = Literal["auto", "high-precision", "best-iterate", "differences", "residuals"]
LABELS = ("quadratic", "cubic", "superlinear", "linear", "sublinear", "not enough points", "not converging")


@dataclass(frozen=True, repr=False)
class OrderEstimate(Showable):
    """The observed order of convergence of one iteration, with how sure it is.

    Attributes
    ----------
    value : observed order (see ``centre``; NaN with too few points)
    spread : half the range of the single-step orders over the window
    window : (first, last) index k of the single-step values used (q_k for a superlinear
        label, ρ_k = e_{k+1}/e_k for a linear one), or None
    points : how many single-step values the estimate rests on
    label : quadratic, cubic, superlinear, linear, sublinear, not enough points, not converging
    reference : given root, high-precision root, best iterate, successive differences, residuals
    reference_note : a sentence on the reference: its value, how sure, its bias
    root : the reference root as a float (None for differences and residuals)
    rate, rate_spread : the linear rate lim e_{k+1}/e_k and its spread (linear labels only)
    multiplicity, multiplicity_note : the multiplicity the evidence implies, and the evidence
    error_constant, error_constant_theory, error_constant_note : observed e_{k+1}/e_k^p (median
        over the window, p the method's order) against its theoretical value at the root
    evals_per_step : evaluations per step observed over the window
    efficiency, efficiency_theory : observed order^(1/evals_per_step) and the method's
        nominal order^(1/nominal evaluations per step) (Ostrowski's efficiency index)
    method, nominal_order : the method, when known, and its theoretical order
    centre : how the window was summarised
    block : steps per block the order was measured over (1: single steps; 3 for Illinois-type patterns)
    errors, log_errors : e_k (float; may underflow to 0) and log10 e_k as measured
    orders : single-step orders q_k aligned with ``errors`` (NaN where undefined)
    evals : cumulative evaluations at each entry, when known
    floor, floor_note : rounding floor of the errors (errors ≤ 10·floor are not used) and what set it
    digits : working digits of the arithmetic (None for double precision)
    basis : "run", "replay" (high-precision replay of the run) or "sequence"
    alternative : the other estimate (the run's own when basis is "replay", the replay's
        when basis is "run"), or None
    notes : anything the reader should know
    source : what was measured
    """

    value: float
    spread: float
    window: tuple[int, int] | None
    points: int
    label: str
    reference: str
    reference_note: str = ""
    root: float | None = None
    rate: float | None = None
    rate_spread: float | None = None
    multiplicity: int | None = None
    multiplicity_note: str = ""
    error_constant: float | None = None
    error_constant_theory: float | None = None
    error_constant_note: str = ""
    evals_per_step: float | None = None
    efficiency: float | None = None
    efficiency_theory: float | None = None
    method: str | None = None
    nominal_order: float | None = None
    centre: str = ""
    block: int = 1
    errors: tuple[float, ...] = ()
    log_errors: tuple[float, ...] = ()
    orders: tuple[float, ...] = ()
    evals: tuple[int, ...] | None = None
    floor: float = 0.0
    floor_note: str = ""
    digits: int | None = None
    basis: str = "sequence"
    alternative: OrderEstimate | None = field(default=None, compare=False)
    notes: tuple[str, ...] = ()
    source: str = ""

    @property
    def label_text(self) -> str:
        """The label with its number: ``superlinear (order 1.62)``, ``linear (rate 0.500)``."""
        if self.label == "superlinear":
            return f"superlinear (order {self.value:.3g})"
        if self.label == "linear" and self.rate is not None:
            return f"linear (rate {self.rate:.3g})"
        if self.label == "sublinear":
            return "sublinear (single-step rates creep up to 1)"
        return self.label

    @property
    def converged_estimate(self) -> bool:
        """A number was measured (the label is neither 'not enough points' nor 'not converging')."""
        return self.label not in ("not enough points", "not converging")

    @property
    def replay(self) -> OrderEstimate | None:
        """The estimate on the high-precision replay, if there was one."""
        if self.basis == "replay":
            return self
        return self.alternative if self.alternative is not None and self.alternative.basis == "replay" else None

    @property
    def in_run(self) -> OrderEstimate | None:
        """The estimate on the run's own iterates (None for plain sequences)."""
        if self.basis == "run":
            return self
        return self.alternative if self.alternative is not None and self.alternative.basis == "run" else None

    def __repr__(self) -> str:
        where = f"window {self.window[0]}–{self.window[1]}, " if self.window else ""
        pts = f"{self.points} point{'s' if self.points != 1 else ''}"
        head = self.label if not self.converged_estimate else f"{self.value:.3f} {self.label_text}"
        return f"<OrderEstimate {head} ({where}{pts}, reference: {self.reference})>"


# -- the public entry point ----------------------------------------------------------------
def estimate_order(
    source: Any,
    *,
    root: Any = None,
    method: str | None = None,
    replay: bool = True,
    reference: Reference = "auto",
    kind: Literal["auto", "iterates", "residuals"] = "auto",
    digits: int = 60,
    floor: float | None = None,
    min_points: int = 2,
    evals_per_step: float | None = None,
) -> OrderEstimate:
    """Measure the order of convergence of a run or of any sequence of iterates or residuals.

    Parameters
    ----------
    source : Run, Recorder, EvalLog, IterationSequence, list, numpy array or mapping
        What to measure. A list or array holds iterates (residuals with ``kind="residuals"``);
        a recorder's iterates are its evaluation points (right for secant-like solvers that
        evaluate f once per step; see :func:`~convdiag.core._sequence.as_sequence`).
    root : float or ReferenceRoot, optional
        The true root, if known. For a run whose function computes in mpmath the given root
        is also polished to ``digits`` digits for the replay.
    method : str, optional
        The method that produced a plain sequence (for the multiplicity a linear rate implies,
        the error constant and the efficiency); a run names its own.
    replay : bool
        For a double-precision run of an expression (or of a callable that computes in
        mpmath), also replay the method from the same starts at ``digits`` digits (deepened to
        3× and 9× when too few points settle; a run stopped by a budget is replayed for the same
        number of steps) and measure the order there. The label rests on the replay whenever it
        gives an estimate; the run's own estimate is kept in ``alternative``.
    reference : "auto", "high-precision", "best-iterate", "differences" or "residuals"
        Force a reference instead of the automatic choice (see the module notes).
    kind : "auto", "iterates" or "residuals"
        How to read a single-column sequence.
    digits : int
        Digits of the high-precision reference root and replay (16–2000).
    floor : float, optional
        Rounding floor of the errors (default: measured, see :func:`~convdiag.core._reference.rounding_floor`).
    min_points : int
        Fewest single-step orders a superlinear estimate may rest on (default 2).
    evals_per_step : float, optional
        Evaluations per step of a plain sequence without an ``evals`` column.

    Returns
    -------
    OrderEstimate

    Raises
    ------
    ParameterError
        A bad argument, or a sequence with fewer than 3 entries.

    References
    ----------
    Weerakoon & Fernando, Appl. Math. Lett. 13(8) (2000) 87-93 (COC); Cordero & Torregrosa,
    Appl. Math. Comput. 190 (2007) 686-698 (ACOC); Grau-Sánchez, Noguera & Gutiérrez, Appl. Math.
    Lett. 23 (2010) 472-478 (residual-based orders); Ostrowski (1960), efficiency index.

    Examples
    --------
    >>> from convdiag import solve
    >>> est = estimate_order(solve("x**2 - 2", "newton", start=1.0))
    >>> est.label, round(est.value, 2), est.reference, est.basis
    ('quadratic', 2.0, 'high-precision root', 'replay')
    >>> estimate_order([1.0, 0.5, 0.25, 0.125, 0.0625, 0.03125], root=0.0).label_text
    'linear (rate 0.5)'
    """
    from ._measure import _measure_run, _measure_sequence
    from ._run import Run

    _check_options(reference, kind, digits, floor, min_points, evals_per_step, method)
    opts = _Options(reference, digits, floor, min_points, evals_per_step)
    if isinstance(source, Run):
        return _measure_run(source, root, replay, opts)
    return _measure_sequence(source, root, method, kind, opts)


def order_json(estimate: OrderEstimate) -> dict[str, Any]:
    """A JSON-ready dict with the keys ``order``, ``rate``, ``multiplicity``, ``efficiency`` (plus extras).

    ``order`` holds ``value``, ``spread``, ``window``, ``points``, ``label`` and ``reference``;
    NaN becomes None.

    Examples
    --------
    >>> est = estimate_order([1.0, 0.5, 0.25, 0.125, 0.0625, 0.03125], root=0.0)
    >>> d = order_json(est)
    >>> sorted(d["order"]), round(d["rate"], 3)
    (['block', 'label', 'label_text', 'points', 'reference', 'spread', 'value', 'window'], 0.5)
    """

    def num(v: Any) -> Any:
        if v is None:
            return None
        f = float(v)
        return f if math.isfinite(f) else None

    e = estimate
    out: dict[str, Any] = {
        "order": {
            "value": num(e.value),
            "spread": num(e.spread),
            "window": list(e.window) if e.window else None,
            "points": e.points,
            "label": e.label,
            "label_text": e.label_text,
            "reference": e.reference,
            "block": e.block,
        },
        "rate": num(e.rate),
        "multiplicity": e.multiplicity,
        "efficiency": {
            "index": num(e.efficiency),
            "evals_per_step": num(e.evals_per_step),
            "theory": num(e.efficiency_theory),
        },
        "rate_spread": num(e.rate_spread),
        "multiplicity_note": e.multiplicity_note,
        "reference_note": e.reference_note,
        "root": num(e.root),
        "error_constant": {"observed": num(e.error_constant), "theory": num(e.error_constant_theory),
                           "note": e.error_constant_note},
        "method": e.method,
        "nominal_order": num(e.nominal_order),
        "basis": e.basis,
        "digits": e.digits,
        "centre": e.centre,
        "floor": num(e.floor),
        "notes": list(e.notes),
    }
    if e.alternative is not None:
        alt = order_json(replace(e.alternative, alternative=None))
        out[e.alternative.basis] = {k: alt[k] for k in ("order", "rate", "multiplicity", "efficiency", "digits")}
    return out


# -- options ---------------------------------------------------------------------------------
@dataclass(frozen=True)
class _Options:
    reference: str
    digits: int
    floor: float | None
    min_points: int
    evals_per_step: float | None


def _check_options(reference: Any, kind: Any, digits: Any, floor: Any, min_points: Any, eps: Any, method: Any) -> None:
    from ._methods import METHODS

    owner = "estimate_order"
    if reference not in ("auto", "high-precision", "best-iterate", "differences", "residuals"):
        raise ParameterError.expected(
            "reference", owner, "'auto', 'high-precision', 'best-iterate', 'differences' or 'residuals'", reference
        )
    if kind not in ("auto", "iterates", "residuals"):
        raise ParameterError.expected("kind", owner, "'auto', 'iterates' or 'residuals'", kind)
    if not isinstance(digits, int) or isinstance(digits, bool) or not 16 <= digits <= 2000:
        raise ParameterError.expected("digits", owner, "an int between 16 and 2000", digits)
    if floor is not None and (isinstance(floor, bool) or not isinstance(floor, (int, float)) or not floor >= 0):
        raise ParameterError.expected("floor", owner, "a float >= 0 or None", floor)
    if not isinstance(min_points, int) or isinstance(min_points, bool) or min_points < 1:
        raise ParameterError.expected("min_points", owner, "an int >= 1", min_points)
    if eps is not None and (isinstance(eps, bool) or not isinstance(eps, (int, float)) or not eps > 0):
        raise ParameterError.expected("evals_per_step", owner, "a float > 0 or None", eps)
    if method is not None and method not in METHODS:
        raise ParameterError.expected("method", owner, f"one of {', '.join(sorted(METHODS))} or None", method)
