"""Detectors that read what a linear rate says about the root: a multiple root, or a wrong derivative.

They rest on the observed order of convergence (:func:`~convdiag.core._order.estimate_order`), and
only on a window where a rate may be read (``_detect_order.rate_order``). Rules and thresholds
(basis in brackets):

multiple-root
    Linear convergence (not at a measured noise floor), f' at the best iterate below
    0.1 × f' at the start (central differences over 1e-3 of the distance travelled; f'
    vanishes at a multiple root), and a multiplicity m ≥ 2 from (in this order) the high-precision
    reference root (u = f/f' and the first nonvanishing derivative), the method's rate
    law at a root of multiplicity m (Newton (m−1)/m, Halley (m−1)/(m+1), secant the root
    of t^m + t^(m−1) = 1; shared/REFERENCES.md §1), or the slope of log|f_k| against log
    of the step sizes (|f| ∝ e^m; within 0.2 of an integer).
wrong-derivative (from the rate)
    A derivative method (Newton, Halley, newton-m) converging linearly at a root the
    reference says is simple: Newton with a slope g ≠ f' has rate |1 − f'(r)/g(r)|
    (REFERENCES §1), so g ≈ f'/(1 ± rate). With nothing but the iterates (no f, no
    residuals), Newton's or Halley's rate law is read instead: a rate that implies a
    multiplicity m more than 0.2 from every whole m ≥ 2 (Newton at rate 1/3: m = 1.5)
    is no multiple root, so a wrong derivative is the likelier cause (a secondary finding
    when the iteration converged; a note when the method is not named).
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from ._detect_noise import noise_explains
from ._detect_order import rate_order
from ._detect_path import Context, g
from ._detect_trace import Trace, trace_converged
from ._findings import Evidence, Finding, Remedy

__all__ = ["M_OFF", "RATE_TAG", "detect_multiple_root", "detect_rate_derivative"]

FLAT_LIMIT = 0.1
_DERIVATIVE_METHODS = {"newton", "halley", "newton-m"}
#: the multiplicity m at which a method's linear rate law gives rate rho (shared/REFERENCES.md §1)
_RATE_LAWS: dict[str, tuple[str, Any]] = {
    "newton": ("(m−1)/m", lambda rho: 1 / (1 - rho)),
    "halley": ("(m−1)/(m+1)", lambda rho: (1 + rho) / (1 - rho)),
}
#: a rate-implied m farther than this from every whole m ≥ 2 is no multiple root (as for |f| ∝ e^m above)
M_OFF = 0.2
#: the tag of a wrong derivative read from the rate law alone (it does not override "converged")
RATE_TAG = "from the rate"


def _residual_multiplicity(t: Trace, est: Any) -> tuple[int | None, float]:
    """m from |f_k| ∝ e_k^m over the linear window (steps stand in for errors)."""
    if t.fs is None or est is None or est.window is None or t.n < 6:
        return None, math.nan
    lo, hi = est.window
    steps = np.abs(np.diff(t.xs))
    ks = np.arange(max(lo, 0), min(hi + 1, len(steps)))
    if len(ks) < 3:
        return None, math.nan
    with np.errstate(all="ignore"):
        le, lf = np.log10(steps[ks]), np.log10(np.abs(t.fs[ks]))
    ok = np.isfinite(le) & np.isfinite(lf)
    if np.sum(ok) < 3 or np.ptp(le[ok]) < 0.5:
        return None, math.nan
    slope = float(np.polyfit(le[ok], lf[ok], 1)[0])
    m = round(slope)
    return (m if abs(slope - m) <= 0.2 else None), slope


def detect_multiple_root(t: Trace, ctx: Context) -> Finding | None:
    est = rate_order(t, ctx)
    if est is None or est.label != "linear" or est.rate is None:
        return None
    if ctx.cache.get("derivative", {}).get("bad"):
        return None
    m_res, slope = _residual_multiplicity(t, est)
    hp = est.reference == "high-precision root"
    m = est.multiplicity if est.multiplicity is not None else m_res
    if hp and est.multiplicity == 1:
        return None
    if m is None or m < 2 or noise_explains(t, ctx):
        return None
    ev: list[Evidence] = [("linear rate", est.rate, f"over e_{est.window[0]}…e_{est.window[1]}"
                           if est.window else "")]
    if est.multiplicity_note:
        ev.append(("multiplicity", m, est.multiplicity_note.split("; ")[0]))
        hp_note = next((n for n in est.multiplicity_note.split("; ") if n.startswith("reference root")), "")
        if hp_note:
            ev.append(("high-precision check", m, hp_note))
    else:
        ev.append(("multiplicity", m, "from |f| ∝ e^m"))
    if math.isfinite(slope):
        ev.append(("|f| ∝ step^q", slope, "q = m at a root of multiplicity m"))
    pr = ctx.prober
    x = float(t.xs[t.best_index()])
    if pr.available and pr.remaining >= 4 and t.n:
        x0 = float(t.xs[0])
        h = max(1e-3 * abs(x0 - x), 1e-8 * max(1.0, abs(x)))
        try:
            d_l = (pr(x + h) - pr(x - h)) / (2 * h)
            d_0 = (pr(x0 + h) - pr(x0 - h)) / (2 * h)
        except Exception:  # noqa: BLE001 - budget
            d_l = d_0 = math.nan
        if math.isfinite(d_l) and math.isfinite(d_0):
            if abs(d_l) > FLAT_LIMIT * abs(d_0):
                ctx.notes.append(f"a linear rate suggested multiplicity {m}, but f' at the best iterate ({d_l:.3g}) "
                                 f"is not small against f' at the start ({d_0:.3g}): not a multiple root")
                return None
            ev.append(("f' at the best iterate", d_l, f"f' at the start: {g(d_0, 3)}; f' vanishes at a multiple root"))
    x0 = t.starts[0] if t.starts else float(t.xs[0])
    remedy = Remedy("newton-m", start=(x0,), multiplicity=int(m),
                    note=f"x − {m}·f/f' is quadratic at a root of multiplicity {m}")
    what = t.method or "the solver"
    return Finding(
        "multiple-root",
        f"The root near {g(x, 10)} has multiplicity {m}: {what} converges only linearly there (rate {est.rate:.3g}).",
        tuple(ev),
        f"Use the modified Newton step x − {m}·f/f' (method 'newton-m' with multiplicity={m}) or Newton on f/f' "
        "(method 'newton-ratio', which needs f'' but not m); both are quadratic again. Expect about 1/"
        f"{m} of the digits at most: rounding in f hides a multiple root. Remedy: " + remedy.describe() + ".",
        remedy, tuple(range(est.window[0], min(est.window[1] + 2, t.n))) if est.window else (), tag=f"m = {m}")


def _law_multiplicity(method: str | None, rho: float) -> tuple[float, str] | None:
    """The multiplicity m (a real number) at which the method's rate law gives the rate rho."""
    if method not in _RATE_LAWS or not 0 < rho < 1:
        return None
    text, law = _RATE_LAWS[method]
    return law(rho), text


