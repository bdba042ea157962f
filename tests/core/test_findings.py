"""Findings and remedies as data: the words, the JSON, the command-line form, and applying a remedy.

Roots used as check values: √2 (math.sqrt), −1.7692923542386314 for x³ − 2x + 2 and the root 1 of
(x − 1)³e^x (shared/REFERENCES.md §4 and §1).
"""

import json
import math

import pytest

from convdiag import BracketError, ParameterError, as_problem
from convdiag.cli import main
from convdiag.core._findings import KINDS, Finding, Remedy


def test_a_remedy_describes_itself_in_words_and_as_command_line_options():
    r = Remedy("newton-m", start=(2.0,), multiplicity=3, xtol=1e-12)
    assert r.describe() == "newton-m with multiplicity 3 from 2 (xtol = 1e-12)"
    assert r.cli_options() == "--method newton-m --multiplicity 3 --start 2.0 --tol 1e-12"
    assert Remedy("hybrid", near=0.5).describe() == "hybrid on a bracket searched near 0.5"


def test_the_command_line_options_of_a_remedy_run_as_written(capsys):
    r = Remedy("newton-m", start=(2.0,), multiplicity=3)
    code = main(["run", "(x - 1)**3*exp(x)", *r.cli_options().split(), "--json"])
    out = json.loads(capsys.readouterr().out)
    assert code == 0 and out["method"] == "newton-m" and abs(out["root"] - 1.0) < 1e-7


def test_a_remedy_searches_its_bracket_when_applied():
    cured = Remedy("hybrid", near=0.0).solve("x**3 - 2*x + 2")
    assert cured.converged and cured.root == pytest.approx(-1.7692923542386314, abs=1e-14)


def test_a_remedy_without_a_root_nearby_says_so():
    with pytest.raises(BracketError, match="No sign change that closes on a root was found near 0.5"):
        Remedy("hybrid", near=0.5).solve("x**2 + 1")


def test_dropping_the_derivative_works_on_a_problem_too():
    p = as_problem(lambda x: x * x - 2, fprime=lambda x: 4 * x)  # twice the true slope
    run = Remedy("newton", start=(1.0,), drop_fprime=True).solve(p)
    assert run.derivative_source != "user" and run.converged and run.root == pytest.approx(math.sqrt(2), rel=1e-15)
    q = as_problem("x**2 - 2", fprime="4*x")
    run = Remedy("newton", start=(1.0,), drop_fprime=True).solve(q)
    assert run.derivative_source == "symbolic" and run.converged


def test_an_unknown_method_is_refused():
    with pytest.raises(ParameterError, match="The 'method' parameter of Remedy must be one of"):
        Remedy("nope", start=(1.0,)).solve("x - 1")


def test_a_finding_and_its_remedy_are_json():
    f = Finding("cycle", "caught in a cycle", (("period", 2, ""), ("points", (0.0, math.nan), "")), "use hybrid",
                Remedy("hybrid", bracket=(-2.0, -1.5)), (3, 4), tag="period 2")
    d = json.loads(json.dumps(f.to_dict(), allow_nan=False))
    assert d["evidence"][1]["value"] == [0.0, None] and d["remedy"]["bracket"] == [-2.0, -1.5]
    assert d["remedy"]["cli"] == "--method hybrid --bracket -2.0 -1.5" and d["iterates"] == [3, 4]
    assert f.value("period") == 2 and f.value("nothing") is None
    assert repr(f).startswith("<Finding cycle (period 2)")


def test_the_kinds_are_the_twelve_verdicts_of_the_issue():
    assert set(KINDS) == {"converged", "cycle", "divergence", "multiple-root", "wrong-derivative", "noise-floor",
                          "pole", "domain-error", "flat", "slow", "unattainable-tolerance", "budget"}
