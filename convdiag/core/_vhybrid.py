"""The hybrid bracketing method on many independent brackets at once (numpy), for sweeps.

:func:`hybrid_many` runs the rules of :class:`~convdiag.core._hybrid.Hybrid` lane by lane
with array operations, calling ``f`` once per round with the points of the lanes still
running. Every lane reproduces what ``solve(f, "hybrid", bracket=(a, b), ...)`` does with
the same settings: the same points, the same number of evaluations, the same stop reason and
root (the operations are the same IEEE operations in the same order; powers use numpy's
``power`` in both). It records no steps; rerun one lane with ``solve`` to see them.

Each converged lane is also checked for the two cases where a sign change is not a root
(``suspect``; the scalar method says the same in its step reasons and the diagnosis names them):

* ``"flat"``: the lane stopped on an exact zero while its bracket was still wider than the
  tolerance, and f is exactly zero at two probes 2^-10 of the bracket width either side
  (inside the bracket): f underflows to zero over a stretch, as x·exp(-1/x²) does. An
  isolated root hit exactly (a bracket end at a root, a lucky step) is nonzero there. The
  probes are not in ``evaluations`` (which match ``solve``'s lane by lane); ``probes`` counts them.
* ``"pole"``: the bracket shrank to the tolerance but the smaller |f| at its two ends ended
  above the smaller |f| at the starting ends: |f| grew as the bracket closed in, a pole or
  jump, not a root.
"""

from __future__ import annotations

import math
import numbers
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from numpy.typing import NDArray

from ..errors import ParameterError
from ._hybrid import _T_ITERATIONS, FREE_STEPS
from ._show import Showable

__all__ = ["HybridMany", "hybrid_many"]

EPS = 2.220446049250313e-16
FloatArray = NDArray[np.float64]

STATUSES = (
    "running", "exact-zero", "bracket-small", "max-evals", "nonfinite-value", "no-sign-change", "function-raised"
)
_RUN, _ZERO, _SMALL, _BUDGET, _NONFINITE, _SIGN, _RAISED = range(7)


@dataclass(frozen=True, repr=False)
class HybridMany(Showable):
    """Per-lane results of :func:`hybrid_many` (arrays of the broadcast shape of a and b).

    Attributes
    ----------
    root : the root estimate (the bracket end with the smaller |f| when converged; for a lane
        that did not converge, the evaluated point with the smallest |f|, NaN if none).
    fun : f at ``root``.
    evaluations : evaluations of f in the lane, the two ends included.
    converged : the lane stopped on an exact zero or a small bracket.
    status : one of ``exact-zero``, ``bracket-small``, ``max-evals``, ``nonfinite-value``,
        ``no-sign-change``, ``function-raised`` (the stop reasons of :class:`~convdiag.Run`,
        plus ``no-sign-change`` where ``solve`` would raise BracketError).
    lo, hi : the final bracket.
    suspect : ``""``, or for a converged lane whose sign change is not a root, ``"flat"`` (f is
        exactly zero over a stretch) or ``"pole"`` (|f| grew as the bracket closed in); see the
        module docstring.
    probes : evaluations made for those checks, in all lanes together.
    """

    root: FloatArray
    fun: FloatArray
    evaluations: NDArray[np.int64]
    converged: NDArray[np.bool_]
    status: NDArray[np.str_]
    lo: FloatArray
    hi: FloatArray
    xtol: float
    rtol: float
    max_evals: int
    suspect: NDArray[np.str_] = field(default_factory=lambda: np.zeros(0, dtype="<U4"))
    probes: int = 0

    def __repr__(self) -> str:
        n = int(self.root.size)
        mean = float(self.evaluations.mean()) if n else math.nan
        return f"<HybridMany: {n} lanes, {int(self.converged.sum())} converged, mean {mean:.3g} evaluations>"


def _check_tol(v: Any, name: str) -> float:
    if not isinstance(v, numbers.Real) or isinstance(v, bool) or not (float(v) >= 0 and math.isfinite(v)):
        raise ParameterError.expected(name, "hybrid_many", "a finite float >= 0", v)
    return float(v)


def _same_sign(u: FloatArray, v: FloatArray) -> NDArray[np.bool_]:
    return ((u > 0) & (v > 0)) | ((u < 0) & (v < 0))