def _off_integer(m: float) -> bool:
    """m is no multiplicity ≥ 2 within ``M_OFF`` (m near 1 is a simple root, where the method is not linear)."""
    k = round(m)
    return not (k >= 2 and abs(m - k) <= M_OFF)


def detect_rate_derivative(t: Trace, ctx: Context) -> Finding | None:
    est = rate_order(t, ctx)
    if est is None or est.label != "linear" or est.rate is None:
        return None
    if t.method is None and t.n and t.fs is None:  # iterates only: say what the rate would mean for Newton
        law = _law_multiplicity("newton", est.rate)
        if law is not None and _off_integer(law[0]):
            ctx.notes.append(f"the iterates converge linearly (rate {est.rate:.3g}); if they are Newton's, the rate "
                             f"{law[1]} means m = {law[0]:.3g}, not a whole multiplicity: a wrong derivative is then "
                             "likelier than a multiple root (name the method to have it checked)")
        return None
    if t.method not in _DERIVATIVE_METHODS:
        return None
    if "derivative" in ctx.cache:  # your derivative was checked against f and agreed
        if not ctx.cache["derivative"]["bad"] and not noise_explains(t, ctx):
            ctx.notes.append(f"{t.method} is linear at a simple root although your derivative agrees with the slope "
                             "of f: f may not be smooth at the root")
        return None
    m_res, slope = _residual_multiplicity(t, est)
    simple = (est.reference == "high-precision root" and est.multiplicity == 1) or (
        est.reference != "high-precision root" and m_res == 1)
    if t.derivative_source not in (None, "user"):
        return None
    if not simple:
        if est.reference == "high-precision root" or m_res is not None or est.multiplicity is not None:
            return None  # f itself says the root is multiple (or the rate law named an m)
        return _from_rate_law(t, est)
    if noise_explains(t, ctx):
        return None
    rho = est.rate
    x0 = t.starts[0] if t.starts else float(t.xs[0])
    remedy = Remedy(t.method or "newton", start=(x0,), drop_fprime=True,
                    note="the same method with a derivative convdiag computes from f")
    return Finding(
        "wrong-derivative",
        f"{t.method} converges linearly (rate {rho:.3g}) at a simple root, where it should be order "
        f"{t.nominal_order or 2:g}: the slope it used is off by a factor of about {1 / (1 - rho):.3g} or "
        f"{1 / (1 + rho):.3g}.",
        (("linear rate", rho, "Newton with slope g ≠ f' has rate |1 − f'(r)/g(r)|"),
         ("multiplicity", 1, "high-precision reference root" if est.reference == "high-precision root"
          else f"|f| ∝ step^{slope:.2f}")),
        "Check the derivative (pass f itself so it can be compared), or leave it out. Remedy: "
        + remedy.describe() + ".",
        remedy, (), tag=f"rate {rho:.3g}")


