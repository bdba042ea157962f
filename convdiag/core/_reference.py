"""Reference roots at high precision, the rounding floor of a run, and high-precision replays.

An observed order is only as good as the root the errors are measured
against. :func:`reference_root` computes that root with mpmath and confirms it
by a second, independent iteration:

1. Newton's method on u = f/f' (quadratic at a root of any multiplicity) at
   ``digits + 20`` digits, from the point given (a run's best iterate);
2. the multiplicity m from u near the root: u(r ± h) ≈ ±h/m, averaged over
   both sides so that the first-order terms cancel;
3. at a multiple root, step 1 again at about ``m·(digits + 10)`` digits (a
   root of multiplicity m is determined to only about 1/m of the working
   digits);
4. confirmation by modified Newton x − m·f/f' at 10 more digits, started again
   from the given point: the two results must agree to ``digits`` digits;
5. a cross-check of m with the derivatives at the root: the first k for which
   f^(k)(r)·h^k/k! is not negligible against the next term.

Plain ``mpmath.findroot`` polishing a double-precision start at a multiple
root returns about 12-20 correct digits or raises; the steps above do not
depend on the multiplicity being 1.

High precision needs f in mpmath arithmetic: expression strings and sympy
expressions translate exactly; a Python callable is tried and *checked*:
f(x + δ) − f(x) with δ = 1e-30·|x| must equal f'(x)·δ, which fails when the
callable converts to float inside (``math.cos``) and silently loses the digits.

f in mpmath arithmetic (:func:`high_precision`) and the high-precision replay
of a run (:func:`replay`) live in ``_highprec`` and are re-exported here.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any, Literal

from ..errors import ParameterError
from ._highprec import HighPrecision, high_precision, replay
from ._problem import Problem, as_problem

__all__ = ["HighPrecision", "ReferenceRoot", "high_precision", "reference_root", "replay", "rounding_floor"]

EPS = 2.220446049250313e-16
#: The largest multiplicity taken seriously: the derivative-order test looks up to order 10 (common practice,
#: no source; multiple roots of order above 10 are rare in models and cannot be told from a flat zero set).
MAX_MULTIPLICITY = 12


@dataclass(frozen=True, repr=False)
class ReferenceRoot:
    """A root known to many digits, how it was found, and how it was confirmed.

    Attributes
    ----------
    value : mpmath number (a float for a root the user gave)
    source : ``"high-precision"`` or ``"given"``
    digits : significant digits believed correct (the two methods' agreement, capped at the target)
    confirmed : the second method agreed to the target number of digits
    multiplicity : integer multiplicity from u = f/f' (None when not an integer or unknown)
    multiplicity_estimate : the raw estimate (NaN when unknown)
    derivative_order : the first derivative that does not vanish at the root (cross-check of m)
    derivatives : f'(r), f''(r), ... as floats
    method, check : what computed the root and what confirmed it (sentences)
    notes : anything else worth knowing
    """

    value: Any
    source: Literal["high-precision", "given"]
    digits: int
    confirmed: bool
    multiplicity: int | None = None
    multiplicity_estimate: float = math.nan
    derivative_order: int | None = None
    derivatives: tuple[float, ...] = ()
    method: str = ""
    check: str = ""
    notes: tuple[str, ...] = ()

    @property
    def float_value(self) -> float:
        return float(self.value)

    def derivative(self, k: int) -> float | None:
        """f^(k)(r) as a float, when it was computed."""
        return self.derivatives[k - 1] if 1 <= k <= len(self.derivatives) else None

    @property
    def summary(self) -> str:
        """One line: the value, how many digits, multiplicity, and how it was found and confirmed."""
        m = f"multiplicity {self.multiplicity}" if self.multiplicity is not None else "multiplicity unknown"
        state = "confirmed by " if self.confirmed else "NOT confirmed by "
        how = f"; {self.method}, {state}{self.check}" if self.method else ""
        return f"{self.float_value:.17g} ({self.digits} digits, {m}{how})"

    def __repr__(self) -> str:
        m = f", multiplicity {self.multiplicity}" if self.multiplicity is not None else ""
        state = "confirmed" if self.confirmed else "not confirmed"
        return f"<ReferenceRoot {self.float_value:.17g} ({self.digits} digits{m}, {state})>"


def _settled(step: Any, prev: Any, x: Any, tol: Any, s: float) -> bool:
    """The step is below tol·max(|x|, s), or it stopped shrinking at a level where only rounding is left."""
    import mpmath

    size = max(abs(x), s)
    small = abs(step) <= tol * size
    stalled = prev is not None and abs(step) >= abs(prev) / 2 and abs(step) <= mpmath.sqrt(tol) * size
    return bool(small or stalled)


def _newton_u(hp: HighPrecision, x: Any, tol: Any, s: float, maxit: int = 100) -> tuple[Any, bool]:
    """Newton on u = f/f': x − f f'/(f'² − f f''); quadratic at any multiplicity."""
    import mpmath

    prev = None
    for _ in range(maxit):
        fx = hp.f(x)
        if fx == 0:
            return x, True
        d1, d2 = hp.d(1, x), hp.d(2, x)
        den = d1 * d1 - fx * d2
        if den == 0 or not mpmath.isfinite(den):
            return x, False
        step = fx * d1 / den
        x = x - step
        if not mpmath.isfinite(x):
            return x, False
        if _settled(step, prev, x, tol, s):
            return x, True
        prev = step
    return x, False


def _modified_newton(hp: HighPrecision, x: Any, m: float, tol: Any, s: float, maxit: int = 200) -> tuple[Any, bool]:
    import mpmath

    prev = None
    for _ in range(maxit):
        fx = hp.f(x)
        if fx == 0:
            return x, True
        d1 = hp.d(1, x)
        if d1 == 0 or not mpmath.isfinite(d1):
            return x, False
        step = m * fx / d1
        x = x - step
        if _settled(step, prev, x, tol, s):
            return x, True
        prev = step
    return x, False


def _multiplicity(hp: HighPrecision, r: Any, h: Any) -> float:
    """m from u(r ± h) ≈ ±h/m; the two sides cancel the first-order terms."""
    est = []
    for side in (h, -h):
        x = r + side
        d1 = hp.d(1, x)
        if d1 == 0:
            return math.nan
        u = hp.f(x) / d1
        if u == 0:
            return math.nan
        est.append(float(side / u))
    return sum(est) / 2


def _derivative_order(hp: HighPrecision, r: Any, h: Any, kmax: int = 9) -> tuple[int | None, list[Any]]:
    """First k whose Taylor term f^(k)(r) h^k/k! is not negligible against the next one."""
    import mpmath

    ders = [hp.d(1, r)]
    for k in range(1, kmax + 1):
        ders.append(hp.d(k + 1, r))
        tk = abs(ders[k - 1]) * h**k / mpmath.factorial(k)
        tnext = abs(ders[k]) * h ** (k + 1) / mpmath.factorial(k + 1)
        if tk > 0 and tk > mpmath.mpf("1e-6") * tnext:
            return k, ders
    return None, ders


def reference_root(
    f: Any,
    near: float,
    *,
    digits: int = 60,
    scale: float | None = None,
    params: dict[str, float] | None = None,
) -> ReferenceRoot:
    """The root of f nearest ``near``, at high precision, confirmed by a second method.

    Parameters
    ----------
    f : Problem, expression string, sympy expression or callable computing in mpmath
    near : float
        Where to start (a run's best iterate).
    digits : int
        Significant digits wanted (the working precision is higher, see the module notes).
    scale : float, optional
        The length scale of the problem near the root (for the multiplicity test);
        default ``max(|near|, 1)``.

    Returns
    -------
    ReferenceRoot
        ``confirmed`` is False (with notes saying why) when the two methods disagree
        or did not converge; do not use such a root as a reference.

    Raises
    ------
    ParameterError
        f cannot be evaluated in high precision, or a bad argument.

    Examples
    --------
    >>> ref = reference_root("(x - 1)**3*exp(x)", 1.0000038)
    >>> ref.multiplicity, ref.confirmed, abs(float(ref.value) - 1.0) < 1e-300
    (3, True, True)
    """
    if not isinstance(digits, int) or isinstance(digits, bool) or not 16 <= digits <= 2000:
        raise ParameterError.expected("digits", "reference_root", "an int between 16 and 2000", digits)
    try:
        x0f = float(near)
    except (TypeError, ValueError):
        raise ParameterError.expected("near", "reference_root", "a finite float", near) from None
    if not math.isfinite(x0f):
        raise ParameterError.expected("near", "reference_root", "a finite float", near)
    problem = f if isinstance(f, Problem) else as_problem(f, params=params)
    hp = high_precision(problem, near=x0f)
    s = float(scale) if scale is not None and scale > 0 else max(abs(x0f), 1.0)
    try:
        return _search(hp, x0f, digits, s)
    except ParameterError:
        raise
    except Exception as exc:  # noqa: BLE001 - f failed somewhere on the way (the check covered only near x0)
        raise ParameterError(
            f"{problem.label} failed in high-precision arithmetic near {x0f:.6g} ({type(exc).__name__}: "
            f"{str(exc)[:80]}), so there is no high-precision root to compare with."
        ) from None


def _search(hp: Any, x0f: float, digits: int, s: float) -> ReferenceRoot:
    """The body of :func:`reference_root`: Newton on f/f', the multiplicity, the confirmation."""
    import mpmath

    notes: list[str] = []
    d1w = digits + 20
    with mpmath.workdps(d1w):
        r1, ok1 = _newton_u(hp, mpmath.mpf(x0f), mpmath.mpf(10) ** (8 - d1w), s)
        if not ok1 or not mpmath.isfinite(r1):
            return ReferenceRoot(r1 if mpmath.isfinite(r1) else mpmath.mpf(x0f), "high-precision", 0, False,
                                 method="Newton on f/f'", notes=(f"Newton on f/f' from {x0f!r} did not converge",))
        m_rough = _multiplicity(hp, r1, mpmath.mpf("1e-8") * s)
    # A multiplicity beyond MAX_MULTIPLICITY is no root's: f is not smooth there (a jump, noise). Capped, since
    # the working precision grows with it (an estimate of 1e52 would ask for 1e53 digits).
    m_int = round(m_rough) if math.isfinite(m_rough) and 0.5 <= m_rough <= MAX_MULTIPLICITY else 1
    d2w = max(d1w, m_int * (digits + 10) + 10)
    with mpmath.workdps(d2w):
        r2, ok2 = _newton_u(hp, mpmath.mpf(r1), mpmath.mpf(10) ** (8 - d2w), s)
        m_est = _multiplicity(hp, r2, mpmath.mpf("1e-10") * s)
        order, ders = _derivative_order(hp, r2, mpmath.mpf("1e-6") * s)
        while len(ders) < max(3, (order or 1) + 2):
            ders.append(hp.d(len(ders) + 1, r2))
        fr, d1r = hp.f(r2), ders[0]
    m: int | None = round(m_est) if math.isfinite(m_est) and abs(m_est - round(m_est)) <= 0.05 else None
    if m is None:
        notes.append(f"the multiplicity estimate {m_est:.4g} is not close to an integer (a non-analytic root?)")
    mm = float(m) if m is not None else (m_est if math.isfinite(m_est) and m_est > 0 else 1.0)
    d3w = d2w + 10
    with mpmath.workdps(d3w):
        tol3 = mpmath.mpf(10) ** (8 - d3w)
        r3, ok3 = _modified_newton(hp, mpmath.mpf(x0f), mm, tol3, s)
        denom = max(abs(r2), mpmath.mpf(10) ** (-digits) * s)
        agree = _digits(abs(r3 - r2) / denom, digits) if ok3 else 0
        if agree < digits:  # from the double nearest the root, in case x0 lies outside the basin
            r3b, ok3b = _modified_newton(hp, mpmath.mpf(float(r2)), mm, tol3, s)
            if ok3b:
                agree = max(agree, _digits(abs(r3b - r2) / denom, digits))
    with mpmath.workdps(d2w):
        resid = (mm * abs(fr / d1r) if d1r != 0 else (mpmath.mpf(0) if fr == 0 else mpmath.inf)) / denom
    res_digits = _digits(resid, digits)
    confirmed = ok2 and agree >= digits and res_digits >= digits
    if not ok2:
        notes.append(f"Newton on f/f' at {d2w} digits did not settle")
    if agree < digits:
        notes.append(f"modified Newton agreed to only {agree} digits")
    if res_digits < digits:
        notes.append(f"the residual implies only {res_digits} correct digits")
    if order is not None and m is not None and order != m:
        notes.append(f"the first nonvanishing derivative is of order {order}, but u = f/f' implies m = {m}")
    check = (
        f"modified Newton x − {mm:g}·f/f' at {d3w} digits ({agree} digits agree; the residual implies {res_digits}); "
        + (f"first nonvanishing derivative: order {order}" if order is not None else "no nonvanishing derivative up to order 10")
    )
    return ReferenceRoot(
        value=r2,
        source="high-precision",
        digits=min(agree, res_digits, digits),
        confirmed=confirmed,
        multiplicity=m,
        multiplicity_estimate=m_est,
        derivative_order=order,
        derivatives=tuple(_flt(d) for d in ders),
        method=f"Newton on f/f' at {d2w} digits from {x0f:.17g}",
        check=check,
        notes=tuple(notes),
    )


def _digits(rel: Any, cap: int) -> int:
    import mpmath

    if rel == 0:
        return cap
    if not mpmath.isfinite(rel):
        return 0
    return int(max(0, min(cap, math.floor(-float(mpmath.log10(rel))))))


def _flt(v: Any) -> float:
    try:
        return float(v)
    except (TypeError, ValueError, OverflowError):
        return math.nan


def rounding_floor(problem: Problem, ref: ReferenceRoot, *, digits: int | None = None) -> tuple[float, float, str]:
    """(floor in double precision, floor at ``digits``, sentence): errors at the rounding level.

    The noise of f near the root is measured as |f_double(x) − f_exact(x)| at the double
    nearest r, three neighbours on each side, and six points within 1e-8·|r| of r (f may
    round on a coarser grid than the doubles next to r: in (x − b)/s with |b| ≫ |r| the
    neighbours all round to the same ulp of b and can share one small error); it limits
    |x − r| to about (m!·noise/|f^(m)(r)|)^(1/m). The floor is that limit (doubled) or
    4 ulps of |r|, whichever is larger. For a run at ``digits`` digits the noise is scaled
    by the ratio of the unit roundoffs.
    """
    import mpmath
    import numpy as np

    r = ref.float_value
    m = ref.multiplicity or 1
    dm = ref.derivative(m)
    noise = 0.0
    if ref.source == "high-precision":
        try:
            hp = high_precision(problem, near=r)
        except ParameterError:
            hp = None
        if hp is not None:
            pts = [r]
            for direction in (math.inf, -math.inf):
                x = r
                for _ in range(3):
                    x = float(np.nextafter(x, direction))
                    pts.append(x)
            pts += [r * (1 + d) for d in (1e-12, -1e-12, 1e-10, -1e-10, 1e-8, -1e-8)] if r else []
            with mpmath.workdps(40):
                for x in pts:
                    try:
                        v = float(problem.f(x))
                        exact = float(hp.f(mpmath.mpf(x)))
                    except Exception:  # noqa: BLE001, S112  (the user's code; the floor then rests on ulps alone)
                        continue
                    if math.isfinite(v) and math.isfinite(exact):
                        noise = max(noise, abs(v - exact))

    def log_limit(log_eps_f: float) -> float:
        """log10 of (m!·eps_f/|f^(m)(r)|)^(1/m), the attainable |x − r| for evaluation noise eps_f."""
        if not dm or not math.isfinite(dm) or not math.isfinite(log_eps_f):
            return -math.inf
        return (math.log10(math.factorial(m)) + log_eps_f - math.log10(abs(dm))) / m

    def power(e: float) -> float:
        return 10.0**e if e > -400 else 0.0

    log_noise = math.log10(noise) if noise > 0 else -math.inf
    log_r = math.log10(abs(r)) if r else -math.inf
    floor = max(4 * EPS * abs(r), 2 * power(log_limit(log_noise)))
    log_unit = -float(digits) if digits else math.log10(EPS)
    floor_hp = max(power(math.log10(4) + log_unit + log_r), 2 * power(log_limit(log_noise + log_unit - math.log10(EPS))))
    why = f"4 ulps of |r| = {4 * EPS * abs(r):.2g}"
    if noise > 0:
        why += f"; noise of f near r {noise:.2g} limits |x − r| to {power(log_limit(log_noise)):.2g}" + (
            f" (multiplicity {m})" if m > 1 else ""
        )
    return floor, floor_hp, why
