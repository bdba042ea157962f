"""Where the roots are: bracket search over a domain or outward from a guess, with starts.

:func:`find_brackets` samples f (vectorised when f takes arrays), then looks
closer only where something happens: each sign change is halved and judged
root / pole / jump (``_signchange.classify_sign_change``); each boundary
between defined and undefined values is bisected (``locate_edge``); each
local minimum of |f| that may reach zero is minimised (``inspect_dip``). Root
brackets get recommended starts for Newton, the secant method and inverse
quadratic interpolation, each checked by one cheap step. Every evaluation
counts against ``max_evals`` and is kept in the result's ``evals`` log.

Layout: this module holds the entry point, the result types and the advice;
the evaluations are counted by ``_bracket_sampler.Sampler``, the search runs
in ``_bracket_search.Work``, and the starts are checked in ``_bracket_starts``.
"""

from __future__ import annotations

import math
import numbers
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any, Literal

from ..errors import ParameterError
from ._bracket_sampler import Sampler
from ._evallog import EvalLog
from ._problem import as_problem
from ._show import Showable
from ._step import Halt

__all__ = ["BracketSearch", "Candidate", "find_brackets"]

Kind = Literal["root", "pole", "jump", "touch", "domain-edge", "unclassified"]
KINDS: tuple[Kind, ...] = ("root", "pole", "jump", "touch", "domain-edge", "unclassified")


def _num(v: Any) -> Any:
    """A float for JSON: NaN and infinities become None."""
    if v is None:
        return None
    f = float(v)
    return f if math.isfinite(f) else None


@dataclass(frozen=True)
class Candidate:
    """One place where f does something a root-finder must know about.

    Attributes
    ----------
    kind : "root" (a bracket with a sign change that closes on a zero), "pole"
        (|f| grows without bound as the sign change is refined, or f = ±inf at a
        sample with f finite and growing toward it on both sides), "jump" (f
        changes sign across a few ulps without nearing zero), "touch" (|f| dips
        to zero without a sign change), "domain-edge" (f is undefined on one
        side: NaN or an exception; or infinite from there on, as when it
        overflows, with ``evidence["overflow"] = 1``) or "unclassified" (a sign
        change the budget left unexamined).
    lo, hi : the interval (for a root, a bracket: f(lo) and f(hi) have opposite
        signs, or one is exactly 0).
    f_lo, f_hi : f at the ends (NaN on an undefined side).
    x : where the feature is (root estimate, pole, touch point, last defined point).
    evidence : the numbers behind the verdict (exponent of |f| ~ width^q, widths,
        evaluations spent, when it was found).
    reason : one sentence with the evidence.
    recommend : short advice.
    newton, secant, iqi : recommended starts (roots only), each checked by one step.
    checks : what was checked for each start.
    undefined_side : "left" or "right" for a domain edge.
    rank : 1 for the best root bracket (nearest the guess, then cleanest); None otherwise.
    """

    kind: Kind
    lo: float
    hi: float
    f_lo: float
    f_hi: float
    x: float
    evidence: Mapping[str, float] = field(default_factory=dict)
    reason: str = ""
    recommend: str = ""
    newton: float | None = None
    secant: tuple[float, float] | None = None
    iqi: tuple[float, float, float] | None = None
    checks: tuple[str, ...] = ()
    undefined_side: Literal["left", "right"] | None = None
    rank: int | None = None

    @property
    def starts(self) -> dict[str, Any]:
        """The recommended starts by method name (``newton``, ``secant``, ``iqi``)."""
        return {"newton": self.newton, "secant": self.secant, "iqi": self.iqi}

    def to_dict(self) -> dict[str, Any]:
        return {
            "kind": self.kind,
            "lo": _num(self.lo),
            "hi": _num(self.hi),
            "x": _num(self.x),
            "f_lo": _num(self.f_lo),
            "f_hi": _num(self.f_hi),
            "rank": self.rank,
            "starts": {
                "newton": _num(self.newton),
                "secant": None if self.secant is None else [_num(v) for v in self.secant],
                "iqi": None if self.iqi is None else [_num(v) for v in self.iqi],
            },
            "checks": list(self.checks),
            "recommend": self.recommend,
            "reason": self.reason,
            "undefined_side": self.undefined_side,
            "evidence": {k: _num(v) for k, v in self.evidence.items()},
        }

    def __repr__(self) -> str:
        return f"<Candidate {self.kind} in [{self.lo:.6g}, {self.hi:.6g}] at x≈{self.x:.6g}>"


