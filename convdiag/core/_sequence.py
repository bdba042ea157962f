"""Plain sequences of iterates and residuals: from lists, arrays, runs, recorders and files.

An :class:`IterationSequence` holds what an order estimate or a diagnosis
needs from any iteration, including one that ran outside convdiag: the
iterates x_k, the residuals f(x_k), and the cumulative number of function
evaluations when each entry became known. Either column may be missing.

:func:`as_sequence` normalises Python objects (a list or array, a mapping
of columns, a :class:`~convdiag.core._run.Run`, a
:class:`~convdiag.core._record.Recorder` or its
:class:`~convdiag.core._record.EvalLog`); :func:`load_sequence` reads a CSV
or JSON file (a log of the user's own solver, or the output of
``convdiag run --json``).

Numbers written with more than 17 significant digits (a log from a
high-precision solver) are kept exactly as mpmath numbers in
:attr:`IterationSequence.exact`, so their errors can be measured below
double precision.

The file side (:func:`load_sequence`, :func:`parse_sequence_text`) lives in
``_seqfile`` and is re-exported here.
"""

from __future__ import annotations

import math
import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from decimal import Decimal, InvalidOperation
from typing import Any, Literal

import numpy as np
from numpy.typing import NDArray

from ..errors import ParameterError
from ._seqfile import load_sequence, parse_sequence_text

__all__ = ["IterationSequence", "as_sequence", "load_sequence", "parse_sequence_text"]

Kind = Literal["auto", "iterates", "residuals"]

# Column names understood in files and mappings (compared in lower case, spaces removed).
ITERATE_NAMES = ("x", "xk", "x_k", "x_n", "xn", "iterate", "iterates")
RESIDUAL_NAMES = ("f", "fx", "f(x)", "f(x_k)", "fk", "f_k", "residual", "residuals", "value", "values")
EVAL_NAMES = ("evals", "evaluations", "nfev", "fevals", "n_evals", "calls")
INDEX_NAMES = ("k", "n", "i", "iter", "iteration", "step", "index")
_KNOWN = ITERATE_NAMES + RESIDUAL_NAMES + EVAL_NAMES + INDEX_NAMES
_NAMES_HELP = "iterates: x, iterate; residuals: f, residual, value; evaluations: evals, nfev; index: k, iter, step"
_SIG = re.compile(r"^[+-]?(\d*)\.?(\d*)(?:[eE][+-]?\d+)?$")


@dataclass(frozen=True, repr=False)
class IterationSequence:
    """Iterates and/or residuals of one iteration, as plain arrays.

    Attributes
    ----------
    iterates : float array or None
        x_k in order (NaN where an entry is missing or not finite).
    residuals : float array or None
        f(x_k) (signed or absolute), aligned with ``iterates`` when both exist.
    evals : int array or None
        Cumulative function evaluations when each entry became known.
    exact : tuple or None
        The iterates at full precision (mpmath numbers) when the source
        carried more than double precision; else None.
    digits : int or None
        Significant digits of ``exact``.
    method : str or None
        The method that produced the sequence, when the source names it.
    root : float or None
        A root named by the source (``known_root`` in ``convdiag run --json`` output).
    label : str
        Where the sequence came from, for reports.
    """

    iterates: NDArray[np.float64] | None
    residuals: NDArray[np.float64] | None = None
    evals: NDArray[np.int64] | None = None
    exact: tuple[Any, ...] | None = None
    digits: int | None = None
    method: str | None = None
    root: float | None = None
    label: str = "sequence"

    def __len__(self) -> int:
        col = self.iterates if self.iterates is not None else self.residuals
        return 0 if col is None else int(col.shape[0])

    @property
    def columns(self) -> tuple[str, ...]:
        """Names of the columns present: ``iterates``, ``residuals``, ``evals``."""
        names = ("iterates", "residuals", "evals")
        return tuple(n for n in names if getattr(self, n) is not None)

    def __repr__(self) -> str:
        return f"<IterationSequence {self.label}: {len(self)} entries, columns {', '.join(self.columns)}>"


# -- building blocks --------------------------------------------------------------------
def _floats(values: Any, what: str, owner: str) -> NDArray[np.float64]:
    try:
        arr = np.array([_to_float(v) for v in values], dtype=np.float64)
    except (TypeError, ValueError) as exc:
        raise ParameterError(f"The {what!r} of {owner} must be numbers. {exc}") from None
    return arr


def _to_float(v: Any) -> float:
    if v is None:
        return math.nan
    if isinstance(v, (str, bytes, bool)):
        raise ValueError(f"Got {v!r}, which is not a number.")  # noqa: TRY004  (caught and reworded by callers)
    try:
        return float(v)
    except (TypeError, ValueError, OverflowError):
        z = complex(v)
        if z.imag != 0:
            raise ValueError(f"Got the complex number {z!r}; only real sequences are supported.") from None
        return z.real


