"""Two Newton variants that stay quadratic at a root of multiplicity m > 1.

Plain Newton converges only linearly at a multiple root, with rate (m − 1)/m
(shared/REFERENCES.md §1). The diagnosis (``core._diagnose``) recommends one
of these two cures when it finds a multiple root:

``newton-m`` (:class:`ModifiedNewton`)
    x+ = x − m·f(x)/f'(x) with the multiplicity m as a setting. It is
    Newton's step for the model f ≈ c·(x − r)^m, so it is quadratic when m is
    the true multiplicity (error constant f^(m+1)(r)/(m(m+1) f^(m)(r))).
``newton-ratio`` (:class:`NewtonRatio`)
    Newton's method on u = f/f', which has a simple root wherever f has a
    root of any multiplicity: x+ = x − f f'/(f'² − f f''). Quadratic without
    knowing m, at the price of f'' (three evaluations per step).

Both are ordinary steppable methods (registered under those names), written
with plain arithmetic so they run on floats, complex numbers and mpmath
numbers. Textbook source: Ralston and Rabinowitz, *A First Course in
Numerical Analysis* (1978), §8.9 (from memory).
"""

from __future__ import annotations

import numbers
from collections.abc import Iterator
from typing import Any

from ..errors import ParameterError
from ._evaluate import Evaluator
from ._methods import register
from ._models import LocalModel, PowerLaw, Tangent
from ._step import Halt, Method, Start, Step

__all__ = ["ModifiedNewton", "NewtonRatio"]


def _finite(v: Any) -> bool:
    try:
        return bool(abs(v) < float("inf"))
    except TypeError:
        return False


def _power_model(x: Any, fx: Any, r: Any, m: Any, slope: Any) -> LocalModel:
    """The power law f ≈ sign·s(x − r)·(scale·|x − r|)^m through (x, f(x)) with root r.

    Falls back to the line through (x, f(x)) that meets zero at r when the numbers cannot be
    ordered (complex runs); both models reproduce the step.
    """
    try:
        d = x - r
        sign = (1 if fx > 0 else -1) * (1 if d > 0 else -1)
        scale = abs(fx) ** (1 / m) / abs(d)
        return PowerLaw(r, m, scale, sign, 0.0)
    except (TypeError, ZeroDivisionError, ValueError, OverflowError, ArithmeticError):
        return Tangent(x, fx, slope)


def _check_next(x_new: Any, x: Any, what: str) -> None:
    if not _finite(x_new):
        raise Halt(
            "iterate-overflow",
            f"The {what} from x = {x} produced a non-finite iterate ({x_new}).",
            advice="Start closer to the root, or use a bracketing method (hybrid).",
            x=x,
        )


@register
class ModifiedNewton(Method):
    """Newton's step times the multiplicity: x+ = x − m·f(x)/f'(x).

    Parameters
    ----------
    multiplicity : int >= 1
        The multiplicity m of the root sought (1 gives plain Newton). The
        diagnosis estimates it from the linear rate (m − 1)/m of plain Newton
        and from a high-precision look at u = f/f'.

    Strengths: quadratic at a root of multiplicity exactly m, two evaluations
    per step, and it tolerates the tiny f' near such a root. Weaknesses: m
    must be known; with m too large it overshoots (at a simple root, m = 2
    makes it jump across the root and back without converging), with m too
    small it stays linear.

    Examples
    --------
    >>> from convdiag import solve
    >>> run = solve("(x - 1)**3*exp(x)", ModifiedNewton(multiplicity=3), start=2.0)
    >>> run.converged, run.evaluations < 20, abs(run.root - 1) < 1e-7
    (True, True, True)
    """

    name = "newton-m"
    title = "modified Newton (x − m·f/f')"
    nominal_order = 2.0
    evals_per_step = 2
    derivatives = 1
    multiplicity: int

    def __init__(self, multiplicity: int = 1) -> None:
        if (
            not isinstance(multiplicity, numbers.Integral)
            or isinstance(multiplicity, bool)
            or multiplicity < 1
        ):
            raise ParameterError.expected("multiplicity", "newton-m", "an int >= 1", multiplicity)
        self.multiplicity = int(multiplicity)

    def steps(self, ev: Evaluator, start: Start) -> Iterator[Step]:
        m = self.multiplicity
        x, fx = start.xs[0], start.fs[0]
        while True:
            d = ev.df(x, fx)
            if d == 0:
                raise Halt(
                    "zero-derivative",
                    f"f'(x) = 0 at x = {x}: the modified Newton step x − {m}·f/f' is undefined.",
                    advice="Start elsewhere, or use a bracketing method (hybrid) if f changes sign.",
                    x=x,
                )
            x_new = x - m * fx / d
            _check_next(x_new, x, "modified Newton step")
            model = _power_model(x, fx, x_new, m, d / m)
            f_new = ev.f(x_new)
            yield Step(
                x_new, f_new, model,
                f"followed the power law of multiplicity {m} through the point (x − {m}·f/f')",
                best=x_new,
            )
            x, fx = x_new, f_new

    def __repr__(self) -> str:
        return f"ModifiedNewton(multiplicity={self.multiplicity})"


@register
class NewtonRatio(Method):
    """Newton's method on u = f/f': x+ = x − f f'/(f'² − f f'').

    u has a simple root wherever f has a root of any multiplicity, so the
    iteration is quadratic without knowing m. In terms of f, the step follows
    the power law c·(x − r)^μ that matches f, f' and f'' at x, with
    μ = f'²/(f'² − f f'') (μ → m near a root of multiplicity m).

    Strengths: quadratic at roots of any multiplicity; m is not needed (μ
    estimates it as it goes). Weaknesses: needs f'' (three evaluations per
    step, efficiency 2^(1/3) ≈ 1.26, below Newton's √2 at a simple root); u has
    poles where f' = 0 and f ≠ 0, so a start beyond a stationary point of f can
    go astray; the difference f'² − f f'' can lose digits.

    Examples
    --------
    >>> from convdiag import solve
    >>> run = solve("(x - 1)**4*exp(x)", NewtonRatio(), start=2.0)
    >>> run.converged, abs(run.root - 1) < 1e-7
    (True, True)
    """

    name = "newton-ratio"
    title = "Newton on f/f'"
    nominal_order = 2.0
    evals_per_step = 3
    derivatives = 2

    def steps(self, ev: Evaluator, start: Start) -> Iterator[Step]:
        x, fx = start.xs[0], start.fs[0]
        while True:
            d1 = ev.df(x, fx)
            d2 = ev.d2f(x, fx)
            den = d1 * d1 - fx * d2
            if den == 0 or d1 == 0:
                raise Halt(
                    "zero-derivative",
                    f"u'(x) = (f'² − f f'')/f'² is zero or undefined at x = {x} (f' = {d1}, f'' = {d2}).",
                    advice="Start elsewhere, or use a bracketing method (hybrid) if f changes sign.",
                    x=x,
                )
            x_new = x - fx * d1 / den
            _check_next(x_new, x, "step of Newton on f/f'")
            mu = d1 * d1 / den
            model = _power_model(x, fx, x_new, mu, den / d1)
            f_new = ev.f(x_new)
            yield Step(
                x_new, f_new, model,
                "followed Newton's tangent of u = f/f' to zero (a power law fitted to f, f', f'')",
                best=x_new,
            )
            x, fx = x_new, f_new
