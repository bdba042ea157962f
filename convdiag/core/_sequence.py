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
"""

from __future__ import annotations

import csv
import io
import json
import math
import os
import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from decimal import Decimal, InvalidOperation
from typing import Any, Literal

import numpy as np
from numpy.typing import NDArray

from ..errors import InputFileError, ParameterError

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


# -- public: files ------------------------------------------------------------------------
def load_sequence(path: str | os.PathLike[str], *, kind: Kind = "auto") -> IterationSequence:
    """Read iterates and/or residuals from a CSV (or whitespace-separated) or JSON file.

    CSV: one row per iterate. A header names the columns (``x`` or ``iterate``; ``f`` or
    ``residual``; ``evals``; an index column ``k`` is ignored). Without a header, one
    column is iterates (residuals with ``kind="residuals"``), two are (iterates, residuals)
    unless the first counts 0, 1, 2, ... (then it is an index). Lines starting with ``#``
    are comments. JSON: a list of numbers, a list of rows or objects, an object of columns,
    or the output of ``convdiag run --json`` (iterates, values, method, evaluations).

    Raises
    ------
    InputFileError
        The file is missing, unreadable, empty, malformed, or has fewer than 3 entries.
    """
    name = os.fspath(path)
    if not os.path.isfile(name):
        raise InputFileError(f"No such file: {name!r}.")
    try:
        with open(name, encoding="utf-8") as fh:
            text = fh.read()
    except (OSError, UnicodeDecodeError) as exc:
        raise InputFileError(f"Could not read {name!r}: {exc}. Give a CSV or JSON text file.") from None
    fmt: Literal["json", "csv"] = "json" if name.lower().endswith(".json") or text.lstrip()[:1] in "[{" else "csv"
    return parse_sequence_text(text, name=name, fmt=fmt, kind=kind)


def parse_sequence_text(
    text: str, *, name: str = "<text>", fmt: Literal["csv", "json"] = "csv", kind: Kind = "auto"
) -> IterationSequence:
    """Parse the text of a CSV or JSON file (see :func:`load_sequence`); errors are InputFileError.

    Examples
    --------
    >>> s = parse_sequence_text("k,x\\n0,2\\n1,1.5\\n2,1.4166666666666667\\n")
    >>> s.iterates.tolist()
    [2.0, 1.5, 1.4166666666666667]
    """
    if not text.strip():
        raise InputFileError(f"{name!r} is empty; expected iterates, one per line (CSV) or a JSON list.")
    seq = _parse_json(text, name, kind) if fmt == "json" else _parse_csv(text, name, kind)
    return _check_sequence(seq, repr(name), InputFileError)


def _parse_json(text: str, name: str, kind: Kind) -> IterationSequence:
    try:
        data = json.loads(text, parse_float=Decimal, parse_constant=lambda c: Decimal(c.replace("Infinity", "Inf")))
    except json.JSONDecodeError as exc:
        raise InputFileError(f"{name!r} is not valid JSON: {exc.msg} at line {exc.lineno}, column {exc.colno}.") from None
    where = repr(name)
    if isinstance(data, dict):
        if "iterates" in data and "steps" in data and isinstance(data["steps"], list):  # convdiag run --json
            starts = data.get("starts") or []
            try:
                evals = [*range(1, len(starts) + 1), *(int(s["evals"]) for s in data["steps"])]
            except (KeyError, TypeError, ValueError):
                evals = []
            cols = {k: data[k] for k in ("iterates", "values", "method", "known_root") if k in data}
            if len(evals) == len(data["iterates"]):
                cols["evals"] = evals
            return _from_columns(cols, where, InputFileError, kind)
        return _from_columns(data, where, InputFileError, kind)
    if isinstance(data, list):
        if all(not isinstance(v, (list, dict)) for v in data):
            return _from_columns({"residuals" if kind == "residuals" else "x": data}, where, InputFileError, "auto")
        if all(isinstance(v, dict) for v in data):
            keys = list(dict.fromkeys(k for row in data for k in row))
            return _from_columns({k: [row.get(k) for row in data] for k in keys}, where, InputFileError, kind)
        if all(isinstance(v, list) for v in data):
            return _from_rows(None, [list(map(str, r)) for r in data], where, kind)
    raise InputFileError(
        f"{where} holds JSON of an unexpected shape ({type(data).__name__}); give a list of numbers, a list of "
        "rows, or an object of columns such as {\"x\": [...], \"f\": [...]}."
    )


def _parse_csv(text: str, name: str, kind: Kind) -> IterationSequence:
    lines = [ln for ln in text.splitlines() if ln.strip() and not ln.lstrip().startswith("#")]
    if not lines:
        raise InputFileError(f"{name!r} has only comments or blank lines; expected iterates, one per line.")
    sample = "\n".join(lines[:20])
    delim = next((d for d in (",", ";", "\t") if d in sample), None)
    if delim is None:
        rows = [ln.split() for ln in lines]
    else:
        rows = [[c.strip() for c in r] for r in csv.reader(io.StringIO("\n".join(lines)), delimiter=delim)]
    header = None
    if rows and any(not _is_number(c) for c in rows[0]):
        header, rows = rows[0], rows[1:]
    widths = {len(r) for r in rows}
    if len(widths) > 1:
        bad = next(i for i, r in enumerate(rows) if len(r) != len(rows[0]))
        raise InputFileError(
            f"{name!r}: row {bad + 1 + (header is not None)} has {len(rows[bad])} fields, the first has "
            f"{len(rows[0])}; every row must have the same columns."
        )
    return _from_rows(header, rows, repr(name), kind)


def _is_number(text: str) -> bool:
    try:
        float(text)
    except ValueError:
        return False
    return True


def _from_rows(header: list[str] | None, rows: list[list[str]], where: str, kind: Kind) -> IterationSequence:
    if not rows:
        raise InputFileError(f"{where} has a header but no rows of numbers.")
    width = len(rows[0])
    columns = [[r[j] for r in rows] for j in range(width)]
    if header is not None:
        if len(header) != width:
            raise InputFileError(f"{where}: the header has {len(header)} names but the rows have {width} fields.")
        return _from_columns(dict(zip(header, columns)), where, InputFileError, kind)
    for j, col in enumerate(columns):
        bad = next((i for i, c in enumerate(col) if not _is_number(c)), None)
        if bad is not None:
            raise InputFileError(f"{where}: row {bad + 1}, column {j + 1} is {col[bad]!r}, which is not a number.")
    if width >= 2 and _is_index(columns[0]):
        columns = columns[1:]
    if len(columns) == 1:
        return _from_columns({"residuals" if kind == "residuals" else "x": columns[0]}, where, InputFileError, "auto")
    if len(columns) == 2:
        return _from_columns({"x": columns[0], "f": columns[1]}, where, InputFileError, kind)
    raise InputFileError(
        f"{where} has {len(columns)} unnamed columns; add a header line naming them ({_NAMES_HELP})."
    )


def _is_index(col: list[str]) -> bool:
    try:
        vals = [float(c) for c in col]
    except ValueError:
        return False
    first = vals[0]
    return first in (0.0, 1.0) and vals == [first + i for i in range(len(vals))]
