"""Why a solver stalls: one verdict, the findings behind it, the evidence, and a fix.

:func:`diagnose` reads what a solver did (a run of convdiag's own methods, a
recording of any third-party solver, or a plain sequence of iterates and/or
residuals from a log file), measures the order of convergence, makes a few
extra evaluations of f when it has f, and names the cause.

Findings (each detector states its rule and thresholds in its module):

=======================  ============================================  =====================
kind                     what it means                                 module
=======================  ============================================  =====================
converged                the run met its rule (also: to a root other   ``_detect_done``
                         than the one nearest the start)
cycle                    the iterates repeat with period p             ``_detect_path``
divergence               iterates or steps grow without bound, or      ``_detect_path``
                         drift away while f decays (false convergence)
domain-error             f raised or returned NaN; where the domain    ``_detect_path``
                         ends
flat                     a near-zero slope threw the iterate away      ``_detect_flat``,
                         (once, or again and again), a stationary      ``_detect_probe``
                         point, or f ≡ 0 on a stretch
pole                     the sign change is a pole or jump, not a root ``_detect_probe``
wrong-derivative         your f' disagrees with the slope of f, or a   ``_detect_slope``,
                         derivative method is linear at a simple root  ``_detect_multiplicity``
multiple-root            linear rate (m−1)/m and f' → 0: multiplicity  ``_detect_multiplicity``
noise-floor              f is noisy; the iterates wander within        ``_detect_noise``
                         noise/|f'| of the root
unattainable-tolerance   the tolerance is below what doubles allow     ``_detect_probe``
slow                     linear, slower than bisection per evaluation  ``_detect_rate``,
                         or an exponential-like crawl: equal steps     ``_detect_crawl``
                         while |f| falls by a constant factor
budget                   the budget ran out while still converging     ``_detect_budget``
=======================  ============================================  =====================

The input is read by ``_detect_trace`` (runs, recordings, sequences; the
budgeted prober), ``_detect_stop`` says when an iteration counts as converged or
stalled, ``_detect_order`` measures the order and says when a rate may be read from
it, and remedies that need a bracket come from ``_detect_advice`` (the bracket you
expected the root in, when f changes sign across it, before any searched one).

**Precedence of the verdict.** The verdict is the first kind in ``PRECEDENCE``
among the findings. The order puts first what makes the result wrong or
absent (the iterates escaped, f could not be evaluated, the "root" is a pole,
the iteration cycles or hit a flat spot — unless the cycle or the zero slope is no wider than
a few times the accuracy the noise of f allows: then it is the noise, and the noise floor is
the verdict, with the cycle or flat step as its evidence, ``_detect_noise.noise_behind``),
then what explains slow or limited
convergence from the most specific cause to the most generic (a wrong
derivative explains a linear rate better than anything else; a multiple root
explains a linear rate; noise explains a stall at a level; an unattainable
tolerance a stall at rounding level; slowness is generic; a budget is only the
symptom), and "converged" last. When the run converged, findings that only
describe its path (a long step from a small slope, a failed evaluation it got
past, a stop at the noise floor within its own tolerance) do not override
"converged". The same holds for repeated flat-tangent throws that the run
recovered from, and for a wrong derivative read from the rate alone (a note on a
run that converged). A recording or sequence diagnosed without its tolerance met
only an assumed one (``_detect_stop``): there a noise floor does override
"converged" (its finding says the tolerance was assumed). Once the tolerance is
found out of reach (noise floor, unattainable tolerance), no budget finding is
added: more evaluations cannot reach it.

An exponential-like crawl (``_detect_crawl``) is reported as "slow" and takes the
place of the generic rate findings (slow, budget) and of a single long throw just
before it: the long step is the tangent overshooting from the flat side of the
exponential, and the crawl back is what stalls the run.

Once the path shows that the iterates do not converge to a root (divergence, a
pole, a cycle, a stationary point, no sign change, or a failed evaluation the run
did not get past), the rate-based detectors are skipped: a rate measured on such
a path describes no root.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass, field
from typing import Any

from ..errors import ParameterError
from . import _modified  # noqa: F401  (registers newton-m and newton-ratio, the multiple-root cures)
from ._detect_multiplicity import RATE_TAG
from ._findings import Finding, Remedy
from ._show import Showable

__all__ = ["PRECEDENCE", "Diagnosis", "Finding", "Remedy", "diagnose"]

PRECEDENCE = (
    "divergence",
    "domain-error",
    "pole",
    "cycle",
    "flat",
    "wrong-derivative",
    "multiple-root",
    "noise-floor",
    "unattainable-tolerance",
    "slow",
    "budget",
    "converged",
)
#: (kind, tag) pairs that do not override a run that converged by its own rule
_PATH_ONLY = {("flat", "small slope"), ("flat", "repeated throws"), ("domain-error", None), ("noise-floor", None),
              ("wrong-derivative", RATE_TAG)}


@dataclass(frozen=True, repr=False)
class Diagnosis(Showable):
    """What stalled a solver, why, and what to change.

    Attributes
    ----------
    verdict : the primary finding's kind (see ``PRECEDENCE``).
    findings : every finding, the primary one first.
    order : the observed order of convergence (:class:`~convdiag.core._order.OrderEstimate`), or None.
    probes : extra evaluations of f the diagnosis made (noise, derivative check, bracket search, ...).
    source_kind : "run", "recording" or "sequence".
    label : what was diagnosed.
    method : the method that ran (inferred for a recording when it shows), or None.
    evaluations : evaluations the solver made (None for a sequence without counts).
    root : the best iterate (smallest |f|), or None.
    notes : anything else worth knowing.
    subject : what was diagnosed (the Run, Recorder, EvalLog or sequence), for reports and views.
    expression : the text of f when f is an expression (for the command line that applies
        the remedy), else None.
    params : the model parameters of that expression, as (name, value) pairs.
    """

    verdict: str
    findings: tuple[Finding, ...]
    order: Any
    probes: int
    source_kind: str
    label: str
    method: str | None
    evaluations: int | None
    root: float | None
    notes: tuple[str, ...] = ()
    subject: Any = field(default=None, compare=False, repr=False)
    expression: str | None = None
    params: tuple[tuple[str, float], ...] = ()

    @property
    def run(self) -> Any:
        """The diagnosed :class:`~convdiag.core._run.Run`, or None for recordings and sequences."""
        return self.subject if type(self.subject).__name__ == "Run" else None

    @property
    def primary(self) -> Finding:
        return self.findings[0]

    @property
    def remedy(self) -> Remedy | None:
        """The primary finding's remedy (None when no automatic change fits)."""
        return self.primary.remedy

    def finding(self, kind: str) -> Finding | None:
        """The first finding of this kind, or None."""
        return next((f for f in self.findings if f.kind == kind), None)

    @property
    def kinds(self) -> tuple[str, ...]:
        return tuple(f.kind for f in self.findings)

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready: ``verdict``, ``findings`` (each with ``kind``, ``evidence``, ``advice``, ...) and more."""
        from ._order import order_json

        return {
            "verdict": self.verdict,
            "findings": [f.to_dict() for f in self.findings],
            "source": self.source_kind,
            "label": self.label,
            "method": self.method,
            "evaluations": self.evaluations,
            "probes": self.probes,
            "root": self.root if self.root is not None and math.isfinite(self.root) else None,
            "order": None if self.order is None else order_json(self.order),
            "notes": list(self.notes),
        }

    def __repr__(self) -> str:
        tag = f" ({self.primary.tag})" if self.primary.tag else ""
        ev = f", {self.evaluations} evaluations" if self.evaluations is not None else ""
        return f"<Diagnosis {self.method or self.source_kind}: {self.verdict}{tag}{ev}>"


def _check(source: Any, xtol: Any, ftol: Any, method: Any, root: Any, max_probe_evals: Any, bracket: Any) -> None:
    from ._methods import METHODS

    owner = "diagnose"
    for name, v in (("xtol", xtol), ("ftol", ftol)):
        bad = isinstance(v, bool) or not isinstance(v, (int, float)) or not (v >= 0 and math.isfinite(v))
        if v is not None and bad:
            raise ParameterError.expected(name, owner, "a finite float >= 0 or None", v)
    if method is not None and method not in METHODS:
        raise ParameterError.expected("method", owner, f"one of {', '.join(sorted(METHODS))} or None", method)
    if root is not None and (isinstance(root, bool) or not isinstance(root, (int, float)) or not math.isfinite(root)):
        raise ParameterError.expected("root", owner, "a finite float or None", root)
    if isinstance(max_probe_evals, bool) or not isinstance(max_probe_evals, int) or max_probe_evals < 0:
        raise ParameterError.expected("max_probe_evals", owner, "an int >= 0", max_probe_evals)
    if bracket is not None and (not isinstance(bracket, (tuple, list)) or len(bracket) != 2
                                or not all(isinstance(v, (int, float)) and math.isfinite(v) for v in bracket)
                                or not bracket[0] < bracket[1]):
        raise ParameterError.expected("bracket", owner, "a pair (lo, hi) of finite floats with lo < hi", bracket)


def diagnose(
    source: Any,
    *,
    f: Any = None,
    fprime: Any = None,
    root: float | None = None,
    xtol: float | None = None,
    ftol: float | None = None,
    method: str | None = None,
    bracket: tuple[float, float] | None = None,
    probe: bool = True,
    max_probe_evals: int = 60,
    order: Any = None,
) -> Diagnosis:
    """Name why a solver stalled (or confirm that it converged), with the evidence and a fix.

    Parameters
    ----------
    source : Run, Recorder, EvalLog, IterationSequence, list, array or mapping
        A run of convdiag's methods; a recording of any solver (``convdiag.record(f)`` handed
        to scipy or your own loop); or iterates and/or residuals (see ``as_sequence``).
    f, fprime : callable or expression string, optional
        The function (and the derivative you gave the solver), for a sequence or an EvalLog,
        so that the diagnosis can make a few extra evaluations. A run and a recording carry
        their own.
    root : float, optional
        The true root, if known.
    xtol, ftol : float, optional
        The step (absolute) and residual tolerances the solver was asked for; a run carries
        its own (these override it).
    method : str, optional
        The method that produced a plain sequence or recording (for its rate laws).
    bracket : (lo, hi), optional
        Where you expected the root; a root found outside is reported.
    probe : bool
        Allow extra evaluations of f (noise level, derivative check, pole refinement, domain
        edge, bracket search for the remedy, a high-precision reference for a recording).
    max_probe_evals : int
        At most this many extra evaluations (``Diagnosis.probes`` reports how many were made).
    order : OrderEstimate, optional
        An order estimate you already made of the same source (``estimate_order(run)``, with its
        high-precision replay): the diagnosis shows it instead of its own. Its detectors still read
        the rates of the run's own double-precision iterates.

    Returns
    -------
    Diagnosis
        ``verdict``, ``findings`` (kind, summary, evidence, advice, remedy), ``order``.

    Raises
    ------
    ParameterError
        A bad argument, or a sequence with fewer than 3 entries.

    Examples
    --------
    >>> from convdiag import solve
    >>> d = diagnose(solve("x**3 - 2*x + 2", "newton", start=0.0, max_evals=20))
    >>> d
    <Diagnosis newton: cycle (period 2), 20 evaluations>
    >>> d.primary.value("period"), d.remedy.method
    (2, 'hybrid')
    >>> d.remedy.solve("x**3 - 2*x + 2").converged
    True
    """
    import numpy as np

    from ._detect_budget import detect_budget, unexplained_stop
    from ._detect_crawl import detect_crawl
    from ._detect_done import detect_converged
    from ._detect_flat import detect_flat
    from ._detect_noise import noise_instead
    from ._detect_order import order_estimate
    from ._detect_path import Context, detect_cycle, detect_divergence, detect_domain_error
    from ._detect_probe import detect_flat_zero, detect_noise, detect_pole, detect_unattainable
    from ._detect_rate import detect_multiple_root, detect_rate_derivative, detect_slow
    from ._detect_slope import check_derivative
    from ._detect_stop import tolerance_assumed
    from ._detect_trace import Prober, build_trace, trace_converged

    _check(source, xtol, ftol, method, root, max_probe_evals, bracket)
    if order is not None and type(order).__name__ != "OrderEstimate":
        raise ParameterError.expected("order", "diagnose", "an OrderEstimate (from convdiag.estimate_order) or None",
                                      order)
    t = build_trace(source, f=f, fprime=fprime, method=method, xtol=xtol, ftol=ftol)
    notes: list[str] = list(t.notes)
    prober = Prober(t.f, max_probe_evals, enabled=probe)
    ctx = Context(prober, root=root, bracket=None if bracket is None else (float(bracket[0]), float(bracket[1])),
                  notes=notes)
    ctx.order_fn = lambda: order_estimate(t, root, probe, notes)
    ctx.shown_order = order
    found: list[Finding] = []

    def run(detector: Callable[[Any, Any], Finding | None]) -> Finding | None:
        try:
            with np.errstate(all="ignore"):  # overflow and 0/0 in the user's numbers are evidence, not errors
                res = detector(t, ctx)
        except ParameterError:
            raise
        except Exception as exc:  # noqa: BLE001 - one detector's trouble must not lose the others' findings
            notes.append(f"{detector.__name__} could not finish: {type(exc).__name__}: {str(exc)[:120]}")
            return None
        if res is not None:
            found.append(res)
        return res

    def at_noise(detector: Callable[[Any, Any], Finding | None]) -> bool:
        """The detector's cycle or zero-slope stop is the noise of f: the noise floor takes its place."""
        if escaped is not None or pole is not None:
            return False

        def noise_instead_of_path(t_: Any, ctx_: Any) -> Finding | None:
            return noise_instead(t_, ctx_, detector)

        nf = run(noise_instead_of_path)
        if nf is not None:
            found[:] = [x for x in found if x.kind != "noise-floor" or x is nf]
        return nf is not None

    done = trace_converged(t)
    run(check_derivative)
    escaped = run(detect_divergence)
    failed = run(detect_domain_error)
    pole = run(detect_pole)
    cyc = None if at_noise(detect_cycle) else run(detect_cycle)
    broken = escaped is not None or pole is not None or cyc is not None or (failed is not None and not done)
    if not broken and not any(x.kind == "noise-floor" for x in found):
        run(detect_noise)
    crawl = run(detect_crawl) if not broken else None
    ctx.cache["crawl"] = crawl
    if escaped is None:
        flat = None if at_noise(detect_flat) else (run(detect_flat) or run(detect_flat_zero))
        stops = ("stationary point", "zero slope", "no sign change") + (() if done else ("repeated throws",))
        broken = broken or (flat is not None and flat.tag in stops)
    if broken:
        notes.append("the order of convergence was not measured: the iterates do not converge to a root")
    else:
        run(detect_multiple_root)
        if not any(x.kind == "wrong-derivative" for x in found):
            run(detect_rate_derivative)
        if not any(x.kind == "noise-floor" for x in found):  # the noise finding already names the attainable tolerance
            run(detect_unattainable)
        if crawl is None and not any(x.kind in ("multiple-root", "wrong-derivative") for x in found):
            run(detect_slow)
        if crawl is None and not any(x.kind in ("noise-floor", "unattainable-tolerance") for x in found):
            run(detect_budget)  # a tolerance out of reach is not reached by more evaluations
    conv = run(detect_converged) if escaped is None and pole is None else None
    if not found:
        found.append(unexplained_stop(t))
    converged = conv is not None and trace_converged(t)
    verdict = _verdict(found, converged, overrides=("noise-floor",) if tolerance_assumed(t) else ())
    ordered = sorted(found, key=lambda x: (x.kind != verdict, PRECEDENCE.index(x.kind)))
    expr = getattr(t.problem, "expression", None) if t.problem is not None else None
    return Diagnosis(
        verdict=verdict,
        findings=tuple(ordered),
        order=ctx.order_if_measured if order is None or broken else order,
        probes=prober.count,
        source_kind=t.kind,
        label=t.label,
        method=t.method,
        evaluations=t.total_evals,
        root=float(t.xs[t.best_index()]) if t.n else None,
        notes=tuple(dict.fromkeys(notes)),
        subject=source,
        expression=None if expr is None else str(expr.text),
        params=() if expr is None else _scalar_params(t.problem.params),
    )


def _scalar_params(params: Any) -> tuple[tuple[str, float], ...]:
    out = []
    for k, v in dict(params or {}).items():
        try:
            out.append((str(k), float(v)))
        except (TypeError, ValueError):  # an array of values (a sweep): no single command line
            return ()
    return tuple(out)


def _verdict(found: list[Finding], converged: bool, overrides: tuple[str, ...] = ()) -> str:
    for kind in PRECEDENCE:
        for x in found:
            if x.kind != kind:
                continue
            if converged and x.kind not in overrides and ((x.kind, x.tag) in _PATH_ONLY or (x.kind, None) in _PATH_ONLY):
                continue
            return kind
    return "converged" if converged else found[0].kind
