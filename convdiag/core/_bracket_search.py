"""The bracket search in progress: grid or outward scan, then a closer look where something happens.

:class:`Work` keeps the candidates found so far and the sign changes waiting
to be classified. :meth:`Work.scan_domain` samples a domain on a grid and
:meth:`Work.expand` searches outward from a guess; each sign change is judged
by ``_signchange.classify_sign_change``, each defined/undefined boundary is
located by ``_edges.locate_edge``, each run of infinite samples is judged pole or
overflow by ``_edges.inspect_infinite``, each dip of |f| is examined by
``_edges.inspect_dip``. :meth:`Work.finish` ranks the root brackets and adds
their starts and ranks them (``_bracket_starts``).
"""

from __future__ import annotations

import itertools
import math
from collections.abc import Sequence

import numpy as np

from ._bracket_sampler import Sampler
from ._bracket_starts import rank_candidates, recommend_starts
from ._brackets import Candidate, _g, _opposite
from ._edges import inspect_dip, inspect_infinite, locate_edge
from ._signchange import classify_sign_change

__all__ = ["Work"]


#: A local minimum of |f| among three samples is examined (minimised) when the parabola through
#: them dips below half the middle value, or the middle value is under a quarter of both
#: neighbours. Chosen so that smooth wiggles far from zero (2 + sin x) are left alone.
DIP_PARABOLA = 0.5
DIP_NEIGHBOURS = 0.25
#: sign changes in more than this share of the sample intervals mean roots about 3 samples apart
#: or closer: a grid that coarse can hide pairs of roots (a rule of thumb).
CROWDED = 0.35
#: the outward search from a guess stops after this many doublings (2^60 ≈ 1e18 first steps away).
MAX_DOUBLINGS = 60


def _dip_worth(a: float, fa: float, b: float, fb: float, c: float, fc: float) -> bool:
    """Whether the samples (a, b, c) (sorted, same sign) show a dip of |f| that may reach zero."""
    s = 1.0 if fb > 0 else -1.0
    ya, yb, yc = s * fa, s * fb, s * fc
    if not (ya > 0 and yb > 0 and yc > 0 and math.isfinite(ya) and math.isfinite(yc)):
        return False
    if not (yb <= ya and yb <= yc and (yb < ya or yb < yc)):
        return False
    if yb <= DIP_NEIGHBOURS * min(ya, yc):
        return True
    d1, d2 = (yb - ya) / (b - a), (yc - yb) / (c - b)
    curv = (d2 - d1) / (c - a)
    if not curv > 0:
        return False
    xv = (a + b) / 2 - d1 / (2 * curv)
    return ya + d1 * (xv - a) + curv * (xv - a) * (xv - b) <= DIP_PARABOLA * yb


