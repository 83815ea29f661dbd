"""render_pdf: the appendix typesets, carries its running header, and fetches nothing.

Values come from the INVENTED fixture data of conftest.py.
"""

from __future__ import annotations

import logging
import socket
from pathlib import Path

import pypdf
import pytest
from render_helpers import base_fonts, shipped_names

from appendix import numbers, render
from appendix.render import RenderOptions, render_pdf


@pytest.fixture(scope="module")
def pdf_path(html, tmp_path_factory) -> Path:
    path = tmp_path_factory.mktemp("pdf") / "appendix.pdf"
    render_pdf(html, path, RenderOptions())
    return path


def test_pdf_has_pages_tables_and_running_header(pdf_path, study_results):
    reader = pypdf.PdfReader(pdf_path)
    assert len(reader.pages) >= 2
    texts = [page.extract_text() for page in reader.pages]
    f_text = numbers.fixed(study_results.outcomes[1].tables[0].rows[0].statistic, 2)
    assert f_text == "5.73"
    assert any("Between groups (Treatment arm)" in t and f_text in t for t in texts)
    short = study_results.inputs[1].sha256[:12]  # the data file's
    for number, text in enumerate(texts, start=1):
        assert "Study DEMO-BP-01" in text and short in text
        assert f"Page {number} of {len(texts)}" in text
    assert float(reader.pages[0].mediabox.width) == pytest.approx(595.3, abs=0.5)  # A4


def test_pdf_holds_contrast_rows_as_formatted(pdf_path, study_results):
    texts = [" ".join(page.extract_text().split()) for page in pypdf.PdfReader(pdf_path).pages]
    registered = study_results.outcomes[1].contrasts[0]
    assert registered.registered and registered.method == "welch"
    adjusted = numbers.p_value(registered.hypotheses[0].p_adjusted)
    assert adjusted == ".010"  # INVENTED fixture: Welch contrast C1, fixed sequence
    page = next(t for t in texts if "Registered result" in t)
    assert "active doses versus placebo" in page and adjusted in page
    assert "not tested under the plan" in page
    assert any("Exploratory analyses (not pre-registered)" in t for t in texts)


def test_contents_carry_page_numbers(pdf_path):
    reader = pypdf.PdfReader(pdf_path)
    contents = next(p.extract_text() for p in reader.pages if "Contents" in p.extract_text())
    methods_page = next(i for i, p in enumerate(reader.pages, start=1)
                        if "Every test uses the significance level" in p.extract_text())
    line = next(ln for ln in contents.splitlines() if ln.startswith("Methods"))
    assert line.rstrip().endswith(str(methods_page))


def test_pdf_embeds_only_the_shipped_fonts(pdf_path):
    used = base_fonts(pdf_path)
    assert {"Appendix-Serif", "Appendix-Sans", "Appendix-Mono"} <= used <= shipped_names()


def test_same_html_gives_identical_pdf_bytes_and_no_warnings(html, pdf_path, tmp_path, caplog):
    again = tmp_path / "again.pdf"
    with caplog.at_level(logging.WARNING, logger="weasyprint"):
        render_pdf(html, again, RenderOptions())
    assert again.read_bytes() == pdf_path.read_bytes()
    assert [r.getMessage() for r in caplog.records if r.name.startswith("weasyprint")] == []


def test_only_svg_style_notes_are_dropped(tmp_path, caplog):
    html = ('<p style="frobnicate: 1">x</p>'
            '<svg xmlns="http://www.w3.org/2000/svg" width="10" height="10">'
            '<path d="M 0 0 L 5 5" style="fill: none; stroke-width: 0.8"/></svg>')
    with caplog.at_level(logging.WARNING, logger="weasyprint"):
        render_pdf(html, tmp_path / "notes.pdf", RenderOptions())
    messages = [r.getMessage() for r in caplog.records]
    assert any("frobnicate" in m for m in messages)
    assert not any("fill" in m or "stroke" in m for m in messages)
    assert not logging.getLogger("weasyprint").filters  # the filter lives for one call


def test_letter_paper(tmp_path):
    path = tmp_path / "letter.pdf"
    render_pdf("<p>Letter</p>", path, RenderOptions(paper="Letter"))
    box = pypdf.PdfReader(path).pages[0].mediabox
    assert (float(box.width), float(box.height)) == (612.0, 792.0)


def test_fetcher_refuses_external_urls_and_opens_no_socket(tmp_path, monkeypatch, caplog):
    calls: list[tuple[str, str]] = []
    real = render._offline_fetcher

    def spying_fetcher():
        fetcher = real()
        fetch = fetcher.fetch

        def spy(url, headers=None):
            try:
                response = fetch(url, headers)
            except Exception as error:
                calls.append((url, type(error).__name__))
                raise
            calls.append((url, "served"))
            return response

        fetcher.fetch = spy
        return fetcher

    connects: list[object] = []
    monkeypatch.setattr(render, "_offline_fetcher", spying_fetcher)
    monkeypatch.setattr(socket.socket, "connect", lambda self, address: connects.append(address))
    pixel = ("data:image/png;base64,iVBORw0KGgoAAAANSUhEUgAAAAEAAAABCAYAAAAfFcSJAAAADUlEQVR42"
             "mP8z8BQDwAEhQGAhKmMIQAAAABJRU5ErkJggg==")
    html = (f'<p>x</p><img src="http://example.invalid/x.png"><img src="{pixel}">'
            '<div style="background: url(https://example.invalid/y.png)">y</div>')
    with caplog.at_level(logging.WARNING, logger="weasyprint"):
        render_pdf(html, tmp_path / "offline.pdf", RenderOptions())
    assert ("http://example.invalid/x.png", "RefusedURL") in calls
    assert ("https://example.invalid/y.png", "RefusedURL") in calls
    assert (pixel, "served") in calls
    assert connects == []
    assert "refused to fetch http://example.invalid/x.png" in caplog.text
    assert (tmp_path / "offline.pdf").stat().st_size > 0
