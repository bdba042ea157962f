"""The classic iterations as steppable methods.

Each class holds no state between runs; ``steps()`` is a generator that
yields one :class:`~convdiag.core._step.Step` per iteration with the local
model it used. To add a method: subclass ``Method``, set the class
attributes, write ``steps()`` with plain arithmetic, and register it in
``METHODS``. The common checks in ``tests/core/test_methods.py`` then run
on it automatically.
"""

from __future__ import annotations

from collections.abc import Iterator
from typing import Any

from ._evaluate import Evaluator
from ._models import Chord, InverseParabola, Midpoint, Tangent, TangentHyperbola
from ._step import Halt, Method, Start, Step, midpoint, same_sign

__all__ = [
    "METHODS",
    "Bisection",
    "Halley",
    "Illinois",
    "InverseQuadratic",
    "Newton",
    "RegulaFalsi",
    "Secant",
    "Steffensen",
]

_GOLDEN = (1 + 5**0.5) / 2
_TRIBONACCI = 1.8392867552141612  # real root of t^3 = t^2 + t + 1


def _finite(v: Any) -> bool:
    try:
        return bool(abs(v) < float("inf"))  # False for nan and inf, any numeric type
    except TypeError:
        return False


def _check_new(x: Any, what: str, x_from: Any) -> None:
    if not _finite(x):
        raise Halt(
            "iterate-overflow",
            f"The {what} from x = {x_from} produced a non-finite iterate ({x}).",
            advice="The method is running away: start closer to the root, or use a bracketing method.",
            x=x_from,
        )


class Newton(Method):
    """Newton's method: follow the tangent line to zero.

    x+ = x - f(x) / f'(x)

    Strengths: quadratic convergence at a simple root (the number of
    correct digits doubles per step). Weaknesses: needs f' (two
    evaluations per step); only linear at a multiple root (rate (m-1)/m);
    can cycle, diverge or jump far when f' is small; no bracket is kept.
    """

    name = "newton"
    title = "Newton"
    nominal_order = 2.0
    evals_per_step = 2
    derivatives = 1

    def steps(self, ev: Evaluator, start: Start) -> Iterator[Step]:
        x, fx = start.xs[0], start.fs[0]
        while True:
            d = ev.df(x, fx)
            if d == 0:
                raise Halt(
                    "zero-derivative",
                    f"f'(x) = 0 at x = {x}: the tangent is horizontal and never meets zero.",
                    advice="Start elsewhere, or use a bracketing method (bisection, illinois, hybrid).",
                    x=x,
                )
            x_new = x - fx / d
            _check_new(x_new, "tangent step", x)
            f_new = ev.f(x_new)
            yield Step(x_new, f_new, Tangent(x, fx, d), "followed the tangent to zero", best=x_new)
            x, fx = x_new, f_new


class Secant(Method):
    """The secant method: the line through the last two points.

    x+ = x1 - f(x1) (x1 - x0) / (f(x1) - f(x0))

    Strengths: no derivative, one evaluation per step, order (1+√5)/2 ≈
    1.618 (efficiency above Newton's). Weaknesses: no bracket; can diverge;
    breaks down when the two values are equal. From one start, the second
    point is x0 + 1e-4·max(1, |x0|).
    """

    name = "secant"
    title = "secant"
    nominal_order = _GOLDEN
    evals_per_step = 1
    n_starts = 2

    def steps(self, ev: Evaluator, start: Start) -> Iterator[Step]:
        (x0, x1), (f0, f1) = start.xs[-2:], start.fs[-2:]
        while True:
            if f1 == f0:
                raise Halt(
                    "flat-secant",
                    f"f has the same value at x = {x0} and x = {x1}: the secant line is horizontal.",
                    advice="Use two starts with different values of f, or a bracketing method.",
                    x=x1,
                )
            model = Chord(x0, f0, x1, f1)
            x2 = x1 - f1 * (x1 - x0) / (f1 - f0)
            _check_new(x2, "secant step", x1)
            f2 = ev.f(x2)
            yield Step(x2, f2, model, "followed the line through the last two points", best=x2)
            x0, f0, x1, f1 = x1, f1, x2, f2