def _newton(coef: list[FloatArray], ys: list[FloatArray], y: FloatArray, n: int) -> tuple[FloatArray, FloatArray]:
    p = coef[n - 1]
    dp = 0 * p
    for j in range(n - 2, -1, -1):
        dp = dp * (y - ys[j]) + p
        p = p * (y - ys[j]) + coef[j]
    return p, dp


def _inverse(
    a: FloatArray, fa: FloatArray, b: FloatArray, fb: FloatArray, last: NDArray[np.int8],
    o1x: FloatArray, o1f: FloatArray, o2x: FloatArray, o2f: FloatArray, ok1: NDArray[np.bool_], ok2: NDArray[np.bool_],
) -> tuple[NDArray[np.bool_], FloatArray, FloatArray]:
    """Accepted?, root and error estimate of the sideways polynomial, per lane."""
    first_a = last == 1
    xs = [np.where(first_a, a, b), np.where(first_a, b, a), o1x, o2x]
    ys = [np.where(first_a, fa, fb), np.where(first_a, fb, fa), o1f, o2f]
    eligible = ok1 & (o1f != fa) & (o1f != fb)
    four = eligible & ok2 & (o2f != fa) & (o2f != fb) & (o2f != o1f)
    ys[3] = np.where(four, o2f, o1f + 1.0)  # a harmless distinct value where unused
    dd = list(xs)
    coef = [dd[0]]
    for j in range(1, 4):
        for i in range(3, j - 1, -1):
            dd[i] = (dd[i] - dd[i - 1]) / (ys[i] - ys[i - j])
        coef.append(dd[j])
    zero = np.zeros_like(a)
    lo_y, hi_y = np.where(fa < fb, fa, fb), np.where(fa < fb, fb, fa)
    out = []
    for n in (3, 4):
        z_hi = _newton(coef, ys, zero, n)[0]
        z_lo = _newton(coef, ys, zero, n - 1)[0]
        d_lo = _newton(coef, ys, lo_y, n)[1]
        d_hi = _newton(coef, ys, hi_y, n)[1]
        mono = _same_sign(d_lo, d_hi)
        if n == 4:
            mid = lo_y + (hi_y - lo_y) / 2
            d_mid = _newton(coef, ys, mid, n)[1]
            curv = d_lo - 2 * d_mid + d_hi
            yv = mid - (d_hi - d_lo) * (hi_y - lo_y) / (4 * curv)
            inside = (curv != 0) & (lo_y < yv) & (yv < hi_y)
            mono = np.where(mono & inside, _same_sign(_newton(coef, ys, yv, n)[1], d_lo), mono)
        out.append((mono & (a <= z_hi) & (z_hi <= b), z_hi, np.abs(z_hi - z_lo)))
    (ok3, z3, s3), (ok4, z4, s4) = out
    accepted = eligible & np.where(four, ok4, ok3)
    return accepted, np.where(four, z4, z3), np.where(four, s4, s3)


def _power(
    a: FloatArray, fa: FloatArray, b: FloatArray, fb: FloatArray, p: FloatArray, fp: FloatArray, ok: NDArray[np.bool_]
) -> tuple[NDArray[np.bool_], FloatArray]:
    """Accepted? and root of the power-law fit (mirrors ``_hybrid.power_fit``), per lane."""
    a0, b0, p0 = np.abs(fa), np.abs(fb), np.abs(fp)
    top = np.maximum(np.maximum(a0, b0), p0)
    a0, b0, p0 = a0 / top, b0 / top, p0 / top
    right = p > b
    e0 = np.where(right, b0, a0)
    gap = np.where(right, (p - b) / (b - a), (a - p) / (b - a))
    fits = ok & ((a0 + b0) * gap < p0 - e0)
    lo, hi = np.zeros_like(a), np.ones_like(a)
    for _ in range(_T_ITERATIONS):
        t = (lo + hi) / 2
        above = (np.power(a0, t) + np.power(b0, t)) * gap > np.power(p0, t) - np.power(e0, t)
        lo, hi = np.where(above, t, lo), np.where(above, hi, t)
    t = (lo + hi) / 2
    ta, tb = np.power(a0, t), np.power(b0, t)
    r = (a * tb + b * ta) / (ta + tb)
    accepted = fits & (ta + tb > 0) & (t <= 0.5) & (a <= r) & (r <= b)
    return accepted, r


