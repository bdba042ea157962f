"""A safeguarded hybrid bracketing method of our own design (command-line name ``hybrid``).

The rules, each a general principle. Their constants are the natural values of the principle
(2 for "multiple", four-fold for "two bisections", doubling for backing off, three quarters of
the precision), not values fitted to a test set; the benchmark figures barely move when they
change.

1. **Bracket.** Every step evaluates one point strictly inside a bracket [a, b] over which
   f changes sign, and keeps the half that still changes sign.
2. **Guarantee.** After ``FREE_STEPS`` steps the bracket must keep pace with a schedule 5/6
   as fast as bisection: after k steps its width may be at most ``W0 / 2**floor(5(k - 2)/6)``
   (W0 the starting width). A step that starts behind schedule is a bisection. This caps the
   cost at 1.2 times bisection's plus a constant (see :class:`Hybrid`).
3. **Progress test.** A step that used a model is judged over the last two steps: unless the
   bracket shrank at least four-fold (what two bisections achieve), it missed. After a miss
   the next steps are bisections, one after the first miss and twice as many after each
   further miss in a row, so a function the models describe badly (a jump, a pole, a kink)
   costs little more than bisection.
4. **Models, checked before use.** The first step bisects: two points cannot show whether f
   is straight. Afterwards, in this order:

   * a *power law* f ≈ ±(s·|x - r|)^m fitted through the bracket ends and the last discarded
     point; used when the fitted m is at least 2, i.e. the data say the root is multiple.
     (Interpolation converges only linearly at a multiple root; this model does not.)
   * the *inverse polynomial* x = p(y) through the bracket ends and the one or two most
     recently discarded points (a sideways parabola or cubic); used when p is monotone
     between f(a) and f(b), so that it describes a function with exactly one root in the
     bracket.
   * when values repeat (f is flat on a stretch, so no curved model exists), the *chord*
     between the ends with the Anderson–Björck weight: each time the same end is kept, its
     value is scaled by m = 1 - f(new)/f(old) (by 1/2 when m <= 0), which pulls the next
     chord across the root instead of creeping up on it.
   * otherwise bisection.
5. **Landing across the root.** The method is not told the tolerance, so it closes the
   bracket from both sides itself: a model step goes past the model's root, toward the end
   with the larger |f|, by the model's own error estimate (the difference between the model
   and the one of next lower order; for the power law, the change of its root since the last
   step, or its distance from the interpolation's root), at least two units in the last
   place and u^(3/4) of the width (u the unit roundoff: 2^-39 in doubles), at most half the
   way to that end. When the estimate holds, the point lands across the root
   and the bracket shrinks to about the previous error, so the width converges as fast as
   the iterates and the driver's width rule stops the run.

Stopping is the driver's (``core._session``): exactly zero f, or the bracket width below
``xtol + rtol·|best|`` (strictly; best = the end with the smaller |f|), or adjacent
floating-point ends. This is the rule of scipy's ``brentq`` and ``elementwise.find_root``
(``bisect`` uses the newest midpoint for |best|; ``toms748`` the upper end and ``<=``); see the
notes in ``bench/bracketing.py``.

What a run records for the diagnosis:

* **Exact zero.** The driver stops on f(x) = 0. When that happens before the bracket has
  shrunk by half the working digits (width > u^(1/2)·W0), the step's reason ends with
  "f is exactly zero here, but the bracket is still [a, b]: f may be flat (underflow), not
  at a root", and the step's ``bracket`` is that bracket; :func:`zero_in_wide_bracket`
  finds the case against the run's own tolerance. Otherwise the reason says "a root in
  working precision".
* **Pole.** A step after which the smaller |f| at the two ends exceeds its starting value,
  and grew in that step, says "... a pole, not a root, may be inside". The run still
  converges on the sign change (the bound holds), at a point where |f| is huge.
"""

from __future__ import annotations

import math
from collections.abc import Iterator
from typing import Any

import numpy as np

