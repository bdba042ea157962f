"""f in mpmath arithmetic, checked, and the replay of a double-precision run at high precision.

:func:`high_precision` gives f (and its derivatives) in mpmath arithmetic:
expression strings and sympy expressions translate exactly; a Python callable
is tried and checked (f(x + δ) − f(x) must equal f'(x)·δ for δ = 1e-30·|x|,
which fails when it computes in floats inside). :func:`replay` runs the same
method from the same starts at ``digits`` digits. Both are re-exported by
``_reference``.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import TYPE_CHECKING, Any

from ..errors import ParameterError
from ._problem import Problem, as_problem

if TYPE_CHECKING:
    from ._run import Run

__all__ = ["HighPrecision", "high_precision", "replay"]


class HighPrecision:
    """f and its derivatives in mpmath arithmetic (at the caller's ``mpmath.workdps``).

    ``kind`` is ``"expression"`` (exact symbolic derivatives) or ``"callable"``
    (derivatives by ``mpmath.diff``). A derivative the user supplied is never used
    here: a wrong f' would corrupt the reference root.
    """

    def __init__(self, f: Callable[[Any], Any], kind: str, *, expression: Any = None,
                 params: dict[str, float] | None = None) -> None:
        self.f = f
        self.kind = kind
        self._expr = expression
        self._params = dict(params or {})
        self._cache: dict[int, Callable[[Any], Any]] = {}

    def d(self, k: int, x: Any) -> Any:
        """The k-th derivative at x (k = 0 is f itself)."""
        if k == 0:
            return self.f(x)
        if self._expr is not None:
            if k not in self._cache:
                e = self._expr
                for _ in range(k):
                    e = e.diff(1)
                self._cache[k] = e.mpmath(self._params)
            return self._cache[k](x)
        import mpmath

        return mpmath.diff(self.f, x, k)


def _precision_problem(fn: Callable[[Any], Any], x0: float, what: str = "f") -> str:
    """Why ``fn`` does not compute in mpmath arithmetic near x0 ('' when it does)."""
    import mpmath

    s = max(1.0, abs(x0))
    best = ""
    with mpmath.workdps(60):
        for frac in (1 / 7, -3 / 11, 5 / 13):
            x = mpmath.mpf(x0) + mpmath.mpf(frac) * mpmath.mpf("1e-3") * s
            try:
                y0 = fn(x)
                if not isinstance(y0, (mpmath.mpf, mpmath.mpc)):
                    return f"{what} returned {type(y0).__name__} for an mpmath argument, not an mpmath number"
                h = mpmath.mpf("1e-12") * s
                slope = (fn(x + h) - fn(x - h)) / (2 * h)
                delta = mpmath.mpf("1e-30") * s
                change = fn(x + delta) - y0
            except Exception as exc:  # noqa: BLE001  (the user's code refuses mpmath numbers: that is the finding)
                return f"{what} raised {type(exc).__name__} for an mpmath argument ({str(exc)[:80]})"
            expected = slope * delta
            if expected == 0:
                best = best or f"{what} looks constant near {x0:.6g}, so its precision cannot be checked"
                continue
            if abs(change - expected) <= mpmath.mpf("1e-6") * abs(expected):
                return ""
            return (
                f"{what}(x + δ) − {what}(x) = {mpmath.nstr(change, 3)} for δ = {mpmath.nstr(delta, 2)} at x = "
                f"{float(x):.6g}, but {what}'(x)·δ = {mpmath.nstr(expected, 3)}: it computes in floats inside "
                "(math.* or numpy) and would silently lose the extra digits"
            )
    return best


def high_precision(source: Any, *, near: float = 1.0) -> HighPrecision:
    """f in mpmath arithmetic for a Problem, expression or callable, checked near ``near``.

    Raises
    ------
    ParameterError
        The function cannot be evaluated in high precision (the message says why).
    """
    problem = source if isinstance(source, Problem) else as_problem(source)
    if problem.expression is not None:
        f = problem.expression.mpmath(problem.params)
        return HighPrecision(f, "expression", expression=problem.expression, params=problem.params)
    why = _precision_problem(problem.f, near)
    if why:
        raise ParameterError(
            f"{problem.label} cannot be evaluated in high precision: {why}. Write it as an expression string, "
            "or with mpmath functions (mpmath.cos, mpmath.exp), to get a high-precision reference."
        )
    return HighPrecision(problem.f, "callable")  # derivatives by mpmath.diff, never the user's (it may be wrong)

class _HighPrecisionProblem(Problem):
    """A callable problem whose mpmath functions are the checked callable and mpmath.diff."""

    _mp: tuple[Any, Any, Any] = (None, None, None)

    def mpmath_functions(self) -> tuple[Callable[[Any], Any], Callable[[Any], Any] | None, Callable[[Any], Any] | None]:
        return self._mp


def replay(run: Run, *, digits: int = 60, max_evals: int | None = None, max_steps: int | None = None) -> Run:
    """Run the same method from the same starts (or bracket) in ``digits``-digit arithmetic.

    The budget is ``max_evals`` (default 4 × the run's evaluations, at least 200, at most
    3000) and ``max_steps`` (default none: the replay goes on until its own tolerance,
    4·10^-digits, is met).

    Raises
    ------
    ParameterError
        The run has no problem attached, is not a double-precision real run, or its
        function cannot be evaluated in high precision.

    Examples
    --------
    >>> from convdiag import solve
    >>> run = solve("x**2 - 2", "halley", start=1.0)
    >>> hp = replay(run, digits=60)
    >>> hp.arithmetic, len(hp.steps) > len(run.steps)
    ('mpmath', True)
    """
    from ._methods import METHODS
    from ._session import solve

    problem = run.source
    if not isinstance(problem, Problem):
        raise ParameterError("This run carries no problem (run.source is None), so it cannot be replayed.")
    if run.arithmetic != "real":
        raise ParameterError(f"Only double-precision real runs are replayed; this one is {run.arithmetic}.")
    if run.method not in METHODS:
        raise ParameterError(f"The method {run.method!r} is not registered, so it cannot be replayed.")
    near = float(run.iterates[0])
    hp = high_precision(problem, near=near)
    needs = METHODS[run.method].derivatives
    # The replay must be the same iteration: derivatives the user supplied are used as they are.
    user = {1: problem.fprime if needs >= 1 and run.derivative_source == "user" else None,
            2: problem.fprime2 if needs >= 2 and run.second_derivative_source == "user" else None}
    for k, fn in user.items():
        why = _precision_problem(fn, near, "f'" if k == 1 else "f''") if fn is not None else ""
        if why:
            raise ParameterError(
                f"The run used your {'f' + chr(39) * k}, which does not compute in high precision ({why}); "
                "replaying with an exact derivative instead would be a different iteration."
            )
    target: Problem = problem
    if hp.kind == "callable" or any(fn is not None for fn in user.values()):
        target = _HighPrecisionProblem(f=problem.f, label=problem.label, params=dict(problem.params))
        target._mp = (
            hp.f,
            user[1] or (lambda x: hp.d(1, x)),
            user[2] or (lambda x: hp.d(2, x)),
        )
    budget = max_evals if max_evals is not None else min(max(4 * run.evaluations, 200), 3000)
    where: dict[str, Any] = (
        {"bracket": run.bracket} if METHODS[run.method].needs_bracket else {"start": list(run.starts)}
    )
    return solve(target, run.method, digits=digits, max_evals=budget, max_steps=max_steps, max_time=30.0, **where)
