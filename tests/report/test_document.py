"""Reports: Markdown and self-contained HTML with tables, embedded PNG figures and versions."""

import base64
import html.parser
import math

import pytest

import convdiag
from convdiag import ParameterError
from convdiag.report import Report, make_report

PNG_MAGIC = b"\x89PNG\r\n\x1a\n"


class _Collect(html.parser.HTMLParser):
    def __init__(self):
        super().__init__()
        self.tags, self.imgs, self.headings, self._h = [], [], [], None
        self.text = []

    def handle_starttag(self, tag, attrs):
        self.tags.append(tag)
        if tag == "img":
            self.imgs.append(dict(attrs)["src"])
        if tag in ("h1", "h2"):
            self._h = tag

    def handle_endtag(self, tag):
        if tag in ("h1", "h2"):
            self._h = None

    def handle_data(self, data):
        self.text.append(data)
        if self._h:
            self.headings.append(data)


@pytest.fixture(scope="module")
def newton_cycle_report():
    # Newton from 0 on x^3 - 2x + 2 cycles 0, 1, 0, 1 (Burden & Faires, from memory).
    run = convdiag.solve("x**3 - 2*x + 2", "newton", start=0.0, max_evals=12)
    return run, make_report(run)


def test_html_is_self_contained_with_png_figures(newton_cycle_report):
    run, rep = newton_cycle_report
    page = rep.to_html()
    p = _Collect()
    p.feed(page)
    assert page.startswith("<!DOCTYPE html>") and "</html>" in page
    assert len(p.imgs) == len(rep.figures) >= 2
    for src in p.imgs:
        assert src.startswith("data:image/png;base64,")
        assert base64.b64decode(src.split(",", 1)[1])[:8] == PNG_MAGIC
    text = " ".join(p.text)
    assert "x**3 - 2*x + 2" in text and "Newton" in text
    assert "Observed order of convergence" in p.headings and "Software" in p.headings
    assert "numpy" in text and "max-evals" in text


def test_report_shows_the_iterates_and_the_order_estimate(newton_cycle_report):
    run, rep = newton_cycle_report
    md = rep.to_markdown()
    # the two-cycle 0, 1, 0, 1 appears in the iterate table
    table = [ln for ln in md.splitlines() if ln.startswith("| 1 |") or ln.startswith("| 2 |")]
    assert len(table) == 2 and " 1 |" in table[0] and " 0 |" in table[1]
    order = [s for s in rep.sections if s.heading == "Observed order of convergence"][0]
    assert "window" in order.markdown


def test_save_writes_markdown_html_and_png_files(tmp_path):
    run = convdiag.solve(lambda x: math.cos(x) - x, "secant", start=1.0)
    rep = make_report(run)
    paths = rep.save(tmp_path / "out")
    md = (tmp_path / "out" / "report.md").read_text(encoding="utf-8")
    for fig in rep.figures:
        assert f"figures/{fig.name}.png" in md
        assert (tmp_path / "out" / "figures" / f"{fig.name}.png").read_bytes()[:8] == PNG_MAGIC
    assert paths["html"].endswith("report.html")
    # a callable's source is part of the documentation
    assert "math.cos(x) - x" in md


def test_user_strings_are_escaped_in_html():
    def nasty(x, **_):
        return x - 1

    run = convdiag.solve(nasty, "bisection", bracket=(0.0, 2.0))
    rep = make_report(run, title="<script>alert(1)</script>")
    assert "<script>alert(1)</script>" not in rep.to_html()
    assert "&lt;script&gt;" in rep.to_html()


def test_a_bracket_search_and_a_comparison_can_be_documented():
    search = convdiag.find_brackets("tan(x) - 2", domain=(0.0, 5.0))
    comp = convdiag.compare_methods("x**3 - 2*x - 5", ["newton", "secant"], start=2.0)
    rep = make_report(search, comp)
    assert isinstance(rep, Report) and len(rep.figures) == 2
    assert "pole" in rep.to_markdown()


def test_nothing_to_document_is_a_clear_error():
    with pytest.raises(ParameterError, match="needs at least one result"):
        make_report()
    with pytest.raises(ParameterError, match="cannot document a int"):
        make_report(3)


def test_cli_demo_writes_the_report(tmp_path, capsys):
    from convdiag.cli import main

    code = main(["demo", "--report", str(tmp_path / "demo")])
    out = capsys.readouterr().out
    assert code == 0 and "Report written" in out
    page = (tmp_path / "demo" / "report.html").read_text(encoding="utf-8")
    assert "Pipe P-17" in page and page.count("data:image/png;base64,") >= 2