class InverseQuadratic(Method):
    """Inverse quadratic interpolation: the sideways parabola x = p(y) through three points; x+ = p(0).

    Strengths: no derivative, one evaluation per step, order ≈ 1.839 (the
    real root of t³ = t² + t + 1). Weaknesses: no bracket; undefined when
    two of the three values are equal (it then takes a secant step and says
    so). From fewer than three starts, the others are x0 + δ and x0 + 2δ,
    δ = 1e-4·max(1, |x0|).
    """

    name = "iqi"
    title = "inverse quadratic interpolation"
    nominal_order = _TRIBONACCI
    evals_per_step = 1
    n_starts = 3

    def steps(self, ev: Evaluator, start: Start) -> Iterator[Step]:
        (x0, x1, x2), (f0, f1, f2) = start.xs[-3:], start.fs[-3:]
        while True:
            if f0 != f1 and f1 != f2 and f0 != f2:
                model: Any = InverseParabola((x0, x1, x2), (f0, f1, f2))
                x3 = model.predict()
                reason = "took the sideways parabola through the last three points at y = 0"
            elif f1 != f2:
                model = Chord(x1, f1, x2, f2)
                x3 = model.predict()
                reason = "two of the last three values of f are equal, so no parabola: used the line through the last two"
            else:
                raise Halt(
                    "flat-secant",
                    f"f has the same value at x = {x1} and x = {x2}: no interpolation is possible.",
                    advice="Use starts with different values of f, or a bracketing method.",
                    x=x2,
                )
            _check_new(x3, "interpolation step", x2)
            f3 = ev.f(x3)
            yield Step(x3, f3, model, reason, best=x3)
            x0, f0, x1, f1, x2, f2 = x1, f1, x2, f2, x3, f3


class Bisection(Method):
    """Bisection: halve a sign-changing bracket.

    Strengths: cannot fail on a continuous function with a sign change;
    the error bound halves each step (linear, rate 1/2). Weaknesses: slow
    (about 3.3 steps per decimal digit); needs a bracket; converges to a
    pole or jump just as happily as to a root (the diagnosis tells which).
    """

    name = "bisection"
    title = "bisection"
    nominal_order = 1.0
    evals_per_step = 1
    needs_bracket = True

    def steps(self, ev: Evaluator, start: Start) -> Iterator[Step]:
        (a, b), (fa, fb) = start.xs, start.fs
        while True:
            before = (a, b)
            m = midpoint(a, b)
            fm = ev.f(m)
            if same_sign(fm, fa):
                a, fa = m, fm
            else:
                b, fb = m, fm
            best = a if abs(fa) < abs(fb) else b
            yield Step(m, fm, Midpoint(*before), "halved the bracket", bracket=(a, b), bracket_before=before, best=best)


class _FalsePosition(Method):
    """Shared loop of regula falsi and its Illinois modification."""

    needs_bracket = True
    evals_per_step = 1
    nominal_order = 1.0
    _halve = False

    def steps(self, ev: Evaluator, start: Start) -> Iterator[Step]:
        (a, b), (fa, fb) = start.xs, start.fs
        # Keep the latest point as b; a is the retained end. ga is the
        # (possibly scaled) value used at a.
        ga = fa
        side = 0
        while True:
            before = (a, b) if a < b else (b, a)
            model = Chord(a, ga, b, fb)
            x = b - fb * (b - a) / (fb - ga)
            if not (min(a, b) <= x <= max(a, b)):
                x = midpoint(a, b)  # only by rounding; keep the bracket
            fx = ev.f(x)
            reason = "took the line through the bracket ends"
            if same_sign(fx, fb):
                # a is kept again
                b, fb = x, fx
                side += 1
                if self._halve and side >= 2:
                    ga = ga / 2
                    reason = "the same end was kept twice: halved f there (Illinois) for the next line"
            else:
                a, fa, ga = b, fb, fb
                b, fb = x, fx
                side = 1
            lo, hi = (a, b) if a < b else (b, a)
            best = a if abs(fa) < abs(fb) else b
            yield Step(x, fx, model, reason, bracket=(lo, hi), bracket_before=before, best=best)


