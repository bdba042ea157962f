"""Every exception and warning convdiag raises.

Each error says what went wrong, shows the numbers, and says what to try.
Each subclass also inherits the matching builtin so that ordinary
``except ValueError`` code keeps working::

    ConvdiagError (Exception)
     ├── ParameterError (ValueError)       an argument has the wrong type or value
     ├── ExpressionError (ValueError)      expression text refused or malformed
     ├── BracketError (ValueError)         no sign change over a bracket
     ├── InputFileError (OSError)          a file named on the command line is unusable
     └── EvaluationError (ArithmeticError) the user's function failed; carries the history

    ConvergenceWarning (UserWarning)       slow or stalled convergence, as a warning

Slow or stalled convergence is a finding, not a crash: it is reported in a
run's ``stop_reason`` and in a diagnosis, never raised.
"""

from __future__ import annotations

from typing import Any

__all__ = [
    "BracketError",
    "ConvdiagError",
    "ConvergenceWarning",
    "EvaluationError",
    "ExpressionError",
    "InputFileError",
    "ParameterError",
]


class ConvdiagError(Exception):
    """Root of every error convdiag raises on purpose."""


class ParameterError(ConvdiagError, ValueError):
    """An argument has the wrong type or value.

    Messages follow one template: "The 'tol' parameter of solve must be a
    float > 0. Got -1e-08 instead."
    """

    @classmethod
    def expected(cls, name: str, owner: str, what: str, got: Any) -> ParameterError:
        return cls(f"The {name!r} parameter of {owner} must be {what}. Got {got!r} instead.")


class ExpressionError(ConvdiagError, ValueError):
    """Expression text was refused (unsafe or unsupported) or is malformed.

    ``part`` names the offending piece of text, ``position`` its column
    (1-based) where known.
    """

    def __init__(self, message: str, *, part: str = "", position: int | None = None) -> None:
        super().__init__(message)
        self.part = part
        self.position = position


class BracketError(ConvdiagError, ValueError):
    """The function does not change sign over the given bracket.

    ``evals`` holds the evaluation log of what was computed before the
    error (the two end points), so nothing is lost.
    """

    def __init__(self, message: str, *, evals: Any = None) -> None:
        super().__init__(message)
        self.evals = evals


class InputFileError(ConvdiagError, OSError):
    """A file named on the command line is missing, unreadable or malformed."""


class EvaluationError(ConvdiagError, ArithmeticError):
    """The user's function raised or returned something that is not a number.

    Raised only on request (``Run.raise_for_failure()``); by default a run
    stops and keeps its history. ``run`` holds the partial run.
    """

    def __init__(self, message: str, *, run: Any = None) -> None:
        super().__init__(message)
        self.run = run


class ConvergenceWarning(UserWarning):
    """Convergence was slow, stalled, or stopped by a budget."""