from ._evaluate import Evaluator
from ._methods import register
from ._models import Chord, InversePolynomial, LocalModel, Midpoint, PowerLaw, newton_coefficients, newton_value
from ._step import Method, Start, Step, midpoint, same_sign

__all__ = ["FREE_STEPS", "Hybrid", "power_fit", "zero_in_wide_bracket"]

FREE_STEPS = 2  # steps before the 5/6-of-bisection schedule applies (the constant in the bound)
_T_ITERATIONS = 60  # bisection steps for the power-law exponent (2^-60: below double precision)


def _pow(x: Any, t: Any) -> Any:
    # numpy's power for floats, so that the vectorised form (core._vhybrid) reproduces the
    # scalar stepper bit for bit; the number type's own ** otherwise (mpmath).
    if isinstance(x, float):
        return float(np.power(x, t))
    return x**t


def _scaled(w: Any, k: int) -> Any:
    """w / 2**k exactly (0 below the smallest number)."""
    if isinstance(w, float):
        return math.ldexp(w, -k)
    return w * ((w * 0 + 1) / 2) ** k


def _unit(x: Any) -> Any:
    """Unit roundoff of x's number type: the smallest u with 1 + u > 1 when halved once more."""
    if isinstance(x, float):
        return 2.0**-52
    u = x * 0 + 1
    while 1 + u / 2 > 1:
        u = u / 2
    return u


def power_fit(a: Any, fa: Any, b: Any, fb: Any, p: Any, fp: Any) -> tuple[Any, Any, Any] | None:
    """Fit |f| = (s·|x - r|)^m through the bracket ends and one point p outside [a, b].

    With t = 1/m the values |f|^t are linear in x on each side of r, which gives one
    equation in t (solved by bisection on 0 < t < 1) and then r. Returns ``(t, r, s)``, or
    None when the values grow no faster than linearly away from the root (no m > 1 fits).
    """
    a0, b0, p0 = abs(fa), abs(fb), abs(fp)
    top = max(a0, b0, p0)
    a0, b0, p0 = a0 / top, b0 / top, p0 / top  # scale-free, so nothing overflows
    if p > b:
        e0, gap = b0, (p - b) / (b - a)
    else:
        e0, gap = a0, (a - p) / (b - a)
    if not (a0 + b0) * gap < p0 - e0:  # the linear model (t = 1) does not reach |f(p)|
        return None
    lo, hi = 0.0, 1.0
    for _ in range(_T_ITERATIONS):
        t = (lo + hi) / 2
        if (_pow(a0, t) + _pow(b0, t)) * gap > _pow(p0, t) - _pow(e0, t):
            lo = t
        else:
            hi = t
    t = (lo + hi) / 2
    ta, tb = _pow(a0, t), _pow(b0, t)
    if not ta + tb > 0:
        return None
    r = (a * tb + b * ta) / (ta + tb)
    scale = (ta + tb) / (b - a) * _pow(top, t)
    return t, r, scale


def _num(v: Any) -> str:
    try:
        return f"{float(v):.6g}"
    except (TypeError, ValueError, OverflowError):
        return str(v)


