"""The PDF is typeset in the fonts the package ships, never in the machine's.

The stylesheet names only our own families (`appendix.typefaces.FONT_FACES`), which
`render_pdf` declares from the files in ``templates/fonts``; a PDF rendered with no system font at all
(an empty fontconfig) must be the same file as one rendered with the machine's fonts.
"""

from __future__ import annotations

import os
import re
import shutil
import subprocess
import sys
from pathlib import Path

import pypdf
import pytest
from fontTools.ttLib import TTFont
from render_helpers import base_fonts, shipped_names

from appendix import api, render
from appendix.render import RenderOptions, render_pdf
from appendix.typefaces import FIGURE_FAMILY, FONT_FACES, font_folder, template_root

FAMILIES = {family for family, _, _, _ in FONT_FACES}
GENERIC = {"serif", "sans-serif", "monospace"}
FONTS = font_folder()


def _families(css: str) -> list[list[str]]:
    return [[name.strip().strip('"\'') for name in value.split(",")]
            for value in re.findall(r"font-family:\s*([^;}]+)", css)]


def test_stylesheet_names_only_our_families_then_a_generic_one():
    lists = _families((template_root() / "appendix.css").read_text(encoding="utf-8"))
    assert len(lists) == 8
    for names in lists:
        assert names[0] in FAMILIES and set(names[1:]) <= GENERIC, names


def test_page_declares_no_fonts_and_names_no_system_family(html):
    # the Content-Security-Policy loads no fonts: only the PDF carries them
    assert "@font-face" not in html
    style = "".join(re.findall(r"<style[^>]*>(.*?)</style>", html, flags=re.S))
    assert {n for names in _families(style) for n in names} <= FAMILIES | GENERIC


def test_each_face_is_shipped_once_with_its_licence():
    files = [name for _, _, _, name in FONT_FACES]
    assert len(set(files)) == len(files)
    assert len({(f, w, s) for f, w, s, _ in FONT_FACES}) == len(FONT_FACES)
    assert sorted(p.name for p in FONTS.glob("*.ttf")) == sorted(files)  # nothing unused
    for name in files:
        font = TTFont(FONTS / name)
        licence = font["name"].getDebugName(13)  # name ID 13: the licence description
        if name.startswith("Liberation"):
            # Liberation 2.x is under the SIL Open Font License 1.1 (the file's own name table)
            assert "SIL Open Font License" in licence and "1.1" in licence, name
            assert font["name"].getDebugName(5).startswith("Version 2."), name
        else:
            assert "Bitstream" in font["name"].getDebugName(0), name  # the Vera licence
    assert "SIL-OFL-1.1" in (FONTS / "LICENSE-Liberation.txt").read_text(encoding="utf-8")
    assert "bitstream-vera" in (FONTS / "LICENSE-DejaVu.txt").read_text(encoding="utf-8")


def test_font_faces_declare_every_face_as_data():
    faces = render.font_faces()
    assert faces.count("@font-face") == len(FONT_FACES)
    assert re.findall(r'url\("([a-z]+):', faces) == ["data"] * len(FONT_FACES)


EMPTY_FONTCONFIG = """<?xml version="1.0"?>
<!DOCTYPE fontconfig SYSTEM "urn:fontconfig:fonts.dtd">
<fontconfig></fontconfig>
"""

RENDER = ("import sys; from pathlib import Path; "
          "from appendix.render import RenderOptions, render_pdf; "
          "render_pdf(Path(sys.argv[1]).read_text(encoding='utf-8'), Path(sys.argv[2]), "
          "RenderOptions())")


@pytest.mark.slow
def test_demo_pdf_is_the_same_without_any_system_font(computed_demos, tmp_path):
    page = api.render(computed_demos["greenhouse-split"]).html
    source = tmp_path / "appendix.html"
    source.write_text(page, encoding="utf-8")
    normal = tmp_path / "normal.pdf"
    render_pdf(page, normal, RenderOptions())

    config = tmp_path / "fonts.conf"
    config.write_text(EMPTY_FONTCONFIG, encoding="utf-8")
    bare = tmp_path / "bare.pdf"
    env = {**os.environ, "FONTCONFIG_FILE": str(config),
           "PYTHONPATH": str(Path(__file__).resolve().parents[2])}
    env.pop("FONTCONFIG_PATH", None)
    done = subprocess.run([sys.executable, "-c", RENDER, str(source), str(bare)], env=env,
                          capture_output=True, text=True, check=True)
    # WeasyPrint's own notice that fontconfig knows no font: the empty configuration held
    assert "No fonts configured in FontConfig" in done.stderr

    texts = [[p.extract_text() for p in pypdf.PdfReader(path).pages] for path in (normal, bare)]
    assert len(texts[0]) == len(texts[1]) > 1
    assert texts[0] == texts[1]
    assert bare.read_bytes() == normal.read_bytes()
    assert base_fonts(bare) <= shipped_names()
    if shutil.which("pdffonts"):  # poppler-utils, installed by .ci/run
        listed = subprocess.run(["pdffonts", str(bare)], capture_output=True, text=True,
                                check=True).stdout.splitlines()[2:]
        assert listed and {line.split()[0].split("+", 1)[1] for line in listed} \
            <= shipped_names()


def test_figures_measure_and_name_their_text_in_the_shipped_sans(figures):
    from matplotlib import font_manager

    families = {m for svg in figures.values() for m in re.findall(r"font-family: ([^;\"]+)", svg)}
    assert families == {f"'{FIGURE_FAMILY}', sans-serif"}
    for style in ("normal", "italic"):
        found = font_manager.findfont(font_manager.FontProperties(family=FIGURE_FAMILY,
                                                                  style=style),
                                      fallback_to_default=False)
        expected = {"normal": "LiberationSans-Regular.ttf", "italic": "LiberationSans-Italic.ttf"}
        assert Path(found) == font_folder() / expected[style]
