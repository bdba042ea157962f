"""Text and HTML forms of a diagnosis: the verdict, each finding's evidence and advice; user strings escaped.

Cases and numbers: shared/REFERENCES.md §4 (Newton's 2-cycle on x³ − 2x + 2 from 0; regula falsi
on x^10 − 1 over [0, 1.3], which keeps the end 1.3).
"""

import html
import math
import warnings

import pytest

from convdiag import record, solve
from convdiag.core._diagnose import diagnose
from convdiag.report import _diagnosis_text  # noqa: F401  (registers the formatters)
from convdiag.report._diagnosis_text import diagnosis_html, diagnosis_text, evidence_rows


@pytest.fixture(scope="module")
def slow():
    # slow, with a budget finding as well: two findings to show
    return diagnose(solve("x**10 - 1", "regula-falsi", bracket=(0.0, 1.3)))


def test_the_text_names_the_verdict_and_shows_every_findings_evidence_and_advice(slow):
    text = diagnosis_text(slow)
    assert "verdict: slow" in text.splitlines()[2]
    for f in slow.findings:
        assert f.summary in text and f.advice in text
        for label, _, note in f.evidence:
            assert label in text and note in text
    assert "bracket end that never moved" in text and "1.3" in text
    assert "Apply it: diagnosis.remedy.solve(f)" in text and "--method hybrid --bracket 0.0 1.3" in text


def test_the_evidence_table_keeps_the_numbers(slow):
    rows = {r[0]: r[1] for r in evidence_rows(slow.primary)}
    expected = 1 - 10 * 0.3 / (1.3**10 - 1)  # fixed-end rate (REFERENCES §1)
    assert float(rows["rate per step"]) == pytest.approx(expected, rel=0.01)
    assert rows["bracket end that never moved"] == "1.3"


def test_the_html_has_the_verdict_the_tables_and_the_advice(slow):
    out = diagnosis_html(slow)
    assert out.startswith("<div") and "<script" not in out
    assert "verdict: slow" in out and out.count("<table") == len(slow.findings)
    for f in slow.findings:
        assert html.escape(f.advice) in out
    assert slow._repr_mimebundle_()["text/html"] == out


def test_user_strings_are_escaped_in_html():
    name = "<b onmouseover=alert(1)>model</b>"
    rf = record(lambda x: x**3 - 2 * x + 2, fprime=lambda x: 3 * x * x - 2, name=name)
    from scipy.optimize import newton

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        try:
            newton(rf, 0.0, fprime=rf.fprime, maxiter=10)
        except RuntimeError:  # scipy's "failed to converge": the cycle under test
            pass
    d = diagnose(rf)
    out = diagnosis_html(d)
    assert name not in out and html.escape(name) in out
    assert d.verdict == "cycle" and "cycle (period 2)" in diagnosis_text(d)


def test_a_converged_run_reads_as_a_short_note():
    d = diagnose(solve("x**2 - 2", "newton", start=1.0))
    text = d.to_text()
    assert text.splitlines()[2].startswith("Converged — verdict: converged")
    assert "Nothing to change." in text and "Also found" not in text
    assert f"{math.sqrt(2):.7g}" in text  # the root, in the evidence table
    assert "#1b7f3b" in d.to_html()  # the verdict in green only when converged


def test_a_diagnosis_without_probes_or_order_still_renders():
    d = diagnose([0.0, 1.0, 0.0, 1.0, 0.0, 1.0], probe=False)
    text = diagnosis_text(d)
    assert "sequence of iterates" in text and "extra evaluations" not in text
    assert "Observed order" not in text and "verdict: cycle" in text
