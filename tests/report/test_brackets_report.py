"""Text, HTML and figure of a bracket search (convdiag.report._brackets_text, _brackets_figures)."""

import math

import numpy as np
import pytest

from convdiag.core._brackets import find_brackets
from convdiag.report import _brackets_text  # noqa: F401  (registers the formatters)
from convdiag.report._brackets_text import brackets_html, brackets_text

matplotlib = pytest.importorskip("matplotlib")
matplotlib.use("Agg")


def _tan_and_sqrt(x):
    # poles of tan at pi/2 + k·pi, roots where tan x = 1 (pi/4 + k·pi), undefined for x < 0 (exact)
    with np.errstate(invalid="ignore"):
        return np.tan(x) - 1 + 0 * np.sqrt(x)


_tan_and_sqrt.__name__ = "tan<x>"  # a label with markup, to check escaping


@pytest.fixture(scope="module")
def search():
    return find_brackets(_tan_and_sqrt, domain=(-1.0, 5.0))


def test_the_search_has_every_kind_the_report_must_show(search):
    kinds = {c.kind for c in search.candidates}
    assert kinds == {"root", "pole", "domain-edge"}
    assert any(c.lo <= math.pi / 4 <= c.hi for c in search.roots)  # tan x = 1 at pi/4 (exact)


def test_text_lists_every_candidate_with_its_kind_and_advice(search):
    text = brackets_text(search)
    table = text.split("What to do:")[0]
    rows = [ln for ln in table.splitlines() if ln.split() and ln.split()[-1] != "IQI" and
            any(k in ln.split()[:2] for k in ("root", "pole", "domain-edge"))]
    assert len(rows) == len(search.candidates)
    for c, row in zip(search.candidates, rows):
        assert c.kind in row.split()[:2]
    for c in search.candidates:
        assert c.recommend in text and f"[{c.kind}]" in text
    assert f"{search.evaluations} evaluations" in text
    assert search.to_text() == text and search._repr_mimebundle_()["text/plain"] == text


def test_html_shows_every_candidate_and_escapes_the_label(search):
    page = brackets_html(search)
    assert "tan&lt;x&gt;" in page and "tan<x>" not in page
    for c in search.candidates:
        assert f">{c.kind}<" in page
    assert page.count("<li>") == len(search.candidates)
    assert "<script" not in page and search._repr_mimebundle_()["text/html"] == page


def test_figure_marks_each_candidate_by_kind(search):
    from convdiag.report._brackets_figures import BracketsDisplay

    disp = BracketsDisplay.from_search(search)
    assert disp.xlim[0] < -1.0 and disp.xlim[1] > 5.0  # the whole domain, undefined part too
    assert int(np.isnan(disp.y).sum()) >= len(search.of_kind("pole"))  # the curve breaks at each pole
    assert disp.plot() is disp
    assert disp.ax_ is not None and disp.figure_ is disp.ax_.figure and len(disp.lines_) == 1
    assert set(disp.markers_) == {c.kind for c in search.candidates}
    assert len(disp.markers_["pole"]) == len(search.of_kind("pole"))
    labels = [t.get_text() for t in disp.ax_.get_legend().get_texts()]
    assert {"root", "pole", "domain edge"} <= set(labels)
    import matplotlib.pyplot as plt

    plt.close(disp.figure_)


def test_an_empty_search_still_reads_well():
    found = find_brackets("x**2 + 1", near=0.0, max_evals=20)
    text = brackets_text(found)
    assert "nothing found" in text and "budget of 20 ran out" in text
    assert "nothing found" in brackets_html(found)


def test_an_overflow_edge_reads_as_overflow_not_undefined():
    found = find_brackets("exp(x) - 2", domain=(-1000.0, 1000.0))  # exp overflows past 709.78
    text = brackets_text(found)
    row = next(ln for ln in text.splitlines() if ln.split()[:1] == ["domain-edge"])
    assert "overflows on the right" in row and "709.78271" in row  # numpy.log(numpy.finfo(float).max)
    assert "infinite (overflow) to the right of 709.783" in text and "pole" not in text
