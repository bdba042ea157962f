"""The explorer's controls: the method picker's entries and the model parameters' sliders."""

from __future__ import annotations

import math

import pytest

from convdiag import METHODS
from convdiag.widgets._controls import method_options, param_slider, param_specs, signature_defaults


def colebrook(f, Re=1.0e5, rel=1.0e-4, n=3, label="pipe"):
    return 1 / math.sqrt(f) + 2 * math.log10(rel / 3.7 + 2.51 / (Re * math.sqrt(f)))


def test_the_picker_lists_every_registered_method_open_methods_first():
    names = [n for _, n in method_options()]
    assert sorted(names) == sorted(METHODS)
    flags = [METHODS[n].needs_bracket for n in names]
    assert flags == sorted(flags)


def test_only_float_keyword_parameters_become_sliders():
    assert signature_defaults(colebrook) == {"Re": 1.0e5, "rel": 1.0e-4}
    specs = {s.name: s for s in param_specs(colebrook, None)}
    assert specs["Re"].log and (specs["Re"].lo, specs["Re"].hi) == (1.0e4, 1.0e6)


def test_ranges_and_values_can_be_given_and_are_checked():
    specs = {s.name: s for s in param_specs(colebrook, {"Re": (4e3, 1e8), "rel": (0.0, 0.05, 0.01)})}
    assert specs["Re"].log and specs["Re"].value == 1.0e5
    assert not specs["rel"].log and specs["rel"].value == 0.01
    with pytest.raises(ValueError, match=r"The \"params\['Re'\]\" parameter of Explorer must be a range"):
        param_specs(colebrook, {"Re": (1e5, 1e4)})
    with pytest.raises(ValueError, match="needs a value for 'a'"):
        param_specs("x**2 - a", None, ("a",))


def test_a_logarithmic_slider_spans_decades():
    (spec,) = param_specs(colebrook, {"Re": (4e3, 1e8)})[:1]
    w = param_slider(spec)
    assert w.base == 10.0 and w.min == pytest.approx(math.log10(4e3)) and w.max == pytest.approx(8.0)
    assert w.value == pytest.approx(1.0e5) and not w.continuous_update
