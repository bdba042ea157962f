"""What the errors of an order estimate are measured against, and where rounding takes over.

:func:`_choose_reference` picks the reference of a real run or sequence (given
root, high-precision root, best iterate or successive differences; residuals
when asked or when there are no iterates) with its rounding floor, as the
notes of :mod:`convdiag.core._order` describe; :func:`_complex_reference`
does the same for a complex run. :func:`_log_errors` and :func:`_point_floors`
turn iterates into the log10 errors and per-point floors the window engine
(``_window``) reads.
"""

from __future__ import annotations

import itertools
import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np
from numpy.typing import NDArray

from ..errors import ParameterError
from ._order import EPS, _Options


@dataclass
class _Ref:
    kind: str  # given, high-precision, best-iterate, differences, residuals
    value: Any = None
    hp: Any = None  # ReferenceRoot with derivatives, when one was computed and trusted
    note: str = ""
    floor: float = 0.0
    floor_hp: float = 0.0
    floor_note: str = ""

    @property
    def label(self) -> str:
        return {"given": "given root", "high-precision": "high-precision root", "best-iterate": "best iterate",
                "differences": "successive differences", "residuals": "residuals"}[self.kind]


def _log_abs(values: Sequence[Any]) -> NDArray[np.float64]:
    out = np.full(len(values), np.nan)
    for i, v in enumerate(values):
        try:
            a = abs(v)
            if a == 0:
                out[i] = -np.inf
                continue
            f = float(a)
            out[i] = math.log10(f) if 0 < f < math.inf else float(__import__("mpmath").log10(a))
        except (TypeError, ValueError, OverflowError, ArithmeticError):
            continue
    return out


def _log_errors(xs: Sequence[Any], ref: _Ref, residuals: Sequence[Any] | None) -> NDArray[np.float64]:
    if ref.kind == "residuals":
        return _log_abs(residuals or [])
    if ref.kind == "differences":
        return _log_abs([b - a for a, b in itertools.pairwise(xs)])
    r = ref.value
    if isinstance(r, float) and all(isinstance(x, float) for x in xs):
        return _log_abs([x - r for x in xs])
    import mpmath

    return _log_abs([mpmath.mpmathify(x) - r for x in xs])


def _point_floors(xs: Sequence[Any], kind: str, log_unit: float, opts: _Options) -> NDArray[np.float64] | None:
    """log10 of the rounding of each error by the arithmetic that produced it: 4 units of |x_(k−1)|
    (of max(|x_k|, |x_(k+1)|) for differences). This matters where |r| is far below the iterates (a root at 0)."""
    if opts.floor is not None or kind == "residuals":
        return None
    lx = _log_abs(list(xs)) + math.log10(4) + log_unit
    if kind == "differences":
        return np.maximum(lx[:-1], lx[1:])
    return np.concatenate([lx[:1], lx[:-1]])


def _finite_or_nan(xs: Sequence[Any]) -> list[float]:
    out = []
    for x in xs:
        try:
            out.append(float(x))
        except (TypeError, ValueError, OverflowError):
            out.append(math.nan)
    return out


def _finite_floats(xs: Sequence[Any]) -> list[float]:
    out = []
    for x in xs:
        try:
            v = float(x)
        except (TypeError, ValueError, OverflowError):
            continue
        if math.isfinite(v):
            out.append(v)
    return out


def _best_iterate_bias(xs: Sequence[Any], residuals: Sequence[Any] | None, k: int) -> tuple[float, str]:
    """How far iterate k itself is from the root: |f|/|secant slope| there, else its last step (in the
    iterates' own number type, so an exact sequence keeps its digits)."""
    j = next((i for i in range(k - 1, -1, -1) if _finite_or_nan([xs[i]])[0] == _finite_or_nan([xs[i]])[0]
              and xs[i] != xs[k]), None)
    if j is None:
        return 0.0, "unknown"
    step = abs(xs[k] - xs[j])
    if residuals is not None and len(residuals) == len(xs):
        fr = _finite_or_nan([residuals[k], residuals[j]])
        if all(math.isfinite(v) for v in fr) and fr[0] != fr[1]:
            return float(abs(fr[0]) * step / abs(fr[0] - fr[1])), "a Newton step from it, with the last secant slope"
    return float(step), "its last step"


