"""Record every evaluation of a callable, also inside third-party solvers.

A :class:`Recorder` wraps a function and passes every call through
unchanged, keeping ``(kind, x, value, t_start, t_end)`` for each call. It
works as a wrapper object, a decorator and a context manager. The hot path
only appends one tuple; classification (finite? complex? raised?) happens
when the log is exported as an :class:`EvalLog` of plain numpy arrays.
The log side (:class:`EvalLog`, :func:`build_log`, :func:`classify_value`
and the kind and status codes) lives in ``_evallog`` and is re-exported here.
"""

from __future__ import annotations

import functools
from collections.abc import Callable, Iterator
from time import perf_counter
from typing import TYPE_CHECKING, Any, overload

from ..errors import ParameterError
from ._evallog import D2F, DF, F_AND_DF, FD, KIND_NAMES, EvalLog, F, _Raised, build_log, classify_value

if TYPE_CHECKING:
    from typing_extensions import Self

__all__ = ["EvalLog", "Recorder", "record"]
# Names other modules import from here; listing them keeps the re-export explicit (mypy --strict).
__all__ += ["D2F", "DF", "FD", "F_AND_DF", "F", "_Raised", "build_log", "classify_value"]


def _recording_call(
    f: Callable[..., Any], xy: list[Any], ts: list[float], last_args: list[tuple[Any, ...]]
) -> Callable[..., Any]:
    """The hot path: call f, keep (x, y) and (t_start, t_end) in two flat lists.

    Flat appends allocate no tuple (nothing for the garbage collector to
    track), and locals bound as defaults avoid global lookups. Extra
    positional arguments a solver passes (``args=``) are kept, the latest
    only, so later probes can call f the same way.
    """

    def call(
        x: Any,
        *args: Any,
        _f: Callable[..., Any] = f,
        _xy: Callable[[Any], None] = xy.append,
        _ts: Callable[[float], None] = ts.append,
        _pc: Callable[[], float] = perf_counter,
        _last: list[tuple[Any, ...]] = last_args,
    ) -> Any:
        _ts(_pc())
        try:
            if args:
                _last[0] = args
                y = _f(x, *args)
            else:
                y = _f(x)
        except BaseException as exc:
            _ts(_pc())
            _xy(x)
            _xy(_Raised(exc))
            raise
        _ts(_pc())
        _xy(x)
        _xy(y)
        return y

    return call


