"""Display layer: text and HTML forms of results, figures and reports.

Importing this package is light (no matplotlib): it registers the text and
HTML formatters of core results. Figures import matplotlib when drawn.
"""

from . import _brackets_text as _brackets_text  # noqa: F401
from . import _diagnosis_text as _diagnosis_text  # noqa: F401
from . import _order_text as _order_text  # noqa: F401
from . import _sweep_text as _sweep_text  # noqa: F401  (also installs the text progress bar)
from . import _text as _text  # noqa: F401  (registers formatters)
from ._basin_figures import BasinDisplay, EvaluationsDisplay, SweepDisplay
from ._brackets_figures import BracketsDisplay
from ._document import Report, make_report
from ._order_figures import EqualWorkDisplay, OrderDisplay
from ._progress_figures import ProgressDisplay
from ._step_figures import StepDisplay

__all__ = [
    "BasinDisplay",
    "BracketsDisplay",
    "EqualWorkDisplay",
    "EvaluationsDisplay",
    "OrderDisplay",
    "ProgressDisplay",
    "Report",
    "StepDisplay",
    "SweepDisplay",
    "make_report",
]
