"""scripts/look.py on a small run folder (a synthetic two-page appendix): page images,
their contact sheet and the two window screenshots, at the sizes asked for.

Skipped when pdftoppm or Chromium is missing, unless APPENDIX_REQUIRE_BROWSER=1 (as CI
sets; tests/render/test_browser.py does the same).
"""

from __future__ import annotations

import importlib.util
import os
import shutil
from pathlib import Path

import pytest

from appendix.render import RenderOptions, render_pdf

SCRIPT = Path(__file__).resolve().parents[1] / "scripts" / "look.py"

pytestmark = pytest.mark.browser


def _look():
    spec = importlib.util.spec_from_file_location("look", SCRIPT)
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


def _need_tools(look) -> None:
    missing = [t for t in ("pdftoppm", look.CHROMIUM) if shutil.which(t) is None]
    if not missing:
        return
    reason = f"{', '.join(missing)} missing (Debian packages poppler-utils, chromium)"
    if os.environ.get("APPENDIX_REQUIRE_BROWSER") == "1":
        pytest.fail(f"APPENDIX_REQUIRE_BROWSER=1 but {reason}")
    pytest.skip(reason)


def test_look_writes_pages_contact_sheet_and_screenshots(tmp_path, capsys):
    look = _look()
    _need_tools(look)
    run = tmp_path / "run"
    run.mkdir()
    html = ("<html><body><h1>First</h1><p style='break-after: page'>one</p>"
            "<h1>Second</h1><p>two</p></body></html>")
    (run / "appendix.html").write_text(html, encoding="utf-8")
    render_pdf(html, run / "appendix.pdf", RenderOptions(paper="A4"))

    out = tmp_path / "look"
    assert look.main([str(run), str(out), "--dpi", "20", "--columns", "3",
                      "--height", "500"]) == 0
    pages = sorted(p.name for p in (out / "pages").iterdir())
    assert pages == ["p-1.png", "p-2.png"]

    from PIL import Image

    page = Image.open(out / "pages" / "p-1.png").size
    # A4 (210 x 297 mm, ISO 216, from memory) at 20 dpi is 165.4 x 233.9 px, rounded up
    assert page == (166, 234)
    # three columns and one row of pages, 8 px gaps around each
    assert Image.open(out / "contact.png").size == (3 * (166 + 8) + 8, 234 + 16)
    for width in (1280, 400):
        assert Image.open(out / f"screen-{width}.png").size == (width, 500)
    assert "2 pages ->" in capsys.readouterr().out
