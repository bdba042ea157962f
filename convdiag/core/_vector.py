"""Open methods run on many lanes at once with numpy, each lane's outcome classified.

:func:`solve_many` runs Newton, secant, Steffensen or Halley from an array of
starts (real or complex), with per-lane parameters, and returns :class:`Lanes`:
for each lane the root (or the best iterate of a failed lane), the
evaluations it used, the driver's stop reason and an outcome class (see
:data:`OUTCOMES`). Lane by lane, the evaluations, the checks, the stopping
rules and the arithmetic are those of :func:`convdiag.solve` (complex
quotients as numpy computes them, products and moduli as Python does: see
:mod:`~convdiag.core._varith`), so each lane equals the scalar run to the last
bit whenever the function gives the same value for an array element as for a
scalar.

The pieces: :mod:`~convdiag.core._vfunctions` (the user's functions on
lanes), :mod:`~convdiag.core._varith` (the arithmetic),
:mod:`~convdiag.core._vengine` (stepping blocks of lanes) and
:mod:`~convdiag.core._outcomes` (outcome classes). Lanes that fail are run
once more keeping a small rolling record per lane, which
:func:`~convdiag.core._outcomes.classify` turns into an outcome class.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any, Literal

import numpy as np
from numpy.typing import NDArray

from ..errors import ParameterError
from ._outcomes import CONVERGED_CODES, OUTCOME_MEANING, OUTCOMES, REASONS, O, classify, classify_run, modulus
from ._show import Showable
from ._vengine import Engine
from ._vfunctions import lane_functions

__all__ = ["OUTCOMES", "OUTCOME_MEANING", "REASONS", "VECTOR_METHODS", "Lanes", "classify_run", "solve_many"]

VectorMethod = Literal["newton", "secant", "steffensen", "halley"]
VECTOR_METHODS: dict[str, int] = {"newton": 1, "secant": 2, "steffensen": 1, "halley": 1}  # name -> starts
Arr = NDArray[Any]
_functions = lane_functions  # the former name, for importers of this module


# -- the result ------------------------------------------------------------------------------------
@dataclass(frozen=True, repr=False)
class Lanes(Showable):
    """One method run from many starts: per-lane root, evaluations, stop reason and outcome.

    Attributes
    ----------
    method : the method's name.
    starts : the (first) start of each lane, in the shape the starts were given.
    x : the root where the lane converged, else its best iterate (smallest |f|), as ``Run.root``.
    fx : f at ``x``.
    evals, steps : evaluations used (derivatives count) and steps taken, per lane.
    reason_code, outcome_code : indices into :data:`REASONS` and :data:`OUTCOMES`.
    derivative_source : "user", "symbolic", "auto" (complex step checked once per lane against a
        central difference, as the scalar driver does) or "central-difference".
    notes : anything worth knowing about the run.
    """

    method: str
    starts: Arr
    x: Arr
    fx: Arr
    evals: NDArray[np.int32]
    steps: NDArray[np.int32]
    reason_code: NDArray[np.uint8]
    outcome_code: NDArray[np.uint8]
    derivative_source: str = "user"
    notes: tuple[str, ...] = ()

    @property
    def outcome(self) -> NDArray[np.str_]:
        """Outcome names per lane."""
        return np.asarray(OUTCOMES)[self.outcome_code]

    @property
    def stop_reason(self) -> NDArray[np.str_]:
        """Stop reasons per lane (those of :func:`convdiag.solve`)."""
        return np.asarray(REASONS)[self.reason_code]

    @property
    def converged(self) -> NDArray[np.bool_]:
        out: NDArray[np.bool_] = self.outcome_code == O["converged"]
        return out

    @property
    def size(self) -> int:
        return int(self.x.size)

    def counts(self) -> dict[str, int]:
        """Lanes per outcome, in the order of :data:`OUTCOMES` (outcomes with no lane left out)."""
        c = np.bincount(self.outcome_code.ravel(), minlength=len(OUTCOMES))
        return {o: int(k) for o, k in zip(OUTCOMES, c) if k}

    def __repr__(self) -> str:
        parts = ", ".join(f"{k} {v}" for k, v in self.counts().items())
        return f"<Lanes {self.method}: {self.size} lanes, {parts}>"


def solve_many(
    f: Any,
    method: VectorMethod = "newton",
    *,
    starts: Any,
    fprime: Any = None,
    fprime2: Any = None,
    params: Mapping[str, Any] | None = None,
    xtol: float = 0.0,
    rtol: float | None = None,
    ftol: float = 0.0,
    max_evals: int = 100,
    max_steps: int | None = None,
    variable: str = "x",
    vectorized: bool | None = None,
) -> Lanes:
    """Run an open method from every start at once and classify each lane's outcome.

    Parameters
    ----------
    f : callable, str or sympy expression
        ``f(x, **params)`` evaluated on arrays (elementwise numpy code), or
        expression text. A function that does not take arrays is called lane
        by lane (slow but exact). Lanes run in blocks of a few tens of
        thousands, so ``f`` is called on arrays of at most that size.
    method : {"newton", "secant", "steffensen", "halley"}
    starts : array_like, real or complex, any shape
        One start per lane. Secant's second start is added as the driver
        does: x0 + 1e-4·max(1, |x0|). Complex starts run in complex arithmetic.
    fprime, fprime2 : callable or str, optional
        Derivatives taking arrays. Otherwise symbolic (expressions), or, for
        callables, a complex step checked once per lane against a central
        difference (central differences in complex arithmetic), as
        :func:`convdiag.solve` does.
    params : mapping of str to float or array_like, optional
        Model parameters, broadcast against ``starts``.
    xtol, rtol, ftol, max_evals, max_steps
        The stopping rules and budgets of :func:`convdiag.solve`, per lane.
    variable : str
        The unknown's name in expression text.
    vectorized : bool, optional
        False calls ``f`` lane by lane; None tries arrays first.

    Returns
    -------
    Lanes
        In the shape of ``starts``. Lane by lane equal to ``convdiag.solve``
        (root to the last bit, evaluation count, stop reason) when ``f`` gives
        the same value for an array element as for a scalar.

    Raises
    ------
    ParameterError
        An unknown method, a bad tolerance or budget, parameters that do not broadcast.

    Examples
    --------
    >>> import numpy as np
    >>> lanes = solve_many("x**3 - 2*x + 2", "newton", starts=np.array([0.0, -2.0, 0.5]), max_evals=40)
    >>> lanes.outcome.tolist()
    ['cycle', 'converged', 'converged']
    >>> float(lanes.x[1])
    -1.7692923542386314
    """
    from ._session import EPS as _EPS
    from ._session import _validate_settings

    owner = "solve_many"
    if method not in VECTOR_METHODS:
        raise ParameterError.expected("method", owner, f"one of {', '.join(VECTOR_METHODS)}", method)
    settings = _validate_settings(xtol, 4 * _EPS if rtol is None else rtol, ftol, max_evals, None, max_steps, owner)
    x0 = np.asarray(starts)
    if x0.dtype.kind not in "fciub":
        raise ParameterError.expected("starts", owner, "an array of real or complex numbers", starts)
    cplx = x0.dtype.kind == "c"
    shape = x0.shape
    flat = np.ascontiguousarray(x0, dtype=np.complex128 if cplx else np.float64).ravel()
    if not np.all(np.isfinite(flat)):
        raise ParameterError.expected("starts", owner, "finite numbers", flat[~np.isfinite(flat)][:3].tolist())
    p = _broadcast_params(params or {}, shape, owner)
    fns = lane_functions(f, fprime, fprime2, list(p), variable, owner)
    if vectorized is False:
        fns.vectorized = False
    lane_starts = [flat]
    if VECTOR_METHODS[method] == 2:
        lane_starts.append(flat + 1e-4 * np.maximum(1.0, modulus(flat)))
    eng = Engine(method, fns, cplx, settings.xtol, settings.rtol, settings.ftol, settings.max_evals,
                 settings.max_steps)
    o = eng.run(lane_starts, p, track=False)
    outcome = np.zeros(flat.size, np.uint8)
    failed = np.nonzero(~CONVERGED_CODES[o.reason])[0]
    if failed.size:  # run the failed lanes again, keeping the rolling record that classifies them
        sub = {k: (a[failed] if isinstance(a, np.ndarray) else a) for k, a in p.items()}
        o2 = eng.run([s[failed] for s in lane_starts], sub, track=True)
        assert o2.track is not None
        conv2 = CONVERGED_CODES[o2.reason]
        o.x[failed] = np.where(conv2, o2.x, o2.track["bx"])
        o.fx[failed] = np.where(conv2, o2.fx, o2.track["bv"])
        o.evals[failed], o.steps[failed], o.reason[failed] = o2.evals, o2.steps, o2.reason
        outcome[failed] = classify(o2.reason, o2.track, method)
    return Lanes(
        method=method,
        starts=x0.astype(flat.dtype, copy=False).reshape(shape),
        x=o.x.reshape(shape),
        fx=o.fx.reshape(shape),
        evals=o.evals.reshape(shape),
        steps=o.steps.reshape(shape),
        reason_code=o.reason.reshape(shape),
        outcome_code=outcome.reshape(shape),
        derivative_source=fns.source if fns.source != "auto" or not cplx else "central-difference",
        notes=tuple(dict.fromkeys(fns.notes)),
    )


def _broadcast_params(params: Mapping[str, Any], shape: tuple[int, ...], owner: str) -> dict[str, Any]:
    out: dict[str, Any] = {}
    for k, v in params.items():
        a = np.asarray(v)
        if a.dtype.kind not in "fiub":
            raise ParameterError.expected(k, owner, "a real number or an array of real numbers", v)
        if a.ndim == 0:
            out[k] = float(a)
            continue
        try:
            out[k] = np.ascontiguousarray(np.broadcast_to(a.astype(np.float64), shape)).ravel()
        except ValueError:
            raise ParameterError(
                f"The parameter {k!r} of {owner} has shape {a.shape}, which does not broadcast to the "
                f"starts' shape {shape}. Pass one value per start, or a scalar."
            ) from None
    return out