def _check_sequence(seq: IterationSequence, where: str, error: type[Exception]) -> IterationSequence:
    if seq.iterates is None and seq.residuals is None:
        raise error(f"{where} has no column of iterates or residuals ({_NAMES_HELP}).")
    n = len(seq)
    for name in ("iterates", "residuals", "evals"):
        col = getattr(seq, name)
        if col is not None and col.shape != (n,):
            raise error(f"{where}: the {name} column has {col.shape[0]} entries, the others {n}.")
    if n < 3:
        raise error(
            f"{where} has {n} entr{'y' if n == 1 else 'ies'}; an order of convergence needs at least 3 "
            "(4 without a known root)."
        )
    return seq


def _from_columns(cols: Mapping[str, Any], where: str, error: type[Exception], kind: Kind) -> IterationSequence:
    lowered: dict[str, Any] = {}
    for key, val in cols.items():
        name = str(key).strip().lower().replace(" ", "")
        lowered[name] = val
    unknown = [k for k in lowered if k not in _KNOWN and k not in ("method", "root", "known_root", "label")]
    pick = {group: next((lowered[n] for n in names if n in lowered), None)
            for group, names in (("x", ITERATE_NAMES), ("f", RESIDUAL_NAMES), ("e", EVAL_NAMES))}
    if pick["x"] is None and pick["f"] is None:
        extra = f" (found {', '.join(map(repr, unknown))})" if unknown else ""
        raise error(f"{where} has no column of iterates or residuals{extra}. Name the columns: {_NAMES_HELP}.")
    xs, exact, digits = (None, None, None) if pick["x"] is None else _column(pick["x"], "iterates", where, error)
    fs = None if pick["f"] is None else _column(pick["f"], "residuals", where, error)[0]
    if kind == "residuals" and xs is not None and fs is None:
        xs, fs, exact, digits = None, xs, None, None
    evals = None
    if pick["e"] is not None:
        ev = _column(pick["e"], "evals", where, error)[0]
        if not np.all(np.isfinite(ev)) or np.any(ev != np.round(ev)) or np.any(np.diff(ev) < 0):
            raise error(f"{where}: the evaluation counts must be whole numbers that never decrease.")
        evals = ev.astype(np.int64)
    root = lowered.get("known_root", lowered.get("root"))
    method = lowered.get("method")
    return IterationSequence(
        iterates=xs,
        residuals=fs,
        evals=evals,
        exact=exact,
        digits=digits,
        method=str(method) if isinstance(method, str) else None,
        root=None if root is None else _to_float(root),
        label=where,
    )


def _column(
    values: Any, name: str, where: str, error: type[Exception]
) -> tuple[NDArray[np.float64], tuple[Any, ...] | None, int | None]:
    """Floats of one column, plus exact mpmath values when the text carries more than 17 digits."""
    if isinstance(values, np.ndarray):
        values = values.tolist()
    if not isinstance(values, (list, tuple)):
        raise error(f"{where}: the {name} must be a list of numbers. Got {type(values).__name__}.")
    out: list[float] = []
    texts: list[str | None] = []
    for i, v in enumerate(values):
        if isinstance(v, (str, Decimal)):
            text = str(v).strip()
            try:
                out.append(float(Decimal(text)) if text.lower() not in ("nan", "inf", "-inf", "+inf") else float(text))
            except (InvalidOperation, ValueError, OverflowError):
                raise error(f"{where}: entry {i + 1} of the {name} column is {text!r}, which is not a number.") from None
            texts.append(text)
            continue
        try:
            out.append(_to_float(v))
        except (TypeError, ValueError) as exc:
            raise error(f"{where}: entry {i + 1} of the {name} column: {exc}") from None
        texts.append(None)
    digits = max((_significant(t) for t in texts if t is not None), default=0)
    exact: tuple[Any, ...] | None = None
    if digits > 17 and name == "iterates":
        import mpmath

        with mpmath.workdps(digits + 5):
            exact = tuple(mpmath.mpf(t) if t is not None else mpmath.mpf(x) for t, x in zip(texts, out))
    return np.asarray(out, dtype=np.float64), exact, (digits if exact is not None else None)


def _significant(text: str) -> int:
    m = _SIG.match(text)
    if m is None:
        return 0
    digits = (m.group(1) + m.group(2)).lstrip("0")
    return len(digits)