class RegulaFalsi(_FalsePosition):
    """Regula falsi (false position): the chord between the bracket ends.

    Strengths: keeps a bracket; no derivative. Weaknesses: on a convex or
    concave function one end never moves, so convergence is linear and can
    be very slow (the Illinois modification cures this).
    """

    name = "regula-falsi"
    title = "regula falsi"


class Illinois(_FalsePosition):
    """Regula falsi with the Illinois modification (Dowell and Jarratt, 1971).

    When the same bracket end is kept twice in a row, its function value is
    halved for the next chord, which pulls the chord across the root.
    Strengths: keeps a bracket, no derivative, superlinear (order 3^(1/3) ≈
    1.442 per evaluation). Weaknesses: slower than interpolating hybrids.
    """

    name = "illinois"
    title = "Illinois (regula falsi)"
    nominal_order = 3 ** (1 / 3)
    _halve = True


class Steffensen(Method):
    """Steffensen's method: Newton with f' replaced by the slope from x to x + f(x).

    x+ = x - f(x)² / (f(x + f(x)) - f(x))

    Strengths: no derivative, quadratic at a simple root. Weaknesses: two
    evaluations per step; x + f(x) is far from x when |f| is large, so it
    needs a good start; sensitive to the scale of f.
    """

    name = "steffensen"
    title = "Steffensen"
    nominal_order = 2.0
    evals_per_step = 2

    def steps(self, ev: Evaluator, start: Start) -> Iterator[Step]:
        x, fx = start.xs[0], start.fs[0]
        while True:
            xs = x + fx
            _check_new(xs, "auxiliary point x + f(x)", x)
            g = ev.f(xs)
            if g == fx:
                raise Halt(
                    "flat-secant",
                    f"f(x + f(x)) = f(x) at x = {x}: the slope estimate is zero.",
                    advice="Start closer to the root or use a bracketing method.",
                    x=x,
                )
            x_new = x - fx * fx / (g - fx)
            _check_new(x_new, "Steffensen step", x)
            f_new = ev.f(x_new)
            yield Step(x_new, f_new, Chord(x, fx, xs, g), "followed the line from x to x + f(x)", best=x_new)
            x, fx = x_new, f_new


class Halley(Method):
    """Halley's method: follow the tangent hyperbola (matches f, f' and f'').

    x+ = x - 2 f f' / (2 f'² - f f'')

    Strengths: cubic convergence at a simple root. Weaknesses: needs f' and
    f'' (three evaluations per step, efficiency 3^(1/3) ≈ 1.442); only
    linear at a multiple root (rate (m-1)/(m+1)).
    """

    name = "halley"
    title = "Halley"
    nominal_order = 3.0
    evals_per_step = 3
    derivatives = 2

    def steps(self, ev: Evaluator, start: Start) -> Iterator[Step]:
        x, fx = start.xs[0], start.fs[0]
        while True:
            d1 = ev.df(x, fx)
            d2 = ev.d2f(x, fx)
            den = 2 * d1 * d1 - fx * d2
            if d1 == 0 or den == 0:
                raise Halt(
                    "zero-derivative",
                    f"Halley's denominator is zero at x = {x} (f' = {d1}, f'' = {d2}).",
                    advice="Start elsewhere, or use a bracketing method.",
                    x=x,
                )
            x_new = x - 2 * fx * d1 / den
            _check_new(x_new, "Halley step", x)
            f_new = ev.f(x_new)
            yield Step(
                x_new, f_new, TangentHyperbola(x, fx, d1, d2), "followed the tangent hyperbola to zero", best=x_new
            )
            x, fx = x_new, f_new


METHODS: dict[str, type[Method]] = {
    m.name: m for m in (Newton, Secant, InverseQuadratic, Bisection, RegulaFalsi, Illinois, Steffensen, Halley)
}


def register(method: type[Method]) -> type[Method]:
    """Add a method to ``METHODS`` (usable as a class decorator)."""
    METHODS[method.name] = method
    return method
