"""Controls of the explorer: the method picker, the start inputs and one slider per model parameter.

Model parameters come from the function itself: the keyword parameters
with float defaults of a callable ``f(x, *, Re=1e5, rel=1e-4)``, or the
names in an expression (their values given in ``params=``). ``params=``
may also give ranges: ``{"ecc": (0.0, 0.999)}`` or ``(lo, hi, value)``.
"""

from __future__ import annotations

import inspect
import math
import numbers
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

from ..core._methods import METHODS
from ..errors import ParameterError
from ._host import need_widgets

__all__ = ["ParamSpec", "method_options", "param_slider", "param_specs", "signature_defaults"]

#: a few plain words on what each method assumes (shown in the method picker).
_HINTS = {
    "newton": "tangent line; needs f′",
    "secant": "line through the last two points",
    "iqi": "sideways parabola through three points",
    "bisection": "halves a bracket",
    "regula-falsi": "line through the bracket ends",
    "illinois": "bracket line, stuck end's f halved",
    "steffensen": "slope from x to x + f(x)",
    "halley": "hyperbola; needs f′ and f″",
}


def method_options() -> list[tuple[str, str]]:
    """(label, name) pairs for the method picker, open methods first."""
    order = sorted(METHODS, key=lambda n: (METHODS[n].needs_bracket, list(_HINTS).index(n) if n in _HINTS else 99))
    out = []
    for name in order:
        cls = METHODS[name]
        title = cls.title[:1].upper() + cls.title[1:]
        hint = _HINTS.get(name)
        out.append((f"{title} ({hint})" if hint else title, name))
    return out


@dataclass(frozen=True)
class ParamSpec:
    """A model parameter's slider: its range, its value and whether the slider is logarithmic."""

    name: str
    lo: float
    hi: float
    value: float
    log: bool = False


def _is_number(v: Any) -> bool:
    return isinstance(v, numbers.Real) and not isinstance(v, bool) and math.isfinite(float(v))


def _default_range(v: float) -> tuple[float, float, bool]:
    if v > 0:
        return v / 10, v * 10, True
    if v < 0:
        return v * 10, v / 10, False
    return -1.0, 1.0, False


def _spec(name: str, given: Any, default: float | None) -> ParamSpec:
    owner = "Explorer"
    if _is_number(given):
        v = float(given)
        lo, hi, log = _default_range(v)
        return ParamSpec(name, lo, hi, v, log)
    if isinstance(given, (tuple, list)) and len(given) in (2, 3) and all(_is_number(g) for g in given):
        lo, hi = float(given[0]), float(given[1])
        if not lo < hi:
            raise ParameterError.expected(f"params[{name!r}]", owner, "a range (lo, hi) with lo < hi", given)
        if len(given) == 3:
            v = float(given[2])
        elif default is not None and lo <= default <= hi:
            v = default
        else:
            v = (lo + hi) / 2
        if not lo <= v <= hi:
            raise ParameterError.expected(f"params[{name!r}]", owner, "(lo, hi, value) with lo <= value <= hi", given)
        return ParamSpec(name, lo, hi, v, lo > 0 and hi / lo >= 100)
    raise ParameterError.expected(
        f"params[{name!r}]", owner, "a number, a range (lo, hi) or (lo, hi, value)", given
    )


def signature_defaults(f: Any) -> dict[str, float]:
    """Keyword parameters of a callable (after the first) whose defaults are floats."""
    try:
        sig = inspect.signature(f)
    except (TypeError, ValueError):
        return {}
    out: dict[str, float] = {}
    for i, p in enumerate(sig.parameters.values()):
        if i == 0 or p.kind in (p.VAR_POSITIONAL, p.VAR_KEYWORD):
            continue
        if isinstance(p.default, float) and math.isfinite(p.default):
            out[p.name] = float(p.default)
    return out


def param_specs(f: Any, params: Mapping[str, Any] | None, expression_params: tuple[str, ...] = ()) -> list[ParamSpec]:
    """The sliders to show: the function's float keyword parameters or the expression's names.

    Examples
    --------
    >>> def kepler(E, M=1.0, ecc=0.5):
    ...     return E - ecc * __import__("math").sin(E) - M
    >>> [(s.name, s.lo, s.hi, s.value) for s in param_specs(kepler, {"ecc": (0.0, 0.99)})]
    [('M', 0.1, 10.0, 1.0), ('ecc', 0.0, 0.99, 0.5)]
    """
    given = dict(params or {})
    defaults = {} if isinstance(f, str) or expression_params else signature_defaults(f)
    names = list(dict.fromkeys([*defaults, *expression_params, *given]))
    specs = []
    for name in names:
        if name in given:
            specs.append(_spec(name, given[name], defaults.get(name)))
        elif name in defaults:
            specs.append(_spec(name, defaults[name], None))
        else:
            raise ParameterError(
                f"The expression needs a value for {name!r}: pass params={{{name!r}: value}} or a range "
                f"params={{{name!r}: (lo, hi)}}."
            )
    return specs


def param_slider(spec: ParamSpec) -> Any:
    """A slider for one parameter (logarithmic for ranges over two decades or more)."""
    ipw = need_widgets()
    style = {"description_width": "initial"}
    layout = ipw.Layout(width="330px")
    if spec.log:
        a, b = math.log10(spec.lo), math.log10(spec.hi)
        w = ipw.FloatLogSlider(value=spec.value, base=10.0, min=a, max=b, step=(b - a) / 400,
                               description=spec.name, continuous_update=False, readout_format=".4g",
                               style=style, layout=layout)
    else:
        w = ipw.FloatSlider(value=spec.value, min=spec.lo, max=spec.hi, step=(spec.hi - spec.lo) / 1000,
                            description=spec.name, continuous_update=False, readout_format=".4g",
                            style=style, layout=layout)
    w.add_class("cdx-param")
    w.tooltip = f"model parameter {spec.name}: changing it runs the method again"
    return w
