"""Where the roots are: bracket search over a domain or outward from a guess, with starts.

:func:`find_brackets` samples f (vectorised when f takes arrays), then looks
closer only where something happens: each sign change is halved and judged
root / pole / jump (``_signchange.classify_sign_change``); each boundary
between defined and undefined values is bisected (``locate_edge``); each
local minimum of |f| that may reach zero is minimised (``inspect_dip``). Root
brackets get recommended starts for Newton, the secant method and inverse
quadratic interpolation, each checked by one cheap step. Every evaluation
counts against ``max_evals`` and is kept in the result's ``evals`` log.
"""

from __future__ import annotations

import itertools
import math
import numbers
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field, replace
from time import perf_counter
from typing import Any, Literal

import numpy as np
from numpy.typing import NDArray

from ..errors import ParameterError
from ._problem import Problem, as_problem
from ._record import DF, EvalLog, F, _Raised, build_log, classify_value
from ._show import Showable
from ._signchange import classify_sign_change, inspect_dip, locate_edge
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
        (|f| grows without bound as the sign change is refined), "jump" (f
        changes sign across a few ulps without nearing zero), "touch" (|f| dips
        to zero without a sign change), "domain-edge" (f is undefined on one
        side: NaN or an exception) or "unclassified" (a sign change the budget
        left unexamined).
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
    budget_exhausted : the search stopped because the budget ran out.
    vectorised : f was evaluated on arrays.
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


class Sampler:
    """Evaluates f for a search: counts every point, records every call, stops at the budget.

    Calling it evaluates one point and returns a float: NaN where f raised or
    returned something that is not a real number, ±inf kept. The budget
    raises ``Halt("max-evals")``. :meth:`many` evaluates an array in one call
    when f accepts arrays (checked once on two points), else point by point.
    """

    def __init__(self, problem: Problem, max_evals: int) -> None:
        self.f = problem.f
        self.fprime = problem.fprime
        self.derivative_source = problem.derivative_source if problem.fprime is not None else ""
        self.max_evals = max_evals
        self.vector: bool | None = True if problem.is_expression else None
        self.rows: list[tuple[int, Any, Any, float, float]] = []
        self.t0 = perf_counter()
        self.count = 0
        self.exhausted = False
        self.last_problem = ""
        self.notes: list[str] = []

    @property
    def remaining(self) -> int:
        return max(0, self.max_evals - self.count)

    def _budget(self, n: int = 1) -> None:
        if self.count + n > self.max_evals:
            self.exhausted = True
            raise Halt("max-evals", f"The evaluation budget of {self.max_evals} ran out.")

    def _call(self, fn: Callable[[Any], Any], x: Any, kind: int) -> Any:
        t = perf_counter()
        try:
            y = fn(x)
        except Exception as exc:  # noqa: BLE001 - the user's code failed here: an undefined point, recorded
            self.rows.append((kind, x, _Raised(exc), t, perf_counter()))
            self.last_problem = f"raised {type(exc).__name__}: {exc}"
            return _Raised(exc)
        except BaseException as exc:  # KeyboardInterrupt: record it, then let it through
            self.rows.append((kind, x, _Raised(exc), t, perf_counter()))
            raise
        self.rows.append((kind, x, y, t, perf_counter()))
        return y

    def _value(self, y: Any) -> float:
        v, status, note = classify_value(y)
        if status in ("ok", "inf"):
            return v
        self.last_problem = note
        return math.nan

    def __call__(self, x: float) -> float:
        self._budget()
        self.count += 1
        return self._value(self._call(self.f, x, F))

    def df(self, x: float) -> float:
        """f'(x) from the problem (given or symbolic), recorded and counted; NaN if there is none."""
        if self.fprime is None:
            return math.nan
        self._budget()
        self.count += 1
        return self._value(self._call(self.fprime, x, DF))

    def _array(self, xs: NDArray[np.float64]) -> NDArray[np.float64] | None:
        self.count += len(xs)
        y = self._call(self.f, xs.copy(), F)
        if isinstance(y, _Raised):
            return None
        try:
            ya = np.asarray(y)
        except Exception:  # noqa: BLE001 - an object numpy cannot take: not vectorised
            return None
        if ya.shape != xs.shape or ya.dtype.kind not in "fiuc":
            return None
        return np.array([self._value(v) for v in ya.tolist()], dtype=np.float64)

    def many(self, xs: Sequence[float] | NDArray[np.float64]) -> NDArray[np.float64]:
        """f at every point of ``xs`` (raises Halt if the budget cannot cover them all)."""
        xs = np.asarray(xs, dtype=np.float64)
        self._budget(len(xs))
        if len(xs) >= 2 and self.vector is not False:
            if self.vector is None:
                self._budget(len(xs) + 2)
                first = self._array(xs[:2])
                self.vector = first is not None
                if first is None:
                    self.notes.append("f did not accept an array (tried once on two points); evaluated point by point")
                elif len(xs) == 2:
                    return first
                else:
                    rest = self._array(xs[2:])
                    if rest is not None:
                        return np.concatenate([first, rest])
            else:
                out = self._array(xs)
                if out is not None:
                    return out
            if self.vector:
                self._budget(len(xs))
                self.notes.append("an array call of f failed; that batch was evaluated point by point")
        return np.array([self(float(x)) for x in xs], dtype=np.float64)

    def log(self) -> EvalLog:
        return build_log(self.rows, self.t0, source="find_brackets")