def _choose_reference(
    problem: Any, xs: Sequence[Any], root: Any, opts: _Options, *, converged: bool, best: Any,
    has_residuals: bool, unit: float, notes: list[str], residuals: Sequence[Any] | None = None,
) -> _Ref:
    """Pick the reference (see the module notes) and its rounding floor."""
    from ._reference import ReferenceRoot, reference_root, rounding_floor

    fx = _finite_floats(xs)
    if opts.reference == "residuals" or (not fx and has_residuals):
        return _Ref("residuals", note="orders from residuals |f(x_k)| in place of errors: near a simple root "
                    "e_k ≈ |f(x_k)|/|f'(r)| (Grau-Sánchez et al. 2010); at a root of multiplicity m, "
                    "|f| ∝ e^m, so a linear rate shows as rate^m",
                    floor_note="not known for residuals; a rounding-limited last value is recognised in the data")
    if not fx:
        raise ParameterError("estimate_order needs iterates (or residuals with kind='residuals'); got neither.")
    best_exact = best if best is not None and _finite_floats([best]) else xs[-1]
    near = float(best_exact)
    scale = max((abs(x - near) for x in fx), default=0.0) or max(abs(near), 1.0)
    ref: _Ref | None = None
    if isinstance(root, ReferenceRoot):
        ref = _Ref(root.source, root.value, root if root.source == "high-precision" else None, root.summary)
    elif root is not None:
        try:
            rv = float(root)
        except (TypeError, ValueError):
            raise ParameterError.expected("root", "estimate_order", "a finite number or a ReferenceRoot", root) from None
        if not math.isfinite(rv):
            raise ParameterError.expected("root", "estimate_order", "a finite number or a ReferenceRoot", root)
        exact_root = root if type(root).__module__.startswith("mpmath") else rv
        ref = _Ref("given", exact_root, note=f"the root you gave, {rv:.17g}")
        if problem is not None:
            try:
                cand = reference_root(problem, rv, digits=opts.digits, scale=scale)
            except ParameterError as exc:
                notes.append(f"no high-precision polish of the given root: {exc}")
            else:
                gap = abs(cand.float_value - rv)
                if cand.confirmed and gap <= 1e-12 * max(abs(rv), scale):
                    ref.hp = cand
                    ref.note += f", which agrees with the high-precision root {cand.summary} to within {gap:.2g}"
                else:
                    notes.append(f"the high-precision root nearest the given root is {cand.float_value:.17g}, "
                                 f"{gap:.3g} away; the given root is used as it is")
    elif opts.reference in ("auto", "high-precision") and problem is not None:
        try:
            cand = reference_root(problem, near, digits=opts.digits, scale=scale)
        except ParameterError as exc:
            notes.append(f"no high-precision root: {exc}")
        else:
            far = abs(cand.float_value - near)
            if not cand.confirmed:
                notes.append("the high-precision root was not confirmed (" + "; ".join(cand.notes) + "), so it is not used")
            elif far > 0.5 * scale and far > 1e-8 * max(abs(near), 1.0):
                notes.append(f"the high-precision root nearest the best iterate is {cand.float_value:.6g}, farther "
                             "than the iterates moved, so it is not their limit and is not used")
            else:
                ref = _Ref("high-precision", cand.value, cand, cand.summary)
    if ref is None:
        if opts.reference == "best-iterate" or (opts.reference in ("auto", "high-precision") and converged):
            gaps = [abs(x - best_exact) if _finite_floats([x]) else math.inf for x in xs]
            k = max(i for i, g in enumerate(gaps) if g == min(gaps))  # the last of equally good iterates
            bias, how = _best_iterate_bias(xs, residuals, k)
            own = f"about {bias:.2g} ({how})" if bias > 0 else "at the rounding level (f is exactly 0 there)"
            ref = _Ref("best-iterate", xs[k], note=(
                f"the run's own best iterate {near:.17g}; its own error, {own}, biases the errors measured "
                "against it, so errors below 100 × that (and 40 ulps) are not used"))
            ref.floor = max(4 * unit * abs(near), 10 * bias)
            ref.floor_note = "10 × the best iterate's own error, at least 4 ulps"
        else:
            ref = _Ref("differences", note="no trusted root: successive differences |x_{k+1} − x_k| stand in for the "
                       "errors (ACOC, Cordero & Torregrosa 2007); index k refers to the difference x_{k+1} − x_k")
            ref.floor = 4 * unit * max((abs(x) for x in fx[-max(3, len(fx) // 4):]), default=0.0)
            ref.floor_note = "4 ulps of the last iterates"
        return ref
    r = float(ref.value)
    ref.floor = ref.floor_hp = 4 * unit * abs(r)
    ref.floor_note = "4 ulps of |r|"
    if ref.hp is not None and problem is not None:
        ref.floor, ref.floor_hp, ref.floor_note = rounding_floor(problem, ref.hp, digits=opts.digits)
        ref.floor = max(ref.floor, 4 * unit * abs(r)) if unit != EPS else ref.floor
    return ref


def _complex_reference(xs: Sequence[Any], root: Any, opts: _Options) -> _Ref:
    if opts.reference == "residuals":
        return _Ref("residuals", note="orders from residuals |f(x_k)| in place of errors (Grau-Sánchez et al. 2010)")
    if root is not None and opts.reference == "auto":
        try:
            r = complex(root)
        except (TypeError, ValueError):
            raise ParameterError.expected("root", "estimate_order", "a finite number", root) from None
        ref = _Ref("given", r, note=f"the root you gave, {r}")
        ref.floor, ref.floor_note = 4 * EPS * abs(r), "4 ulps of |r|"
        return ref
    ref = _Ref("differences", note="complex run without a given root: successive differences |x_{k+1} − x_k| "
               "(ACOC, Cordero & Torregrosa 2007)")
    ref.floor = 4 * EPS * max((abs(complex(x)) for x in xs[-3:]), default=0.0)
    ref.floor_note = "4 ulps of the last iterates"
    return ref