@dataclass(frozen=True, repr=False)
class BracketSearch(Showable):
    """The result of :func:`find_brackets`.

    Attributes
    ----------
    problem : label of the function.
    candidates : every candidate; root brackets first (by rank), then the others by position.
    evaluations : evaluations spent (array calls count one per point; derivatives count).
    evals : the :class:`EvalLog` of every evaluation.
    domain, near : what was searched (one of them is None).
    notes : what else to know (budget ran out, near-misses, how f was evaluated).
    max_evals : the budget.
    scale : the typical size of |f| (median over the samples) used by the touch rule.
    budget_exhausted : the search stopped because a budget (evaluations or time) ran out.
    vectorised : f was evaluated on arrays.
    interrupted : a KeyboardInterrupt stopped the search; the candidates are what was found by then.
    """

    problem: str
    candidates: tuple[Candidate, ...]
    evaluations: int
    evals: EvalLog
    domain: tuple[float, float] | None
    near: float | None
    notes: tuple[str, ...]
    max_evals: int
    scale: float
    budget_exhausted: bool
    vectorised: bool
    interrupted: bool = False

    @property
    def roots(self) -> tuple[Candidate, ...]:
        """The root brackets, best first."""
        return tuple(c for c in self.candidates if c.kind == "root")

    def of_kind(self, kind: Kind) -> tuple[Candidate, ...]:
        return tuple(c for c in self.candidates if c.kind == kind)

    def to_dict(self) -> dict[str, Any]:
        return {
            "problem": self.problem,
            "domain": None if self.domain is None else list(self.domain),
            "near": self.near,
            "evaluations": self.evaluations,
            "max_evals": self.max_evals,
            "budget_exhausted": self.budget_exhausted,
            "scale": _num(self.scale),
            "vectorised": self.vectorised,
            "interrupted": self.interrupted,
            "notes": list(self.notes),
            "brackets": [c.to_dict() for c in self.candidates],
        }

    def __repr__(self) -> str:
        plural = {"touch": "touches", "unclassified": "unclassified"}
        counts = [
            f"{n} {k if n == 1 else plural.get(k, k + 's')}" for k in KINDS if (n := len(self.of_kind(k)))
        ]
        where = f"over [{self.domain[0]:g}, {self.domain[1]:g}]" if self.domain else f"from {self.near:g}"
        return f"<BracketSearch {self.problem} {where}: {', '.join(counts) or 'nothing found'}; " \
               f"{self.evaluations} evaluations>"


def _check_float(v: Any, name: str, what: str, ok: Callable[[float], bool]) -> float:
    if not isinstance(v, numbers.Real) or isinstance(v, bool) or not math.isfinite(float(v)) or not ok(float(v)):
        raise ParameterError.expected(name, "find_brackets", what, v)
    return float(v)


def _as_float(v: Any) -> Any:
    """v as a float when it is a real number (not a bool) that fits one; else v unchanged (for the message)."""
    if isinstance(v, numbers.Real) and not isinstance(v, bool):
        try:
            return float(v)
        except (OverflowError, TypeError, ValueError):
            return v
    return v