# -- public: objects ------------------------------------------------------------------------
def as_sequence(
    data: Any,
    *,
    kind: Kind = "auto",
    evals: Sequence[int] | NDArray[np.int64] | None = None,
    label: str | None = None,
) -> IterationSequence:
    """Normalise iterates and/or residuals from a Python object.

    Parameters
    ----------
    data : list, tuple, numpy array, mapping, Run, Recorder, EvalLog or IterationSequence
        A 1-D sequence is read as iterates (or residuals with ``kind="residuals"``); an (n, 2)
        array as (iterates, residuals); a mapping by its column names (``x``/``iterates``,
        ``f``/``residuals``, ``evals``). A recorder's iterates are its evaluation points: right
        for solvers that evaluate f once per step at the new iterate (secant-like methods); a
        solver that also evaluates at auxiliary points (difference derivatives, Steffensen's
        x + f(x), a bracketing fallback) mixes those in. Difference-derivative evaluations
        (kind ``fd``) and failed evaluations are left out.
    kind : "auto", "iterates" or "residuals"
        How to read a single column.
    evals : sequence of int, optional
        Cumulative evaluations at each entry (for efficiency per evaluation).
    label : str, optional
        A name for reports.

    Returns
    -------
    IterationSequence

    Raises
    ------
    ParameterError
        Not a sequence of real numbers, or fewer than 3 entries.

    Examples
    --------
    >>> from convdiag.core._sequence import as_sequence
    >>> s = as_sequence([1.0, 0.5, 0.25, 0.125])
    >>> s.columns, len(s)
    (('iterates',), 4)
    >>> as_sequence({"x": [2, 1.5, 1.4167], "f": [2, 0.25, 0.007]}).columns
    ('iterates', 'residuals')
    """
    owner = "as_sequence"
    if kind not in ("auto", "iterates", "residuals"):
        raise ParameterError.expected("kind", owner, "'auto', 'iterates' or 'residuals'", kind)
    seq = _as_sequence(data, kind, owner, label)
    if evals is not None:
        ev = np.asarray(evals, dtype=np.int64)
        seq = IterationSequence(seq.iterates, seq.residuals, ev, seq.exact, seq.digits, seq.method, seq.root, seq.label)
    return _check_sequence(seq, label or seq.label, ParameterError)


def _as_sequence(data: Any, kind: Kind, owner: str, label: str | None) -> IterationSequence:
    from ._record import EvalLog, Recorder
    from ._run import Run

    if isinstance(data, IterationSequence):
        return data
    if isinstance(data, Run):
        exact = tuple(data.iterates_exact) if data.arithmetic == "mpmath" else None
        return IterationSequence(
            iterates=data.iterates,
            residuals=data.values,
            evals=data.evals_at_iterates,
            exact=exact,
            digits=data.digits if exact is not None else None,
            method=data.method,
            label=label or f"{data.method} on {data.problem}",
        )
    if isinstance(data, Recorder):
        return _from_log(data.log, label or f"recorder {data.name}")
    if isinstance(data, EvalLog):
        return _from_log(data, label or data.source)
    if isinstance(data, Mapping):
        return _from_columns(data, label or "mapping", ParameterError, kind)
    if isinstance(data, (str, bytes)) or not hasattr(data, "__len__"):
        raise ParameterError.expected(
            "data", owner, "a list or array of numbers, a mapping of columns, a Run, a Recorder or an EvalLog", data
        )
    exact_in = [v for v in data if type(v).__module__.startswith("mpmath")] if not isinstance(data, np.ndarray) else []
    arr = np.asarray(data, dtype=object) if exact_in else None
    if arr is None:
        try:
            arr = np.asarray(data, dtype=np.float64)
        except (TypeError, ValueError):
            raise ParameterError.expected("data", owner, "real numbers", data) from None
    where = label or type(data).__name__
    if arr.ndim == 1:
        col = _floats(arr.tolist(), "data", owner)
        if kind == "residuals":
            return IterationSequence(iterates=None, residuals=col, label=where)
        exact = None
        digits = None
        if exact_in:
            import mpmath

            exact = tuple(mpmath.mpf(v) if not type(v).__module__.startswith("mpmath") else v for v in arr.tolist())
            bits = max(int(v._mpf_[1]).bit_length() for v in exact_in if hasattr(v, "_mpf_"))
            digits = max(16, int(bits * math.log10(2)))
        return IterationSequence(iterates=col, exact=exact, digits=digits, label=where)
    if arr.ndim == 2 and arr.shape[1] == 2:
        return IterationSequence(
            iterates=_floats(arr[:, 0].tolist(), "data", owner),
            residuals=_floats(arr[:, 1].tolist(), "data", owner),
            label=where,
        )
    raise ParameterError.expected("data", owner, "1-D, or 2-D with two columns (iterates, residuals)", f"shape {arr.shape}")


def _from_log(log: Any, label: str) -> IterationSequence:
    kinds = np.asarray(log.kind)
    keep = ((kinds == "f") | (kinds == "f+df")) & np.asarray(log.ok)
    rows = np.flatnonzero(keep)
    return IterationSequence(
        iterates=np.asarray(log.x, dtype=np.float64)[rows],
        residuals=np.asarray(log.value, dtype=np.float64)[rows],
        evals=(rows + 1).astype(np.int64),
        label=label,
    )
