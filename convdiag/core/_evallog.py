"""The export side of recording: raw ``(kind, x, value, t_start, t_end)`` rows become an :class:`EvalLog`.

:func:`classify_value` decides what a returned value is (a finite float,
NaN, inf, an exception, a complex number, not a number, the wrong shape);
:func:`build_log` turns the rows a :class:`~convdiag.core._record.Recorder`
(or an evaluator, or a bracket search) kept into an :class:`EvalLog` of plain
numpy arrays. Everything here is re-exported by ``_record``.
"""

from __future__ import annotations

import csv
import io
import json
import math
import numbers
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from numpy.typing import NDArray

__all__ = ["EvalLog", "build_log", "classify_value"]

# Kinds of evaluation. A row's kind says which function was called:
# f, the first or second derivative, f returning (f, f'), or f evaluated
# only to build a difference derivative ("fd").
F, DF, D2F, F_AND_DF, FD = 0, 1, 2, 3, 4
KIND_NAMES = ("f", "df", "d2f", "f+df", "fd")

# Status of a recorded value, decided at export time.
STATUS_OK = "ok"
STATUS_NAN = "nan"
STATUS_INF = "inf"
STATUS_RAISED = "raised"
STATUS_COMPLEX = "complex"
STATUS_NOT_A_NUMBER = "not-a-number"
STATUS_SHAPE = "shape"


class _Raised:
    """Marker stored in place of a value when the call raised."""

    __slots__ = ("exc",)

    def __init__(self, exc: BaseException) -> None:
        self.exc = exc

    def __repr__(self) -> str:
        return f"raised {type(self.exc).__name__}: {self.exc}"


def _brief(y: Any) -> str:
    """The type and the start of the repr of a returned object (whose repr may itself fail)."""
    try:
        return f"{type(y).__name__} {y!r:.60}"
    except Exception:  # noqa: BLE001 - the user's object cannot even show itself
        return f"an object of type {type(y).__name__}"


def classify_value(y: Any) -> tuple[float, str, str]:
    """Return ``(real value, status, note)`` for one returned value.

    The value is NaN whenever the status is not ``ok``/``nan``/``inf``. Never raises: an object
    whose conversion to a number fails (with any error) is ``not-a-number``.
    """
    if isinstance(y, _Raised):
        return math.nan, STATUS_RAISED, repr(y)
    if isinstance(y, bool) or y is None or isinstance(y, (str, bytes)):
        return math.nan, STATUS_NOT_A_NUMBER, f"returned {_brief(y)}"
    if isinstance(y, np.ndarray):
        if y.size != 1:
            return math.nan, STATUS_SHAPE, f"returned an array of shape {y.shape}"
        y = y.reshape(()).item()
    if isinstance(y, numbers.Real):
        try:
            v = float(y)
        except OverflowError:
            return math.nan, STATUS_INF, f"returned {_brief(y)}, too large for a float"
        except Exception:  # noqa: BLE001 - a signalling NaN, a number type that will not convert
            return math.nan, STATUS_NOT_A_NUMBER, f"returned {_brief(y)}"
        if math.isnan(v):
            return v, STATUS_NAN, "returned NaN"
        if math.isinf(v):
            return v, STATUS_INF, f"returned {v}"
        return v, STATUS_OK, ""
    if isinstance(y, numbers.Complex):
        try:
            z = complex(y)
        except Exception:  # noqa: BLE001
            return math.nan, STATUS_NOT_A_NUMBER, f"returned {_brief(y)}"
        if z.imag == 0.0:
            return classify_value(z.real)
        return math.nan, STATUS_COMPLEX, f"returned the complex number {z!r}"
    # mpmath numbers and other objects that convert to float
    try:
        v = float(y)
    except Exception:  # noqa: BLE001 - whatever the object raises, it is not a number
        return math.nan, STATUS_NOT_A_NUMBER, f"returned {_brief(y)}"
    return classify_value(v)


