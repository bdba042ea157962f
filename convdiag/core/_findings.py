"""What a diagnosis says: findings with their evidence, and remedies that can be applied.

A :class:`Finding` names one cause (its ``kind``), says it in one sentence,
lists the numbers that prove it, and says what to change. Its
:class:`Remedy` is the same advice in a form a program can apply:
``remedy.solve(f)`` runs the suggested method with the suggested start,
bracket, tolerance or setting and returns the :class:`~convdiag.core._run.Run`.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, replace
from typing import Any

from ..errors import BracketError, ParameterError

__all__ = ["KINDS", "Evidence", "Finding", "Remedy"]

#: Every kind of finding, which is also every possible verdict.
KINDS = (
    "converged",
    "cycle",
    "divergence",
    "multiple-root",
    "wrong-derivative",
    "noise-floor",
    "pole",
    "domain-error",
    "flat",
    "slow",
    "unattainable-tolerance",
    "budget",
)

#: One row of evidence: (label, value, note). The value is a number, a string or a tuple of numbers.
Evidence = tuple[str, Any, str]


def _json_value(v: Any) -> Any:
    if isinstance(v, bool) or v is None or isinstance(v, str):
        return v
    if isinstance(v, (tuple, list)):
        return [_json_value(u) for u in v]
    if isinstance(v, int):
        return v
    try:
        f = float(v)
    except (TypeError, ValueError, OverflowError):
        return str(v)
    return f if math.isfinite(f) else None


def _num(v: float) -> str:
    return f"{v:.10g}"


@dataclass(frozen=True)
class Remedy:
    """A change to make, in a form a program can apply.

    Attributes
    ----------
    method : the registered method to use (``hybrid``, ``newton-m``, ...).
    start : starting point(s) for an open method.
    bracket : a bracket with a sign change for a bracketing method.
    near : when no bracket was found during the diagnosis, :meth:`solve` searches for
        one near this point (``find_brackets(f, near=...)``) first.
    xtol, rtol, ftol, max_evals : settings for :func:`~convdiag.core._session.solve`
        (None keeps solve's default).
    multiplicity : the ``multiplicity`` setting of ``newton-m``.
    drop_fprime : do not use the derivative you supplied (it is wrong): convdiag then
        differentiates f itself (symbolic, complex step or central difference).
    note : one sentence on what the change does.
    """

    method: str
    start: tuple[float, ...] | None = None
    bracket: tuple[float, float] | None = None
    near: float | None = None
    xtol: float | None = None
    rtol: float | None = None
    ftol: float | None = None
    max_evals: int | None = None
    multiplicity: int | None = None
    drop_fprime: bool = False
    note: str = ""

    def __post_init__(self) -> None:  # plain floats (not numpy scalars) for words, JSON and the command line
        if self.start is not None:
            object.__setattr__(self, "start", tuple(float(v) for v in self.start))
        if self.bracket is not None:
            object.__setattr__(self, "bracket", (float(self.bracket[0]), float(self.bracket[1])))
        for name in ("near", "xtol", "rtol", "ftol"):
            v = getattr(self, name)
            if v is not None:
                object.__setattr__(self, name, float(v))

    def describe(self) -> str:
        """The remedy in a few words: ``hybrid on [-1.77, -1.769]``."""
        parts = [self.method if self.multiplicity is None else f"{self.method} with multiplicity {self.multiplicity}"]
        if self.bracket is not None:
            parts.append(f"on [{_num(self.bracket[0])}, {_num(self.bracket[1])}]")
        elif self.near is not None:
            parts.append(f"on a bracket searched near {_num(self.near)}")
        if self.start is not None:
            parts.append("from " + ", ".join(_num(v) for v in self.start))
        if self.drop_fprime:
            parts.append("without your derivative")
        opts = [f"{k} = {v:.3g}" for k, v in (("xtol", self.xtol), ("rtol", self.rtol), ("ftol", self.ftol))
                if v is not None]
        if self.max_evals is not None:
            opts.append(f"max_evals = {self.max_evals}")
        if opts:
            parts.append("(" + ", ".join(opts) + ")")
        return " ".join(parts)

    def cli_options(self) -> str:
        """The same change as options of ``convdiag run``."""
        out = [f"--method {self.method}"]
        if self.multiplicity is not None:
            out.append(f"--multiplicity {self.multiplicity}")
        if self.bracket is not None:
            out.append(f"--bracket {self.bracket[0]!r} {self.bracket[1]!r}")
        if self.start is not None:
            out.extend(f"--start {v!r}" for v in self.start)
        if self.xtol is not None:
            out.append(f"--tol {self.xtol!r}")
        if self.max_evals is not None:
            out.append(f"--max-evals {self.max_evals}")
        return " ".join(out)

    def command_line(self, expression: str, params: Mapping[str, float] | None = None) -> str:
        """The remedy as ``convdiag`` commands on an expression, ready to paste into a shell.

        A remedy that searches its bracket when applied (``near``) becomes two commands: the
        bracket search, then the run on a bracket it lists.
        """
        import shlex

        expr = shlex.quote(expression)
        opts = "".join(f" --param {k}={float(v)!r}" for k, v in (params or {}).items())
        run = f"convdiag run {expr}{opts} {self.cli_options()}"
        if self.bracket is None and self.near is not None and self.method_needs_bracket():
            return (f"convdiag brackets {expr}{opts} --near {self.near!r}, then {run} --bracket LO HI "
                    "(a root bracket it lists)")
        return run

    def method_needs_bracket(self) -> bool:
        from ._methods import METHODS

        cls = METHODS.get(self.method)
        return bool(cls is not None and cls.needs_bracket)

    def method_object(self) -> Any:
        """The method to run: a name, or an instance carrying the multiplicity."""
        from ._methods import METHODS

        if self.method not in METHODS:
            raise ParameterError.expected("method", "Remedy", f"one of {', '.join(sorted(METHODS))}", self.method)
        if self.multiplicity is not None:
            return METHODS[self.method](multiplicity=self.multiplicity)  # type: ignore[call-arg]
        return self.method

    def resolve_bracket(self, f: Any, *, params: Mapping[str, float] | None = None,
                        max_evals: int = 400) -> tuple[float, float] | None:
        """The bracket to use: the one found during the diagnosis, else one searched near ``near``."""
        if self.bracket is not None or self.near is None:
            return self.bracket
        from ._brackets import find_brackets

        found = find_brackets(f, near=self.near, max_evals=max_evals, params=params)
        if not found.roots:
            raise BracketError(
                f"No sign change that closes on a root was found near {self.near:.10g} in {found.evaluations} "
                f"evaluations ({found!r}). Search a domain you know holds a root: "
                "convdiag.find_brackets(f, domain=(lo, hi))."
            )
        c = found.roots[0]
        return (c.lo, c.hi)

    def solve(self, f: Any, *, fprime: Any = None, fprime2: Any = None,
              params: Mapping[str, float] | None = None, **settings: Any) -> Any:
        """Apply the remedy to f: run the suggested method with the suggested settings.

        Parameters
        ----------
        f : callable, expression string or Problem
            The function (as for :func:`convdiag.solve`).
        fprime, fprime2 : optional
            Your derivatives; ``fprime`` is left out when the remedy says so (``drop_fprime``).
        params : mapping, optional
            Model parameters.
        **settings
            Override any of solve's settings (``max_evals=...``).

        Returns
        -------
        Run

        Raises
        ------
        BracketError
            The remedy needs a bracket and none was found near ``near``.
        """
        from ._problem import Problem
        from ._session import solve

        if isinstance(f, Problem) and self.drop_fprime and f.derivative_source == "user":
            if f.expression is not None or f.raw is not None:  # rebuild without the derivative
                params = {**f.params, **(params or {})} or None
                f = f.expression.text if f.expression is not None else f.raw
            else:
                f = f.f
        kw: dict[str, Any] = {k: v for k, v in (("xtol", self.xtol), ("rtol", self.rtol), ("ftol", self.ftol),
                                                ("max_evals", self.max_evals)) if v is not None}
        kw.update(settings)
        from ._methods import METHODS

        needs_bracket = METHODS[self.method].needs_bracket if self.method in METHODS else False
        bracket = self.resolve_bracket(f, params=params) if needs_bracket else None
        own = isinstance(f, Problem)  # a Problem carries its derivatives and parameters already
        fp = None if self.drop_fprime or own else fprime
        fp2 = None if own else fprime2
        pp = None if own or params is None else dict(params)
        if bracket is not None and bracket[0] == bracket[1]:  # the search hit f = 0 exactly: start there
            return solve(f, "newton", start=bracket[0], fprime=fp, params=pp, **kw)
        return solve(f, self.method_object(), start=None if needs_bracket else self.start, bracket=bracket,
                     fprime=fp, fprime2=fp2, params=pp, **kw)

    def with_bracket(self, bracket: tuple[float, float]) -> Remedy:
        return replace(self, bracket=(float(bracket[0]), float(bracket[1])), near=None)

    def to_dict(self) -> dict[str, Any]:
        return {
            "method": self.method,
            "start": None if self.start is None else [_json_value(v) for v in self.start],
            "bracket": None if self.bracket is None else [_json_value(v) for v in self.bracket],
            "near": _json_value(self.near),
            "xtol": _json_value(self.xtol),
            "rtol": _json_value(self.rtol),
            "ftol": _json_value(self.ftol),
            "max_evals": self.max_evals,
            "multiplicity": self.multiplicity,
            "drop_fprime": self.drop_fprime,
            "note": self.note,
            "cli": self.cli_options(),
        }


@dataclass(frozen=True)
class Finding:
    """One cause the diagnosis found, with its evidence and what to change.

    Attributes
    ----------
    kind : one of ``KINDS``.
    summary : one sentence: what happened.
    evidence : rows (label, value, note) with the numbers behind the finding.
    advice : what to change (method, start, bracket, tolerance, setting).
    remedy : the advice in a form ``remedy.solve(f)`` applies, or None when no
        automatic change fits (the advice then says what to do by hand).
    iterates : indices k of the iterates the finding is about (0 = first start).
    tag : a few words for one-line displays (``period 2``, ``m = 3``).
    """

    kind: str
    summary: str
    evidence: tuple[Evidence, ...] = ()
    advice: str = ""
    remedy: Remedy | None = None
    iterates: tuple[int, ...] = ()
    tag: str = ""

    def value(self, label: str) -> Any:
        """The value of the evidence row with this label (None if absent)."""
        return next((v for lab, v, _ in self.evidence if lab == label), None)

    def to_dict(self) -> dict[str, Any]:
        return {
            "kind": self.kind,
            "summary": self.summary,
            "tag": self.tag,
            "evidence": [{"label": lab, "value": _json_value(v), "note": note} for lab, v, note in self.evidence],
            "advice": self.advice,
            "remedy": None if self.remedy is None else self.remedy.to_dict(),
            "iterates": list(self.iterates),
        }

    def __repr__(self) -> str:
        tag = f" ({self.tag})" if self.tag else ""
        return f"<Finding {self.kind}{tag}: {self.summary[:70]}>"
