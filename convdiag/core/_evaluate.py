"""The evaluator a method calls: records, checks values, enforces budgets, supplies derivatives.

Every call into the user's code goes through :class:`Evaluator`. A value
that is not a usable number, an exception, or an exhausted budget raises
:class:`~convdiag.core._step.Halt`, which the driver turns into a stop
reason while keeping everything computed so far.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from time import perf_counter
from typing import Any, Literal

from ._problem import Problem
from ._record import D2F, DF, FD, EvalLog, F, _Raised, build_log, classify_value
from ._step import Halt

__all__ = ["Arithmetic", "Evaluator"]

Arithmetic = Literal["real", "complex", "mpmath"]

EPS = 2.220446049250313e-16
CSTEP_H = 1e-20

_WHAT = {F: "f", DF: "f'", D2F: "f''", FD: "f"}

_ADVICE_DOMAIN = (
    "Check the function's domain near this point, start inside the region where it is "
    "defined, or use a bracketing method on a bracket where f is defined throughout."
)


class Evaluator:
    """Calls the problem's functions for one run.

    Parameters
    ----------
    problem : Problem
    max_evals : int or None
        Evaluations allowed (every call into user code counts, derivatives too).
    max_time : float or None
        Seconds of wall time allowed, checked before each evaluation.
    arithmetic : "real", "complex" or "mpmath"
        What kind of numbers flow through the method.
    """

    def __init__(
        self,
        problem: Problem,
        *,
        max_evals: int | None = None,
        max_time: float | None = None,
        arithmetic: Arithmetic = "real",
    ) -> None:
        self.problem = problem
        self.max_evals = max_evals
        self.max_time = max_time
        self.arithmetic = arithmetic
        self.rows: list[tuple[int, Any, Any, float, float]] = []
        self.t_origin = perf_counter()
        self.count = 0
        self.derivative_source: str = problem.derivative_source
        self.second_derivative_source: str = problem.second_derivative_source
        self.notes: list[str] = []
        if arithmetic == "mpmath":
            f, d1, d2 = problem.mpmath_functions()
            self._f, self._d1, self._d2 = f, d1, d2
            if d1 is None:
                self.derivative_source = "central-difference"
            if d2 is None:
                self.second_derivative_source = "central-difference"
        else:
            self._f, self._d1, self._d2 = problem.f, problem.fprime, problem.fprime2

    # -- bookkeeping --------------------------------------------------------
    @property
    def elapsed(self) -> float:
        return perf_counter() - self.t_origin

    def log(self, source: str = "run") -> EvalLog:
        return build_log(self.rows, self.t_origin, source=source)

    def _budget(self) -> None:
        if self.max_evals is not None and self.count >= self.max_evals:
            raise Halt(
                "max-evals",
                f"The evaluation budget ran out after {self.count} evaluations.",
                advice="Raise max_evals, or see the diagnosis for why convergence is slow.",
            )
        if self.max_time is not None and perf_counter() - self.t_origin > self.max_time:
            raise Halt(
                "max-time",
                f"The time budget of {self.max_time:g} s ran out after {self.count} evaluations.",
                advice="Raise max_time, or see the diagnosis for why convergence is slow.",
            )

    def _call(self, fn: Callable[[Any], Any], x: Any, kind: int) -> Any:
        self._budget()
        self.count += 1
        t0 = perf_counter()
        try:
            y = fn(x)
        except Exception as exc:  # the user's code failed; KeyboardInterrupt passes through
            self.rows.append((kind, x, _Raised(exc), t0, perf_counter()))
            raise Halt(
                "function-raised",
                f"{_WHAT[kind]} raised {type(exc).__name__}: {exc} at evaluation {self.count} "
                f"(x = {_show(x)}).",
                advice=_ADVICE_DOMAIN,
                x=x,
                evaluation=self.count,
            ) from exc
        except BaseException as exc:  # KeyboardInterrupt, SystemExit: record, then let it through
            self.rows.append((kind, x, _Raised(exc), t0, perf_counter()))
            raise
        self.rows.append((kind, x, y, t0, perf_counter()))
        return self._check(y, x, kind)

    def _check(self, y: Any, x: Any, kind: int) -> Any:
        n = self.count
        what = _WHAT[kind]
        if self.arithmetic == "mpmath":
            import mpmath

            if isinstance(y, (mpmath.mpf, mpmath.mpc)):
                if isinstance(y, mpmath.mpc):
                    if y.imag != 0:
                        raise self._bad(what, x, n, "returned a complex number", "bad-value")
                    y = y.real
                if not mpmath.isfinite(y):
                    raise self._bad(what, x, n, f"returned {y}", "nonfinite-value")
                return y
            v, status, note = classify_value(y)
            raise self._bad(
                what,
                x,
                n,
                f"{note or 'returned a float'} for a high-precision argument; it does not compute in mpmath",
                "bad-value",
            )
        if self.arithmetic == "complex":
            try:
                z = complex(y)
            except Exception:  # noqa: BLE001 - whatever the object raises, it is not a number
                _, _, note = classify_value(y)
                raise self._bad(what, x, n, note or f"returned {type(y).__name__}", "bad-value") from None
            if not (math.isfinite(z.real) and math.isfinite(z.imag)):
                raise self._bad(what, x, n, f"returned {z}", "nonfinite-value")
            from ._varith import NumpyDivComplex  # divides as numpy does, so solve_many's lanes match bit for bit

            return NumpyDivComplex(z)
        v, status, note = classify_value(y)
        if status == "ok":
            return v
        reason = "nonfinite-value" if status in ("nan", "inf") else "bad-value"
        raise self._bad(what, x, n, note, reason)

    def _bad(self, what: str, x: Any, n: int, note: str, reason: str) -> Halt:
        if reason == "nonfinite-value":
            advice = (
                "f is undefined or overflows here. "
                + _ADVICE_DOMAIN
                + " If the iterates grew large, the method diverged: see the diagnosis."
            )
        else:
            advice = "The function must return one real number (a float) for a real x; check its return statement."
        return Halt(reason, f"{what} {note} at evaluation {n} (x = {_show(x)}).", advice=advice, x=x, evaluation=n)

    # -- what methods call --------------------------------------------------
    def f(self, x: Any) -> Any:
        """f(x), recorded and checked."""
        return self._call(self._f, x, F)

    def df(self, x: Any, fx: Any = None) -> Any:
        """f'(x) from the problem's derivative source (decided on first use)."""
        if self._d1 is not None:
            return self._call(self._d1, x, DF)
        if self.derivative_source == "auto":
            self.derivative_source, value = self._choose_derivative(x, fx)
            if value is not None:
                return value
        if self.derivative_source == "complex-step":
            return self._complex_step(x)
        return self._central(x)

    def d2f(self, x: Any, fx: Any = None) -> Any:
        """f''(x): given or symbolic when available, else a three-point difference."""
        if self._d2 is not None:
            return self._call(self._d2, x, D2F)
        self.second_derivative_source = "central-difference"
        if fx is None:
            fx = self.f(x)
        h = self._h(x, 0.25)
        fp = self._call(self._f, x + h, FD)
        fm = self._call(self._f, x - h, FD)
        return (fp - 2 * fx + fm) / (h * h)

    # -- derivative sources -------------------------------------------------
    def _h(self, x: Any, power: float) -> Any:
        if self.arithmetic == "mpmath":
            import mpmath

            return mpmath.mpf(10) ** (-int(mpmath.mp.dps * power)) * max(1, abs(x))
        return (EPS**power) * max(1.0, abs(x))

    def _central(self, x: Any) -> Any:
        h = self._h(x, 1 / 3)
        fp = self._call(self._f, x + h, FD)
        fm = self._call(self._f, x - h, FD)
        return (fp - fm) / (2 * h)

    def _complex_step(self, x: Any) -> float:
        self._budget()
        self.count += 1
        t0 = perf_counter()
        try:
            y = self._f(complex(x, CSTEP_H))
        except Exception as exc:
            self.rows.append((DF, x, _Raised(exc), t0, perf_counter()))
            raise Halt(
                "function-raised",
                f"f raised {type(exc).__name__}: {exc} on a complex-step derivative at evaluation "
                f"{self.count} (x = {_show(x)}).",
                advice="Pass fprime=, or make the function accept complex numbers.",
                x=x,
                evaluation=self.count,
            ) from exc
        try:
            d = complex(y).imag / CSTEP_H
        except Exception:  # noqa: BLE001 - f returned something that is not a number
            self.rows.append((DF, x, y, t0, perf_counter()))
            _, _, note = classify_value(y)
            raise self._bad("f'", x, self.count, note or f"returned {type(y).__name__}", "bad-value") from None
        self.rows.append((DF, x, d, t0, perf_counter()))
        return self._check(d, x, DF)  # type: ignore[no-any-return]

    def _choose_derivative(self, x: Any, fx: Any) -> tuple[str, Any]:
        """Try the complex step once and confirm it against a central difference.

        Returns the source to use from now on and f'(x) if it was computed.
        """
        if self.arithmetic != "real":
            return "central-difference", None
        self._budget()
        self.count += 1
        t0 = perf_counter()
        try:
            cs = complex(self._f(complex(x, CSTEP_H))).imag / CSTEP_H
        except Exception as exc:  # noqa: BLE001 - the function does not take complex input
            self.rows.append((DF, complex(x, CSTEP_H), _Raised(exc), t0, perf_counter()))
            self.notes.append(
                f"f does not accept complex input ({type(exc).__name__}); derivatives by central difference"
            )
            return "central-difference", None
        self.rows.append((DF, x, cs, t0, perf_counter()))
        if not math.isfinite(cs):
            self.notes.append("the complex step gave a non-finite derivative; derivatives by central difference")
            return "central-difference", None
        cd = self._central(x)
        scale = max(abs(cs), abs(cd))
        fscale = abs(fx) if fx is not None else 0.0
        if abs(cs - cd) <= 1e-4 * scale + 1e-6 * fscale / self._h(x, 1 / 3) or scale == 0.0:
            self.notes.append("derivatives by complex step (checked once against a central difference)")
            return "complex-step", cs
        self.notes.append(
            f"complex-step derivative {cs:.6g} disagreed with a central difference {cd:.6g} at "
            f"x = {_show(x)} (is the function complex-analytic? abs() and comparisons are not); "
            "derivatives by central difference"
        )
        return "central-difference", cd



def _show(x: Any) -> str:
    try:
        return f"{float(x):.17g}"
    except (TypeError, ValueError, OverflowError):
        return str(x)
