"""Notebook views (ipywidgets + matplotlib): they call core, never compute.

- :class:`Explorer`: step a method through a function, see each step's local model,
  pick a start by clicking the plot, watch the error fall, read the verdict.
- :class:`CompareView`: several methods on the same function and start, error against
  function evaluations (the equal-work view), with each method's observed order and efficiency.
- :class:`BracketView` and :class:`BasinView`: where the roots are and which start reaches
  which root; a click opens a start in an explorer.

Importing this package needs ipywidgets and matplotlib (``pip install 'convdiag[notebook]'``;
ipympl makes the figures clickable).
"""

from ._host import need_widgets as _need_widgets

_need_widgets()

from ._compare import CompareView
from ._explorer import Explorer
from ._starts import BasinView, BracketView

__all__ = ["BasinView", "BracketView", "CompareView", "Explorer"]
