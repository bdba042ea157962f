"""The computational core: recording, methods, runs. numpy only at import.

sympy and mpmath are imported lazily where symbolic or high-precision work
is asked for. Nothing here imports matplotlib, ipywidgets or IPython, and
nothing here prints.
"""

from . import _hybrid as _hybrid  # registers the "hybrid" method
from . import _modified as _modified  # registers "newton-m" and "newton-ratio"
from ._basin import BasinMap, basin_map
from ._brackets import BracketSearch, Candidate, find_brackets
from ._diagnose import PRECEDENCE, Diagnosis, diagnose
from ._findings import Finding, Remedy
from ._methods import (
    METHODS,
    Bisection,
    Halley,
    Illinois,
    InverseQuadratic,
    Newton,
    RegulaFalsi,
    Secant,
    Steffensen,
    register,
)
from ._models import Chord, InverseParabola, LocalModel, Midpoint, Tangent, TangentHyperbola
from ._modified import ModifiedNewton, NewtonRatio
from ._order import Comparison, MethodResult, OrderEstimate, compare_methods, estimate_order, order_json
from ._problem import Problem, as_problem
from ._record import EvalLog, Recorder, record
from ._reference import ReferenceRoot, reference_root, replay
from ._run import CONVERGED, STOP_REASONS, Failure, Run, Settings
from ._sequence import IterationSequence, as_sequence, load_sequence
from ._session import Session, solve, start_session
from ._step import Halt, Method, Start, Step
from ._sweep import ParamGrid, SweepResult, param_grid, read_sweep_csv, sweep
from ._vector import OUTCOMES, Lanes, classify_run, solve_many
from ._vhybrid import HybridMany, hybrid_many

__all__ = [
    "CONVERGED",
    "METHODS",
    "OUTCOMES",
    "PRECEDENCE",
    "STOP_REASONS",
    "BasinMap",
    "Bisection",
    "BracketSearch",
    "Candidate",
    "Chord",
    "Comparison",
    "Diagnosis",
    "EvalLog",
    "Failure",
    "Finding",
    "Halley",
    "Halt",
    "HybridMany",
    "Illinois",
    "InverseParabola",
    "InverseQuadratic",
    "IterationSequence",
    "Lanes",
    "LocalModel",
    "Method",
    "MethodResult",
    "Midpoint",
    "ModifiedNewton",
    "Newton",
    "NewtonRatio",
    "OrderEstimate",
    "ParamGrid",
    "Problem",
    "Recorder",
    "ReferenceRoot",
    "RegulaFalsi",
    "Remedy",
    "Run",
    "Secant",
    "Session",
    "Settings",
    "Start",
    "Steffensen",
    "Step",
    "SweepResult",
    "Tangent",
    "TangentHyperbola",
    "as_problem",
    "as_sequence",
    "basin_map",
    "classify_run",
    "compare_methods",
    "diagnose",
    "estimate_order",
    "find_brackets",
    "hybrid_many",
    "load_sequence",
    "order_json",
    "param_grid",
    "read_sweep_csv",
    "record",
    "reference_root",
    "register",
    "replay",
    "solve",
    "solve_many",
    "start_session",
    "sweep",
]