def _from_rate_law(t: Trace, est: Any) -> Finding | None:
    """A derivative method linear at a rate no multiplicity explains: the derivative is the likelier cause.

    Nothing else tells a simple root (no f, no residuals): the rate law alone. Newton with a slope g
    has rate |1 − f'(r)/g(r)| at a simple root (REFERENCES §1); a multiplicity m ≥ 2 gives (m−1)/m.
    A rate that puts m off every whole number ≥ 2 (by more than ``M_OFF``) is read as a wrong slope.
    The finding does not override a run that converged (tag ``RATE_TAG``, see ``_diagnose``).
    """
    rho = float(est.rate)
    law = _law_multiplicity(t.method, rho)
    if law is None or not _off_integer(law[0]):
        return None
    m, text = law
    x0 = t.starts[0] if t.starts else float(t.xs[0])
    remedy = Remedy(t.method or "newton", start=(x0,), drop_fprime=True,
                    note="the same method with a derivative convdiag computes from f")
    done = trace_converged(t)
    return Finding(
        "wrong-derivative",
        f"{t.method} converges linearly (rate {rho:.3g}). At a root of multiplicity m its rate would be {text}, "
        f"which gives m = {m:.3g}, not a whole number: a derivative off by a factor of about {1 / (1 - rho):.3g} or "
        f"{1 / (1 + rho):.3g} (rate |1 − f'/g|) is the likelier cause."
        + (" The iteration still converged, only more slowly than it should." if done else ""),
        (("linear rate", rho, f"over e_{est.window[0]}…e_{est.window[1]}" if est.window else ""),
         ("multiplicity the rate implies", m, f"rate {text}; a multiple root has a whole m ≥ 2")),
        "Check the derivative your solver uses (give diagnose f and f' to have them compared), or let the solver "
        "compute it from f. Remedy: " + remedy.describe() + ".",
        remedy, tuple(range(est.window[0], min(est.window[1] + 2, t.n))) if est.window else (), tag=RATE_TAG)