class Recorder(functools.partial):  # type: ignore[type-arg]
    """A callable that records every evaluation of ``f`` and returns its value unchanged.

    Use it as a wrapper object, a decorator or a context manager; hand it to
    any solver (scipy, your own loop) in place of ``f``. Every call is kept
    in order, exceptions included (they are recorded, then re-raised).
    (It subclasses ``functools.partial`` only for partial's C-level call
    path, which keeps the added cost per evaluation near 0.25 µs.)

    Parameters
    ----------
    f : callable
        The function, called as ``f(x, *args)``. If it returns a pair
        ``(f, f')`` (as ``scipy.optimize.root_scalar(..., fprime=True)``
        expects), record it with ``returns_derivative=True``.
    fprime, fprime2 : callable, optional
        Derivatives; their recorded versions are ``self.fprime`` and
        ``self.fprime2``, and their calls appear in this recorder's log.
    name : str, optional
        A label for reports (defaults to ``f.__name__``).
    returns_derivative : bool
        ``f`` returns ``(value, derivative[, ...])``.

    Examples
    --------
    >>> from convdiag import record
    >>> rf = record(lambda x: x * x - 2)
    >>> _ = [rf(1.0), rf(1.5)]
    >>> rf.log.value.tolist()
    [-1.0, 0.25]
    """

    _xy: list[Any]
    _ts: list[float]
    _last_args: list[tuple[Any, ...]]
    _t_origin: float
    _kind: int
    name: str
    fprime: Recorder | None
    fprime2: Recorder | None

    def __new__(
        cls,
        f: Callable[..., Any],
        *,
        fprime: Callable[..., Any] | None = None,
        fprime2: Callable[..., Any] | None = None,
        name: str | None = None,
        returns_derivative: bool = False,
        _kind: int = F,
        _t_origin: float | None = None,
    ) -> Self:
        if not callable(f):
            raise ParameterError.expected("f", "record", "a callable", f)
        xy: list[Any] = []
        ts: list[float] = []
        last_args: list[tuple[Any, ...]] = [()]
        self = super().__new__(cls, _recording_call(f, xy, ts, last_args))
        self._xy, self._ts, self._last_args = xy, ts, last_args
        self._t_origin = perf_counter() if _t_origin is None else _t_origin
        self._kind = F_AND_DF if returns_derivative else _kind
        self.name = str(name or getattr(f, "__name__", type(f).__name__))
        self.__wrapped__ = f  # type: ignore[attr-defined]
        self.fprime = None if fprime is None else Recorder(fprime, _kind=DF, _t_origin=self._t_origin)
        self.fprime2 = None if fprime2 is None else Recorder(fprime2, _kind=D2F, _t_origin=self._t_origin)
        return self

    # -- access -----------------------------------------------------------
    def _members(self) -> list[Recorder]:
        return [r for r in (self, self.fprime, self.fprime2) if r is not None]

    @property
    def call_args(self) -> tuple[Any, ...]:
        """Extra positional arguments of the latest call that had any (``args=`` of a solver), or ()."""
        return self._last_args[0]

    def __len__(self) -> int:
        """Calls recorded so far (the derivatives' calls included)."""
        return sum(len(r._xy) // 2 for r in self._members())

    def _raw_rows(self) -> list[tuple[int, Any, Any, float, float]]:
        rows: list[tuple[int, Any, Any, float, float]] = []
        for r in self._members():
            xy, ts = list(r._xy), list(r._ts)
            n = min(len(xy) // 2, len(ts) // 2)
            rows.extend((r._kind, xy[2 * i], xy[2 * i + 1], ts[2 * i], ts[2 * i + 1]) for i in range(n))
        rows.sort(key=lambda row: row[3])  # call order across f and its derivatives
        return rows

    @property
    def log(self) -> EvalLog:
        """A snapshot of everything recorded so far."""
        return build_log(self._raw_rows(), self._t_origin, source=f"recorder:{self.name}")

    def clear(self) -> None:
        """Forget the calls recorded so far (the derivatives' too)."""
        for r in self._members():
            del r._xy[:]
            del r._ts[:]

    def rows(self) -> Iterator[tuple[str, Any, Any]]:
        """The raw ``(kind, x, value)`` of each call, values exactly as returned."""
        for kind, x, y, _, _ in self._raw_rows():
            yield KIND_NAMES[kind], x, (y.exc if isinstance(y, _Raised) else y)

    def __enter__(self) -> Self:
        return self

    def __exit__(self, *exc: object) -> None:
        return None

    def __reduce__(self) -> Any:
        raise TypeError("A Recorder cannot be pickled; pickle its log (rf.log) instead.")

    def __repr__(self) -> str:
        return f"<Recorder {self.name}: {len(self)} calls>"


@overload
def record(f: Callable[..., Any], /, **kwargs: Any) -> Recorder: ...
@overload
def record(f: None = None, /, **kwargs: Any) -> Callable[[Callable[..., Any]], Recorder]: ...


def record(
    f: Callable[..., Any] | None = None, /, **kwargs: Any
) -> Recorder | Callable[[Callable[..., Any]], Recorder]:
    """Wrap ``f`` in a :class:`Recorder`; also usable as ``@record`` or ``@record(name=...)``.

    Examples
    --------
    >>> from convdiag import record
    >>> from scipy.optimize import brentq
    >>> with record(lambda x: x**3 - 2) as rf:
    ...     root = brentq(rf, 0.0, 2.0)
    >>> rf.log.count > 5
    True
    """
    if f is None:
        return lambda g: Recorder(g, **kwargs)
    return Recorder(f, **kwargs)
