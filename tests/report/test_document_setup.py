"""Reports say how each result was set up (enough to run it again), skip empty figures and say which order they show.

Check values:
- cos x = x at 0.7390851332151607 (the Dottie number; Wikipedia "Dottie number", to 16 digits).
- Kepler's equation E − e sin E = M: M = 1, e = 0.5 gives E = 1.49870113351785 (REFERENCES.md §5).
- Newton on x² − 5 from 1: x1 = 1 + 4/2 = 3 (by hand).
- Newton on x² − 2 from 1 converges quadratically to √2 (any numerical analysis text, e.g. Burden & Faires).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

import convdiag
from convdiag.core._sweep import SweepResult, param_grid, read_sweep_csv, sweep
from convdiag.report import make_report
from convdiag.report._document_items import merge_notes
from convdiag.report._text import html_table

DOTTIE = 0.7390851332151607  # Wikipedia "Dottie number"


def section(rep, heading, after=None):  # type: ignore[no-untyped-def]
    """The first section called ``heading`` (after the section called ``after``, if given)."""
    names = [s.heading for s in rep.sections]
    start = names.index(after) + 1 if after else 0
    return rep.sections[start:][names[start:].index(heading)]


def test_a_comparison_report_has_a_setup_with_the_start_bracket_budget_tolerance_and_each_stopping_rule():
    c = convdiag.compare_methods("cos(x) - x", ["newton", "secant", "bisection"], bracket=(0.0, 1.0),
                                 max_evals=60, tol=1e-9, replay=False)
    rep = make_report(c)
    assert [s.heading for s in rep.sections] == ["Methods compared on cos(x) - x", "Setup", "Results"]
    md = section(rep, "Setup").markdown
    assert "| start (open methods) | 0.5 |" in md  # the middle of the bracket, where compare_methods starts
    assert "| bracket (bracketing methods) | [0.0, 1.0] |" in md
    assert "60 evaluations per method" in md and "1e-09" in md
    assert f"r = {DOTTIE!r}" in md
    rows = [ln for ln in md.splitlines() if ln.startswith(("| newton", "| secant", "| bisection"))]
    assert len(rows) == 3
    assert "bracket width <" in rows[2] and "step <" in rows[0]  # each method's own stopping rule
    assert "exact-zero" in rows[0] or "step-small" in rows[0]
    assert "Equal-work comparison" in section(rep, "Results").markdown


def kepler(E, M, e):  # type: ignore[no-untyped-def]
    return E - e * np.sin(E) - M


def test_a_sweep_report_shows_the_start_rule_tolerances_budgets_derivative_and_parameter_ranges():
    grid = param_grid(e=np.linspace(0.1, 0.9, 9), M=[0.5, 1.0, 2.0])
    res = sweep(kepler, grid, start=lambda M, e: M + e * np.sin(M), fprime=lambda E, M, e: 1 - e * np.cos(E),
                xtol=1e-13, max_evals=40, max_time=30.0)
    assert res.settings is not None and res.max_time == 30.0 and res.settings.max_evals == 40
    assert float(res.on_grid("root")[4, 1]) == pytest.approx(1.49870113351785, abs=1e-12)  # REFERENCES.md §5
    rep = make_report(res)
    md = section(rep, "Setup").markdown
    assert "| start | lambda M, e: M + e * np.sin(M) |" in md  # the start rule, as written
    assert "| f′ (fprime) | lambda E, M, e: 1 - e * np.cos(E) |" in md
    assert "| function | kepler |" in md and "<lambda>" not in rep.to_markdown()
    assert "| points | 27: a 9 × 3 grid over (e, M) |" in md
    assert "| parameter e | 9 values from 0.1 to 0.9, evenly spaced |" in md
    assert "| parameter M | 3 values: 0.5, 1, 2 |" in md
    assert "xtol = 1e-13" in md and "rtol = 4 machine epsilons" in md
    assert "40 evaluations per point; 30 s for the whole sweep" in md


def test_a_sweep_of_a_lambda_is_named_by_its_source_not_lambda():
    res = sweep(lambda x, a: x * x - a, {"a": [1.0, 4.0, 9.0]}, start=5.0)
    assert res.label == "function"
    rep = make_report(res)
    assert rep.sections[0].heading == "Parameter sweep of lambda x, a: x * x - a"
    md = section(rep, "Setup").markdown
    assert "| parameter a | 3 distinct values in [1, 9] |" in md and "| start | 5.0 |" in md


def test_a_sweep_result_made_without_settings_still_reports_and_its_csv_reads_back(tmp_path):
    res = sweep("x**2 - a", param_grid(a=[1.0, 4.0]), start=3.0)
    old = SweepResult(res.table, res.params, res.method, res.label, res.grid, False, 1, 1, "vectorized", 0.1)
    assert old.settings is None and old.max_time is None
    md = section(make_report(old), "Setup").markdown
    assert "not recorded" in md and "| parameter a | 2 values: 1, 4 |" in md
    path = tmp_path / "s.csv"
    old.to_csv(path)
    assert read_sweep_csv(path)["root"].tolist() == [1.0, 2.0]


def bad(x):  # type: ignore[no-untyped-def]
    if x > 2:
        raise ValueError("the table ends at 2")
    return x * x - 5


def test_a_run_that_failed_on_its_first_step_gets_a_sentence_instead_of_an_empty_progress_figure():
    run = convdiag.solve(bad, "newton", start=1.0)
    assert run.stop_reason == "function-raised" and run.failure.x == pytest.approx(3.0)  # by hand
    rep = make_report(run)
    assert [f.name for f in rep.figures] == ["item0-function"]
    order = section(rep, "Observed order of convergence")
    assert order.figures == ()
    assert "the run has 1 finite iterate, too few to show a trend" in order.markdown
    assert "too few to show a trend" in order.html


def test_the_order_part_states_the_missing_high_precision_reference_once():
    run = convdiag.solve(lambda x: math.exp(x) - 2, "newton", start=1.0)  # math.exp: floats only
    md = section(make_report(run), "Observed order of convergence").markdown
    assert md.count("no high-precision root or replay: ") == 1
    assert "no high-precision replay" not in md and "no high-precision root: " not in md


def test_merging_notes_keeps_other_notes_and_their_order():
    notes = ("no high-precision root: because", "a", "no high-precision replay: because", "a", "b")
    assert merge_notes(notes) == ("no high-precision root or replay: because", "a", "b")
    other = ("no high-precision root: because", "no high-precision replay: a different reason")
    assert merge_notes(other) == other


def test_a_diagnosis_passed_in_says_which_order_estimate_the_order_part_uses():
    run = convdiag.solve("x**2 - 2", "secant", start=1.0)
    mine = convdiag.diagnose(run)  # measured on the run's double-precision iterates
    assert mine.order.basis == "run"
    text = section(make_report(mine), "Diagnosis").markdown
    assert "The order part below measures a 60-digit replay of this run" in text
    assert "the diagnosis above measured the run's double-precision iterates only" in text
    # the report's own diagnosis is given the report's estimate: nothing to explain
    assert "The order part below" not in section(make_report(run), "Diagnosis").markdown


def test_numbers_in_right_aligned_cells_do_not_break_across_lines():
    page = html_table(["what", "value"], [["a long description", "-8.03801e-14"]], "lr")
    cells = page.split("<td ")[1:]
    assert "white-space:nowrap" not in cells[0] and "white-space:nowrap" in cells[1]
