"""How core results show themselves without core importing the display layer.

Result classes inherit :class:`Showable`. The display layer
(``convdiag.report``) registers a text and an HTML formatter per class with
:func:`register_formatter` when it is imported (``import convdiag`` does
that). Core never imports ``report``; if nothing is registered, results
fall back to their one-line ``repr``.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

__all__ = ["Showable", "register_formatter"]

_TEXT: dict[type, Callable[[Any], str]] = {}
_HTML: dict[type, Callable[[Any], str]] = {}


def register_formatter(
    cls: type, *, text: Callable[[Any], str] | None = None, html: Callable[[Any], str] | None = None
) -> None:
    """Register the text/plain and text/html formatter for results of type ``cls``."""
    if text is not None:
        _TEXT[cls] = text
    if html is not None:
        _HTML[cls] = html


def _lookup(table: dict[type, Callable[[Any], str]], obj: Any) -> Callable[[Any], str] | None:
    for klass in type(obj).__mro__:
        if klass in table:
            return table[klass]
    return None


class Showable:
    """Mixin: ``_repr_mimebundle_`` (text/plain always, text/html when registered) and ``to_text()``."""

    def to_text(self) -> str:
        fmt = _lookup(_TEXT, self)
        return fmt(self) if fmt is not None else repr(self)

    def to_html(self) -> str:
        fmt = _lookup(_HTML, self)
        if fmt is None:
            import html

            return f"<pre>{html.escape(self.to_text())}</pre>"
        return fmt(self)

    def _repr_mimebundle_(self, include: Any = None, exclude: Any = None) -> dict[str, str]:
        bundle = {"text/plain": self.to_text()}
        if _lookup(_HTML, self) is not None:
            bundle["text/html"] = self.to_html()
        return bundle

    def _repr_pretty_(self, p: Any, cycle: bool) -> None:
        p.text(self.to_text() if not cycle else repr(self))
