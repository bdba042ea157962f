"""What one local feature of f is: a sign change (root, pole or jump), a domain edge, or a dip.

These are pure functions of a callable and an interval, shared by the bracket
search (``_brackets``) and the diagnosis of a finished run. They call ``f`` a
bounded number of times; wrap ``f`` in a :class:`~convdiag.core._record.Recorder`
to keep the evaluations. ``f`` may raise or return NaN: such a point counts as
undefined. A :class:`~convdiag.core._step.Halt` for an exhausted budget
(``max-evals``, ``max-time``) stops the work and what was learnt is returned.

Rules (each stated with its threshold in :func:`judge_refinement`,
:func:`locate_edge` and :func:`inspect_dip`):

- **root / pole / jump.** Halve the sign change and watch ``M``, the larger
  of |f| at the two ends, and ``N``, the smaller. If |f| ~ width^q, then for a
  root of multiplicity m, q = m > 0 (``M`` shrinks); for a pole of order k,
  q = -k < 0 (``N`` grows); for a jump, q = 0 (both settle on the one-sided
  limits). The far end of a halved bracket always lies between width/2 and
  width from the feature, so ``M`` (root) and ``N`` (pole) vary by at most a
  factor 2 from the power law; over 6 halvings (ratio 64) that bounds the
  error of q by ln 2 / ln 64 = 1/6.
- **domain edge.** Bisect between a defined and an undefined point.
- **touch.** Minimise s·f (s the common sign) between three samples.

The domain edge and the dip live in ``_edges`` (with the probe all three
share) and are re-exported here.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from typing import Any, Literal

from ..errors import BracketError, ParameterError
from ._edges import Dip, Edge, _at_resolution, _Exhausted, _Probe, inspect_dip, locate_edge

__all__ = [
    "Dip",
    "Edge",
    "SignChange",
    "classify_sign_change",
    "inspect_dip",
    "judge_refinement",
    "locate_edge",
]

#: |q| below this is "flat" (neither shrinking nor growing); q = 1/3 (a cube-root root) is the
#: smallest exponent we want to call a root. Chosen, not sourced.
EXPONENT_THRESHOLD = 0.3
#: halvings before the first verdict, and the window (in halvings) the exponent is measured over.
FIRST_VERDICT = 10
WINDOW = 6
#: fewest halvings (a 16-fold shrink) behind a verdict when the budget cuts the refinement short.
MIN_HALVINGS = 4
#: where to split instead when f is undefined at the midpoint (golden-section shares).
OFF_CENTRE = (0.381966011250105, 0.618033988749895)
#: at few-ulp width a flat |f| is a jump; |f| that still grew this much over the refinement is a pole.
GROWTH_AT_RESOLUTION = 8.0

SignKind = Literal["root", "pole", "jump", "undefined", "unclassified"]


def _exponent(w0: float, w1: float, v0: float, v1: float) -> float:
    """q in v ~ width^q from two (width, value) pairs; NaN when undefined."""
    if not (w0 > 0 and w1 > 0 and v0 > 0 and v1 > 0) or w0 == w1:
        return math.nan
    if not (math.isfinite(v0) and math.isfinite(v1)):
        return -math.inf if math.isinf(v1) else math.nan
    return math.log(v1 / v0) / math.log(w1 / w0)


def judge_refinement(
    widths: Sequence[float],
    abs_max: Sequence[float],
    abs_min: Sequence[float],
    *,
    start: int = 0,
    at_resolution: bool = False,
) -> tuple[SignKind | None, float, float, str]:
    """Verdict on a sign change from the history of its refinement.

    Parameters
    ----------
    widths : widths of the successive brackets (shrinking).
    abs_max, abs_min : the larger and the smaller |f| at the two ends of each bracket.
    start : index where the measuring window begins.
    at_resolution : the last bracket is a few ulps wide (no more refinement possible).

    Returns
    -------
    (kind or None, q_max, q_min, reason)
        ``q_max`` and ``q_min`` are the exponents q in |f| ~ width^q of the
        larger and the smaller end value over the window. Rules: root when
        q_max >= 0.3 (both ends shrink); pole when q_min <= -0.3 or q_max <= -0.3
        (|f| grows as the bracket shrinks); at few-ulp width, pole when the
        smaller end value grew more than 8-fold over the window, else jump.
        None means: not decided yet, refine further.

    Examples
    --------
    >>> judge_refinement([1.0, 0.5, 0.25], [1.0, 0.5, 0.25], [0.5, 0.2, 0.1])[0]
    'root'
    >>> judge_refinement([1.0, 0.5, 0.25], [2.0, 4.0, 8.0], [1.0, 2.0, 4.0])[0]
    'pole'
    """
    if len(widths) < 2 or start >= len(widths) - 1:
        return None, math.nan, math.nan, "not refined enough to judge"
    w0, w1 = widths[start], widths[-1]
    q_max = _exponent(w0, w1, abs_max[start], abs_max[-1])
    q_min = _exponent(w0, w1, abs_min[start], abs_min[-1])
    ratio = w0 / w1 if w1 > 0 else math.inf
    where = f"as the bracket shrank {ratio:.3g}-fold"
    if q_max >= EXPONENT_THRESHOLD:
        return "root", q_max, q_min, f"|f| at both ends shrank like width^{q_max:.2f} {where}"
    if q_min <= -EXPONENT_THRESHOLD or q_max <= -EXPONENT_THRESHOLD:
        q = q_min if q_min <= -EXPONENT_THRESHOLD else q_max
        return "pole", q_max, q_min, f"|f| grew like width^{q:.2f} {where}"
    if at_resolution:
        grew = abs_min[-1] / abs_min[start] if abs_min[start] > 0 else math.inf
        if grew > GROWTH_AT_RESOLUTION:
            return "pole", q_max, q_min, f"|f| kept growing ({grew:.3g}-fold) {where} down to a few ulps"
        return (
            "jump",
            q_max,
            q_min,
            f"|f| stayed between {abs_min[-1]:.3g} and {abs_max[-1]:.3g} {where} down to a few ulps",
        )
    return None, q_max, q_min, f"|f| neither shrank nor grew clearly {where}"


@dataclass(frozen=True)
class SignChange:
    """The verdict on one sign change of f and the evidence for it.

    Attributes
    ----------
    kind : "root", "pole", "jump", "undefined" (f is undefined at ``x_undefined``
        inside the interval) or "unclassified" (the budget ran out first).
    lo, hi, f_lo, f_hi : the refined bracket (f changes sign strictly across it).
    x : where the feature is: the false-position point for a root, the midpoint otherwise.
    q_max, q_min : exponents q in |f| ~ width^q of the larger/smaller end value.
    widths, abs_max, abs_min : the refinement history.
    reason : one sentence with the evidence.
    evaluations : calls of f made here.
    exact_zero : a halving hit f = 0 exactly at ``x``.
    """

    kind: SignKind
    lo: float
    hi: float
    f_lo: float
    f_hi: float
    x: float
    q_max: float
    q_min: float
    widths: tuple[float, ...]
    abs_max: tuple[float, ...]
    abs_min: tuple[float, ...]
    reason: str
    evaluations: int
    exact_zero: bool = False
    x_undefined: float | None = None
    complete: bool = True
    notes: tuple[str, ...] = field(default=())

    @property
    def exponent(self) -> float:
        """The exponent behind the verdict: q_min for a pole whose smaller end value grew, else q_max."""
        if self.kind == "pole" and self.q_min <= -EXPONENT_THRESHOLD:
            return self.q_min
        return self.q_max


def _false_position(a: float, b: float, fa: float, fb: float) -> float:
    c = a - fa * (b - a) / (fb - fa)
    return c if a < c < b else a + (b - a) / 2


def classify_sign_change(
    f: Callable[[Any], Any],
    lo: float,
    hi: float,
    *,
    f_lo: float | None = None,
    f_hi: float | None = None,
    max_evals: int = 80,
) -> SignChange:
    """Tell whether a sign change of f is a root, a pole or a jump.

    Halves the bracket (keeping the sign change) 10 times, then judges with
    :func:`judge_refinement` over the last 6 halvings; if that is not
    decisive, goes on halving down to a few ulps and judges again (a jump
    is only called at that width).

    Parameters
    ----------
    f : callable
        f(x) -> number. Exceptions and NaN count as "undefined".
    lo, hi : float
        The interval; f(lo) and f(hi) must be finite and of opposite signs.
    f_lo, f_hi : float, optional
        Known values at the ends (not re-evaluated).
    max_evals : int
        Calls of f allowed here.

    Raises
    ------
    BracketError
        f does not change sign strictly across [lo, hi] (or is undefined there).

    Examples
    --------
    >>> import math
    >>> classify_sign_change(lambda x: x * x - 2, 1.0, 2.0).kind
    'root'
    >>> classify_sign_change(math.tan, 1.0, 2.0).kind
    'pole'
    >>> classify_sign_change(lambda x: -1.0 if x < 0.3 else 1.0, 0.0, 1.0).kind
    'jump'
    """
    if not (isinstance(max_evals, int) and max_evals >= 0):
        raise ParameterError.expected("max_evals", "classify_sign_change", "an int >= 0", max_evals)
    if lo > hi:
        lo, hi, f_lo, f_hi = hi, lo, f_hi, f_lo
    a, b = float(lo), float(hi)
    probe = _Probe(f, max_evals)
    try:
        fa = probe(a) if f_lo is None else float(f_lo)
        fb = probe(b) if f_hi is None else float(f_hi)
    except _Exhausted:
        return _unclassified(a, b, math.nan, math.nan, (), (), (), probe.count, "no evaluations left")
    if not (math.isfinite(fa) and math.isfinite(fb)) or not ((fa < 0 < fb) or (fb < 0 < fa)):
        raise BracketError(
            f"f does not change sign strictly across [{a!r}, {b!r}] (f({a!r}) = {fa!r}, f({b!r}) = {fb!r}). "
            "Pass an interval whose end values are finite and of opposite signs."
        )
    widths, amax, amin = [b - a], [max(abs(fa), abs(fb))], [min(abs(fa), abs(fb))]
    kind: SignKind | None = None
    q_max = q_min = math.nan
    reason = ""
    window = max(0, FIRST_VERDICT - WINDOW)
    notes: list[str] = []
    try:
        while True:
            done = _at_resolution(a, b)
            halvings = len(widths) - 1
            if halvings >= FIRST_VERDICT or done:
                kind, q_max, q_min, reason = judge_refinement(
                    widths, amax, amin, start=min(window, max(0, halvings - 1)), at_resolution=done
                )
                if kind is not None or done:
                    break
            m = a + (b - a) / 2
            fm = probe(m)
            for share in OFF_CENTRE if math.isnan(fm) else ():
                m2 = a + (b - a) * share  # f may be undefined at one point only (1/(x-1) at x = 1)
                f2 = probe(m2)
                if not math.isnan(f2):
                    notes.append(f"f is undefined at {m!r} but not at {m2!r}: split the bracket there")
                    m, fm = m2, f2
                    break
            if fm == 0:
                return SignChange(
                    "root", a, b, fa, fb, m, math.nan, math.nan, tuple(widths), tuple(amax), tuple(amin),
                    f"f({m!r}) = 0 exactly", probe.count, exact_zero=True, notes=tuple(notes),
                )
            if math.isnan(fm):
                return SignChange(
                    "undefined", a, b, fa, fb, m, math.nan, math.nan, tuple(widths), tuple(amax), tuple(amin),
                    f"f is undefined at {m!r} inside the sign change ({probe.last_problem})", probe.count,
                    x_undefined=m,
                )
            if math.isinf(fm):
                return SignChange(
                    "pole", a, b, fa, fb, m, math.nan, math.nan, tuple(widths), tuple(amax), tuple(amin),
                    f"f({m!r}) = {fm} inside the sign change", probe.count,
                )
            if (fm < 0) == (fa < 0):
                a, fa = m, fm
            else:
                b, fb = m, fm
            widths.append(b - a)
            amax.append(max(abs(fa), abs(fb)))
            amin.append(min(abs(fa), abs(fb)))
    except _Exhausted:
        halvings = len(widths) - 1
        kind, q_max, q_min, reason = judge_refinement(widths, amax, amin, start=max(0, halvings - WINDOW))
        if kind is None or halvings < MIN_HALVINGS:
            return _unclassified(a, b, fa, fb, widths, amax, amin, probe.count, reason)
        return SignChange(
            kind, a, b, fa, fb, _false_position(a, b, fa, fb) if kind == "root" else a + (b - a) / 2,
            q_max, q_min, tuple(widths), tuple(amax), tuple(amin), reason + " (budget ran out; verdict on "
            f"{len(widths) - 1} halvings)", probe.count, complete=False,
        )
    assert kind is not None
    x = _false_position(a, b, fa, fb) if kind == "root" else a + (b - a) / 2
    return SignChange(
        kind, a, b, fa, fb, x, q_max, q_min, tuple(widths), tuple(amax), tuple(amin), reason, probe.count,
        notes=tuple(notes),
    )


def _unclassified(
    a: float, b: float, fa: float, fb: float, widths: Sequence[float], amax: Sequence[float],
    amin: Sequence[float], count: int, why: str,
) -> SignChange:
    return SignChange(
        "unclassified", a, b, fa, fb, a + (b - a) / 2, math.nan, math.nan, tuple(widths), tuple(amax),
        tuple(amin), f"the evaluation budget ran out before a verdict ({why})", count, complete=False,
    )
