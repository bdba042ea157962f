"""``%load_ext convdiag``: rich display of results and the ``%iterscope`` line magic.

Loading the extension makes every convdiag result (runs, order estimates,
bracket searches, diagnoses) show its HTML table in notebooks (they carry
``_repr_mimebundle_``; the report modules that register their forms are
imported here), shows a :class:`~convdiag.Session` as the run so far, and
adds one magic that opens the explorer::

    %iterscope "x**3 - 2*x + 2" --method newton --start 0
    %iterscope kepler --start 0.1 --param ecc=0:0.999
    %iterscope colebrook --method illinois --bracket 0.005 0.1
    %iterscope "cos(x) - x" --compare newton secant illinois --bracket 0 1

The function is a name in the notebook's namespace (dotted names such as
``models.colebrook`` are followed attribute by attribute) or expression
text, which the safe expression parser reads: user text is never run.
"""

from __future__ import annotations

import argparse
import importlib
import re
import shlex
from typing import Any

__all__ = ["MAGIC_NAME", "load_ipython_extension", "parse_magic_line", "resolve_function"]

MAGIC_NAME = "iterscope"
_NAME = re.compile(r"[A-Za-z_][A-Za-z0-9_]*(\.[A-Za-z_][A-Za-z0-9_]*)*\Z")


class MagicError(ValueError):
    """A bad ``%iterscope`` line (shown as a one-line usage error, no traceback)."""


class _Parser(argparse.ArgumentParser):
    def error(self, message: str) -> Any:  # argparse would exit the kernel's process otherwise
        raise MagicError(f"{message}\n{self.format_usage().strip()}")


def _parser() -> argparse.ArgumentParser:
    from .core._methods import METHODS

    p = _Parser(prog=f"%{MAGIC_NAME}", add_help=False,
                description="Open the convdiag explorer on a function name or expression text.")
    p.add_argument("function", nargs="+", help="a name in the notebook, or expression text such as 'x**2 - 2'")
    p.add_argument("--method", "-m", default="newton", choices=sorted(METHODS))
    p.add_argument("--start", "-s", type=float, nargs="+", default=None, help="start(s) of an open method")
    p.add_argument("--bracket", "-b", type=float, nargs=2, default=None, metavar=("A", "B"))
    p.add_argument("--param", "-p", action="append", default=[], metavar="NAME=SPEC",
                   help="a model parameter: a value, or a slider range")
    p.add_argument("--xlim", type=float, nargs=2, default=None, metavar=("LO", "HI"))
    p.add_argument("--max-evals", type=int, default=100)
    p.add_argument("--compare", nargs="+", default=None, metavar="METHOD", choices=sorted(METHODS),
                   help="open the compare view with these methods instead")
    p.add_argument("--canvas", choices=("auto", "ipympl", "image"), default="auto")
    return p


def _param(text: str) -> tuple[str, Any]:
    name, sep, value = text.partition("=")
    if not sep or not re.fullmatch(r"[A-Za-z_][A-Za-z0-9_]*", name.strip()):
        raise MagicError(f"--param takes NAME=VALUE or NAME=LO:HI or NAME=LO:HI:VALUE. Got {text!r}.")
    try:
        nums = [float(v) for v in value.split(":")]
    except ValueError:
        raise MagicError(f"--param {name}: the value must be numbers separated by ':'. Got {value!r}.") from None
    if len(nums) == 1:
        return name.strip(), nums[0]
    if len(nums) in (2, 3):
        return name.strip(), tuple(nums)
    raise MagicError(f"--param {name}: give a value, LO:HI or LO:HI:VALUE. Got {value!r}.")


def parse_magic_line(line: str) -> argparse.Namespace:
    """Split and parse a ``%iterscope`` line; the function is everything before the first option.

    Examples
    --------
    >>> ns = parse_magic_line('x**3 - 2*x + 2 --start 0 --param a=0:5')
    >>> ns.function, ns.start, ns.params
    ('x**3 - 2*x + 2', [0.0], {'a': (0.0, 5.0)})
    """
    try:
        words = shlex.split(line)
    except ValueError as exc:
        raise MagicError(f"could not split the line: {exc}") from None
    first = next((i for i, w in enumerate(words) if w.startswith("--") or w in ("-m", "-s", "-b", "-p")), len(words))
    if first == 0:
        raise MagicError(f"give a function first: %{MAGIC_NAME} NAME_OR_EXPRESSION [options]")
    ns = _parser().parse_args([*words[first:], "--", " ".join(words[:first])])  # "--": text may start with "-"
    ns.function = " ".join(ns.function)
    ns.params = dict(_param(t) for t in ns.param)
    return ns