@dataclass(frozen=True)
class EvalLog:
    """The evaluations of one function, in call order, as plain arrays.

    One row per evaluated point: a call with an array argument gives one row
    per element, and ``call`` says which call each row came from.

    Attributes
    ----------
    x : float array
        The argument (real part where a complex argument was passed).
    x_imag : float array
        Imaginary part of the argument (0 for real calls; complex-step
        derivative evaluations show here).
    value : float array
        The returned value as a float; NaN where the call raised or did not
        return a real number (see ``status``).
    derivative : float array
        Derivative value for rows of kind ``df``/``f+df``; NaN elsewhere.
    kind : str array
        ``f``, ``df`` (first derivative), ``d2f``, ``f+df`` (f returned both)
        or ``fd`` (f evaluated only to build a difference derivative).
    call : int array
        Index of the call that produced the row.
    start, seconds : float arrays
        Start time (seconds since the recorder was created) and wall time
        of the call the row came from.
    status : str array
        ``ok``, ``nan``, ``inf``, ``raised``, ``complex``, ``not-a-number``
        or ``shape``.
    notes : tuple of (row, text)
        What went wrong on rows whose status is not ``ok``.
    source : str
        Where the rows came from (``recorder``, or the method that ran).
    """

    x: NDArray[np.float64]
    x_imag: NDArray[np.float64]
    value: NDArray[np.float64]
    derivative: NDArray[np.float64]
    kind: NDArray[np.str_]
    call: NDArray[np.int64]
    start: NDArray[np.float64]
    seconds: NDArray[np.float64]
    status: NDArray[np.str_]
    notes: tuple[tuple[int, str], ...] = ()
    source: str = "recorder"
    _fields: tuple[str, ...] = field(
        default=("call", "kind", "x", "x_imag", "value", "derivative", "status", "start", "seconds"),
        repr=False,
        compare=False,
    )

    def __len__(self) -> int:
        return int(self.x.shape[0])

    @property
    def count(self) -> int:
        """Number of evaluated points (every kind counts)."""
        return len(self)

    @property
    def calls(self) -> int:
        """Number of calls (an array call counts once)."""
        return 0 if len(self) == 0 else int(self.call[-1]) + 1

    def count_kind(self, kind: str) -> int:
        return int(np.count_nonzero(self.kind == kind))

    @property
    def ok(self) -> NDArray[np.bool_]:
        ok: NDArray[np.bool_] = self.status == STATUS_OK
        return ok

    @property
    def total_seconds(self) -> float:
        if len(self) == 0:
            return 0.0
        _, first = np.unique(self.call, return_index=True)
        return float(np.sum(self.seconds[first]))

    def failures(self) -> list[tuple[int, float, str, str]]:
        """``(row, x, status, note)`` for every row that is not ``ok``."""
        notes = dict(self.notes)
        return [
            (int(i), float(self.x[i]), str(self.status[i]), notes.get(int(i), ""))
            for i in np.flatnonzero(~self.ok)
        ]

    def to_records(self) -> NDArray[Any]:
        """A numpy structured array (one record per row)."""
        dtype = [
            ("call", "i8"),
            ("kind", "U4"),
            ("x", "f8"),
            ("x_imag", "f8"),
            ("value", "f8"),
            ("derivative", "f8"),
            ("status", "U12"),
            ("start", "f8"),
            ("seconds", "f8"),
        ]
        out = np.empty(len(self), dtype=dtype)
        for name, _ in dtype:
            out[name] = getattr(self, name)
        return out

    def to_dict(self) -> dict[str, Any]:
        """Plain lists, ready for ``json.dumps`` (NaN becomes ``None``)."""

        def clean(a: NDArray[Any]) -> list[Any]:
            if a.dtype.kind == "f":
                return [None if not math.isfinite(v) else float(v) for v in a.tolist()]
            return list(a.tolist())

        d: dict[str, Any] = {name: clean(getattr(self, name)) for name in self._fields}
        d["notes"] = [{"row": r, "note": t} for r, t in self.notes]
        d["source"] = self.source
        return d

    def to_json(self) -> str:
        return json.dumps(self.to_dict())

    def to_csv(self, path: str | None = None) -> str:
        """Write CSV (one header line, one line per row); returns the text."""
        buf = io.StringIO()
        w = csv.writer(buf, lineterminator="\n")
        w.writerow(self._fields)
        cols = [getattr(self, name).tolist() for name in self._fields]
        for row in zip(*cols):
            w.writerow(row)
        text = buf.getvalue()
        if path is not None:
            with open(path, "w", encoding="utf-8", newline="") as fh:
                fh.write(text)
        return text

    def __repr__(self) -> str:
        bad = int(np.count_nonzero(~self.ok))
        extra = f", {bad} failed" if bad else ""
        return f"<EvalLog {len(self)} evaluations in {self.calls} calls{extra}>"


def build_log(
    rows: Sequence[tuple[int, Any, Any, float, float]],
    t_origin: float,
    *,
    source: str = "recorder",
) -> EvalLog:
    """Turn raw ``(kind, x, y, t0, t1)`` rows into an :class:`EvalLog`."""
    xs: list[float] = []
    xi: list[float] = []
    vals: list[float] = []
    ders: list[float] = []
    kinds: list[str] = []
    calls: list[int] = []
    starts: list[float] = []
    secs: list[float] = []
    stats: list[str] = []
    notes: list[tuple[int, str]] = []

    def add(kind: int, x: Any, y: Any, call: int, t0: float, t1: float) -> None:
        d = math.nan
        if kind == F_AND_DF and isinstance(y, (tuple, list)) and len(y) >= 2:
            d, _, _ = classify_value(y[1])
            y = y[0]
        v, stat, note = classify_value(y)
        if kind == DF or kind == D2F:
            d = v
        try:
            z = complex(x)
            xr, xim = z.real, z.imag
        except (TypeError, ValueError, OverflowError):
            xr, xim = math.nan, math.nan
        row = len(xs)
        xs.append(xr)
        xi.append(xim)
        vals.append(v)
        ders.append(d)
        kinds.append(KIND_NAMES[kind])
        calls.append(call)
        starts.append(t0 - t_origin)
        secs.append(t1 - t0)
        stats.append(stat)
        if note:
            notes.append((row, note))

    for call, (kind, x, y, t0, t1) in enumerate(rows):
        if isinstance(x, np.ndarray) and x.ndim > 0:
            if isinstance(y, _Raised):
                for xe in x.ravel().tolist():
                    add(kind, xe, y, call, t0, t1)
                continue
            ya = np.asarray(y) if not isinstance(y, tuple) else None
            if ya is not None and ya.size == x.size:
                for xe, ye in zip(x.ravel().tolist(), ya.ravel().tolist()):
                    add(kind, xe, ye, call, t0, t1)
                continue
            for xe in x.ravel().tolist():
                add(kind, xe, y, call, t0, t1)
            continue
        add(kind, x, y, call, t0, t1)

    return EvalLog(
        x=np.asarray(xs, dtype=np.float64),
        x_imag=np.asarray(xi, dtype=np.float64),
        value=np.asarray(vals, dtype=np.float64),
        derivative=np.asarray(ders, dtype=np.float64),
        kind=np.asarray(kinds, dtype="U4"),
        call=np.asarray(calls, dtype=np.int64),
        start=np.asarray(starts, dtype=np.float64),
        seconds=np.asarray(secs, dtype=np.float64),
        status=np.asarray(stats, dtype="U12"),
        notes=tuple(notes),
        source=source,
    )
