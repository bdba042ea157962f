"""convdiag: see why a root-finder stalls, choose a start and method that work, document it.

Importing convdiag loads numpy only; sympy, mpmath, scipy, matplotlib,
ipywidgets and IPython load when a feature needs them.
"""

from . import report as _report  # noqa: F401  (registers text/HTML forms of results; no matplotlib)
from .core import (
    METHODS,
    STOP_REASONS,
    BracketSearch,
    Candidate,
    Chord,
    Comparison,
    EvalLog,
    Failure,
    InverseParabola,
    IterationSequence,
    Method,
    Midpoint,
    OrderEstimate,
    Problem,
    Recorder,
    Run,
    Session,
    Settings,
    Step,
    Tangent,
    TangentHyperbola,
    as_problem,
    compare_methods,
    estimate_order,
    find_brackets,
    load_sequence,
    record,
    reference_root,
    solve,
    start_session,
)
from .errors import (
    BracketError,
    ConvdiagError,
    ConvergenceWarning,
    EvaluationError,
    ExpressionError,
    InputFileError,
    ParameterError,
)

__version__ = "0.1.0"

__all__ = [
    "METHODS",
    "STOP_REASONS",
    "BracketError",
    "BracketSearch",
    "Candidate",
    "Chord",
    "Comparison",
    "ConvdiagError",
    "ConvergenceWarning",
    "EvalLog",
    "EvaluationError",
    "ExpressionError",
    "Failure",
    "InputFileError",
    "InverseParabola",
    "IterationSequence",
    "Method",
    "Midpoint",
    "OrderEstimate",
    "ParameterError",
    "Problem",
    "Recorder",
    "Run",
    "Session",
    "Settings",
    "Step",
    "Tangent",
    "TangentHyperbola",
    "__version__",
    "as_problem",
    "compare_methods",
    "estimate_order",
    "find_brackets",
    "load_ipython_extension",
    "load_sequence",
    "record",
    "reference_root",
    "solve",
    "start_session",
]


def load_ipython_extension(ipython):  # type: ignore[no-untyped-def]
    """``%load_ext convdiag``: rich display of results and the explorer magic."""
    from ._ipython import load_ipython_extension as _load

    _load(ipython)