def _check_float(v: Any, name: str, what: str, ok: Callable[[float], bool]) -> float:
    if not isinstance(v, numbers.Real) or isinstance(v, bool) or not math.isfinite(float(v)) or not ok(float(v)):
        raise ParameterError.expected(name, "find_brackets", what, v)
    return float(v)


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
        lo = _check_float(domain[0], "domain", "a pair of finite floats (lo, hi) with lo < hi", lambda v: True)
        hi = _check_float(domain[1], "domain", "a pair of finite floats (lo, hi) with lo < hi", lambda v: v > lo)
        dom = (lo, hi)
        xscale = hi - lo
    else:
        x0 = _check_float(near, "near", "a finite float", lambda v: True)
        xscale = max(1.0, abs(x0))
    if step is not None:
        step = _check_float(step, "step", "a finite float > 0", lambda v: v > 0)
    if edge_tol is not None:
        edge_tol = _check_float(edge_tol, "edge_tol", "a finite float > 0", lambda v: v > 0)
    problem = as_problem(f, fprime=fprime, params=params)
    sampler = Sampler(problem, int(max_evals))
    work = Work(sampler, touch_rtol=touch_rtol, edge_tol=edge_tol if edge_tol is not None else 1e-9 * xscale)
    try:
        if dom is not None:
            work.scan_domain(dom[0], dom[1], min(int(samples), max(3, int(max_evals) // 2)))
        else:
            assert x0 is not None
            work.expand(x0, step if step is not None else 0.1 * max(1.0, abs(x0)))
    except Halt:
        pass
    found = work.finish(near=x0)
    notes = list(sampler.notes) + work.notes
    if sampler.exhausted:
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
    )


#: A local minimum of |f| among three samples is examined (minimised) when the parabola through
#: them dips below half the middle value, or the middle value is under a quarter of both
#: neighbours. Chosen so that smooth wiggles far from zero (2 + sin x) are left alone.
DIP_PARABOLA = 0.5
DIP_NEIGHBOURS = 0.25
#: sign changes in more than this share of the sample intervals mean roots about 3 samples apart
#: or closer: a grid that coarse can hide pairs of roots (a rule of thumb).
CROWDED = 0.35
#: the outward search from a guess stops after this many doublings (2^60 ≈ 1e18 first steps away).
MAX_DOUBLINGS = 60


def _opposite(fa: float, fb: float) -> bool:
    return (fa < 0 < fb) or (fb < 0 < fa)


def _dip_worth(a: float, fa: float, b: float, fb: float, c: float, fc: float) -> bool:
    """Whether the samples (a, b, c) (sorted, same sign) show a dip of |f| that may reach zero."""
    s = 1.0 if fb > 0 else -1.0
    ya, yb, yc = s * fa, s * fb, s * fc
    if not (ya > 0 and yb > 0 and yc > 0 and math.isfinite(ya) and math.isfinite(yc)):
        return False
    if not (yb <= ya and yb <= yc and (yb < ya or yb < yc)):
        return False
    if yb <= DIP_NEIGHBOURS * min(ya, yc):
        return True
    d1, d2 = (yb - ya) / (b - a), (yc - yb) / (c - b)
    curv = (d2 - d1) / (c - a)
    if not curv > 0:
        return False
    xv = (a + b) / 2 - d1 / (2 * curv)
    return ya + d1 * (xv - a) + curv * (xv - a) * (xv - b) <= DIP_PARABOLA * yb


def _false_position(a: float, b: float, fa: float, fb: float) -> float:
    c = a - fa * (b - a) / (fb - fa)
    return c if a < c < b else a + (b - a) / 2


def _iqi_point(xs: Sequence[float], fs: Sequence[float]) -> float:
    """Inverse quadratic interpolation (Lagrange form of x as a function of f) at f = 0."""
    total = 0.0
    for i, (xi, fi) in enumerate(zip(xs, fs)):
        term = xi
        for j, fj in enumerate(fs):
            if j != i:
                term *= fj / (fj - fi)
        total += term
    return total


def _g(v: float, digits: int = 6) -> str:
    return f"{v:.{digits}g}"


class Work:
    """The search in progress: candidates found so far, sign changes waiting, notes."""

    def __init__(self, sampler: Sampler, *, touch_rtol: float, edge_tol: float) -> None:
        self.s = sampler
        self.touch_rtol = touch_rtol
        self.edge_tol = edge_tol
        self.found: list[Candidate] = []
        self.pending: list[tuple[float, float, float, float, int]] = []
        self.notes: list[str] = []
        self.values: list[float] = []
        self.scale = math.nan
        self.span = (math.inf, -math.inf)

    def _seen(self, xs: Sequence[float], vals: Sequence[float]) -> None:
        self.values.extend(abs(v) for v in vals if math.isfinite(v) and v != 0)
        self.scale = float(np.median(self.values)) if self.values else math.nan
        self.span = (min(self.span[0], *xs), max(self.span[1], *xs))

    # -- one feature each ------------------------------------------------------------
    def run_pending(self) -> None:
        while self.pending:
            self.sign_change(*self.pending.pop(0))

    def sign_change(self, a: float, fa: float, b: float, fb: float, after: int) -> None:
        before = self.s.count
        sc = classify_sign_change(self.s, a, b, f_lo=fa, f_hi=fb, max_evals=self.s.max_evals)
        if sc.kind == "undefined":
            assert sc.x_undefined is not None
            self.edge(sc.lo, sc.f_lo, sc.x_undefined, after)
            self.edge(sc.hi, sc.f_hi, sc.x_undefined, after)
            return
        evidence = {
            "exponent": sc.exponent,
            "exponent_max": sc.q_max,
            "exponent_min": sc.q_min,
            "initial_width": sc.widths[0] if sc.widths else b - a,
            "width": sc.hi - sc.lo,
            "halvings": float(max(0, len(sc.widths) - 1)),
            "abs_f_start": sc.abs_max[0] if sc.abs_max else math.nan,
            "abs_f_end": sc.abs_max[-1] if sc.abs_max else math.nan,
            "exact_zero": float(sc.exact_zero),
            "found_after": float(after),
            "classified_after": float(self.s.count),
            "evaluations": float(self.s.count - before),
        }
        self.found.append(Candidate(sc.kind, sc.lo, sc.hi, sc.f_lo, sc.f_hi, sc.x, evidence, sc.reason))

    def edge(self, x_def: float, f_def: float, x_undef: float, after: int) -> None:
        before = self.s.count
        e = locate_edge(self.s, x_def, x_undef, f_defined=f_def, xtol=self.edge_tol, max_evals=self.s.max_evals)
        lo, hi = sorted((e.x_defined, e.x_undefined))
        side = e.undefined_side
        what = self.s.last_problem or e.what or "not a number"  # the sampler saw the exception itself
        reason = (
            f"f is defined at {e.x_defined:.9g} but not at {e.x_undefined:.9g} ({what}): undefined on the {side}"
            + ("" if e.complete else "; the budget ran out before the edge was located to the tolerance")
        )
        evidence = {"width": hi - lo, "found_after": float(after), "evaluations": float(self.s.count - before)}
        f_lo, f_hi = (math.nan, e.f_defined) if side == "left" else (e.f_defined, math.nan)
        self.found.append(
            Candidate("domain-edge", lo, hi, f_lo, f_hi, e.x_defined, evidence, reason, undefined_side=side)
        )
        pts = e.defined_points
        for (p, fp), (q, fq) in itertools.pairwise(pts):  # sign changes met on the way to the edge
            if _opposite(fp, fq):
                self.pending.append((min(p, q), fp if p < q else fq, max(p, q), fq if p < q else fp, self.s.count))
        self.run_pending()

    def zero(
        self, left: tuple[float, float] | None, z_lo: float, z_hi: float, right: tuple[float, float] | None,
        after: int,
    ) -> None:
        x = z_lo + (z_hi - z_lo) / 2
        evidence = {"exact_zero": 1.0, "min_abs_f": 0.0, "found_after": float(after)}
        where = f"f({_g(x, 17)}) = 0 exactly" if z_lo == z_hi else f"f = 0 exactly on [{_g(z_lo)}, {_g(z_hi)}]"
        if left is not None and right is not None and all(math.isfinite(v) and v != 0 for v in (left[1], right[1])):
            (xl, fl), (xr, fr) = left, right
            if _opposite(fl, fr):
                reason = f"{where}, and f changes sign across [{_g(xl)}, {_g(xr)}]"
                self.found.append(Candidate("root", xl, xr, fl, fr, x, evidence, reason))
            else:
                reason = f"{where}, with the same sign on both sides"
                self.found.append(Candidate("touch", xl, xr, fl, fr, x, evidence, reason))
            return
        reason = f"{where} (at the end of what was sampled, so the sign beyond it is unknown)"
        self.found.append(Candidate("root", z_lo, z_hi, 0.0, 0.0, x, evidence, reason))

    def infinite(self, x: float, v: float, after: int) -> None:
        evidence = {"found_after": float(after)}
        self.found.append(Candidate("pole", x, x, v, v, x, evidence, f"f({_g(x, 17)}) = {v}"))

    def dip(self, p1: tuple[float, float], p2: tuple[float, float], p3: tuple[float, float], after: int) -> None:
        (a, fa), (b, fb), (c, fc) = sorted((p1, p2, p3))
        if not (math.isfinite(self.scale) and self.scale > 0) or not _dip_worth(a, fa, b, fb, c, fc):
            return
        before = self.s.count
        d = inspect_dip(
            self.s, a, c, 1.0 if fb > 0 else -1.0, scale=self.scale, touch_rtol=self.touch_rtol,
            max_evals=self.s.max_evals,
        )
        v = abs(d.fx)
        if d.kind == "touch":
            evidence = {
                "min_abs_f": v,
                "scale": self.scale,
                "ratio": v / self.scale,
                "exact_zero": float(v == 0),
                "found_after": float(after),
                "evaluations": float(self.s.count - before),
            }
            reason = (
                f"|f| dips to {_g(v, 3)} at {_g(d.x, 12)} (at most {self.touch_rtol:g} × the scale {_g(self.scale, 3)})"
                f" while f keeps its sign on [{_g(a)}, {_g(c)}]"
            )
            self.found.append(Candidate("touch", a, c, fa, fc, d.x, evidence, reason))
        elif d.kind == "crossing":
            self.pending += [(a, fa, d.x, d.fx, self.s.count), (d.x, d.fx, c, fc, self.s.count)]
            self.run_pending()
        elif d.kind == "near-miss":
            self.notes.append(
                f"|f| comes down to {_g(v, 3)} ({_g(v / self.scale, 2)} × the scale {_g(self.scale, 3)}) at "
                f"x = {_g(d.x, 9)} without reaching zero: a near miss, not a touch by the rule "
                f"|f| ≤ {self.touch_rtol:g} × scale. A small change of the model could make two roots here."
            )
        elif d.kind == "undefined":
            self.edge(a, fa, d.x, after)
            self.edge(c, fc, d.x, after)

    # -- the two searches ----------------------------------------------------------------
    def scan_domain(self, lo: float, hi: float, n: int) -> None:
        xs = np.linspace(lo, hi, n).tolist()
        vs = self.s.many(xs).tolist()
        after = self.s.count
        self._seen(xs, vs)
        i = 0
        while i < n:
            if vs[i] == 0:  # a run of exact zeros
                j = i
                while j + 1 < n and vs[j + 1] == 0:
                    j += 1
                left = (xs[i - 1], vs[i - 1]) if i > 0 else None
                right = (xs[j + 1], vs[j + 1]) if j + 1 < n else None
                self.zero(left, xs[i], xs[j], right, after)
                i = j + 1
                continue
            if math.isinf(vs[i]):
                self.infinite(xs[i], vs[i], after)
            i += 1
        edges: list[tuple[float, float, float]] = []
        lone = {  # one undefined sample between values of opposite signs: judged as one sign change
            i for i in range(1, n - 1)
            if math.isnan(vs[i]) and math.isfinite(vs[i - 1]) and math.isfinite(vs[i + 1])
            and _opposite(vs[i - 1], vs[i + 1])
        }
        for i in sorted(lone):
            self.pending.append((xs[i - 1], vs[i - 1], xs[i + 1], vs[i + 1], after))
        for i, (a, b, fa, fb) in enumerate(zip(xs, xs[1:], vs, vs[1:])):
            if math.isfinite(fa) and math.isfinite(fb):
                if _opposite(fa, fb):
                    self.pending.append((a, fa, b, fb, after))
            elif (
                math.isnan(fa) != math.isnan(fb)
                and not (math.isinf(fa) or math.isinf(fb))
                and i not in lone
                and i + 1 not in lone
            ):
                edges.append((b, fb, a) if math.isnan(fa) else (a, fa, b))
        changes = [i for i in range(n - 1) if math.isfinite(vs[i] * vs[i + 1]) and _opposite(vs[i], vs[i + 1])]
        neighbours = sum(b == a + 1 for a, b in itertools.pairwise(changes))
        if neighbours or len(changes) > (n - 1) * CROWDED:
            self.notes.append(
                f"f changes sign in {len(changes)} of the {n - 1} sample intervals"
                + (f" ({neighbours} time(s) in two neighbouring ones)" if neighbours else "")
                + ": it may oscillate faster than the grid resolves, and pairs of roots can hide between "
                "samples. Raise samples."
            )
        self.run_pending()
        for x_def, f_def, x_undef in edges:
            self.edge(x_def, f_def, x_undef, after)
        for i in range(1, n - 1):
            self.dip((xs[i - 1], vs[i - 1]), (xs[i], vs[i]), (xs[i + 1], vs[i + 1]), after)

    def expand(self, x0: float, step: float) -> None:
        f0 = self.s(x0)
        self._seen([x0], [f0])
        seqs: dict[int, list[tuple[float, float]]] = {-1: [(x0, f0)], 1: [(x0, f0)]}
        active = {-1: True, 1: True}
        r, first = step, True
        edges: list[tuple[float, float, float]] = []
        for _ in range(MAX_DOUBLINGS + 1):
            sides = [d for d in (-1, 1) if active[d] and math.isfinite(x0 + d * r) and abs(x0 + d * r) < 1e300]
            if not sides:
                self.notes.append(
                    "Both directions ended (at an edge of the domain of f, or beyond |x| = 1e300) without a root "
                    "bracket."
                )
                return
            pts = [x0 + d * r for d in sides]
            vals = self.s.many(pts).tolist()
            after = self.s.count
            self._seen(pts, vals)
            for d, x, v in zip(sides, pts, vals):
                seq = seqs[d]
                p, fp = seq[-1]
                seq.append((x, v))
                if math.isinf(v):
                    self.infinite(x, v, after)
                if len(seq) >= 3 and seq[-2][1] == 0:
                    self.zero(seq[-3], seq[-2][0], seq[-2][0], seq[-1], after)
                if math.isfinite(fp) and math.isfinite(v):
                    if _opposite(fp, v):
                        self.pending.append((min(p, x), fp if p < x else v, max(p, x), v if p < x else fp, after))
                elif math.isnan(fp) != math.isnan(v) and not (math.isinf(fp) or math.isinf(v)):
                    edges.append((p, fp, x) if math.isnan(v) else (x, v, p))
                    active[d] = not math.isnan(v)
            if first and f0 == 0 and len(sides) == 2:
                self.zero(seqs[-1][1], x0, x0, seqs[1][1], after)
            self.run_pending()  # sign changes first, then the edges met in this round
            for x_def, f_def, x_undef in edges:
                self.edge(x_def, f_def, x_undef, after)
            edges.clear()
            for d in sides:
                if len(seqs[d]) >= 3:
                    p1, p2, p3 = seqs[d][-3:]
                    self.dip(p1, p2, p3, after)
            if first and len(sides) == 2:
                self.dip(seqs[-1][1], (x0, f0), seqs[1][1], after)
            first = False
            if any(c.kind == "root" for c in self.found):
                return
            r *= 2
        self.notes.append(
            f"Stopped after {MAX_DOUBLINGS} doublings of the distance from the guess (out to ±{_g(r / 2, 3)}) "
            "without a root bracket. Give a domain, or a guess nearer a root."
        )

    # -- starts, ranking, advice -----------------------------------------------------------
    def starts(self, c: Candidate) -> Candidate:
        lo, hi = c.lo, c.hi
        if lo == hi:
            return replace(c, newton=c.x, checks=(f"f({_g(c.x, 17)}) = 0 exactly: this is the root",))
        if c.evidence.get("exact_zero"):
            far = lo if abs(c.f_lo) >= abs(c.f_hi) else hi
            return replace(
                c, newton=c.x, secant=(far, c.x), iqi=(lo, hi, c.x),
                checks=(f"f({_g(c.x, 17)}) = 0 exactly: every start that includes it stops there at once",),
            )
        pts = {lo: c.f_lo, hi: c.f_hi}
        checks: list[str] = []
        newton: float | None = None
        slope = (c.f_hi - c.f_lo) / (hi - lo)
        src = (
            f"f' from the problem ({self.s.derivative_source})"
            if self.s.fprime is not None
            else "checked with the secant slope of the bracket, as f has no derivative to hand"
        )
        try:
            for x0 in dict.fromkeys((c.x, _false_position(lo, hi, c.f_lo, c.f_hi), lo + (hi - lo) / 2)):
                f0 = pts[x0] if x0 in pts else self.s(x0)
                pts[x0] = f0
                if f0 == 0:
                    newton = x0
                    checks.append(f"Newton from {_g(x0, 17)}: f = 0 there exactly")
                    break
                d = self.s.df(x0) if self.s.fprime is not None else slope
                x1 = x0 - f0 / d if math.isfinite(d) and d != 0 and math.isfinite(f0) else math.nan
                if lo <= x1 <= hi:
                    newton = x0
                    checks.append(f"Newton from {_g(x0, 17)}: the tangent step lands at {_g(x1, 17)}, inside the "
                                  f"bracket ({src})")
                    break
                checks.append(f"Newton from {_g(x0, 17)} rejected: the tangent step goes to {_g(x1)}, outside ({src})")
        except Halt:
            checks.append("the budget ran out while checking the Newton start")
        xs = sorted(x for x in pts if math.isfinite(pts[x]))
        pairs = [(a, b) for a, b in itertools.pairwise(xs) if _opposite(pts[a], pts[b])]
        secant: tuple[float, float] | None = None
        iqi: tuple[float, float, float] | None = None
        if pairs:
            a, b = min(pairs, key=lambda p: p[1] - p[0])
            secant = (a, b) if abs(pts[b]) <= abs(pts[a]) else (b, a)
            checks.append(f"secant from ({_g(secant[0], 17)}, {_g(secant[1], 17)}): f changes sign between them, so "
                          "the first step (the false-position point) stays inside")
            for x3 in sorted((x for x in xs if x not in secant), key=lambda x: min(abs(x - a), abs(x - b))):
                triple = (x3, secant[0], secant[1])
                fs = [pts[t] for t in triple]
                if len(set(fs)) < 3:
                    continue
                p = _iqi_point(triple, fs)
                if lo <= p <= hi:
                    iqi = triple
                    checks.append(f"IQI from ({', '.join(_g(t, 17) for t in triple)}): the first step lands at "
                                  f"{_g(p, 17)}, inside the bracket")
                    break
                checks.append(f"IQI from ({', '.join(_g(t) for t in triple)}) rejected: the first step goes to "
                              f"{_g(p)}, outside the bracket")
        return replace(c, newton=newton, secant=secant, iqi=iqi, checks=tuple(checks))

    def finish(self, *, near: float | None) -> tuple[Candidate, ...]:
        for a, fa, b, fb, after in self.pending:
            reason = "a sign change the evaluation budget left unexamined"
            self.found.append(Candidate("unclassified", a, b, fa, fb, a + (b - a) / 2, {"found_after": after}, reason))
        roots = [self.starts(c) for c in self.found if c.kind == "root"]

        def clean(c: Candidate) -> bool:
            q = c.evidence.get("exponent", math.nan)
            return c.newton is not None and (bool(c.evidence.get("exact_zero")) or 0.7 <= q <= 1.5)

        def key(c: Candidate) -> tuple[float, bool, float]:
            dist = 0.0 if near is None or c.lo <= near <= c.hi else min(abs(c.lo - near), abs(c.hi - near))
            return (dist, not clean(c), c.x)

        ranked = [replace(c, rank=i + 1) for i, c in enumerate(sorted(roots, key=key))]
        others = sorted((c for c in self.found if c.kind != "root"), key=lambda c: (c.x, c.kind))
        if not ranked:
            lo, hi = self.span
            self.notes.append(f"No root bracket found on [{_g(lo)}, {_g(hi)}], the part of the line searched.")
        return tuple(replace(c, recommend=advice(c, self.touch_rtol)) for c in ranked + others)


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
        grow = f" (|f| grows like width^{q:.2g} as the sign change closes in)" if math.isfinite(q) else ""
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
        return (f"f is undefined to the {side} of {x}: keep starts and brackets to the {other}; an open method "
                "can step across, so prefer a bracket inside the domain.")
    return f"Sign change in [{lo}, {hi}] not examined: the evaluation budget ran out. Raise max_evals."
