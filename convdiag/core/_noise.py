"""Computational noise in f near a point, and the accuracy in x it allows.

:func:`estimate_noise` follows Moré and Wild (2011): evaluate f at a few
equally spaced points, build the table of differences, and read the noise
level from the first order at which three consecutive orders agree (the
smooth part of f has dropped below the noise) and the differences take
both signs. :func:`attainable_accuracy` turns a noise level into the
distance from a root below which no method can resolve it.

Choices made here (the authors' steps: REFERENCES.md §3):

**Near a root.** The authors' pre-check rejects a sample whose values differ
by more than 10 % of the largest |f|. It fails wherever |f| is within a few
tens of noise levels of zero, which is where a solver stalls. Then the same
10 % test is applied to the first differences (about h*f', not vanishing at
a simple root; a linear trend, however steep, is removed exactly by the
differences). If the first differences take both signs (noise dominates
them), a sample at h/100 must give a level within a factor 4 (that one is
reported): noise does not depend on the spacing, the differences of a
smooth f that varies on the scale of h do. So the sample stays centred on x; moving it to
where |f| is large was rejected (the noise is wanted where the solver
stalled, and the move needs a slope that the noise spoils).

**Rounding.** Every floating-point f carries rounding noise and the method
measures it. ``rounding`` = eps * max(max|f|, |x| * |slope|) is the error of
rounding f's value and x itself; a level within ``ROUNDING_FACTOR`` (100)
times that gets status "no-noise" (the level is still reported), "ok" means
noise far above rounding. Cancellation inside f shows as noise above
rounding, which is a true finding about how f is computed.

**Adaptive inner solvers** (quadrature, ODE step control) have an error that
is piecewise smooth in x; the default spacing usually sees one smooth piece,
a spacing like the distance between stalled iterates shows the jumps.

One sample and its verdict (the difference table, the pre-check) are in
``_noise_table``; the spacing strategy and the answer are here.

References
----------
.. [1] J. J. Moré and S. M. Wild, "Estimating computational noise",
   SIAM J. Sci. Comput. 33(3) (2011) 1292-1314.
.. [2] J. H. Wilkinson, *Rounding Errors in Algebraic Processes* (1963):
   the condition number of a simple root is 1/|f'(r)| (from memory).
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass, replace
from typing import Any, Literal

import numpy as np

from ..errors import ParameterError
from ._noise_table import AGREE_FACTOR, ROUNDING_FACTOR, SPREAD_LIMIT, _Attempt, _attempt
from ._show import Showable

__all__ = ["NoiseEstimate", "NoiseStatus", "attainable_accuracy", "estimate_noise"]

NoiseStatus = Literal["ok", "h-too-small", "h-too-large", "no-noise", "failed"]

#: Spacing factor between attempts (Moré and Wild: h/100 when too large, 100h when too small).
RETRY_FACTOR = 100.0
#: Default first spacing relative to max(1, |x|); see estimate_noise.
DEFAULT_RELATIVE_H = 1e-6
_REAL = (int, float, np.floating, np.integer)


@dataclass(frozen=True, repr=False)
class NoiseEstimate(Showable):
    """The noise in f near one point, estimated from a few extra evaluations.

    Attributes
    ----------
    level : estimated standard deviation of the noise in f; NaN if not found.
        For status "no-noise" it is the rounding-level estimate itself.
    x : centre of the sample.
    h : spacing between neighbouring points of the reported sample.
    order : difference order k the level was taken from (0 if none).
    status : "ok" (noise above rounding), "no-noise" (level within
        ``ROUNDING_FACTOR`` times ``rounding``), "h-too-small" (f returned
        equal values at half the points or more, up to the largest spacing
        tried), "h-too-large" (the smooth part of f never dropped below the
        noise), "failed" (f raised or returned no finite real number).
    evaluations : evaluations spent over all attempts.
    samples : (x, f) pairs of the accepted attempt, else of the last one.
    attempts : (h, status) of each attempt, in order; besides the statuses
        above, "unconfirmed" (noise dominates the first differences, to be
        checked at h/100) and "confirms" (that check agreed; reported).
    message : one readable sentence.
    rounding : eps * max(max|f|, |x| * |slope|) of the reported sample: the
        error f inherits from rounding its value and x (NaN if not sampled).
    """

    level: float
    x: float
    h: float
    order: int
    status: NoiseStatus
    evaluations: int
    samples: tuple[tuple[float, float], ...]
    attempts: tuple[tuple[float, str], ...]
    message: str
    rounding: float = math.nan

    @property
    def found(self) -> bool:
        """True if a level was measured ("ok" or "no-noise")."""
        return self.status in ("ok", "no-noise")

    @property
    def above_rounding(self) -> float:
        """How many times the rounding level the noise is (NaN if not found)."""
        if not self.found or not self.rounding > 0:
            return math.nan
        return self.level / self.rounding

    def __repr__(self) -> str:
        what = f"level≈{self.level:.3g}, k={self.order}" if self.found else "no level"
        return f"<NoiseEstimate {self.status}: {what}, x={self.x:.6g}, h={self.h:.3g}, {self.evaluations} evaluations>"


def _check_real(value: Any, name: str, owner: str, what: str, *, positive: bool = False) -> float:
    ok = isinstance(value, _REAL) and not isinstance(value, bool)
    v = float(value) if ok else math.nan
    if not ok or not math.isfinite(v) or (positive and v <= 0.0):
        raise ParameterError.expected(name, owner, what, value)
    return v


def _check_int(value: Any, name: str, owner: str, low: int) -> int:
    if isinstance(value, bool) or not isinstance(value, (int, np.integer)) or value < low:
        raise ParameterError.expected(name, owner, f"an int >= {low}", value)
    return int(value)


def estimate_noise(
    f: Callable[[float], Any] | None,
    x: float,
    *,
    h: float | None = None,
    n_points: int = 9,
    max_attempts: int = 6,
    evaluate: Callable[[float], Any] | None = None,
) -> NoiseEstimate:
    """Estimate the computational noise in f near x (Moré and Wild's method).

    f is evaluated at ``n_points`` points spaced ``h`` apart, centred on x.
    k-th differences of independent noise of standard deviation sigma have
    mean square sigma**2 * (2k)!/(k!)**2, so sqrt(gamma_k * mean((Δ^k f)**2))
    with gamma_k = (k!)**2/(2k)! estimates sigma once the smooth part of f
    no longer contributes. The first order k that agrees within a factor 4
    with orders k+1 and k+2, and whose differences take both signs, is
    accepted. Otherwise the spacing changes as the authors advise (h/100
    when too large, 100*h when too small), up to ``max_attempts`` samples.
    The module docstring explains the handling near a root and of rounding.

    Parameters
    ----------
    f : callable
        f(x) for a float x, returning a real number. Not called when
        ``evaluate`` is given (it may then be None).
    x : float
        Centre of the sample, usually the last iterate of a run.
    h : float > 0, optional
        First spacing between neighbouring points. The default
        1e-6 * max(1, |x|) makes the first differences (about h*f') some
        1e10 times the rounding of f, so they cannot all be equal unless f is
        flat or quantized; makes third differences of a smooth f (about
        h**3 * f''') fall below rounding; and keeps the relative change of f
        over the sample's width 8h near 1e-5, far inside the 10 % pre-check.
        Six attempts then reach spacings down to 1e-16 * max(1, |x|).
    n_points : int >= 4
        Points per sample (the authors recommend at least 7).
    max_attempts : int >= 1
        Samples tried at most (each costs ``n_points`` evaluations).
    evaluate : callable, optional
        Called instead of f for every evaluation (to route calls through a
        recorder or budget): receives x, returns a number or raises.

    Returns
    -------
    NoiseEstimate
        Never raises because of f: an exception, or a value that is not a
        finite real number, gives status "failed" naming the point.

    Raises
    ------
    ParameterError
        If an argument has the wrong type or value.

    Examples
    --------
    >>> import math
    >>> est = estimate_noise(lambda x: math.cos(x) - x, 0.5)
    >>> est.status, est.evaluations
    ('no-noise', 9)
    >>> est.level < 1e-14
    True
    """
    owner = "estimate_noise"
    call = evaluate if evaluate is not None else f
    if not callable(call):
        name = "f" if evaluate is None else "evaluate"
        raise ParameterError.expected(name, owner, "a callable of one float", call)
    x = _check_real(x, "x", owner, "a finite float")
    n = _check_int(n_points, "n_points", owner, 4)
    allowed = _check_int(max_attempts, "max_attempts", owner, 1)
    if h is None:
        spacing = DEFAULT_RELATIVE_H * max(1.0, abs(x))
    else:
        spacing = _check_real(h, "h", owner, "a finite float > 0", positive=True)

    offsets = np.arange(n, dtype=float) - (n - 1) / 2.0
    attempts: list[tuple[float, str]] = []
    tried: set[float] = set()
    evaluations = 0
    pending: _Attempt | None = None  # an estimate waiting for a second spacing to agree
    final: _Attempt | None = None
    note = ""
    while final is None:
        tried.add(spacing)
        att = _attempt(call, x, spacing, offsets)
        evaluations += len(att.values) + (1 if att.failure else 0)
        if att.status == "failed":
            final = att
        elif pending is not None:
            if math.isfinite(att.level) and max(pending.level, att.level) <= AGREE_FACTOR * min(
                pending.level, att.level
            ):
                att = replace(att, status="confirms")  # report the smaller spacing: less smooth part
                final, note = att, f", agreeing with spacing {pending.spacing:.2g}"
            elif att.status == "h-too-small":
                final, note = pending, f"; not checked at spacing {spacing:.2g}, where f looked flat"
            else:  # what looked like noise at the larger spacing was f's own variation
                pending = None
        attempts.append((spacing, att.status))
        if final is not None:
            break
        if att.status in ("ok", "no-noise"):
            final = att
            break
        if att.status == "unconfirmed":
            pending = att
        nxt = spacing * (RETRY_FACTOR if att.status == "h-too-small" else 1.0 / RETRY_FACTOR)
        if nxt in tried:  # bounced between too large and too small: try in between once
            nxt = math.sqrt(spacing * nxt)
        collapsed = not (0.0 < nxt < math.inf) or x + offsets[0] * nxt == x + offsets[-1] * nxt
        if len(attempts) >= allowed or nxt in tried or collapsed:
            final = pending if pending is not None else att
            note = "; not checked at a second spacing" if pending is not None else ""
        spacing = nxt

    status = final.status
    if status in ("unconfirmed", "confirms"):
        status = "no-noise" if final.level <= ROUNDING_FACTOR * final.rounding else "ok"
    found = status in ("ok", "no-noise")
    return NoiseEstimate(
        level=final.level if found else math.nan,
        x=x,
        h=final.spacing,
        order=final.order if found else 0,
        status=status,  # type: ignore[arg-type]
        evaluations=evaluations,
        samples=tuple(zip(final.points, final.values)),
        attempts=tuple(attempts),
        message=final.failure or _message(status, x, final, n, note),
        rounding=final.rounding,
    )


def _message(status: str, x: float, att: _Attempt, n: int, note: str) -> str:
    where = f"near x={x:.10g}"
    if status == "ok":
        return (
            f"Noise in f {where} has standard deviation about {att.level:.2g} ({att.level / att.rounding:.2g} "
            f"times the rounding level), from {n} values spaced {att.spacing:.2g} apart{note}."
        )
    if status == "no-noise":
        return (
            f"No noise above rounding {where}: the level {att.level:.2g} is within {ROUNDING_FACTOR:g} "
            f"times the rounding level {att.rounding:.2g}{note}."
        )
    if status == "h-too-large":
        return (
            f"Noise could not be separated from the variation of f {where}: down to spacing {att.spacing:.2g} "
            f"the differences show no noise or the values differ by more than {SPREAD_LIMIT:.0%}; "
            "try a smaller h or more attempts."
        )
    return (
        f"f returned equal values at half or more of {n} points spaced {att.spacing:.2g} apart {where}, "
        "so f looks flat or quantized there; try a larger h or more attempts."
    )


def attainable_accuracy(noise: float, fprime: float, *, multiplicity: int = 1, f_m: float | None = None) -> float:
    """Distance from a root below which noise of size ``noise`` in f hides it.

    A simple root r moves by about eps_f/|f'(r)| when f is perturbed by eps_f
    (the condition number of a simple root is 1/|f'(r)|; Wilkinson 1963,
    from memory). At a root of multiplicity m, f ≈ f^(m)(r) (x-r)^m / m!, so
    the distance is (m! * eps_f / |f^(m)(r)|)^(1/m) (common practice, no
    source).

    Parameters
    ----------
    noise : float >= 0
        Size of the noise in f (NaN gives NaN). A bound on |noise| (an
        amplitude) gives a bound on the error; the standard deviation (what
        :func:`estimate_noise` reports) gives the typical (root mean square)
        error of iterates stalled at the noise floor.
    fprime : float
        f'(r) at a simple root (ignored when ``multiplicity`` > 1).
    multiplicity : int >= 1
    f_m : float, optional
        f^(m)(r), the first derivative that does not vanish; required when
        ``multiplicity`` > 1.

    Returns
    -------
    float
        The distance; inf when the derivative is 0 and the noise is not.

    Examples
    --------
    >>> attainable_accuracy(1e-8, 2.0)
    5e-09
    >>> round(attainable_accuracy(1e-12, 0.0, multiplicity=2, f_m=2.0), 12)
    1e-06
    """
    owner = "attainable_accuracy"
    if isinstance(noise, bool) or not isinstance(noise, _REAL) or noise < 0:
        raise ParameterError.expected("noise", owner, "a float >= 0", noise)
    m = _check_int(multiplicity, "multiplicity", owner, 1)
    name, deriv = ("fprime", fprime) if m == 1 else ("f_m", f_m)
    if deriv is None:
        raise ParameterError.expected("f_m", owner, f"f^({m})(r), a float, when multiplicity is {m}", f_m)
    d = abs(_check_real(deriv, name, owner, "a finite float"))
    eps_f = float(noise)
    if math.isnan(eps_f):
        return math.nan
    if d == 0.0:
        return 0.0 if eps_f == 0.0 else math.inf
    return float((math.factorial(m) * eps_f / d) ** (1.0 / m))
