"""Several methods on one problem, compared per function evaluation (re-exported by ``_order``)."""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

from ..errors import ParameterError
from ._show import Showable

if TYPE_CHECKING:
    from ._order import OrderEstimate

__all__ = ["Comparison", "MethodResult", "compare_methods"]


@dataclass(frozen=True, repr=False)
class MethodResult:
    """One method in a :class:`Comparison`: its run, its order estimate, and the work it took.

    ``errors`` are |x_k − r| against the comparison's common root and ``evals`` the cumulative
    evaluations when each iterate became known; ``evals_to_tol`` is the first count at which
    the error was at most the comparison's ``tol`` (None if never).
    """

    method: str
    run: Any
    estimate: OrderEstimate
    evals_to_tol: int | None
    errors: tuple[float, ...]
    evals: tuple[int, ...]

    def __repr__(self) -> str:
        return f"<MethodResult {self.method}: {self.estimate.label_text}, {self.evals_to_tol} evaluations to tol>"


@dataclass(frozen=True, repr=False)
class Comparison(Showable):
    """Several methods on one problem, compared at equal work (function evaluations, not iterations)."""

    problem: str
    root: float | None
    reference: str
    tol: float
    results: tuple[MethodResult, ...]
    notes: tuple[str, ...] = ()

    def fastest(self) -> MethodResult | None:
        """The method that reached ``tol`` with the fewest evaluations (None if none did)."""
        done = [r for r in self.results if r.evals_to_tol is not None]
        return min(done, key=lambda r: (r.evals_to_tol, r.method)) if done else None

    def __repr__(self) -> str:
        best = self.fastest()
        tail = f"fastest to {self.tol:g}: {best.method} ({best.evals_to_tol} evaluations)" if best else "none reached tol"
        return f"<Comparison of {len(self.results)} methods on {self.problem}: {tail}>"


def compare_methods(
    f: Any,
    methods: Sequence[str],
    *,
    start: float | None = None,
    bracket: Sequence[float] | None = None,
    root: float | None = None,
    fprime: Any = None,
    fprime2: Any = None,
    params: dict[str, float] | None = None,
    tol: float = 1e-10,
    max_evals: int = 100,
    replay: bool = True,
    digits: int = 60,
) -> Comparison:
    """Run several methods on one problem and compare them per function evaluation.

    Open methods start at ``start`` (default: the middle of ``bracket``); bracketing methods
    use ``bracket``. Every run is measured against one common root: ``root`` if given, else a
    high-precision root confirmed by a second method (see :func:`reference_root`), else the
    most accurate run's best iterate.

    Returns
    -------
    Comparison
        Per method: the run, its :class:`OrderEstimate` (with the efficiency index
        order^(1/evaluations per step)), and the evaluations it needed to reach ``tol``.

    Raises
    ------
    ParameterError
        No methods, an unknown method, no start and no bracket, or a bad ``tol``.
    BracketError
        A bracketing method was given a bracket without a sign change.

    Examples
    --------
    >>> c = compare_methods("cos(x) - x", ["newton", "secant", "bisection"], bracket=(0.0, 1.0), replay=False)
    >>> c.fastest().method, [r.evals_to_tol for r in c.results]
    ('secant', [9, 7, 32])
    """
    from ._methods import METHODS
    from ._order import estimate_order
    from ._problem import as_problem
    from ._refchoice import _finite_floats
    from ._reference import ReferenceRoot, reference_root
    from ._session import solve

    owner = "compare_methods"
    if isinstance(methods, str) or not methods or any(m not in METHODS for m in methods):
        raise ParameterError.expected("methods", owner, f"a non-empty list of names from {', '.join(sorted(METHODS))}",
                                      methods)
    if isinstance(tol, bool) or not isinstance(tol, (int, float)) or not tol > 0:
        raise ParameterError.expected("tol", owner, "a float > 0", tol)
    if start is None and bracket is None:
        raise ParameterError(f"{owner} needs start= (open methods) or bracket= (all methods); got neither.")
    problem = as_problem(f, fprime=fprime, fprime2=fprime2, params=params)
    x0 = start if start is not None else (float(bracket[0]) + float(bracket[1])) / 2  # type: ignore[index]
    runs = []
    for name in methods:
        if METHODS[name].needs_bracket:
            if bracket is None:
                raise ParameterError(f"{name} needs a bracket; pass bracket=(a, b) to {owner}.")
            runs.append(solve(problem, name, bracket=bracket, max_evals=max_evals))
        else:
            runs.append(solve(problem, name, start=x0, max_evals=max_evals))
    notes: list[str] = []
    good = [r for r in runs if _finite_floats([r.root])]
    best = min(good, key=lambda r: (not r.converged, abs(float(r.values[-1])) if len(r.values) else math.inf),
               default=None)
    common: Any = root
    reference = "given root"
    if common is None and best is not None:
        try:
            cand = reference_root(problem, float(best.root), digits=digits)
        except ParameterError as exc:
            notes.append(f"no high-precision root: {exc}")
            cand = None
        if cand is not None and cand.confirmed:
            common, reference = cand, "high-precision root"
        else:
            common, reference = float(best.root), "best iterate"
            notes.append(f"errors are measured against the best iterate of {best.method}, {float(best.root):.17g}")
    r_float = float(common.value) if isinstance(common, ReferenceRoot) else (None if common is None else float(common))
    results = []
    for run in runs:
        est = estimate_order(run, root=common if reference != "best iterate" else None, replay=replay, digits=digits)
        errs = tuple(abs(float(x) - r_float) for x in run.iterates) if r_float is not None else est.errors
        evals = tuple(int(v) for v in run.evals_at_iterates)
        hit = next((ev for e, ev in zip(errs, evals) if e <= tol), None)
        results.append(MethodResult(run.method, run, est, hit, errs, evals))
    label = problem.label
    return Comparison(label, r_float, reference, float(tol), tuple(results), tuple(notes))