def find_brackets(
    f: Any,
    *,
    domain: Sequence[float] | None = None,
    near: float | None = None,
    max_evals: int = 1000,
    params: Mapping[str, float] | None = None,
    fprime: Any = None,
    samples: int = 201,
    step: float | None = None,
    touch_rtol: float = 1e-8,
    edge_tol: float | None = None,
    max_time: float | None = None,
) -> BracketSearch:
    """Find where the roots of f are, tell them from poles, jumps and touches, and recommend starts.

    Parameters
    ----------
    f : callable, str or sympy expression
        ``f(x)`` or ``f(x, **params)``, or expression text such as ``"x**3 - 2*x - 5"``.
    domain : (lo, hi), optional
        Search this interval: ``samples`` equally spaced points, then a closer
        look at every sign change, defined/undefined boundary and dip of |f|.
    near : float, optional
        Search outward from this guess on both sides, the distance doubling
        each round (first step ``step``), until a root bracket is found.
        Give exactly one of ``domain`` and ``near``.
    max_evals : int
        Evaluations allowed (every point counts, derivatives too). When it runs
        out, the search returns what it found with a note; it never raises.
    max_time : float, optional
        Seconds of wall time allowed (checked before each evaluation); when they run out, the
        search returns what it found with a note, as for ``max_evals``.
    params : mapping, optional
        Model parameters passed to f.
    fprime : optional
        Derivative, used to check the Newton start (expressions have one already).
    samples : int
        Points of the first grid over ``domain`` (at most half the budget).
    step : float, optional
        First step outward from ``near`` (default 0.1·max(1, |near|)).
    touch_rtol : float
        A dip of |f| without a sign change is a touch when its minimum is at most
        ``touch_rtol`` times the scale of f (the median |f| over the samples).
    edge_tol : float, optional
        Width to which a domain edge is located (default 1e-9 × the domain
        width, or 1e-9·max(1, |near|)).

    Returns
    -------
    BracketSearch
        A KeyboardInterrupt (inside f or not) ends the search early: it returns what it found,
        with ``interrupted`` set.

    Raises
    ------
    ParameterError
        Both or neither of ``domain`` and ``near``, or a bad value.

    Examples
    --------
    >>> from convdiag.core._brackets import find_brackets
    >>> found = find_brackets("x**3 - 2*x - 5", near=0.0)
    >>> r = found.roots[0]
    >>> r.kind, r.lo < 2.0945514815423265 < r.hi
    ('root', True)
    >>> found = find_brackets("tan(x)", domain=(1.0, 2.0))
    >>> [c.kind for c in found.candidates]
    ['pole']
    """
    if (domain is None) == (near is None):
        if domain is None:
            raise ParameterError.expected(
                "domain", "find_brackets", "a pair (lo, hi) when near is not given", domain
            )
        raise ParameterError.expected("near", "find_brackets", "None when domain is given", near)
    if not isinstance(max_evals, numbers.Integral) or isinstance(max_evals, bool) or max_evals < 3:
        raise ParameterError.expected("max_evals", "find_brackets", "an int >= 3", max_evals)
    if not isinstance(samples, numbers.Integral) or isinstance(samples, bool) or samples < 3:
        raise ParameterError.expected("samples", "find_brackets", "an int >= 3", samples)
    touch_rtol = _check_float(touch_rtol, "touch_rtol", "a float >= 0", lambda v: v >= 0)
    dom: tuple[float, float] | None = None
    x0: float | None = None
    if domain is not None:
        if not isinstance(domain, (list, tuple)) or len(domain) != 2:
            raise ParameterError.expected("domain", "find_brackets", "a pair (lo, hi) with lo < hi", domain)
        got = tuple(_as_float(v) for v in domain)
        if not all(isinstance(v, float) and math.isfinite(v) for v in got) or not got[0] < got[1]:
            raise ParameterError.expected("domain", "find_brackets", "a pair of finite floats (lo, hi) with lo < hi",
                                          got)
        lo, hi = float(got[0]), float(got[1])
        if not math.isfinite(hi - lo):
            raise ParameterError.expected("domain", "find_brackets", "a pair (lo, hi) with a finite width hi - lo",
                                          domain)
        dom = (lo, hi)
        xscale = hi - lo
    else:
        x0 = _check_float(near, "near", "a finite float", lambda v: True)
        xscale = max(1.0, abs(x0))
    if step is not None:
        step = _check_float(step, "step", "a finite float > 0", lambda v: v > 0)
    if edge_tol is not None:
        edge_tol = _check_float(edge_tol, "edge_tol", "a finite float > 0", lambda v: v > 0)
    if max_time is not None:
        max_time = _check_float(max_time, "max_time", "a finite float > 0 or None", lambda v: v > 0)
    from ._bracket_search import Work  # it builds this module's Candidate

    problem = as_problem(f, fprime=fprime, params=params)
    sampler = Sampler(problem, int(max_evals), max_time)
    work = Work(sampler, touch_rtol=touch_rtol, edge_tol=edge_tol if edge_tol is not None else 1e-9 * xscale)
    try:
        if dom is not None:
            work.scan_domain(dom[0], dom[1], min(int(samples), max(3, int(max_evals) // 2)))
        else:
            assert x0 is not None
            work.expand(x0, step if step is not None else 0.1 * max(1.0, abs(x0)))
    except Halt:
        pass
    except KeyboardInterrupt:  # outside f (inside f the sampler already turned it into a Halt)
        sampler.interrupted = True
    found = work.finish(near=x0)  # evaluates nothing more once interrupted
    notes = list(sampler.notes) + work.notes
    if sampler.interrupted:
        notes.append(f"Interrupted (KeyboardInterrupt) after {sampler.count} evaluations; the candidates listed are "
                     "what was found by then.")
    elif sampler.timed_out:
        notes.append(f"The time budget of {max_time:g} s ran out after {sampler.count} evaluations; the candidates "
                     "listed are what was found by then. Raise max_time to search further.")
    elif sampler.exhausted:
        notes.append(
            f"The evaluation budget of {max_evals} ran out; the candidates listed are what was found by then. "
            "Raise max_evals to search further."
        )
    return BracketSearch(
        problem=problem.label,
        candidates=found,
        evaluations=sampler.count,
        evals=sampler.log(),
        domain=dom,
        near=x0,
        notes=tuple(notes),
        max_evals=int(max_evals),
        scale=work.scale,
        budget_exhausted=sampler.exhausted,
        vectorised=bool(sampler.vector),
        interrupted=sampler.interrupted,
    )


# -- shared by the search modules, and the advice ----------------------------------------
def _opposite(fa: float, fb: float) -> bool:
    return (fa < 0 < fb) or (fb < 0 < fa)


def _g(v: float, digits: int = 6) -> str:
    return f"{v:.{digits}g}"


def advice(c: Candidate, touch_rtol: float = 1e-8) -> str:
    """One or two sentences of advice for a candidate."""
    x, lo, hi = _g(c.x), _g(c.lo), _g(c.hi)
    q = c.evidence.get("exponent", math.nan)
    if c.kind == "root":
        parts = []
        if c.newton is not None:
            parts.append(f"Newton from {_g(c.newton)}")
        if c.secant is not None:
            parts.append(f"the secant method from ({_g(c.secant[0])}, {_g(c.secant[1])})")
        if c.iqi is not None:
            parts.append(f"IQI from ({', '.join(_g(t) for t in c.iqi)})")
        if c.lo == c.hi:
            return f"f({_g(c.x, 17)}) = 0 exactly: {x} is a root (found on a sample, so no bracket was needed)."
        starts = ", ".join(parts) or "a bracketing method"
        text = f"Root near {x} in [{lo}, {hi}]: use {starts}, or any bracketing method on [{lo}, {hi}]."
        if math.isfinite(q) and q > 1.5:
            m = round(q)
            text += (f" |f| shrinks like width^{q:.1f}: probably a root of multiplicity {m}; Newton and the secant "
                     f"method are only linear here — prefer the bracket, or Newton with x − {m}·f/f'.")
        return text
    if c.kind == "pole":
        grow = f" (|f| grows like width^{q:.2g} as it is closed in on)" if math.isfinite(q) else ""
        return (f"Pole near {x}, not a root{grow}. A bracketing method given a bracket across it converges to the "
                "pole; keep brackets and starts on one side of it.")
    if c.kind == "jump":
        return (f"Jump near {x}, not a root: f goes from {_g(c.f_lo, 3)} to {_g(c.f_hi, 3)} within a few ulps. "
                "A bracketing method across it ends here with |f| far from zero.")
    if c.kind == "touch":
        return (f"f touches zero near {x} without changing sign (an even-multiplicity root, or a near miss within "
                f"{touch_rtol:g} of the scale of f). Bracketing methods cannot find it; Newton is only linear "
                "there (rate ½ at a double root): use Newton with x − 2·f/f', or minimise |f|.")
    if c.kind == "domain-edge":
        side = c.undefined_side or "left"
        other = "right" if side == "left" else "left"
        if c.evidence.get("overflow"):
            return (f"f is infinite (overflow) to the {side} of {x}: keep starts and brackets to the {other}; if a "
                    "root may lie beyond, rescale f (divide out the growing factor, or take logarithms).")
        return (f"f is undefined to the {side} of {x}: keep starts and brackets to the {other}; an open method "
                "can step across, so prefer a bracket inside the domain.")
    return f"Sign change in [{lo}, {hi}] not examined: the evaluation budget ran out. Raise max_evals."