def hybrid_many(
    f: Callable[..., Any],
    a: Any,
    b: Any,
    *,
    xtol: float = 0.0,
    rtol: float | None = None,
    max_evals: int = 100,
    params: Mapping[str, Any] | None = None,
) -> HybridMany:
    """Run the hybrid bracketing method on many brackets [a[i], b[i]] at once.

    Parameters
    ----------
    f : callable
        ``f(x, **params)`` for a 1-D float array ``x`` (the lanes still running), returning an
        array of the same shape.
    a, b : array_like
        Bracket ends, broadcast against each other and the parameters (each lane needs a
        sign change).
    xtol, rtol : float
        A lane stops when f is exactly zero or its bracket is at most ``xtol + rtol·|best|``
        wide (best = the end with the smaller |f|), as :func:`convdiag.solve` does.
        ``rtol`` defaults to 4·machine epsilon.
    max_evals : int
        Evaluations allowed per lane, the two ends included (at least 2).
    params : mapping of str to array_like, optional
        Per-lane parameters (broadcast to the lanes); f gets the active lanes' values.

    Returns
    -------
    HybridMany
        Per-lane root, f there, evaluations, converged flag, status and final bracket.

    Examples
    --------
    >>> import numpy as np
    >>> res = hybrid_many(lambda x, c: x**3 - c, 0.0, 3.0, params={"c": np.array([1.0, 8.0, 27.0])})
    >>> np.round(res.root, 12).tolist(), res.converged.all()
    ([1.0, 2.0, 3.0], np.True_)
    """
    rtol = 4 * EPS if rtol is None else rtol
    xtol, rtol = _check_tol(xtol, "xtol"), _check_tol(rtol, "rtol")
    if not isinstance(max_evals, numbers.Integral) or isinstance(max_evals, bool) or max_evals < 2:
        raise ParameterError.expected("max_evals", "hybrid_many", "an int >= 2", max_evals)
    names = list(params or {})
    arrays = np.broadcast_arrays(
        np.asarray(a, dtype=float), np.asarray(b, dtype=float), *(np.asarray((params or {})[k]) for k in names)
    )
    aa, bb = arrays[0], arrays[1]
    shape = aa.shape
    pm = {k: v.ravel() for k, v in zip(names, arrays[2:])}
    a0_, b0_ = aa.ravel().copy(), bb.ravel().copy()
    if not (np.all(np.isfinite(a0_)) and np.all(np.isfinite(b0_))):
        raise ParameterError.expected("a, b", "hybrid_many", "finite numbers", "non-finite ends")
    if np.any(a0_ == b0_):
        raise ParameterError("The brackets of hybrid_many must have a != b in every lane.")
    a = np.minimum(a0_, b0_)
    b = np.maximum(a0_, b0_)
    n = a.size
    status = np.zeros(n, dtype=np.int8)
    evals = np.zeros(n, dtype=np.int64)
    root = np.full(n, np.nan)
    fun = np.full(n, np.nan)
    min_abs, min_x, min_f = np.full(n, np.inf), np.full(n, np.nan), np.full(n, np.nan)

    def call(x: FloatArray, lanes: NDArray[np.intp]) -> FloatArray | None:
        try:
            y = np.asarray(f(x, **{k: v[lanes] for k, v in pm.items()}), dtype=float)
        except Exception:  # noqa: BLE001  (the user's code failed: these lanes stop, nothing else is lost)
            status[lanes] = _RAISED
            evals[lanes] += 1
            return None
        y = np.broadcast_to(y, x.shape).astype(float)
        evals[lanes] += 1
        good = np.isfinite(y)
        status[lanes[~good]] = _NONFINITE
        better = good & (np.abs(y) < min_abs[lanes])
        idx = lanes[better]
        min_abs[idx], min_x[idx], min_f[idx] = np.abs(y[better]), x[better], y[better]
        return y

    probes = [0]

    def probe(x: FloatArray, lanes: NDArray[np.intp]) -> FloatArray | None:
        """f at extra points, counted as evaluations; leaves the lanes' status alone."""
        try:
            y = np.broadcast_to(np.asarray(f(x, **{k: v[lanes] for k, v in pm.items()}), dtype=float), x.shape)
        except Exception:  # noqa: BLE001  (no verdict from the probes: the lane keeps its result)
            return None
        finally:
            probes[0] += int(lanes.size)
        return y

    with np.errstate(all="ignore"):
        everyone = np.arange(n)
        fa = call(a, everyone)
        if fa is None:
            fa = np.full(n, np.nan)
        ok = np.flatnonzero(status == _RUN)
        fb = np.full(n, np.nan)
        got = call(b[ok], ok)
        if got is not None:
            fb[ok] = got
        run = status == _RUN
        zero_a, zero_b = run & (fa == 0), run & (fa != 0) & (fb == 0)
        status[zero_a | zero_b] = _ZERO
        root[zero_a], fun[zero_a] = a[zero_a], 0.0
        root[zero_b], fun[zero_b] = b[zero_b], 0.0
        status[(status == _RUN) & _same_sign(fa, fb)] = _SIGN
        small0 = np.minimum(np.abs(fa), np.abs(fb))
        _loop(call, status, evals, root, fun, a, fa, b, fb, xtol, rtol, max_evals)
        lost = np.isin(status, (_BUDGET, _NONFINITE, _RAISED))
        root[lost], fun[lost] = min_x[lost], min_f[lost]
        suspect = np.full(n, "", dtype="<U4")
        suspect[(status == _SMALL) & (np.minimum(np.abs(fa), np.abs(fb)) > small0)] = "pole"
        _flat_zeros(probe, status, root, a, b, xtol, rtol, suspect)
    converged = np.isin(status, (_ZERO, _SMALL))
    return HybridMany(
        root.reshape(shape),
        fun.reshape(shape),
        evals.reshape(shape),
        converged.reshape(shape),
        np.array(STATUSES, dtype=np.str_)[status].reshape(shape),
        a.reshape(shape),
        b.reshape(shape),
        xtol,
        rtol,
        int(max_evals),
        suspect.reshape(shape),
        probes[0],
    )