def resolve_function(text: str, namespace: dict[str, Any]) -> Any:
    """A name (or dotted name) from ``namespace``, else the text itself for the expression parser.

    Nothing is evaluated: names are looked up, attributes followed, and any other text goes to
    ``convdiag``'s safe expression parser later.
    """
    text = text.strip()
    if _NAME.match(text):
        head, *rest = text.split(".")
        if any(part.startswith("__") for part in rest):  # x.__class__.__mro__...: no way into Python's insides
            raise MagicError(f"{text!r}: attributes with double underscores are not followed. Name your function "
                             "directly, or give expression text.")
        if head in namespace:
            obj = namespace[head]
            for part in rest:
                if not hasattr(obj, part):
                    raise MagicError(f"{'.'.join([head, *rest[: rest.index(part)]])} has no attribute {part!r}.")
                obj = getattr(obj, part)
            return obj
    return text


def _value(spec: Any) -> float:
    """The value of a --param given as VALUE, LO:HI (the middle) or LO:HI:VALUE."""
    if isinstance(spec, float):
        return spec
    return float(spec[2]) if len(spec) == 3 else (spec[0] + spec[1]) / 2


def _open(line: str, namespace: dict[str, Any]) -> Any:
    from .errors import ConvdiagError

    ns = parse_magic_line(line)
    f = resolve_function(ns.function, namespace)
    try:
        from .widgets import CompareView, Explorer

        if ns.compare:
            start = ns.start[0] if ns.start else 1.0
            values = {k: _value(v) for k, v in ns.params.items()}
            return CompareView(f, ns.compare, start=start, bracket=ns.bracket, max_evals=ns.max_evals,
                               params=values or None, canvas=ns.canvas)
        start = None if ns.start is None else (ns.start[0] if len(ns.start) == 1 else ns.start)
        return Explorer(f, ns.method, start=start, bracket=ns.bracket, params=ns.params or None,
                        xlim=None if ns.xlim is None else tuple(ns.xlim), max_evals=ns.max_evals, canvas=ns.canvas)
    except (ConvdiagError, ImportError) as exc:
        raise MagicError(str(exc)) from None


def _register_formatters(ipython: Any) -> None:
    import pkgutil

    from . import report

    for mod in pkgutil.iter_modules(report.__path__):  # every report module that registers text/HTML forms
        if mod.name.endswith("_text"):
            importlib.import_module(f"convdiag.report.{mod.name}")
    from .core._session import Session

    def session_html(s: Session) -> str:
        return s.run.to_html()

    def session_text(s: Session, p: Any, cycle: bool) -> None:
        p.text(s.run.to_text())

    formatters = ipython.display_formatter.formatters
    formatters["text/html"].for_type(Session, session_html)
    formatters["text/plain"].for_type(Session, session_text)


def _use_widget_progress(ipython: Any) -> None:
    """In a notebook kernel, sweeps show their progress as a widget bar (the text bar elsewhere)."""
    if getattr(ipython, "kernel", None) is None:  # a terminal IPython: widgets would not render
        return
    try:
        import ipywidgets  # noqa: F401
    except ImportError:
        return
    from .core._sweep import set_progress_factory
    from .widgets._progress import WidgetProgressBar

    set_progress_factory(WidgetProgressBar)


def load_ipython_extension(ipython: Any) -> None:
    """Register the display forms and the ``%iterscope`` magic (called by ``%load_ext convdiag``)."""
    from IPython.core.error import UsageError

    _register_formatters(ipython)
    _use_widget_progress(ipython)

    def iterscope(line: str) -> Any:
        """Open the convdiag explorer: %iterscope NAME_OR_EXPRESSION [--method M] [--start X] ...

        Options: --method/-m, --start/-s X [X ...], --bracket/-b A B, --param NAME=VALUE or
        NAME=LO:HI[:VALUE] (repeatable), --xlim LO HI, --max-evals N, --compare M1 M2 ...,
        --canvas auto|ipympl|image. Names are looked up in the notebook; other text is read by the
        safe expression parser and never run.
        """
        try:
            return _open(line, ipython.user_ns)
        except MagicError as exc:
            raise UsageError(str(exc)) from None

    ipython.register_magic_function(iterscope, magic_kind="line", magic_name=MAGIC_NAME)