class Work:
    """The search in progress: candidates found so far, sign changes waiting, notes."""

    def __init__(self, sampler: Sampler, *, touch_rtol: float, edge_tol: float) -> None:
        self.s = sampler
        self.touch_rtol = touch_rtol
        self.edge_tol = edge_tol
        self.found: list[Candidate] = []
        self.pending: list[tuple[float, float, float, float, int]] = []
        self.notes: list[str] = []
        self.values: list[float] = []
        self.scale = math.nan
        self.span = (math.inf, -math.inf)
        self.judged: set[float] = set()  # infinite samples of the outward search already judged

    def _seen(self, xs: Sequence[float], vals: Sequence[float]) -> None:
        self.values.extend(abs(v) for v in vals if math.isfinite(v) and v != 0)
        with np.errstate(over="ignore"):
            self.scale = float(np.median(self.values)) if self.values else math.nan
        if math.isinf(self.scale):  # the two middle values near the float limit: their mean overflowed
            self.scale = float(np.quantile(self.values, 0.5, method="lower"))
        self.span = (min(self.span[0], *xs), max(self.span[1], *xs))

    # -- one feature each ------------------------------------------------------------
    def run_pending(self) -> None:
        while self.pending:
            item, found = self.pending.pop(0), len(self.found)
            try:
                self.sign_change(*item)
            except BaseException:  # a budget or an interrupt before it was judged: listed as unclassified
                if len(self.found) == found:
                    self.pending.insert(0, item)
                raise

    def sign_change(self, a: float, fa: float, b: float, fb: float, after: int) -> None:
        before = self.s.count
        sc = classify_sign_change(self.s, a, b, f_lo=fa, f_hi=fb, max_evals=self.s.max_evals)
        if sc.kind == "undefined":
            assert sc.x_undefined is not None
            self.edge(sc.lo, sc.f_lo, sc.x_undefined, after)
            self.edge(sc.hi, sc.f_hi, sc.x_undefined, after)
            return
        evidence = {
            "exponent": sc.exponent,
            "exponent_max": sc.q_max,
            "exponent_min": sc.q_min,
            "initial_width": sc.widths[0] if sc.widths else b - a,
            "width": sc.hi - sc.lo,
            "halvings": float(max(0, len(sc.widths) - 1)),
            "abs_f_start": sc.abs_max[0] if sc.abs_max else math.nan,
            "abs_f_end": sc.abs_max[-1] if sc.abs_max else math.nan,
            "exact_zero": float(sc.exact_zero),
            "found_after": float(after),
            "classified_after": float(self.s.count),
            "evaluations": float(self.s.count - before),
        }
        self.found.append(Candidate(sc.kind, sc.lo, sc.hi, sc.f_lo, sc.f_hi, sc.x, evidence, sc.reason))

    def edge(self, x_def: float, f_def: float, x_undef: float, after: int) -> None:
        before = self.s.count
        e = locate_edge(self.s, x_def, x_undef, f_defined=f_def, xtol=self.edge_tol, max_evals=self.s.max_evals)
        lo, hi = sorted((e.x_defined, e.x_undefined))
        side = e.undefined_side
        what = self.s.last_problem or e.what or "not a number"  # the sampler saw the exception itself
        reason = (
            f"f is defined at {e.x_defined:.9g} but not at {e.x_undefined:.9g} ({what}): undefined on the {side}"
            + ("" if e.complete else "; the budget ran out before the edge was located to the tolerance")
        )
        evidence = {"width": hi - lo, "found_after": float(after), "evaluations": float(self.s.count - before)}
        f_lo, f_hi = (math.nan, e.f_defined) if side == "left" else (e.f_defined, math.nan)
        self.found.append(
            Candidate("domain-edge", lo, hi, f_lo, f_hi, e.x_defined, evidence, reason, undefined_side=side)
        )
        pts = e.defined_points
        for (p, fp), (q, fq) in itertools.pairwise(pts):  # sign changes met on the way to the edge
            if _opposite(fp, fq):
                self.pending.append((min(p, q), fp if p < q else fq, max(p, q), fq if p < q else fp, self.s.count))
        self.run_pending()

    def zero(
        self, left: tuple[float, float] | None, z_lo: float, z_hi: float, right: tuple[float, float] | None,
        after: int,
    ) -> None:
        x = z_lo + (z_hi - z_lo) / 2
        evidence = {"exact_zero": 1.0, "min_abs_f": 0.0, "found_after": float(after)}
        where = f"f({_g(x, 17)}) = 0 exactly" if z_lo == z_hi else f"f = 0 exactly on [{_g(z_lo)}, {_g(z_hi)}]"
        if left is not None and right is not None and all(math.isfinite(v) and v != 0 for v in (left[1], right[1])):
            (xl, fl), (xr, fr) = left, right
            if _opposite(fl, fr):
                reason = f"{where}, and f changes sign across [{_g(xl)}, {_g(xr)}]"
                self.found.append(Candidate("root", xl, xr, fl, fr, x, evidence, reason))
            else:
                reason = f"{where}, with the same sign on both sides"
                self.found.append(Candidate("touch", xl, xr, fl, fr, x, evidence, reason))
            return
        reason = f"{where} (at the end of what was sampled, so the sign beyond it is unknown)"
        self.found.append(Candidate("root", z_lo, z_hi, 0.0, 0.0, x, evidence, reason))

    def infinite(
        self, x_first: float, x_last: float, value: float, left: tuple[float, float] | None,
        right: tuple[float, float] | None, after: int, extent: str,
    ) -> None:
        """Judge samples x_first..x_last where f = ±inf (``left``/``right``: the finite neighbours, None at the
        end of what was searched): a pole, or a domain edge per side where f overflows. ``extent`` says how
        far the infinite values reach, for the overflow reason."""
        before = self.s.count
        inf = inspect_infinite(
            self.s, x_first, x_last, value, left=left, right=right, xtol=self.edge_tol, max_evals=self.s.max_evals
        )
        spent = float(self.s.count - before)
        if inf.kind == "pole":
            el, er = inf.left, inf.right
            assert el is not None and er is not None
            gl, gr = inf.growth
            evidence = {
                "exponent": inf.exponent, "growth_left": gl, "growth_right": gr, "width": er.x_defined - el.x_defined,
                "found_after": float(after), "evaluations": spent,
            }
            reason = (
                f"f({_g(inf.x, 17)}) = {value}, and |f| grows toward it from both sides ({_g(gl, 3)}-fold on the "
                f"left, {_g(gr, 3)}-fold on the right, down to [{_g(el.x_defined, 12)}, {_g(er.x_defined, 12)}])"
            )
            self.found.append(Candidate("pole", el.x_defined, er.x_defined, el.f_defined, er.f_defined, inf.x,
                                        evidence, reason))
        for e in () if inf.kind == "pole" else (inf.left, inf.right):
            if e is None:
                continue
            lo, hi = sorted((e.x_defined, e.x_undefined))
            side = e.undefined_side
            if inf.kind == "overflow":
                reason = f"f overflows beyond ≈ {_g(e.x_defined)}: f = {value} from {_g(e.x_undefined, 12)} {extent}"
            else:
                reason = (f"f is finite at {_g(e.x_defined, 12)} and {value} just to its {side}: infinite over a "
                          "stretch with finite values beyond it, not a pole (the stretch is wider than the tolerance, "
                          "or |f| does not grow toward it)")
            if not e.complete:
                reason += "; the budget ran out before the edge was located to the tolerance"
            evidence = {"overflow": 1.0, "width": hi - lo, "found_after": float(after), "evaluations": spent}
            f_lo, f_hi = (value, e.f_defined) if side == "left" else (e.f_defined, value)
            self.found.append(
                Candidate("domain-edge", lo, hi, f_lo, f_hi, e.x_defined, evidence, reason, undefined_side=side)
            )
        for e in (inf.left, inf.right):  # sign changes met on the way
            pts = e.defined_points if e is not None else ()
            for (p, fp), (q, fq) in itertools.pairwise(pts):
                if _opposite(fp, fq):
                    self.pending.append((min(p, q), fp if p < q else fq, max(p, q), fq if p < q else fp, self.s.count))
        self.run_pending()

    def dip(self, p1: tuple[float, float], p2: tuple[float, float], p3: tuple[float, float], after: int) -> None:
        (a, fa), (b, fb), (c, fc) = sorted((p1, p2, p3))
        if not (math.isfinite(self.scale) and self.scale > 0) or not _dip_worth(a, fa, b, fb, c, fc):
            return
        before = self.s.count
        d = inspect_dip(
            self.s, a, c, 1.0 if fb > 0 else -1.0, scale=self.scale, touch_rtol=self.touch_rtol,
            max_evals=self.s.max_evals,
        )
        v = abs(d.fx)
        if d.kind == "touch":
            evidence = {
                "min_abs_f": v,
                "scale": self.scale,
                "ratio": v / self.scale,
                "exact_zero": float(v == 0),
                "found_after": float(after),
                "evaluations": float(self.s.count - before),
            }
            reason = (
                f"|f| dips to {_g(v, 3)} at {_g(d.x, 12)} (at most {self.touch_rtol:g} × the scale {_g(self.scale, 3)})"
                f" while f keeps its sign on [{_g(a)}, {_g(c)}]"
            )
            self.found.append(Candidate("touch", a, c, fa, fc, d.x, evidence, reason))
        elif d.kind == "crossing":
            self.pending += [(a, fa, d.x, d.fx, self.s.count), (d.x, d.fx, c, fc, self.s.count)]
            self.run_pending()
        elif d.kind == "near-miss":
            self.notes.append(
                f"|f| comes down to {_g(v, 3)} ({_g(v / self.scale, 2)} × the scale {_g(self.scale, 3)}) at "
                f"x = {_g(d.x, 9)} without reaching zero: a near miss, not a touch by the rule "
                f"|f| ≤ {self.touch_rtol:g} × scale. A small change of the model could make two roots here."
            )
        elif d.kind == "undefined":
            self.edge(a, fa, d.x, after)
            self.edge(c, fc, d.x, after)

    # -- the two searches ----------------------------------------------------------------
    def scan_domain(self, lo: float, hi: float, n: int) -> None:
        with np.errstate(over="ignore"):  # a width near the float limit overflows inside, harmlessly
            xs = np.linspace(lo, hi, n).tolist()
        vs = self.s.many(xs).tolist()
        after = self.s.count
        self._seen(xs, vs)
        infinite: list[tuple[int, int]] = []
        i = 0
        while i < n:
            if vs[i] == 0:  # a run of exact zeros
                j = i
                while j + 1 < n and vs[j + 1] == 0:
                    j += 1
                left = (xs[i - 1], vs[i - 1]) if i > 0 else None
                right = (xs[j + 1], vs[j + 1]) if j + 1 < n else None
                self.zero(left, xs[i], xs[j], right, after)
                i = j + 1
                continue
            if math.isinf(vs[i]):  # a run of infinite values: a pole hit exactly, or overflow
                j = i
                while j + 1 < n and math.isinf(vs[j + 1]):
                    j += 1
                infinite.append((i, j))
                i = j + 1
                continue
            i += 1
        edges: list[tuple[float, float, float]] = []
        lone = {  # one undefined sample between values of opposite signs: judged as one sign change
            i for i in range(1, n - 1)
            if math.isnan(vs[i]) and math.isfinite(vs[i - 1]) and math.isfinite(vs[i + 1])
            and _opposite(vs[i - 1], vs[i + 1])
        }
        for i in sorted(lone):
            self.pending.append((xs[i - 1], vs[i - 1], xs[i + 1], vs[i + 1], after))
        for i, (a, b, fa, fb) in enumerate(zip(xs, xs[1:], vs, vs[1:])):
            if math.isfinite(fa) and math.isfinite(fb):
                if _opposite(fa, fb):
                    self.pending.append((a, fa, b, fb, after))
            elif (
                math.isnan(fa) != math.isnan(fb)
                and not (math.isinf(fa) or math.isinf(fb))
                and i not in lone
                and i + 1 not in lone
            ):
                edges.append((b, fb, a) if math.isnan(fa) else (a, fa, b))
        changes = [i for i in range(n - 1) if math.isfinite(vs[i] * vs[i + 1]) and _opposite(vs[i], vs[i + 1])]
        neighbours = sum(b == a + 1 for a, b in itertools.pairwise(changes))
        if neighbours or len(changes) > (n - 1) * CROWDED:
            self.notes.append(
                f"f changes sign in {len(changes)} of the {n - 1} sample intervals"
                + (f" ({neighbours} time(s) in two neighbouring ones)" if neighbours else "")
                + ": it may oscillate faster than the grid resolves, and pairs of roots can hide between "
                "samples. Raise samples."
            )
        self.run_pending()
        for x_def, f_def, x_undef in edges:
            self.edge(x_def, f_def, x_undef, after)
        for i, j in infinite:
            left = (xs[i - 1], vs[i - 1]) if i > 0 and math.isfinite(vs[i - 1]) else None
            right = (xs[j + 1], vs[j + 1]) if j + 1 < n and math.isfinite(vs[j + 1]) else None
            if left is None and right is None:
                continue  # infinite wherever sampled, or between undefined stretches: nothing to bisect from
            end = (xs[0] if i == 0 else xs[-1]) if i == 0 or j == n - 1 else math.nan
            extent = (f"to the end of the range searched ({_g(end)})" if math.isfinite(end)
                      else "up to where f is undefined")
            self.infinite(xs[i], xs[j], vs[i], left, right, after, extent)
        for i in range(1, n - 1):
            self.dip((xs[i - 1], vs[i - 1]), (xs[i], vs[i]), (xs[i + 1], vs[i + 1]), after)

    def expand(self, x0: float, step: float) -> None:
        f0 = self.s(x0)
        self._seen([x0], [f0])
        seqs: dict[int, list[tuple[float, float]]] = {-1: [(x0, f0)], 1: [(x0, f0)]}
        active = {-1: True, 1: True}
        r, first = step, True
        edges: list[tuple[float, float, float]] = []
        known: dict[float, float] = {}  # points evaluated a round early, beyond an infinite sample
        for _ in range(MAX_DOUBLINGS + 1):
            sides = [d for d in (-1, 1) if active[d] and math.isfinite(x0 + d * r) and abs(x0 + d * r) < 1e300]
            if not sides:
                self.notes.append(
                    "Both directions ended (at an edge of the domain of f, where f overflows, or beyond |x| = 1e300) "
                    "without a root bracket."
                )
                return
            pts = [x0 + d * r for d in sides]
            todo = [x for x in pts if x not in known]
            fresh = dict(zip(todo, self.s.many(todo).tolist())) if todo else {}
            vals = [known.pop(x) if x in known else fresh[x] for x in pts]
            after = self.s.count
            self._seen(pts, vals)
            infs: list[tuple[int, float, float, float, float]] = []
            for d, x, v in zip(sides, pts, vals):
                seq = seqs[d]
                p, fp = seq[-1]
                seq.append((x, v))
                if math.isinf(v) != math.isinf(fp) and not (math.isnan(v) or math.isnan(fp)):
                    infs.append((d, p, fp, x, v))
                if len(seq) >= 3 and seq[-2][1] == 0:
                    self.zero(seq[-3], seq[-2][0], seq[-2][0], seq[-1], after)
                if math.isfinite(fp) and math.isfinite(v):
                    if _opposite(fp, v):
                        self.pending.append((min(p, x), fp if p < x else v, max(p, x), v if p < x else fp, after))
                elif math.isnan(fp) != math.isnan(v) and not (math.isinf(fp) or math.isinf(v)):
                    edges.append((p, fp, x) if math.isnan(v) else (x, v, p))
                    active[d] = not math.isnan(v)
            if first and f0 == 0 and len(sides) == 2:
                self.zero(seqs[-1][1], x0, x0, seqs[1][1], after)
            self.run_pending()  # sign changes first, then the edges met in this round
            for x_def, f_def, x_undef in edges:
                self.edge(x_def, f_def, x_undef, after)
            edges.clear()
            self._infinities(x0, r, infs, known, active, after)
            for d in sides:
                if len(seqs[d]) >= 3:
                    p1, p2, p3 = seqs[d][-3:]
                    self.dip(p1, p2, p3, after)
            if first and len(sides) == 2:
                self.dip(seqs[-1][1], (x0, f0), seqs[1][1], after)
            first = False
            if any(c.kind == "root" for c in self.found):
                return
            r *= 2
        self.notes.append(
            f"Stopped after {MAX_DOUBLINGS} doublings of the distance from the guess (out to ±{_g(r / 2, 3)}) "
            "without a root bracket. Give a domain, or a guess nearer a root."
        )

    def _infinities(
        self, x0: float, r: float, infs: list[tuple[int, float, float, float, float]], known: dict[float, float],
        active: dict[int, bool], after: int,
    ) -> None:
        """Judge where f turned infinite (or finite again) between two samples of the outward search.

        Finite, then infinite going out: the next point out (evaluated now, kept for the next round) tells
        a pole hit exactly (finite again beyond) from overflow (still infinite: that side stops). Infinite,
        then finite: f is infinite at the guess; both first neighbours finite make one judgement.
        """
        at_guess = [t for t in infs if t[1] == x0 and math.isinf(t[2])]
        if len(at_guess) == 2:  # f(x0) = ±inf between two finite values
            (_, _, f0, xl, vl), (_, _, _, xr, vr) = sorted(at_guess)
            self.infinite(x0, x0, f0, (xl, vl), (xr, vr), after, "")
            infs = [t for t in infs if t not in at_guess]
        for d, p, fp, x, v in infs:
            if math.isinf(fp):  # infinite from p back toward the guess, finite at x
                if p in self.judged:
                    continue
                near = (x, v)
                self.infinite(p, p, fp, near if d < 0 else None, near if d > 0 else None, after,
                              f"back toward the guess {_g(x0)}")
                continue
            xb = x0 + d * 2 * r
            fb = math.nan
            if math.isfinite(xb) and abs(xb) < 1e300:
                fb = known[xb] = self.s(xb)
            near = (p, fp)
            if math.isfinite(fb):  # finite again beyond: a pole hit exactly, or an infinite stretch
                far = (xb, fb)
                self.infinite(x, x, v, far if d < 0 else near, near if d < 0 else far, after, "")
                self.judged.add(x)  # the next round must not judge it again from the far side
                continue
            extent = (f"up to where f is undefined (at {_g(xb)})" if math.isnan(fb) and xb in known
                      else f"to the end of the range searched ({_g(xb if math.isinf(fb) else x)})")
            if xb in known:
                self._seen([xb], [fb])
            self.infinite(x, x, v, None if d < 0 else near, near if d < 0 else None, after, extent)
            active[d] = False

    # -- starts, ranking, advice -----------------------------------------------------------
    def finish(self, *, near: float | None) -> tuple[Candidate, ...]:
        for a, fa, b, fb, after in self.pending:
            reason = "a sign change the evaluation budget left unexamined"
            self.found.append(Candidate("unclassified", a, b, fa, fb, a + (b - a) / 2, {"found_after": after}, reason))
        found = [recommend_starts(self.s, c) if c.kind == "root" else c for c in self.found]
        if not any(c.kind == "root" for c in found):
            lo, hi = self.span
            self.notes.append(f"No root bracket found on [{_g(lo)}, {_g(hi)}], the part of the line searched.")
        return rank_candidates(found, near=near, touch_rtol=self.touch_rtol)