@register
class Hybrid(Method):
    """Safeguarded hybrid: power-law and inverse-polynomial models, Anderson–Björck chords, bisection.

    Keeps a sign-changing bracket; each step takes the root of the first local model that
    passes its checks (a power law when the data say the root is multiple, else the sideways
    parabola or cubic through the latest points, or the weighted chord where f is flat),
    steps a little past it so as to land across the root, and falls back to bisection
    when no model passes, after a miss, or when the bracket falls behind schedule. The
    rules and why are in the module docstring.

    **Bound.** The schedule gives, for a tolerance T that does not depend on x: if bisection
    needs N evaluations (the two ends included) to shrink the bracket below T, this method
    needs at most ``1.2·N + 4`` (``FREE_STEPS`` = 2 free steps, plus 1.8 for rounding up).
    Proof sketch: with B_k = log2(W0/W_k) the bits gained after k steps, a step is allowed
    to gain nothing only while B_k >= floor(5(k-2)/6); a bisection gains one bit; so
    B_k >= floor(5(k-2)/6) - 1 always, and the width is below T once
    k >= 2 + 1.2·(N - 2 + 1). With a relative tolerance the same holds with T the
    tolerance at the root. ``tests/core/test_hybrid.py`` checks it on adversarial functions.

    Strengths: about as few evaluations as the best published bracketing methods on smooth
    simple roots (order ≈ 1.84 per evaluation), superlinear at multiple roots (the power
    law), fast on piecewise-flat functions (the weighted chord), never much worse than
    bisection on anything. Weaknesses: more rules to follow than bisection; a function
    that is exactly zero on a whole interval (underflow) stops it on the first zero found,
    which it flags in the step's reason; like every bracketing method it converges to a
    pole or a jump inside the bracket just as well (the reasons say when |f| grows).

    References: Anderson and Björck, BIT 13 (1973) 253-264 (weighted regula falsi);
    Dekker (1969) and Brent, *Algorithms for Minimization without Derivatives* (1973)
    (interpolation safeguarded by bisection); Chandrupatla, Adv. Eng. Softw. 28 (1997)
    145-149 (accept interpolation only where it is monotone); Alefeld, Potra and Shi, ACM
    TOMS 21 (1995) 327-344 (test set, see ``bench/bracketing.py``).

    Examples
    --------
    >>> from convdiag import solve
    >>> run = solve(lambda x: x**3 - 2*x - 5, "hybrid", bracket=(2.0, 3.0))
    >>> run.converged, round(run.root, 12)
    (True, 2.094551481542)
    >>> run.evaluations
    9
    >>> print(*(s.model.kind for s in run.steps))
    midpoint inverse-polynomial midpoint inverse-polynomial inverse-polynomial inverse-polynomial inverse-polynomial
    """

    name = "hybrid"
    title = "hybrid (power law, inverse interpolation, weighted chord, bisection)"
    nominal_order = 1.8392867552141612  # inverse quadratic's; measured 1.8-1.9 per evaluation
    evals_per_step = 1
    needs_bracket = True
    stops_on_step = False

    def steps(self, ev: Evaluator, start: Start) -> Iterator[Step]:
        (a, b), (fa, fb) = start.xs, start.fs
        u = _unit(a)
        u34 = 2.0**-39 if isinstance(u, float) else u**0.75
        w0 = b - a
        small0 = small_prev = min(abs(fa), abs(fb))
        k = 0
        o1: tuple[Any, Any] | None = None  # last discarded point
        o2: tuple[Any, Any] | None = None  # the one before
        ga, gb = fa, fb  # chord values (Anderson–Björck weights applied)
        last = 0  # 1: the last new point replaced a, 2: it replaced b
        w1 = w2 = w0  # width one and two steps ago
        hold, penalty = 0, 1
        last_pow: Any = None
        note = ""
        while True:
            before = (a, b)
            width = b - a
            need = (5 * (k - FREE_STEPS)) // 6
            worse = b if abs(fb) > abs(fa) else a
            x: Any = None
            model: LocalModel = Midpoint(a, b)
            uses_model = False
            reason = ""
            if need > 0 and width > _scaled(w0, need):
                reason = (
                    f"bisection: the bracket is behind the guaranteed rate (width {_num(width)} > "
                    f"W0/2^{need} after {k} steps)"
                )
            elif hold > 0:
                hold -= 1
                reason = f"bisection: {note}"
            elif k == 0:
                reason = "bisection: first step (two points cannot show whether f is straight)"
            else:
                x, chosen, reason, power_root = self._model_step(
                    a, fa, b, fb, ga, gb, o1, o2, last, last_pow, worse, width, u, u34
                )
                uses_model = x is not None
                if chosen is not None:
                    model = chosen
            if x is None:
                x = midpoint(a, b)
                power_root = None
            last_pow = power_root
            fx = ev.f(x)
            k += 1
            if fx == 0:
                if width > (2.0**-26 if isinstance(u, float) else u**0.5) * w0:  # not yet half the digits
                    reason += (
                        f". f is exactly zero here, but the bracket is still [{_num(a)}, {_num(b)}]: "
                        "f may be flat (underflow), not at a root"
                    )
                else:
                    reason += ". f is exactly zero here (a root in working precision)"
                yield Step(x, fx, model, reason, bracket=before, bracket_before=before, best=x)
                return
            if same_sign(fx, fa):
                o1, o2 = (a, fa), o1
                m = 1 - fx / fa
                a, fa = x, fx
                gb = (gb * (m if m > 0 else 0.5)) if last == 1 else fb
                ga = fa
                last = 1
            else:
                o1, o2 = (b, fb), o1
                m = 1 - fx / fb
                b, fb = x, fx
                ga = (ga * (m if m > 0 else 0.5)) if last == 2 else fa
                gb = fb
                last = 2
            w = b - a
            if uses_model:
                if k >= 2 and w > w2 / 4:
                    hold, penalty = penalty, 2 * penalty
                    note = (
                        f"the last model step missed (the bracket shrank {_num(w2 / w)}-fold over two "
                        f"steps, less than bisection's 4); bisecting {hold} time(s) before trying models again"
                    )
                    reason += "; missed: the bracket shrank less than 4-fold over two steps"
                else:
                    penalty = 1
            w2, w1 = w1, w
            small = min(abs(fa), abs(fb))
            if small > small0 and small > small_prev:
                reason += (
                    f"; |f| at both ends (>= {_num(small)}) is above its smaller starting value "
                    f"{_num(small0)} and grew in this step although the bracket shrank: a pole, not a root, "
                    "may be inside"
                )
            small_prev = small
            best = a if abs(fa) < abs(fb) else b
            yield Step(x, fx, model, reason, bracket=(a, b), bracket_before=before, best=best)

    @staticmethod
    def _model_step(
        a: Any, fa: Any, b: Any, fb: Any, ga: Any, gb: Any,
        o1: Any, o2: Any, last: int, last_pow: Any, worse: Any, width: Any, u: Any, u34: Any,
    ) -> tuple[Any, LocalModel | None, str, Any]:
        """The model step, or (None, None, why not, None). Plain arithmetic only."""
        why: list[str] = []
        power = None
        if o1 is not None:
            power = power_fit(a, fa, b, fb, o1[0], o1[1])
            if power is not None and not (power[0] <= 0.5 and a <= power[1] <= b):
                power = None
        inverse = None
        if o1 is not None and o1[1] != fa and o1[1] != fb:
            xs, ys = ([a, b, o1[0]], [fa, fb, o1[1]]) if last == 1 else ([b, a, o1[0]], [fb, fa, o1[1]])
            if o2 is not None and o2[1] != fa and o2[1] != fb and o2[1] != o1[1]:
                xs.append(o2[0])
                ys.append(o2[1])
            coef = newton_coefficients(xs, ys)
            n = len(xs)
            z_hi = newton_value(coef, ys, 0)[0]
            z_lo = newton_value(coef, ys, 0, n - 1)[0]
            lo, hi = (fa, fb) if fa < fb else (fb, fa)
            d_lo = newton_value(coef, ys, lo)[1]
            d_hi = newton_value(coef, ys, hi)[1]
            monotone = same_sign(d_lo, d_hi)
            if monotone and n == 4:  # x'(y) is a parabola: check its vertex too
                mid = lo + (hi - lo) / 2
                d_mid = newton_value(coef, ys, mid)[1]
                curv = d_lo - 2 * d_mid + d_hi
                if curv != 0:
                    yv = mid - (d_hi - d_lo) * (hi - lo) / (4 * curv)
                    if lo < yv < hi:
                        monotone = same_sign(newton_value(coef, ys, yv)[1], d_lo)
            name = "cubic" if n == 4 else "parabola"
            if not monotone:
                why.append(f"the sideways {name} is not monotone between f(a) and f(b)")
            elif not a <= z_hi <= b:  # the step itself must land strictly inside (below)
                why.append(f"the sideways {name} puts the root outside the bracket")
            else:
                inverse = (xs, ys, z_hi, abs(z_hi - z_lo), name)
        if power is not None:
            t, z, scale = power
            if last_pow is not None:
                s, est = abs(z - last_pow), "the change of its root since the last step"
            elif inverse is not None:
                s, est = abs(z - inverse[2]), "its gap to the interpolation's root"
            else:
                s, est = 0 * z, "none yet: the minimum"
            label = f"power law (fitted multiplicity m = {_num(1 / t)})"
        elif inverse is not None:
            xs, ys, z, s, name = inverse
            est = "its gap to the next lower-order model"
            label = f"sideways {name} through {len(xs)} points"
        else:
            if o1 is None or o1[1] == fa or o1[1] == fb:  # f repeats a value: flat stretch
                if gb != ga:
                    z = b - gb * (b - a) / (gb - ga)
                    if a < z < b:
                        weighted = ga != fa or gb != fb
                        why_chord = (
                            "Anderson–Björck chord (the kept end's value is scaled, so the chord crosses the root)"
                            if weighted
                            else "chord between the ends"
                        )
                        return z, Chord(a, ga, b, gb), f"{why_chord}: f repeats a value, so no curved model", None
                why.append("the chord leaves the bracket")
            else:
                why.append("no power law with m >= 2 fits")
            return None, None, "bisection: " + "; ".join(why), None
        s = max(s, 2 * u * abs(z), u34 * width)
        s = min(s, abs(worse - z) / 2)
        shift = s if worse > z else -s
        x = z + shift
        if not a < x < b:
            return None, None, f"bisection: the {label} step would leave the bracket", None
        step_note = f"stepped {_num(s)} past its root toward the end with larger |f| (error estimate: {est})"
        if power is not None:
            t, r, scale = power
            model: LocalModel = PowerLaw(r, 1 / t, scale, 1.0 if fb > 0 else -1.0, shift)
            return x, model, f"accepted the {label}, {step_note}", r
        return x, InversePolynomial(tuple(xs), tuple(ys), shift), f"accepted interpolation: {label}, {step_note}", None


