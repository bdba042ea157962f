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


def test_stalled_iterates_show_enough_digits_to_differ_and_their_spread():
    # Newton on x² − 2 + A·u(x), A = 1e-12 (deterministic pseudo-noise, as in tests/core/test_detect_probe.py):
    # the iterates stall within about A/|f'(√2)| = 3.5e-13 (REFERENCES §3) and differ only in the 12th digit
    import struct

    import numpy as np

    def f(x):
        seed = struct.unpack("<Q", struct.pack("<d", float(x)))[0]
        return x * x - 2 + 1e-12 * float(np.random.default_rng(seed).uniform(-1.0, 1.0))

    d = diagnose(solve(f, "newton", start=1.0, fprime=lambda x: 2 * x))
    nf = d.finding("noise-floor")
    lo, hi = nf.value("stalled iterates")
    assert lo < hi and nf.value("spread of the stalled iterates") == hi - lo
    rows = {r[0]: r[1] for r in evidence_rows(nf)}
    shown = rows["stalled iterates"].split(", ")
    assert len(shown) == 2 and shown[0] != shown[1]
    assert [float(v) for v in shown] == pytest.approx([lo, hi], rel=0, abs=(hi - lo) / 2)  # read back apart


def test_numbers_of_one_row_are_shown_apart_and_equal_ones_stay_short():
    from convdiag.core._findings import Finding

    f = Finding("noise-floor", "s", (("pair", (0.04000508362, 0.04000508363), ""), ("same", (1.5, 1.5), ""),
                                     ("far", (1.0, 2.0), "")))
    rows = {r[0]: r[1] for r in evidence_rows(f)}
    assert rows["pair"] == "0.04000508362, 0.04000508363"  # 10 significant digits tell them apart
    assert rows["same"] == "1.5, 1.5" and rows["far"] == "1, 2"


def test_a_callable_remedy_is_applied_from_python_only():
    f = lambda x: x**3 - 2 * x + 2
    d = diagnose(solve(f, "newton", start=0.0, max_evals=20))
    apply = next(ln for ln in diagnosis_text(d).splitlines() if "Apply it:" in ln)
    assert apply.strip() == "Apply it: diagnosis.remedy.solve(f)"
    assert "EXPR" not in diagnosis_text(d) and "EXPR" not in diagnosis_html(d)


def test_an_expression_remedy_gives_a_command_line_that_runs(capsys):
    import shlex

    from convdiag.cli import main

    d = diagnose(solve("x - ecc*sin(x) - M", "newton", start=0.14, params={"M": 0.14, "ecc": 0.99}))
    apply = next(ln for ln in diagnosis_text(d).splitlines() if "Apply it:" in ln)
    command = apply.split("·", 1)[1].strip()
    assert command.startswith("convdiag run 'x - ecc*sin(x) - M' --param M=0.14 --param ecc=0.99 --method hybrid")
    capsys.readouterr()
    assert main(shlex.split(command)[1:]) == 0  # exit status 0: converged
    out = capsys.readouterr().out
    assert "0.93875489581" in out  # Kepler E for M = 0.14, e = 0.99 (scipy brentq: 0.938754895811359)


def test_a_remedy_that_searches_its_bracket_names_both_commands():
    d = diagnose(solve("x**3 - 2*x + 2", "newton", start=0.0, max_evals=20), probe=False)
    text = diagnosis_text(d)
    assert "convdiag brackets 'x**3 - 2*x + 2' --near 0.0, then convdiag run 'x**3 - 2*x + 2' --method hybrid" in text
