"""Iterates and residuals read from a CSV (or whitespace-separated) or JSON file.

:func:`load_sequence` reads a file (a log of the user's own solver, or the
output of ``convdiag run --json``); :func:`parse_sequence_text` parses its
text. Columns are named and checked as in
:func:`~convdiag.core._sequence.as_sequence` (whose building blocks this
module borrows at call time: ``_sequence`` re-exports the functions here).
"""

from __future__ import annotations

import csv
import io
import json
import os
from decimal import Decimal
from typing import TYPE_CHECKING, Literal

from ..errors import InputFileError

if TYPE_CHECKING:
    from ._sequence import IterationSequence, Kind

__all__ = ["load_sequence", "parse_sequence_text"]


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
    from ._sequence import _check_sequence

    if not text.strip():
        raise InputFileError(f"{name!r} is empty; expected iterates, one per line (CSV) or a JSON list.")
    seq = _parse_json(text, name, kind) if fmt == "json" else _parse_csv(text, name, kind)
    return _check_sequence(seq, repr(name), InputFileError)


def _parse_json(text: str, name: str, kind: Kind) -> IterationSequence:
    from ._sequence import _from_columns

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
    from ._sequence import _NAMES_HELP, _from_columns

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