def suspect_stop(run: Any) -> str:
    """``"flat"`` or ``"pole"`` when a hybrid run met its stopping rule on a sign change that may not be a root.

    The run's last step says so (module docstring): an exact zero in a still-wide bracket ("f may be
    flat"), or |f| at both ends grown as the bracket shrank ("a pole, not a root, may be inside").
    Empty for any other run. The diagnosis decides (``flat`` or ``pole`` findings) by probing f.
    """
    if not run.converged or not run.steps or run.method != "hybrid":
        return ""
    reason = str(run.steps[-1].reason)
    if "f may be flat" in reason:
        return "flat"
    if "a pole, not a root, may be inside" in reason:
        return "pole"
    return ""


def zero_in_wide_bracket(run: Any) -> tuple[Any, Any] | None:
    """The bracket around an exact zero that stopped a run while it was still wide, else None.

    A run that stops because f is exactly zero while its bracket is still wider than the
    run's tolerance ``xtol + rtol·|x|`` found either an isolated root by luck or a stretch
    where f is flat (it underflows to zero, as x·exp(-1/x²) does for |x| < 0.037). The
    diagnosis tells them apart by probing f near x; this function finds the case.
    """
    if run.stop_reason != "exact-zero" or not run.steps:
        return None
    last = run.steps[-1]
    if last.bracket is None:
        return None
    lo, hi = last.bracket
    tol = run.settings.xtol + run.settings.rtol * abs(last.x)
    return (lo, hi) if hi - lo > tol else None
