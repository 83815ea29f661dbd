"""The HTML appendix in headless Chromium: no console errors, figures laid out, contents
links land on their sections. Data are the INVENTED fixtures of conftest.py.

Skipped when /usr/bin/chromium is missing, unless APPENDIX_REQUIRE_BROWSER=1.
"""

from __future__ import annotations

import os
from pathlib import Path

import pytest

from appendix.figures import make_figures
from appendix.render import RenderOptions, render_html

CHROMIUM = Path("/usr/bin/chromium")
ARGS = ["--no-sandbox", "--disable-gpu", "--disable-background-networking",
        "--disable-component-update", "--disable-sync", "--no-first-run"]

pytestmark = pytest.mark.browser
# a figure's least width on a narrow screen, in CSS px: its 8-point text is then about
# 10 px high (432 pt wide SVG); 10 px as the least readable text is common practice, no source
NARROW_FIGURE_MIN = 560


def _need_browser() -> None:
    if CHROMIUM.exists():
        return
    reason = f"{CHROMIUM} is missing (Debian package 'chromium')"
    if os.environ.get("APPENDIX_REQUIRE_BROWSER") == "1":
        pytest.fail(f"APPENDIX_REQUIRE_BROWSER=1 but {reason}")
    pytest.skip(reason)


@pytest.fixture(scope="module")
def page_url(dataset, study_results, residuals, tmp_path_factory) -> str:
    html = render_html(study_results, make_figures(dataset, study_results, residuals),
                       RenderOptions())
    path = tmp_path_factory.mktemp("browser") / "appendix.html"
    path.write_text(html, encoding="utf-8")
    return path.as_uri()


def test_appendix_in_chromium(page_url):
    _need_browser()
    from playwright.sync_api import sync_playwright

    with sync_playwright() as driver:
        browser = driver.chromium.launch(executable_path=str(CHROMIUM), args=ARGS)
        try:
            page = browser.new_page(viewport={"width": 1100, "height": 800})
            problems: list[str] = []
            page.on("console", lambda m: problems.append(m.text) if m.type == "error" else None)
            page.on("pageerror", lambda e: problems.append(str(e)))
            page.on("request", lambda r: None if r.url.startswith(("file:", "data:"))
                    else problems.append(f"request {r.url}"))
            page.goto(page_url, wait_until="load")

            boxes = page.eval_on_selector_all(
                "figure svg", "els => els.map(e => [e.getBoundingClientRect().width,"
                " e.getBoundingClientRect().height])")
            # the unit-flow diagram; primary: five kinds and the forest plot; "pain": three
            assert len(boxes) == 10
            assert all(w > 100 and h > 50 for w, h in boxes), boxes

            targets = page.eval_on_selector_all(
                "#contents a", "els => els.map(e => e.getAttribute('href'))")
            sections = [t for t in targets if not t.startswith(("#table-", "#figure-"))]
            # seven top-level sections, eleven links per outcome, exploratory and its E1
            assert len(sections) == 7 + 2 * 11 + 2
            # the lists of tables and figures: one link per figure drawn and per table
            assert len([t for t in targets if t.startswith("#figure-")]) == 10
            assert len([t for t in targets if t.startswith("#table-")]) == page.eval_on_selector_all(
                "caption", "els => els.length")
            for href in targets:
                page.click(f'#contents a[href="{href}"]')
                assert page.evaluate("location.hash") == href
                top, height = page.evaluate(
                    "h => { const r = document.getElementById(h.slice(1))"
                    ".getBoundingClientRect(); return [r.top, r.height]; }", href)
                assert height > 0, href
                # scrolled into view: the section now starts inside the viewport (at its
                # top, or lower when the end of the page stopped the scroll)
                assert -1 <= top < 800, (href, top)
            # the forest plot sits in its outcome's contrasts section
            assert page.evaluate(
                "document.querySelector('#sbp_change-contrasts figure svg') !== null")
            # on a phone-sized screen wide tables scroll inside their blocks, not the page
            page.set_viewport_size({"width": 400, "height": 800})
            assert page.evaluate("document.documentElement.scrollWidth") <= 400
            # and figures keep a readable width (NARROW_FIGURE_MIN), scrolling in their frame
            frames = page.eval_on_selector_all(
                "figure svg", "els => els.map(e => { const f = e.closest('.figure-art');"
                " return [e.getBoundingClientRect().width, getComputedStyle(f).overflowX,"
                " f.clientWidth, f.scrollWidth]; })")
            assert len(frames) == len(boxes)  # every figure, the unit-flow diagram too
            for width, overflow, shown, full in frames:
                assert width >= NARROW_FIGURE_MIN, frames
                assert overflow == "auto" and shown <= 400 < full, frames
            wide = page.eval_on_selector_all(
                "table", "els => els.map(e => [e.getBoundingClientRect().width,"
                " getComputedStyle(e.closest('.table-block')).overflowX])")
            assert wide and all(o == "auto" for _, o in wide), wide
            assert problems == []
        finally:
            browser.close()


def test_missing_browser_skips_or_fails_on_demand(monkeypatch, tmp_path):
    monkeypatch.setattr(__import__(__name__), "CHROMIUM", tmp_path / "no-chromium")
    monkeypatch.delenv("APPENDIX_REQUIRE_BROWSER", raising=False)
    with pytest.raises(pytest.skip.Exception, match="no-chromium is missing"):
        _need_browser()
    monkeypatch.setenv("APPENDIX_REQUIRE_BROWSER", "1")
    with pytest.raises(pytest.fail.Exception, match="APPENDIX_REQUIRE_BROWSER=1 but"):
        _need_browser()
