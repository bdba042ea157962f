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
        if tag in ("h1", "h2", "h3"):
            self._h = tag

    def handle_endtag(self, tag):
        if tag in ("h1", "h2", "h3"):
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
    md = [s for s in rep.sections if s.heading == "Iterates"][0].markdown
    # the two-cycle 0, 1, 0, 1 appears in the iterate table
    table = [ln for ln in md.splitlines() if ln.startswith("| 1 |") or ln.startswith("| 2 |")]
    assert len(table) == 2
    assert [float(ln.split("|")[2]) for ln in table] == [1.0, 0.0]
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


# -- the report of a known case, read back from its HTML --------------------------------------------------------------
class _Sections(html.parser.HTMLParser):
    """Split a report page into its h2/h3 sections: heading -> text, and the figures (alt, caption, src) of each."""

    def __init__(self):
        super().__init__()
        self.title, self.sections, self._in, self._current = "", {}, None, None

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        if tag in ("h1", "h2", "h3", "figcaption"):
            self._in = tag
            if tag in ("h2", "h3"):
                self._current = ""
        elif tag == "img" and self._current is not None:
            self.sections[self._current]["figures"].append({"alt": a.get("alt", ""), "src": a["src"], "caption": ""})

    def handle_endtag(self, tag):
        if tag == self._in:
            self._in = None
            if tag in ("h2", "h3"):
                self.sections.setdefault(self._current, {"text": "", "figures": []})

    def handle_data(self, data):
        if self._in == "h1":
            self.title += data
        elif self._in in ("h2", "h3"):
            self._current += data
        elif self._in == "figcaption" and self._current is not None:
            self.sections[self._current]["figures"][-1]["caption"] += data
        elif self._current is not None and self._current in self.sections:
            self.sections[self._current]["text"] += data + " "


def _png_size(png):
    """Width and height from a PNG's IHDR chunk (PNG specification, ISO/IEC 15948, §11.2.2)."""
    assert png[:8] == PNG_MAGIC and png[12:16] == b"IHDR"
    return int.from_bytes(png[16:20], "big"), int.from_bytes(png[20:24], "big")


def _read_back(report):
    parser = _Sections()
    parser.feed(report.to_html())
    return parser


def test_the_report_of_the_newton_two_cycle_states_the_verdict_cycle_with_its_points(newton_cycle_report):
    # Newton on x^3 - 2x + 2 from 0 alternates 0, 1, 0, 1 (Burden & Faires, Numerical Analysis, from memory;
    # REFERENCES.md §4 recomputed it): the verdict must be a cycle of period 2 through 0 and 1.
    _, rep = newton_cycle_report
    page = _read_back(rep)
    assert "Diagnosis" in page.sections
    diagnosis = " ".join(page.sections["Diagnosis"]["text"].split())
    assert "verdict: cycle (period 2)" in diagnosis
    assert "cycle points 0, 1" in diagnosis
    assert "hybrid" in diagnosis  # the fix it recommends is named in the document


def test_the_report_of_the_newton_two_cycle_states_the_order_estimate_and_the_theory(newton_cycle_report):
    _, rep = newton_cycle_report
    order = " ".join(_read_back(rep).sections["Observed order of convergence"]["text"].split())
    # a cycle has no order: the estimate must say so rather than print a number
    assert "Observed order: not converging" in order
    assert "theoretical order 2" in order  # Newton's nominal order (Ostrowski 1960, from memory)


def test_a_converging_newton_run_reports_a_quadratic_order_in_the_html():
    # Newton on x^2 - 2 from 1 converges quadratically to sqrt(2) (any numerical analysis text; REFERENCES.md §1)
    rep = make_report(convdiag.solve("x**2 - 2", "newton", start=1.0))
    page = _read_back(rep)
    order = " ".join(page.sections["Observed order of convergence"]["text"].split())
    assert "quadratic" in order
    assert "verdict: converged" in " ".join(page.sections["Diagnosis"]["text"].split())
    assert "1.4142135623730951" in " ".join(page.sections["Iterates"]["text"].split())  # math.sqrt(2)


def test_every_figure_of_the_two_cycle_report_is_a_png_under_its_section_with_its_caption(newton_cycle_report):
    _, rep = newton_cycle_report
    page = _read_back(rep)
    placed = {heading: [f["caption"] for f in s["figures"]] for heading, s in page.sections.items() if s["figures"]}
    # the function with the last step's model under the iterates, the progress plot under the order estimate
    assert list(placed) == ["Iterates", "Observed order of convergence"]
    figures = [f for s in page.sections.values() for f in s["figures"]]
    assert [f["caption"] for f in figures] == [fig.caption for fig in rep.figures]
    for f, fig in zip(figures, rep.figures):
        assert f["alt"] == f["caption"]
        png = base64.b64decode(f["src"].split(",", 1)[1])
        assert png == fig.png
        width, height = _png_size(png)
        assert width >= 300 and height >= 200, (fig.name, width, height)
