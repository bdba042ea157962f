"""Open methods run on many lanes at once with numpy, each lane's outcome classified.

:func:`solve_many` runs Newton, secant, Steffensen or Halley from an array of
starts (real or complex), with per-lane parameters, and returns :class:`Lanes`:
for each lane the root (or the best iterate of a failed lane), the
evaluations it used, the driver's stop reason and an outcome class (see
:data:`OUTCOMES`). Lane by lane, the arithmetic, the evaluation count and the
stop reason are those of :func:`convdiag.solve` (complex products, quotients
and absolute values follow Python's own formulas) whenever the function gives
the same value for an array element as for a scalar.

Finished lanes leave the working arrays, so the active set shrinks as lanes
converge. Lanes that fail are run once more keeping a small rolling record
per lane (the last three step lengths, the last two residuals, the largest
iterate, whether a step was thrown far, the best iterate); the same rules
classify a scalar :class:`~convdiag.core._run.Run` in :func:`classify_run`.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping
from dataclasses import dataclass
from typing import Any, Literal

import numpy as np
from numpy.typing import NDArray

from ..errors import ParameterError
from ._run import CONVERGED, STOP_REASONS, Run
from ._show import Showable

__all__ = ["OUTCOMES", "OUTCOME_MEANING", "REASONS", "VECTOR_METHODS", "Lanes", "classify_run", "solve_many"]

VectorMethod = Literal["newton", "secant", "steffensen", "halley"]
VECTOR_METHODS: dict[str, int] = {"newton": 1, "secant": 2, "steffensen": 1, "halley": 1}  # name -> starts

#: Stop reasons by code (``Lanes.reason_code`` indexes this): those of :func:`convdiag.solve`, plus
#: "no-sign-change" (a bracketing method could not start) and "not-run" (never computed).
REASONS: tuple[str, ...] = tuple(dict.fromkeys((*STOP_REASONS, "no-sign-change", "not-run")))
_R = {r: np.uint8(i) for i, r in enumerate(REASONS)}
_CONVERGED_CODES = np.array([r in CONVERGED for r in REASONS])

#: Outcome classes by code (``Lanes.outcome_code`` indexes this).
OUTCOMES: tuple[str, ...] = (
    "converged", "cycle", "divergence", "flat", "domain-error", "budget", "slow", "multiple-root", "stalled",
    "no-bracket", "not-run",
)
OUTCOME_MEANING: dict[str, str] = {
    "converged": "met the stopping rule (step, residual or exact zero)",
    "cycle": "stayed bounded without converging (a cycle or erratic wandering)",
    "divergence": "the iterates ran away: overflowed, or went beyond 1e4 times the start's scale",
    "flat": "a zero derivative or equal values stopped it, or a near-flat spot threw a step far away",
    "domain-error": "the function raised or returned NaN, infinity or a non-real value",
    "budget": "the budget ran out while the steps were still shrinking",
    "slow": "the budget ran out during linear (slow) convergence",
    "multiple-root": "the budget ran out converging linearly at the rate of a multiple root",
    "stalled": "the steps stopped shrinking at the rounding-noise level (under 1e-12·|x|) without meeting "
    "the tolerance: loosen xtol/rtol",
    "no-bracket": "f has the same sign at both ends of the bracket, so a bracketing method cannot start",
    "not-run": "not computed (the sweep was interrupted first)",
}
_O = {o: np.uint8(i) for i, o in enumerate(OUTCOMES)}
KICK = 1e3  # a step longer than KICK * max(1, |x|) was thrown far (a near-flat spot)
FAR = 1e4  # iterates beyond FAR * max(1, |x0|) ran away
EPS = 2.220446049250313e-16
CSTEP_H = 1e-20
_H1, _H2 = EPS ** (1 / 3), EPS**0.25  # difference steps, as in the scalar evaluator
_TRACK = ("bx", "bv", "bf", "s1", "s2", "s3", "fa", "fb", "fc", "ax", "kick", "xmax", "scale")
Arr = NDArray[Any]


# -- complex arithmetic with Python's formulas (numpy's differ in the last bit) ----------------------
def _cx(re: Arr, im: Arr) -> Arr:
    out = np.empty(re.shape, np.complex128)
    out.real, out.imag = re, im
    return out


def _mul(a: Arr, b: Arr) -> Arr:
    if a.dtype.kind != "c" or b.dtype.kind != "c":
        return a * b
    ar, ai, br, bi = a.real, a.imag, b.real, b.imag
    return _cx(ar * br - ai * bi, ar * bi + ai * br)


class _Scratch:
    """Reusable work arrays: fresh large temporaries cost page faults on every step."""

    def __init__(self) -> None:
        self.bufs: dict[str, Arr] = {}

    def __call__(self, name: str, n: int, dt: Any = np.float64) -> Arr:
        key = f"{name}:{np.dtype(dt).char}"
        buf = self.bufs.get(key)
        if buf is None or buf.shape[0] < n:
            buf = self.bufs[key] = np.empty(max(n, 1024), dt)
        return buf[:n]


def _quotient_parts(a: Arr, b: Arr, sc: _Scratch) -> tuple[Arr, Arr]:
    """Real and imaginary parts of a / b (complex arrays) as Python computes them (scratch views).

    Python scales by the larger part of b. Lanes where |Im b| > |Re b| are first multiplied by -i
    (exact: (r, i) -> (i, -r)), which turns Python's second branch into its first.
    """
    n = a.shape[0]
    av, bv = a.view(np.float64).reshape(n, 2), b.view(np.float64).reshape(n, 2)
    br, bi, ar, ai, t1, t2 = (sc(k, n) for k in ("br", "bi", "ar", "ai", "t1", "t2"))
    rot = sc("rot", n, np.bool_)
    np.less(np.abs(bv[:, 0], out=t1), np.abs(bv[:, 1], out=t2), out=rot)
    br[:], bi[:], ar[:], ai[:] = bv[:, 0], bv[:, 1], av[:, 0], av[:, 1]
    if rot.any():
        for re, im in ((br, bi), (ar, ai)):
            np.negative(re, out=t1)
            np.copyto(re, im, where=rot)
            np.copyto(im, t1, where=rot)
    ratio, denom = np.divide(bi, br, out=t1), np.multiply(bi, t1, out=t2)
    denom += br
    qr = np.multiply(ai, ratio, out=bi)
    qr += ar
    qr /= denom
    qi = np.multiply(ar, ratio, out=br)
    np.subtract(ai, qi, out=qi)
    qi /= denom
    return qr, qi


def _div(a: Arr, b: Arr, sc: _Scratch) -> Arr:
    """a / b lane by lane as Python computes it (a complex quotient differs from numpy's in the last bit)."""
    if a.dtype.kind != "c":
        return a / b
    if b.dtype.kind != "c":
        return _cx(a.real / b, a.imag / b)
    qr, qi = _quotient_parts(a, b, sc)
    return _cx(qr, qi)


def _minus_quotient(x: Arr, a: Arr, b: Arr, eng: _Engine) -> Arr:
    """x - a / b lane by lane as Python computes it (numpy's way when the engine is not exact)."""
    if x.dtype.kind != "c" or b.dtype.kind != "c" or not eng.exact:
        q = _div(a, b, eng.sc) if eng.exact else a / b
        return np.subtract(x, q, out=q)
    qr, qi = _quotient_parts(a, b, eng.sc)
    out = x.copy()
    ov = out.view(np.float64).reshape(-1, 2)
    ov[:, 0] -= qr
    ov[:, 1] -= qi
    return out


def _le_abs(sc: _Scratch, a: Arr, tol: float, rtol: float = 0.0, b: Arr | None = None, exact: bool = True) -> Arr:
    """``abs(a) <= tol + rtol*abs(b)`` lane by lane, decided as Python decides it.

    Python's ``abs`` of a complex number is ``hypot``; numpy's complex ``abs`` is much faster but
    may differ in the last bit, so lanes within 1e-13 of the threshold are decided again with
    ``hypot`` (unless ``exact`` is False).
    """
    n = a.shape[0]
    m = np.abs(a, out=sc("abs_a", n))
    t: Any = tol
    if rtol and b is not None:
        t = np.abs(b, out=sc("abs_b", n))
        t *= rtol
        t += tol
    le = m <= t
    if a.dtype.kind != "c" or not exact:
        return le  # type: ignore[no-any-return]
    with np.errstate(all="ignore"):
        gap = np.abs(np.subtract(m, t, out=m), out=m)
        near = gap <= np.multiply(t, 1e-13, out=sc("abs_c", n)) if isinstance(t, np.ndarray) else gap <= 1e-13 * t
    if near.any():
        at = np.flatnonzero(near)
        sub = a.take(at)
        te: Any = tol
        if rtol and b is not None:
            te = tol + rtol * _abs(b.take(at))
        le[at] = np.hypot(sub.real, sub.imag) <= te
    return le  # type: ignore[no-any-return]


def _abs(a: Arr) -> Arr:
    return np.hypot(a.real, a.imag) if a.dtype.kind == "c" else np.abs(a)


# -- the user's functions on lanes --------------------------------------------------------------
class _Functions:
    """f, f', f'' called on the active lanes; lane by lane when a call on an array fails."""

    def __init__(self, fs: tuple[Callable[..., Any] | None, ...], source: str, vectorized: bool | None) -> None:
        self.fs, self.source = fs, source
        self.vectorized = vectorized
        self.notes: list[str] = []

    def call(self, which: int, x: Arr, p: dict[str, Any], cplx: bool) -> tuple[Arr, Arr | None]:
        """Values and per-lane reason codes (None when every lane is fine)."""
        fn = self.fs[which]
        assert fn is not None
        if self.vectorized is not False:
            try:
                with np.errstate(all="ignore"):
                    y = np.asarray(fn(x, **p))
            except Exception:
                y = None
            if y is not None and y.shape == x.shape and y.dtype.kind in "fciub":
                self.vectorized = True
                return _check_array(y, cplx)
            vals, codes = self._lanewise(fn, x, p, cplx)
            if y is not None or codes is None or not np.any(codes == _R["function-raised"]):
                self.vectorized = False  # it does not take arrays: call it lane by lane from now on
                self.notes.append("the function does not take arrays; it was called lane by lane")
            return vals, codes
        return self._lanewise(fn, x, p, cplx)

    @staticmethod
    def _lanewise(fn: Callable[..., Any], x: Arr, p: dict[str, Any], cplx: bool) -> tuple[Arr, Arr | None]:
        from ._record import classify_value

        out = np.full(x.shape, np.nan, np.complex128 if cplx else np.float64)
        codes = np.zeros(x.shape, np.uint8)
        xs = x.tolist()
        cols = {k: (v.tolist() if isinstance(v, np.ndarray) else [v] * len(xs)) for k, v in p.items()}
        for i, xi in enumerate(xs):
            try:
                y = fn(xi, **{k: c[i] for k, c in cols.items()})
            except Exception:
                codes[i] = _R["function-raised"]
                continue
            if cplx:
                try:
                    z = complex(y)
                except (TypeError, ValueError, OverflowError):
                    codes[i] = _R["bad-value"]
                    continue
                out[i] = z
                if not (math.isfinite(z.real) and math.isfinite(z.imag)):
                    codes[i] = _R["nonfinite-value"]
                continue
            v, status, _ = classify_value(y)
            out[i] = v
            if status != "ok":
                codes[i] = _R["nonfinite-value" if status in ("nan", "inf") else "bad-value"]
        return out, (codes if codes.any() else None)


def _check_array(y: Arr, cplx: bool) -> tuple[Arr, Arr | None]:
    codes = None
    if not cplx and y.dtype.kind == "c":
        nonreal = y.imag != 0
        y = y.real.astype(np.float64)
        if nonreal.any():
            codes = np.where(nonreal, _R["bad-value"], np.uint8(0)).astype(np.uint8)
            y[nonreal] = np.nan
    y = y.astype(np.complex128 if cplx else np.float64, copy=False)
    fin = np.isfinite(y)
    if not fin.all():
        bad = np.where(fin, np.uint8(0), _R["nonfinite-value"]).astype(np.uint8)
        codes = bad if codes is None else np.where(codes != 0, codes, bad)
    return y, codes


def _functions(f: Any, fprime: Any, fprime2: Any, names: list[str], variable: str, owner: str) -> _Functions:
    from ._problem import Problem, _check_params_accepted, _is_sympy

    if isinstance(f, Problem):
        if f.expression is None and f.raw is None:
            raise ParameterError.expected("f", owner, "a callable, an expression string or a sympy expression", f)
        f, fprime, fprime2 = (f.expression, None, None) if f.expression is not None else (f.raw, f.raw_fprime,
                                                                                           f.raw_fprime2)
    if isinstance(f, str) or _is_sympy(f) or type(f).__name__ == "Expression":
        e = _expression(f, variable)
        unknown = sorted(set(names) ^ set(e.params))
        if unknown:
            raise ParameterError(
                f"The parameters of {e.text!r} are {list(e.params)}; got values for {sorted(names)} in {owner}."
            )
        fs = [_lambdify(e.diff(n), variable) for n in range(3)]
        if fprime is not None:
            fs[1] = _derivative(fprime, variable, owner)
        if fprime2 is not None:
            fs[2] = _derivative(fprime2, variable, owner)
        return _Functions(tuple(fs), "symbolic" if fprime is None else "user", True)
    if not callable(f):
        raise ParameterError.expected("f", owner, "a callable, an expression string or a sympy expression", f)
    _check_params_accepted(f, dict.fromkeys(names, 0.0), getattr(f, "__name__", "f"))
    d1 = None if fprime is None else _derivative(fprime, variable, owner)
    d2 = None if fprime2 is None else _derivative(fprime2, variable, owner)
    return _Functions((f, d1, d2), "user" if d1 is not None else "auto", None)


def _expression(f: Any, variable: str) -> Any:
    from ._expr import parse_expression

    if isinstance(f, str):
        return parse_expression(f, variable=variable)
    if _is_expression(f):
        return f
    import sympy

    return parse_expression(sympy.sstr(f), variable=variable)


def _is_expression(f: Any) -> bool:
    return hasattr(f, "sympy") and hasattr(f, "params") and hasattr(f, "diff")


def _lambdify(e: Any, variable: str) -> Callable[..., Any]:
    import sympy

    symbols = [sympy.Symbol(n, real=True) for n in (e.variable, *e.params)]
    fn = sympy.lambdify(symbols, e.sympy, modules="numpy", dummify=True)
    names = tuple(e.params)

    def lane_fn(x: Any, **p: Any) -> Any:
        with np.errstate(all="ignore"):
            out = np.asarray(fn(x, *(p[n] for n in names)))
        return np.broadcast_to(out, np.shape(x)).copy() if out.shape != np.shape(x) else out

    return lane_fn


def _derivative(d: Any, variable: str, owner: str) -> Callable[..., Any]:
    if isinstance(d, str) or _is_expression(d) or type(d).__module__.startswith("sympy"):
        return _lambdify(_expression(d, variable), variable)
    if callable(d):
        return d  # type: ignore[no-any-return]
    raise ParameterError.expected("fprime", owner, "a callable or an expression", d)


# -- the engine ------------------------------------------------------------------------------------
class _Out:
    """Per-lane results of one engine pass."""

    def __init__(self, n: int, cplx: bool, track: bool) -> None:
        dt = np.complex128 if cplx else np.float64
        self.x, self.fx = np.full(n, np.nan, dt), np.full(n, np.nan, dt)
        self.evals, self.steps = np.zeros(n, np.int32), np.zeros(n, np.int32)
        self.reason = np.full(n, _R["not-run"], np.uint8)
        self.track = {k: np.zeros(n, _track_dtype(k, dt)) for k in _TRACK} if track else None


def _track_dtype(key: str, dt: Any) -> Any:
    return dt if key in ("bx", "bv") else (np.bool_ if key == "kick" else np.float64)


class _Group:
    """Active lanes that have used the same number of evaluations (so budgets are scalars)."""

    def __init__(self, eng: _Engine, idx: Arr, v: dict[str, Arr], p: dict[str, Any], count: int, k: int,
                 source: str) -> None:
        self.eng, self.idx, self.v, self.p = eng, idx, v, p
        self.count, self.k, self.source = count, k, source
        self.split: Arr | None = None
        self.alive: Arr | None = None  # None: every lane in the arrays is active
        self.n = int(idx.size)  # active lanes

    def take(self, keep: Arr) -> None:
        """Keep only the lanes at positions ``keep`` (an index array: faster than a boolean mask)."""
        self.idx = self.idx.take(keep)
        self.v = {k: a.take(keep) for k, a in self.v.items()}
        self.p = {k: (a.take(keep) if isinstance(a, np.ndarray) else a) for k, a in self.p.items()}
        if self.split is not None:
            self.split = self.split.take(keep)
        self.alive, self.n = None, int(keep.size)

    def compact(self) -> None:
        if self.alive is not None:
            self.take(np.flatnonzero(self.alive))

    def finish(self, mask: Arr, code: Any, *, lazy: bool = False) -> None:
        """Record the lanes in ``mask`` as stopped with ``code`` (scalar or one per masked lane).

        Stopped lanes leave the arrays at once, or with ``lazy`` (converged lanes, whose values stay
        harmless) once more than an eighth of the arrays is stopped; until then they are computed
        along and ignored.
        """
        at = np.flatnonzero(mask)
        if self.alive is not None and at.size:
            ok = self.alive.take(at)
            at, code = at[ok], (code[ok] if np.ndim(code) else code)
        if not at.size:
            return
        sel, v, o = self.idx.take(at), self.v, self.eng.out
        o.reason[sel], o.evals[sel], o.steps[sel] = code, self.count, self.k
        o.x[sel], o.fx[sel] = v["x"].take(at), v["fx"].take(at)
        if o.track is not None:
            for key in _TRACK:
                o.track[key][sel] = v[key].take(at)
        if self.alive is None:
            self.alive = np.ones(self.idx.size, bool)
        self.alive[at] = False
        self.n -= int(at.size)
        if not lazy or self.n < 0.875 * self.idx.size:
            self.compact()

    def finish_all(self, reason: str) -> None:
        self.finish(np.ones(self.idx.size, bool), _R[reason])

    def evaluate(self, which: int, xkey: str, out: str, *, cplx: bool | None = None) -> bool:
        """One evaluation on every active lane (checked, counted, budgeted). False when none is left."""
        if self.count >= self.eng.max_evals:
            self.finish_all("max-evals")
            return False
        self.count += 1
        y, codes = self.eng.fns.call(which, self.v[xkey], self.p, self.eng.cplx if cplx is None else cplx)
        self.v[out] = y
        if codes is not None:
            bad = codes != 0
            self.finish(bad, codes[bad])
        return self.n > 0

    def drop(self, mask: Arr, reason: str) -> bool:
        if mask.any():
            self.finish(mask, _R[reason])
        return self.n > 0

    # -- derivatives, as the scalar evaluator supplies them ---------------------------------------
    def derivative(self, out: str) -> bool:
        src = self.source
        if src in ("user", "symbolic"):
            return self.evaluate(1, "x", out)
        if src == "complex-step":
            return self._complex_step(out)
        if src == "auto" and not self.eng.cplx:
            return self._choose(out)
        return self._central(out)

    def _complex_step(self, out: str) -> bool:
        if self.count >= self.eng.max_evals:
            self.finish_all("max-evals")
            return False
        self.count += 1
        x = self.v["x"]
        y, codes = self.eng.fns.call(0, _cx(x, np.full(x.shape, CSTEP_H)), self.p, True)
        self.v[out] = y.imag / CSTEP_H
        if codes is not None:
            bad = (codes != 0) & (codes != _R["nonfinite-value"])  # as in the scalar: only the derivative is checked
            self.finish(bad, codes[bad])
            if not self.n:
                return False
        return self.drop(~np.isfinite(self.v[out]), "nonfinite-value")

    def _central(self, out: str) -> bool:
        x = self.v["x"]
        h = _H1 * np.maximum(1.0, _abs(x))
        self.v["_h"], self.v["_xp"], self.v["_xm"] = h, x + h, x - h
        if not (self.evaluate(0, "_xp", "_fp") and self.evaluate(0, "_xm", "_fm")):
            return False
        self.v[out] = _div(self.v["_fp"] - self.v["_fm"], 2 * self.v["_h"], self.eng.sc)
        return True

    def _choose(self, out: str) -> bool:
        """First derivative of an 'auto' run: complex step, checked once per lane against a central difference."""
        if self.count >= self.eng.max_evals:
            self.finish_all("max-evals")
            return False
        self.count += 1
        x, f0 = self.v["x"], self.eng.fns.fs[0]
        assert f0 is not None
        try:
            with np.errstate(all="ignore"):
                y = np.asarray(f0(_cx(x, np.full(x.shape, CSTEP_H)), **self.p))
            cs = (y.imag / CSTEP_H).astype(np.float64) if y.shape == x.shape and y.dtype.kind in "fc" else None
        except Exception:
            cs = None
        if cs is None:
            self.eng.fns.notes.append("f does not accept complex input; derivatives by central difference")
            cs = np.full(x.shape, np.nan)
        self.v["_cs"] = cs
        if not self._central("_cd"):
            return False
        cs, cd, fx, h = self.v["_cs"], self.v["_cd"], self.v["fx"], self.v["_h"]
        with np.errstate(all="ignore"):
            scale = np.maximum(np.abs(cs), np.abs(cd))
            agree = np.isfinite(cs) & ((np.abs(cs - cd) <= 1e-4 * scale + 1e-6 * np.abs(fx) / h) | (scale == 0.0))
        self.v[out] = np.where(agree, cs, cd)
        self.split = agree
        return True

    def second_derivative(self, out: str) -> bool:
        if self.eng.fns.fs[2] is not None:
            return self.evaluate(2, "x", out)
        x = self.v["x"]
        h = _H2 * np.maximum(1.0, _abs(x))
        self.v["_h2"], self.v["_xp2"], self.v["_xm2"] = h, x + h, x - h
        if not (self.evaluate(0, "_xp2", "_fp2") and self.evaluate(0, "_xm2", "_fm2")):
            return False
        v = self.v
        v[out] = _div(v["_fp2"] - 2 * v["fx"] + v["_fm2"], v["_h2"] * v["_h2"], self.eng.sc)
        return True

    # -- a step is complete: record, test the stopping rules, move on ------------------------------
    def step_done(self, xn: Arr, fn: Arr, shift: Callable[[dict[str, Arr]], None]) -> None:
        eng, v = self.eng, self.v
        self.k += 1
        xp = v["x"]
        if eng.out.track is not None:
            _track_step(v, xp, xn, fn)
        with np.errstate(all="ignore"):
            s = np.subtract(xn, xp, out=eng.sc("step", xn.shape[0], xn.dtype))
            small = _le_abs(eng.sc, s, eng.xtol, eng.rtol, xn, eng.exact)
        zero = None if np.all(fn) else fn == 0  # np.all is a cheap test for "no exact zero"
        resid = _le_abs(eng.sc, fn, eng.ftol, exact=eng.exact) if eng.ftol > 0 else None
        shift(v)
        v["x"], v["fx"] = xn, fn
        for key in [k for k in v if k.startswith("_") or k in ("d", "d2", "g", "xs")]:
            del v[key]
        done = small
        for extra in (zero, resid):
            if extra is not None:
                done = done | extra
        if eng.max_steps is not None and self.k >= eng.max_steps:
            done = np.ones(self.idx.size, bool)
        if done.any():
            z = zero[done] if zero is not None else np.zeros(int(np.count_nonzero(done)), bool)
            code = np.where(z, _R["exact-zero"], np.where(small[done], _R["step-small"], _R["max-steps"]))
            if resid is not None:
                code = np.where(~z & resid[done], _R["residual-small"], code)
            self.finish(done, code.astype(np.uint8), lazy=True)


def _track_init(v: dict[str, Arr], x0: Arr, dt: Any) -> None:
    n = x0.shape[0]
    v["bx"], v["bv"], v["bf"] = np.full(n, np.nan, dt), np.full(n, np.nan, dt), np.full(n, np.inf)
    v["s1"], v["s2"], v["s3"], v["fa"], v["fb"], v["fc"], v["ax"] = (np.full(n, np.nan) for _ in range(7))
    v["kick"], v["xmax"], v["scale"] = np.zeros(n, bool), np.zeros(n), np.maximum(1.0, _abs(x0))


def _track_start(v: dict[str, Arr], x: Arr, fx: Arr) -> None:
    af = _abs(fx)
    better = af < v["bf"]
    v["bf"], v["bx"], v["bv"] = np.where(better, af, v["bf"]),\
        np.where(better, x, v["bx"]), np.where(better, fx, v["bv"])
    v["ax"] = _abs(x)
    v["xmax"], v["fa"] = np.maximum(v["xmax"], v["ax"]), af


def _track_step(v: dict[str, Arr], xp: Arr, xn: Arr, fn: Arr) -> None:
    with np.errstate(all="ignore"):
        s = _abs(xn - xp)
        v["kick"] = v["kick"] | (s > KICK * np.maximum(1.0, _abs(xp)))
    v["s3"], v["s2"], v["s1"] = v["s2"], v["s1"], s
    v["fc"], v["fb"] = v["fb"], v["fa"]
    _track_start(v, xn, fn)


class _Engine:
    def __init__(self, method: str, fns: _Functions, cplx: bool, xtol: float, rtol: float, ftol: float,
                 max_evals: int, max_steps: int | None, exact: bool = True) -> None:
        self.method, self.fns, self.cplx, self.exact = method, fns, cplx, exact
        self.sc = _Scratch()
        self.xtol, self.rtol, self.ftol, self.max_evals, self.max_steps = xtol, rtol, ftol, max_evals, max_steps
        self.out = _Out(0, cplx, False)

    def run(self, starts: list[Arr], params: dict[str, Any], track: bool) -> _Out:
        n = starts[0].shape[0]
        self.out = _Out(n, self.cplx, track)
        v = {f"x{j}": s for j, s in enumerate(starts)}
        v["x"], v["fx"] = starts[0], np.full(n, np.nan, starts[0].dtype)
        if track:
            _track_init(v, starts[0], starts[0].dtype)
        g = _Group(self, np.arange(n), v, dict(params), 0, 0, self.fns.source)
        if self._begin(g, len(starts), track):
            work = [g]
            step = _STEPS[self.method]
            while work:
                g = work.pop()
                while g.n:
                    step(g)
                    if g.split is not None:
                        g.compact()
                        keep, g.split = g.split, None
                        other = _Group(self, g.idx, g.v, g.p, g.count, g.k, "central-difference")
                        other.take(np.flatnonzero(~keep))
                        g.take(np.flatnonzero(keep))
                        g.source = "complex-step"
                        work.append(other)
        return self.out

    def _begin(self, g: _Group, m: int, track: bool) -> bool:
        for j in range(m):
            if not g.evaluate(0, f"x{j}", f"f{j}"):
                return False
            if track:
                _track_start(g.v, g.v[f"x{j}"], g.v[f"f{j}"])
            g.v["x"], g.v["fx"] = g.v[f"x{j}"], g.v[f"f{j}"]
        v = g.v
        zero = v["f0"] == 0
        for j in range(1, m):
            zero = zero | (v[f"f{j}"] == 0)
        if zero.any():  # the root is the first start where f is zero
            for j in range(m - 1, -1, -1):
                v["x"] = np.where(v[f"f{j}"] == 0, v[f"x{j}"], v["x"])
                v["fx"] = np.where(v[f"f{j}"] == 0, v[f"f{j}"], v["fx"])
            g.finish(zero, _R["exact-zero"])
        if m == 2:
            v = g.v
            v["xp"], v["fp"] = v["x0"], v["f0"]
        for key in [k for k in g.v if k[0] in "xf" and k[1:].isdigit()]:
            del g.v[key]
        return g.n > 0


def _newton(g: _Group) -> None:
    if not g.derivative("d"):
        return
    v = g.v
    with np.errstate(all="ignore"):
        x, fx, d = v["x"], v["fx"], v["d"]
        v["xn"] = xn = _minus_quotient(x, fx, d, g.eng)
    if not np.isfinite(xn).all():
        bad = ~np.isfinite(xn)
        zero = v["d"][bad] == 0
        g.finish(bad, np.where(zero, _R["zero-derivative"], _R["iterate-overflow"]).astype(np.uint8))
    if g.n and g.evaluate(0, "xn", "fn"):
        g.step_done(g.v.pop("xn"), g.v.pop("fn"), _no_shift)


def _halley(g: _Group) -> None:
    if not (g.derivative("d") and g.second_derivative("d2")):
        return
    v = g.v
    d1, d2, fx = v["d"], v["d2"], v["fx"]
    with np.errstate(all="ignore"):
        den = _mul(2 * d1, d1) - _mul(fx, d2)
        zero = (d1 == 0) | (den == 0)
        v["xn"] = _minus_quotient(v["x"], _mul(2 * fx, d1), den, g.eng)
    if g.drop(zero, "zero-derivative"):
        _finish_step(g)


def _secant(g: _Group) -> None:
    v = g.v
    if not g.drop(v["fx"] == v["fp"], "flat-secant"):
        return
    v = g.v
    x0, f0, x1, f1 = v["xp"], v["fp"], v["x"], v["fx"]
    with np.errstate(all="ignore"):
        v["xn"] = _minus_quotient(x1, _mul(f1, x1 - x0), f1 - f0, g.eng)
    _finish_step(g, _secant_shift)


def _steffensen(g: _Group) -> None:
    v = g.v
    with np.errstate(all="ignore"):
        v["xs"] = v["x"] + v["fx"]
    if not g.drop(~np.isfinite(v["xs"]), "iterate-overflow"):
        return
    if not g.evaluate(0, "xs", "g"):
        return
    v = g.v
    if not g.drop(v["g"] == v["fx"], "flat-secant"):
        return
    v = g.v
    fx = v["fx"]
    with np.errstate(all="ignore"):
        v["xn"] = _minus_quotient(v["x"], _mul(fx, fx), v["g"] - fx, g.eng)
    _finish_step(g)


def _finish_step(g: _Group, shift: Callable[[dict[str, Arr]], None] | None = None) -> None:
    if not g.drop(~np.isfinite(g.v["xn"]), "iterate-overflow"):
        return
    if g.evaluate(0, "xn", "fn"):
        g.step_done(g.v.pop("xn"), g.v.pop("fn"), shift or _no_shift)


def _no_shift(v: dict[str, Arr]) -> None:
    return None


def _secant_shift(v: dict[str, Arr]) -> None:
    v["xp"], v["fp"] = v["x"], v["fx"]


_STEPS: dict[str, Callable[[_Group], None]] = {
    "newton": _newton, "secant": _secant, "steffensen": _steffensen, "halley": _halley
}


# -- classification ----------------------------------------------------------------------------------
def _multiplicity(q: Arr, method: str) -> Arr:
    """Multiplicity m whose linear rate the method shows (REFERENCES §1: Newton (m-1)/m, Halley (m-1)/(m+1),
    secant: root of t^m + t^(m-1) = 1)."""
    with np.errstate(all="ignore"):
        if method == "newton":
            out: Arr = 1 / (1 - q)
            return out
        if method == "halley":
            out = (1 + q) / (1 - q)
            return out
        if method == "secant":
            out = 1 - np.log1p(q) / np.log(q)
            return out
    return np.full(q.shape, np.nan)


def _classify(reason: Arr, t: Mapping[str, Arr], method: str) -> Arr:
    """Outcome codes from stop reasons and the rolling record (see :data:`OUTCOME_MEANING`)."""
    r = {k: reason == _R[k] for k in REASONS}
    conv = _CONVERGED_CODES[reason]
    with np.errstate(all="ignore"):
        s1, s2, s3 = t["s1"], t["s2"], t["s3"]
        shrinking = (s1 < s2) & (s2 < s3) & (t["fa"] < t["fb"]) & (t["fb"] < t["fc"])
        q1, q2 = s1 / s2, s2 / s3
        linear = shrinking & (q1 >= 0.1) & (np.abs(q1 - q2) <= 0.1 * q1)
        m = _multiplicity(q1, method)
        settled = s1 <= 0.01 * np.maximum(1.0, t["ax"])  # far from every root, x**m also shrinks at this rate
        multiple = linear & settled & (np.abs(q1 - q2) <= 0.02 * q1) & (np.abs(m - np.round(m)) < 0.1) & (m > 1.9)
        multiple &= m < 6.1
        far = t["xmax"] > FAR * t["scale"]
    budget = r["max-evals"] | r["max-steps"] | r["max-time"]
    out = np.full(reason.shape, _O["cycle"], np.uint8)
    out[budget & shrinking] = _O["budget"]
    out[budget & linear] = _O["slow"]
    out[budget & multiple] = _O["multiple-root"]
    with np.errstate(all="ignore"):
        noise = (s1 <= 1e-12 * t["ax"]) & (s2 <= 1e-12 * t["ax"])
    out[budget & ~shrinking & noise] = _O["stalled"]
    out[r["function-raised"] | r["nonfinite-value"] | r["bad-value"]] = _O["domain-error"]
    kick = t["kick"]
    out[r["zero-derivative"] | r["flat-secant"] | kick] = _O["flat"]
    # ran away: overflowed, or went far (still out there, or far without being thrown)
    out[r["iterate-overflow"] | (far & (~kick | (t["ax"] >= 0.5 * t["xmax"])))] = _O["divergence"]
    out[reason == _R["no-sign-change"]] = _O["no-bracket"]
    out[(reason == _R["not-run"]) | r["interrupted"]] = _O["not-run"]
    out[conv] = _O["converged"]
    return out


def classify_run(run: Run) -> str:
    """The outcome class of a scalar run, by the rules :func:`solve_many` applies to each lane.

    Examples
    --------
    >>> from convdiag import solve
    >>> classify_run(solve("x**3 - 2*x + 2", "newton", start=0.0, max_evals=40))
    'cycle'
    >>> classify_run(solve("x**2 - 2", "newton", start=1.0))
    'converged'
    """
    starts, values = list(run.starts), list(run.start_values)
    xs = [*starts, *(s.x for s in run.steps)]
    cplx = any(isinstance(complex(_num(v)), complex) and isinstance(_num(v), complex) for v in xs)
    dt = np.complex128 if cplx else np.float64

    def a(v: Any) -> Arr:
        return np.array([_num(v)], dtype=dt)

    t: dict[str, Arr] = {}
    _track_init(t, a(starts[0] if starts else math.nan), dt)
    for x, fx in zip(starts, values):
        _track_start(t, a(x), a(fx))
    prev = starts[-1] if starts else math.nan
    for s in run.steps:
        _track_step(t, a(prev), a(s.x), a(s.fx))
        prev = s.x
    code = _R.get(run.stop_reason, _R["not-run"])
    return OUTCOMES[int(_classify(np.array([code], np.uint8), t, run.method)[0])]


def _num(v: Any) -> Any:
    if isinstance(v, (float, complex)):
        return v
    try:
        return float(v)
    except (TypeError, ValueError, OverflowError):
        return complex(v)


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
        out: NDArray[np.bool_] = self.outcome_code == _O["converged"]
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
    exact: bool = True,
) -> Lanes:
    """Run an open method from every start at once and classify each lane's outcome.

    Parameters
    ----------
    f : callable, str or sympy expression
        ``f(x, **params)`` evaluated on arrays (elementwise numpy code), or
        expression text. A function that does not take arrays is called lane
        by lane (slow but exact).
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
    exact : bool
        True (default): complex quotients and moduli as Python computes them,
        so complex lanes match ``convdiag.solve`` to the last bit. False uses
        numpy's own (about twice as fast on complex grids; the last bit may
        differ). Real lanes are the same either way.

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
    fns = _functions(f, fprime, fprime2, list(p), variable, owner)
    if vectorized is False:
        fns.vectorized = False
    lane_starts = [flat]
    if VECTOR_METHODS[method] == 2:
        lane_starts.append(flat + 1e-4 * np.maximum(1.0, _abs(flat)))
    eng = _Engine(method, fns, cplx, settings.xtol, settings.rtol, settings.ftol, settings.max_evals,
                  settings.max_steps, bool(exact))
    o = eng.run(lane_starts, p, track=False)
    outcome = np.zeros(flat.size, np.uint8)
    failed = np.nonzero(~_CONVERGED_CODES[o.reason])[0]
    if failed.size:  # run the failed lanes again, keeping the rolling record that classifies them
        sub = {k: (a[failed] if isinstance(a, np.ndarray) else a) for k, a in p.items()}
        o2 = eng.run([s[failed] for s in lane_starts], sub, track=True)
        assert o2.track is not None
        conv2 = _CONVERGED_CODES[o2.reason]
        o.x[failed] = np.where(conv2, o2.x, o2.track["bx"])
        o.fx[failed] = np.where(conv2, o2.fx, o2.track["bv"])
        o.evals[failed], o.steps[failed], o.reason[failed] = o2.evals, o2.steps, o2.reason
        outcome[failed] = _classify(o2.reason, o2.track, method)
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
