"""A saved report in a real browser: headless Chromium opens report.html from disk.

The report documents a known case, Newton's method on x³ − 2x + 2 from 0 (a two-cycle 0, 1, 0, 1;
Burden & Faires, *Numerical Analysis*, from memory; REFERENCES.md §4 recomputed it), the remedy its
diagnosis proposes, a bracket search and a method comparison, so that every kind of figure a report
draws is on the page. The page must load without console errors or page errors, every ``<img>`` must
have decoded (``naturalWidth > 0``), and a full-page screenshot is saved under
``test-artifacts/browser/`` (git-ignored) for a person to look at.
"""

from __future__ import annotations

import re

import pytest

pytestmark = pytest.mark.browser

CASE = "x**3 - 2*x + 2"


@pytest.fixture(scope="module")
def saved_report(tmp_path_factory: pytest.TempPathFactory):  # type: ignore[no-untyped-def]
    import convdiag
    from convdiag.report import make_report

    run = convdiag.solve(CASE, "newton", start=0.0, max_evals=20)
    diagnosis = convdiag.diagnose(run)
    fixed = diagnosis.remedy.solve(CASE)
    search = convdiag.find_brackets(CASE, domain=(-3.0, 3.0))
    comparison = convdiag.compare_methods(CASE, ["newton", "secant", "hybrid"], bracket=(-2.0, -1.5))
    report = make_report(diagnosis, fixed, search, comparison,
                         title="Newton's two-cycle on x**3 - 2*x + 2 from 0, and its fix")
    folder = tmp_path_factory.mktemp("report")
    paths = report.save(folder)
    return report, paths["html"], comparison


def test_the_saved_html_report_opens_in_chromium_without_errors_and_all_figures_load(
        chromium, saved_report, artifacts, steady_screenshot):  # type: ignore[no-untyped-def]
    import pathlib

    report, html_path, comparison = saved_report
    context = chromium.new_context(viewport={"width": 1200, "height": 900}, device_scale_factor=1)
    page = context.new_page()
    console_errors: list[str] = []
    page_errors: list[str] = []
    failed_requests: list[str] = []
    page.on("console", lambda msg: console_errors.append(msg.text) if msg.type == "error" else None)
    page.on("pageerror", lambda exc: page_errors.append(str(exc)))
    page.on("requestfailed", lambda req: failed_requests.append(req.url[:80]))
    try:
        page.goto(pathlib.Path(html_path).as_uri(), wait_until="load")
        page.wait_for_function("() => Array.from(document.images).every(i => i.complete)", timeout=10_000)
        images = page.evaluate(
            "() => Array.from(document.images).map(i => ({alt: i.alt, w: i.naturalWidth, h: i.naturalHeight,"
            " shown: i.getBoundingClientRect().width}))")
        headings = page.eval_on_selector_all("h2, h3", "els => els.map(e => e.textContent)")
        body = page.inner_text("body")
        shot = artifacts / "report.png"
        steady_screenshot(page, shot, full_page=True)
        overflow = page.evaluate("() => document.documentElement.scrollWidth - window.innerWidth")
    finally:
        context.close()

    assert console_errors == [] and page_errors == [] and failed_requests == []
    assert len(images) == len(report.figures) >= 6
    for img, fig in zip(images, report.figures):
        assert img["alt"] == fig.caption
        assert img["w"] > 0 and img["h"] > 0 and img["shown"] > 0, img  # decoded and laid out
    assert headings[0] == "Summary" and any(h.endswith("Newton on x**3 - 2*x + 2") for h in headings)
    assert "Diagnosis" in headings and "Software" in headings
    assert "verdict: cycle (period 2)" in body
    # the comparison measured an order for Newton (quadratic at the simple root near -1.769, Burden & Faires,
    # from memory) and secant (golden ratio 1.618): numbers, not "not enough points"
    newton = next(r for r in comparison.results if r.method == "newton")
    assert newton.estimate.label == "quadratic" and newton.estimate.efficiency is not None
    part = body[body.index("Methods compared on"):]
    assert re.search(r"\b2\.\d{3} \(quadratic\)", part) and re.search(r"\b1\.6\d{2} \(superlinear\)", part), part[:2000]
    assert shot.stat().st_size > 10_000
    print(f"\nscreenshot: {shot} ({len(images)} figures, horizontal overflow {overflow} px)")
