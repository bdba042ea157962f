"""The arguments of solve checked and resolved: starts, brackets, tolerances (convdiag.core._arguments)."""

import math

import pytest

from convdiag import ParameterError, solve


def cos_minus_x(x):
    return math.cos(x) - x  # root 0.7390851332151607 (reference: mpmath.findroot, see test_methods)


@pytest.mark.parametrize(
    "kwargs, match",
    [
        ({"start": math.nan}, r"The 'start' parameter of solve must be a finite number. Got nan"),
        ({"start": math.inf}, "must be a finite number"),
        ({"start": "1.0"}, r"Got '1.0' instead"),
        ({"start": None}, "newton needs a start"),
        ({"start": 1.0, "xtol": -1.0}, r"The 'xtol' parameter of solve must be a finite float >= 0. Got -1.0"),
        ({"start": 1.0, "max_evals": 0}, "max_evals"),
        ({"start": 1.0, "max_time": -1}, "max_time"),
        ({"start": 1.0, "method": "newtonn"}, "must be one of bisection"),
        ({"start": [1.0, 1.0], "method": "secant"}, "must be distinct"),
        ({"start": [1.0, 2.0, 3.0], "method": "secant"}, "at most 2 start"),
        ({"start": 1.0, "method": "bisection"}, r"bisection needs a bracket .* Pass bracket="),
        ({"bracket": (1.0, 1.0), "method": "bisection"}, "must have a < b"),
        ({"bracket": (1.0,), "method": "bisection"}, "must be a pair"),
        ({"start": True}, "finite number"),
    ],
)
def test_bad_arguments_raise_parameter_error_with_the_template_message(kwargs, match):
    kwargs.setdefault("method", "newton")
    with pytest.raises(ParameterError, match=match):
        solve(cos_minus_x, **kwargs)


def test_reversed_bracket_is_accepted_and_noted():
    run = solve(cos_minus_x, "bisection", bracket=(1.0, 0.0))
    assert run.converged and run.bracket == (0.0, 1.0) and any("given as (b, a)" in n for n in run.notes)
