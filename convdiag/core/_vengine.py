"""The vectorised engine: open methods stepped on many lanes at once, the driver's rules applied per lane.

A *group* is a set of active lanes that have used the same number of
evaluations and steps, so budgets are scalars. Lanes that stop leave the
group's arrays (converged lanes lazily, once an eighth of the arrays is
stopped). Lanes run in blocks of :data:`BLOCK_BYTES` per array, so that a
step's arrays stay in the processor's cache; when a block is down to an
eighth of its lanes they are set aside, and the set-aside groups of all
blocks are merged once they reach the same step, so the long tail of slow
lanes is stepped together rather than block by block.

Each step follows the scalar method code of :mod:`convdiag.core._methods`
and the driver of :mod:`convdiag.core._session` (the same evaluations in the
same order, the same checks, the same stop reasons), with the arithmetic of
:mod:`convdiag.core._varith`.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

import numpy as np
from numpy.typing import NDArray

from ._outcomes import TRACK, R, track_dtype, track_init, track_start, track_step
from ._varith import Scratch, cx, le_abs, minus_quotient, mul
from ._vfunctions import LaneFunctions, all_finite

__all__ = ["BLOCK_BYTES", "Engine", "Out"]

Arr = NDArray[Any]
EPS = 2.220446049250313e-16
CSTEP_H = 1e-20
_H1, _H2 = EPS ** (1 / 3), EPS**0.25  # difference steps, as in the scalar evaluator
#: Bytes per array of a block of lanes (32768 complex or 65536 real lanes): a step's arrays stay in the
#: processor's cache, and each step's Python overhead is spread over many lanes.
BLOCK_BYTES = 512 * 1024


class Out:
    """Per-lane results of one engine pass."""

    def __init__(self, n: int, cplx: bool, track: bool) -> None:
        dt = np.complex128 if cplx else np.float64
        self.x, self.fx = np.full(n, np.nan, dt), np.full(n, np.nan, dt)
        self.evals, self.steps = np.zeros(n, np.int32), np.zeros(n, np.int32)
        self.reason = np.full(n, R["not-run"], np.uint8)
        self.track = {k: np.zeros(n, track_dtype(k, dt)) for k in TRACK} if track else None


class Group:
    """Active lanes that have used the same number of evaluations (so budgets are scalars)."""

    def __init__(self, eng: Engine, idx: Arr, v: dict[str, Arr], p: dict[str, Any], count: int, k: int,
                 source: str) -> None:
        self.eng, self.idx, self.v, self.p = eng, idx, v, p
        self.count, self.k, self.source = count, k, source
        self.split: Arr | None = None
        self.alive: Arr | None = None  # None: every lane in the arrays is active
        self.n = int(idx.size)  # active lanes

    def key(self) -> tuple[Any, ...]:
        """Groups with equal keys can be merged into one."""
        return self.k, self.count, self.source, tuple(sorted(self.v))

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
            for key in TRACK:
                o.track[key][sel] = v[key].take(at)
        if self.alive is None:
            self.alive = np.ones(self.idx.size, bool)
        self.alive[at] = False
        self.n -= int(at.size)
        if not lazy or self.n < 0.875 * self.idx.size:
            self.compact()

    def finish_all(self, reason: str) -> None:
        self.finish(np.ones(self.idx.size, bool), R[reason])

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
            self.finish(mask, R[reason])
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
        y, codes = self.eng.fns.call(0, cx(x, np.full(x.shape, CSTEP_H)), self.p, True)
        self.v[out] = y.imag / CSTEP_H
        if codes is not None:
            bad = (codes != 0) & (codes != R["nonfinite-value"])  # as in the scalar: only the derivative is checked
            self.finish(bad, codes[bad])
            if not self.n:
                return False
        return self.drop(~np.isfinite(self.v[out]), "nonfinite-value")

    def _central(self, out: str) -> bool:
        x = self.v["x"]
        h = _H1 * np.maximum(1.0, np.abs(x) if x.dtype.kind != "c" else np.hypot(x.real, x.imag))
        self.v["_h"], self.v["_xp"], self.v["_xm"] = h, x + h, x - h
        if not (self.evaluate(0, "_xp", "_fp") and self.evaluate(0, "_xm", "_fm")):
            return False
        self.v[out] = (self.v["_fp"] - self.v["_fm"]) / (2 * self.v["_h"])
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
                y = np.asarray(f0(cx(x, np.full(x.shape, CSTEP_H)), **self.p))
            cs = (y.imag / CSTEP_H).astype(np.float64) if y.shape == x.shape and y.dtype.kind in "fc" else None
        except Exception:  # noqa: BLE001  (f does not take complex input: central differences)
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
        h = _H2 * np.maximum(1.0, np.abs(x) if x.dtype.kind != "c" else np.hypot(x.real, x.imag))
        self.v["_h2"], self.v["_xp2"], self.v["_xm2"] = h, x + h, x - h
        if not (self.evaluate(0, "_xp2", "_fp2") and self.evaluate(0, "_xm2", "_fm2")):
            return False
        v = self.v
        v[out] = (v["_fp2"] - 2 * v["fx"] + v["_fm2"]) / (v["_h2"] * v["_h2"])
        return True

    # -- a step is complete: record, test the stopping rules, move on ------------------------------
    def step_done(self, xn: Arr, fn: Arr, shift: Callable[[dict[str, Arr]], None] | None = None) -> None:
        eng, v = self.eng, self.v
        self.k += 1
        xp = v["x"]
        if eng.track:
            track_step(v, xp, xn, fn)
        sc = eng.sc
        with np.errstate(all="ignore"):
            s = np.subtract(xn, xp, out=sc("step", xn.shape[0], xn.dtype))
            small = le_abs(sc, s, eng.xtol, eng.rtol, xn)
        zero = None if np.all(fn) else fn == 0  # np.all is a cheap test for "no exact zero"
        resid = le_abs(sc, fn, eng.ftol, key="le_f") if eng.ftol > 0 else None
        if shift is not None:
            shift(v)
        v["x"], v["fx"] = xn, fn
        for key in [k for k in v if k[0] == "_"]:
            del v[key]
        done = small
        for extra in (zero, resid):
            if extra is not None:
                done = done | extra
        if eng.max_steps is not None and self.k >= eng.max_steps:
            done = np.ones(self.idx.size, bool)
        if done.any():
            z = zero[done] if zero is not None else np.zeros(int(np.count_nonzero(done)), bool)
            code = np.where(z, R["exact-zero"], np.where(small[done], R["step-small"], R["max-steps"]))
            if resid is not None:
                code = np.where(~z & resid[done], R["residual-small"], code)
            self.finish(done, code.astype(np.uint8), lazy=True)


def _merge(groups: list[Group]) -> Group:
    """One group from groups with equal keys (each compacted)."""
    if len(groups) == 1:
        return groups[0]
    g0 = groups[0]
    idx = np.concatenate([g.idx for g in groups])
    v = {k: np.concatenate([g.v[k] for g in groups]) for k in g0.v}
    p = {k: (np.concatenate([g.p[k] for g in groups]) if isinstance(a, np.ndarray) else a) for k, a in g0.p.items()}
    return Group(g0.eng, idx, v, p, g0.count, g0.k, g0.source)


class Engine:
    """One method with fixed settings, run on lanes by :meth:`run`."""

    def __init__(self, method: str, fns: LaneFunctions, cplx: bool, xtol: float, rtol: float, ftol: float,
                 max_evals: int, max_steps: int | None, block: int | None = None) -> None:
        self.method, self.fns, self.cplx = method, fns, cplx
        self.sc = Scratch()
        self.xtol, self.rtol, self.ftol, self.max_evals, self.max_steps = xtol, rtol, ftol, max_evals, max_steps
        self.block = max(1, int(block)) if block is not None else BLOCK_BYTES // (16 if cplx else 8)
        self.track = False
        self.out = Out(0, cplx, False)
        self._step = STEPS[method]

    def run(self, starts: list[Arr], params: dict[str, Any], track: bool) -> Out:
        """Run every lane (``starts[j][i]``: lane i's j-th start) to its stop; per-lane results."""
        n = starts[0].shape[0]
        self.out, self.track = Out(n, self.cplx, track), track
        blocks = range(0, n, self.block)
        park = max(1, self.block // 8) if len(blocks) > 1 else 0
        parked: list[Group] = []
        for lo in blocks:
            hi = min(lo + self.block, n)
            v = {f"_x{j}": s[lo:hi] for j, s in enumerate(starts)}
            v["x"], v["fx"] = v["_x0"], np.full(hi - lo, np.nan, starts[0].dtype)
            if track:
                track_init(v, v["_x0"], starts[0].dtype)
            p = {k: (a[lo:hi] if isinstance(a, np.ndarray) else a) for k, a in params.items()}
            g = Group(self, np.arange(lo, hi), v, p, 0, 0, self.fns.source)
            if not self._begin(g, len(starts), track):
                continue
            pending = [g]
            while pending:
                g = pending.pop()
                while g.n:
                    if g.n <= park:
                        g.compact()
                        parked.append(g)
                        break
                    self._advance(g, pending)
        self._drain(parked)
        return self.out

    def _advance(self, g: Group, others: list[Group]) -> None:
        """One step of ``g``; lanes that split off (a per-lane derivative source) go to ``others``."""
        self._step(g)
        if g.split is not None:
            g.compact()
            keep, g.split = g.split, None
            other = Group(self, g.idx, g.v, g.p, g.count, g.k, "central-difference")
            other.take(np.flatnonzero(~keep))
            g.take(np.flatnonzero(keep))
            g.source = "complex-step"
            if other.n:
                others.append(other)

    def _drain(self, parked: list[Group]) -> None:
        """Step the set-aside groups, merging those that reach the same step and count."""
        while parked:
            parked.sort(key=lambda g: (g.k, g.count))
            key = parked[0].key()
            same = [g for g in parked if g.key() == key]
            rest = [g for g in parked if g.key() != key]
            g = _merge(same)
            stop = min((h.k for h in rest), default=None)
            while g.n:
                self._advance(g, rest)
                if stop is not None and g.k >= stop:
                    break
            if g.n:
                g.compact()
                rest.append(g)
            parked = rest

    def _begin(self, g: Group, m: int, track: bool) -> bool:
        for j in range(m):
            if not g.evaluate(0, f"_x{j}", f"_f{j}"):
                return False
            if track:
                track_start(g.v, g.v[f"_x{j}"], g.v[f"_f{j}"])
            g.v["x"], g.v["fx"] = g.v[f"_x{j}"], g.v[f"_f{j}"]
        v = g.v
        zero = v["_f0"] == 0
        for j in range(1, m):
            zero = zero | (v[f"_f{j}"] == 0)
        if zero.any():  # the root is the first start where f is zero
            for j in range(m - 1, -1, -1):
                v["x"] = np.where(v[f"_f{j}"] == 0, v[f"_x{j}"], v["x"])
                v["fx"] = np.where(v[f"_f{j}"] == 0, v[f"_f{j}"], v["fx"])
            g.finish(zero, R["exact-zero"])
        if m == 2:
            v = g.v
            v["xp"], v["fp"] = v["_x0"], v["_f0"]
        for key in [k for k in g.v if k[0] == "_"]:
            del g.v[key]
        return g.n > 0


# -- one step of each method, as in core/_methods.py ---------------------------------------------------
def _newton(g: Group) -> None:
    if not g.derivative("_d"):
        return
    v, eng = g.v, g.eng
    with np.errstate(all="ignore"):
        v["_xn"] = xn = minus_quotient(v["x"], v["fx"], v["_d"], eng.sc)
    if not all_finite(xn):  # f'(x) = 0 (the scalar method checks it first), or the step overflowed
        bad = ~np.isfinite(xn)
        zero = v["_d"][bad] == 0
        g.finish(bad, np.where(zero, R["zero-derivative"], R["iterate-overflow"]).astype(np.uint8))
        if not g.n:
            return
    if g.evaluate(0, "_xn", "_fn"):
        g.step_done(g.v["_xn"], g.v["_fn"])


def _halley(g: Group) -> None:
    if not (g.derivative("_d") and g.second_derivative("_d2")):
        return
    v, eng = g.v, g.eng
    d1, d2, fx = v["_d"], v["_d2"], v["fx"]
    with np.errstate(all="ignore"):
        den = mul(2 * d1, d1) - mul(fx, d2)
        zero = (d1 == 0) | (den == 0)
        v["_xn"] = minus_quotient(v["x"], mul(2 * fx, d1), den, eng.sc)
    if g.drop(zero, "zero-derivative"):
        _finish_step(g)


def _secant(g: Group) -> None:
    v = g.v
    if not g.drop(v["fx"] == v["fp"], "flat-secant"):
        return
    v = g.v
    x0, f0, x1, f1 = v["xp"], v["fp"], v["x"], v["fx"]
    with np.errstate(all="ignore"):
        v["_xn"] = minus_quotient(x1, mul(f1, x1 - x0), f1 - f0, g.eng.sc)
    _finish_step(g, _secant_shift)


def _steffensen(g: Group) -> None:
    v = g.v
    with np.errstate(all="ignore"):
        v["_xs"] = v["x"] + v["fx"]
    if not g.drop(~np.isfinite(v["_xs"]), "iterate-overflow"):
        return
    if not g.evaluate(0, "_xs", "_g"):
        return
    v = g.v
    if not g.drop(v["_g"] == v["fx"], "flat-secant"):
        return
    v = g.v
    fx = v["fx"]
    with np.errstate(all="ignore"):
        v["_xn"] = minus_quotient(v["x"], mul(fx, fx), v["_g"] - fx, g.eng.sc)
    _finish_step(g)


def _finish_step(g: Group, shift: Callable[[dict[str, Arr]], None] | None = None) -> None:
    if not all_finite(g.v["_xn"]) and not g.drop(~np.isfinite(g.v["_xn"]), "iterate-overflow"):
        return
    if g.evaluate(0, "_xn", "_fn"):
        g.step_done(g.v["_xn"], g.v["_fn"], shift)


def _secant_shift(v: dict[str, Arr]) -> None:
    v["xp"], v["fp"] = v["x"], v["fx"]


STEPS: dict[str, Callable[[Group], None]] = {
    "newton": _newton, "secant": _secant, "steffensen": _steffensen, "halley": _halley
}