def _flat_zeros(probe: Any, status: Any, root: FloatArray, a: FloatArray, b: FloatArray, xtol: float, rtol: float,
                suspect: Any) -> None:
    """Mark ``"flat"`` the exact-zero lanes whose bracket is still wide and f is 0 at both probes (docstring)."""
    wide = np.flatnonzero((status == _ZERO) & (b - a > xtol + rtol * np.abs(root)))
    if wide.size == 0:
        return
    x, lo, hi = root[wide], a[wide], b[wide]
    d = np.ldexp(hi - lo, -10)
    left, right = np.maximum(x - d, lo), np.minimum(x + d, hi)  # a root at a bracket end: both probes inside
    left = np.where(left == x, x + d / 2, left)
    right = np.where(right == x, x - d / 2, right)
    yl = probe(left, wide)
    yr = None if yl is None else probe(right, wide)
    if yl is None or yr is None:
        return
    suspect[wide[(yl == 0) & (yr == 0)]] = "flat"


def _loop(
    call: Any, status: Any, evals: Any, root: Any, fun: Any,
    a: FloatArray, fa: FloatArray, b: FloatArray, fb: FloatArray, xtol: float, rtol: float, max_evals: int,
) -> None:
    """The rounds: one proposal and one evaluation per running lane (updates arrays in place)."""
    n = a.size
    u, u34 = EPS, 2.0**-39
    w0 = b - a
    k = np.zeros(n, dtype=np.int64)
    o1x, o1f, o2x, o2f = (np.zeros(n) for _ in range(4))
    ok1, ok2 = np.zeros(n, dtype=bool), np.zeros(n, dtype=bool)
    ga, gb = fa.copy(), fb.copy()
    last = np.zeros(n, dtype=np.int8)
    w1, w2 = w0.copy(), w0.copy()
    hold, penalty = np.zeros(n, dtype=np.int64), np.ones(n, dtype=np.int64)
    last_pow, has_pow = np.zeros(n), np.zeros(n, dtype=bool)
    while True:
        status[(status == _RUN) & (evals >= max_evals)] = _BUDGET
        act = np.flatnonzero(status == _RUN)
        if act.size == 0:
            return
        A, FA, B, FB = a[act], fa[act], b[act], fb[act]
        K = k[act]
        width = B - A
        need = (5 * (K - FREE_STEPS)) // 6
        behind = (need > 0) & (width > np.ldexp(w0[act], -np.maximum(need, 0)))
        holding = ~behind & (hold[act] > 0)
        hold[act[holding]] -= 1
        modelled = ~behind & ~holding & (K > 0)
        worse = np.where(np.abs(FB) > np.abs(FA), B, A)
        O1X, O1F, OK1 = o1x[act], o1f[act], ok1[act]
        p_ok, p_r = _power(A, FA, B, FB, O1X, O1F, modelled & OK1)
        i_ok, i_z, i_s = _inverse(A, FA, B, FB, last[act], O1X, O1F, o2x[act], o2f[act], OK1, ok2[act])
        i_ok &= modelled
        use_pow = p_ok
        use_inv = ~use_pow & i_ok
        z = np.where(use_pow, p_r, i_z)
        s_pow = np.where(has_pow[act], np.abs(z - last_pow[act]), np.where(i_ok, np.abs(z - i_z), 0 * z))
        s = np.where(use_pow, s_pow, i_s)
        s = np.maximum(np.maximum(s, 2 * u * np.abs(z)), u34 * width)
        s = np.minimum(s, np.abs(worse - z) / 2)
        shifted = np.where(worse > z, z + s, z - s)
        stepped = (use_pow | use_inv) & (A < shifted) & (shifted < B)
        GA, GB = ga[act], gb[act]
        flat = modelled & ~use_pow & ~use_inv & (~OK1 | (O1F == FA) | (O1F == FB)) & (GB != GA)
        zc = B - GB * (B - A) / (GB - GA)
        chord = flat & (A < zc) & (zc < B)
        x = np.where(stepped, shifted, np.where(chord, zc, A + (B - A) / 2))
        uses_model = stepped | chord
        has_pow[act] = use_pow & stepped
        last_pow[act] = np.where(use_pow & stepped, z, 0.0)
        fx = call(x, act)
        k[act] += 1
        if fx is None:  # f raised: call() stopped these lanes
            continue
        alive = status[act] == _RUN
        hit = alive & (fx == 0)
        status[act[hit]] = _ZERO
        root[act[hit]], fun[act[hit]] = x[hit], 0.0
        go = alive & ~hit
        same = _same_sign(fx, FA)
        on_a, on_b = go & same, go & ~same
        m = np.where(same, 1 - fx / FA, 1 - fx / FB)
        mw = np.where(m > 0, m, 0.5)
        LAST = last[act]
        new_o1x, new_o1f = np.where(same, A, B), np.where(same, FA, FB)
        sel = act[go]
        o2x[sel], o2f[sel], ok2[sel] = o1x[sel], o1f[sel], ok1[sel]
        o1x[sel], o1f[sel], ok1[sel] = new_o1x[go], new_o1f[go], True
        ia, ib = act[on_a], act[on_b]
        gb[ia] = np.where(LAST[on_a] == 1, GB[on_a] * mw[on_a], FB[on_a])
        a[ia], fa[ia], ga[ia], last[ia] = x[on_a], fx[on_a], fx[on_a], 1
        ga[ib] = np.where(LAST[on_b] == 2, GA[on_b] * mw[on_b], FA[on_b])
        b[ib], fb[ib], gb[ib], last[ib] = x[on_b], fx[on_b], fx[on_b], 2
        w = b[sel] - a[sel]
        judged = uses_model[go]
        missed = judged & (k[sel] >= 2) & (w > w2[sel] / 4)
        hold[sel[missed]] = penalty[sel[missed]]
        penalty[sel[missed]] *= 2
        penalty[sel[judged & ~missed]] = 1
        w2[sel], w1[sel] = w1[sel], w
        best_a = np.abs(fa[sel]) < np.abs(fb[sel])
        best = np.where(best_a, a[sel], b[sel])
        mid = a[sel] + (b[sel] - a[sel]) / 2
        small = (w < xtol + rtol * np.abs(best)) | (mid == a[sel]) | (mid == b[sel])
        done = sel[small]
        status[done] = _SMALL
        root[done] = best[small]
        fun[done] = np.where(best_a[small], fa[done], fb[done])
