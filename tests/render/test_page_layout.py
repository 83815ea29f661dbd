"""The PDF's pages as WeasyPrint laid them out (`render.typeset`, what the PDF is written
from), for every demo: nothing wider than the text block, no caption left at the foot of a
page without its table, no short table split, a split table's header on each of its pages,
no heading last on a page. Each check is also run on a small page built to break it, so
that it is seen to fail; the same page in the appendix's stylesheet then holds.

The demos' data are INVENTED (seeded generators in studies/); the built pages are
synthetic. Tolerance 0.5 CSS px: common practice, no source (layout rounds to fractions of
a pixel).
"""

from __future__ import annotations

from pathlib import Path

import pytest

from appendix.numbers import breakable, prose_html
from appendix.render import RenderOptions, typeset
from page_layout import Layout

TOLERANCE = 0.5
CSS = (Path(__file__).resolve().parents[2] / "templates" / "appendix.css").read_text(
    encoding="utf-8")
# what must stay inside the text block: tables, figure art and pictures, code blocks
ART = {"table", "svg", "img", "pre"}
HEADINGS = {"h2", "h3", "h4"}


def too_wide(layout: Layout) -> list[str]:
    """Each table, figure or code block that reaches outside its page's text block."""
    return [f"page {p.number}: {b.tag}.{'.'.join(sorted(b.classes))} spans "
            f"{b.x:.1f}..{b.right:.1f}, text block {p.left:.1f}..{p.right:.1f}"
            for p in layout.pages for b in p.boxes
            if (b.tag in ART or "figure-art" in b.classes)
            and (b.x < p.left - TOLERANCE or b.right > p.right + TOLERANCE)]


def _body_rows(page, table: int) -> list:
    groups = {b.key for b in page.inside(table, "tbody")}
    return [r for r in page.inside(table, "tr") if groups & set(r.parents)]


def _tables(layout: Layout) -> dict[int, list]:
    """Each table's parts: (page, its outer box there), in page order."""
    parts: dict[int, list] = {}
    for page in layout.pages:
        for box in page.having("table"):
            if not any(p is page for p, _ in parts.get(box.key, [])):
                parts.setdefault(box.key, []).append((page, box))
    return parts


def orphan_captions(layout: Layout) -> list[str]:
    """Captions on a page where none of their table's body rows are."""
    return [f"page {p.number}: caption alone at y={c.y:.0f}"
            for p in layout.pages for c in p.having("caption")
            if not _body_rows(p, c.parents[0])]


def split_short_tables(layout: Layout) -> list[str]:
    """Tables split over pages although the whole table is shorter than a text block."""
    found = []
    for parts in _tables(layout).values():
        if len(parts) < 2:
            continue
        # the table on one page: every part, less the header repeated on later pages
        height = sum(box.height for _, box in parts) - sum(
            h.height for page, box in parts[1:] for h in page.inside(box.key, "thead"))
        if height <= parts[0][0].height:
            found.append(f"pages {parts[0][0].number}-{parts[-1][0].number}: a table "
                         f"{height:.0f} px high split")
    return found


def headers_not_repeated(layout: Layout) -> list[str]:
    """Pages holding body rows of a split table with a header, but not its header."""
    return [f"page {page.number}: rows without their header"
            for parts in _tables(layout).values() if len(parts) > 1
            and parts[0][0].inside(parts[0][1].key, "thead")
            for page, box in parts
            if _body_rows(page, box.key) and not page.inside(box.key, "thead")]


def last_headings(layout: Layout) -> list[str]:
    """Headings with nothing after them on their page (the last page excepted)."""
    found = []
    for page in layout.pages[:-1]:
        for h in (b for b in page.boxes if b.tag in HEADINGS):
            after = [b for b in page.boxes if b.y >= h.bottom - TOLERANCE and b.height > 1
                     and h.key not in b.parents and b.y < page.bottom]
            if not after:
                found.append(f"page {page.number}: {h.tag} last at y={h.y:.0f}")
    return found


# a word longer than this may break where it must (a hash, a long level name): common
# practice, no source
SHORT_WORD = 20
# a line may end inside a word after these marks (break opportunities `breakable` offers)
BREAK_MARKS = "_-/.:\u2013"
PROSE = {"p", "li", "figcaption"}


def _breaks(box) -> list[tuple[str, str]]:
    """Where the lines of `box` break its text: (the text before, the text after), for
    each line but the last."""
    found, at = [], 0
    for line in box.lines[:-1]:
        line = line.strip(" ")
        start = box.text.find(line, at) if line else -1
        if start < 0:
            break
        at = start + len(line)
        found.append((box.text[:at], box.text[at:]))
    return found


def split_words(layout: Layout) -> list[str]:
    """Lines broken where the text has no plain space, inside a short word (a column
    squeezed below its head's longest word) or inside a number clause tied with no-break
    spaces ("F(3, | 39)"); a long word (a hash, a long level name) may break, and a word
    after a break mark."""
    found = []
    for page in layout.pages:
        for b in page.boxes:
            for before, after in _breaks(b):
                if not after or after[0] == " " or before[-1] in BREAK_MARKS:
                    continue
                word = (before.rsplit(" ", 1)[-1] + after.split(" ", 1)[0])
                if len(word) <= SHORT_WORD or "\xa0" in word:
                    found.append(f"page {page.number}: {b.tag} breaks {word!r} after "
                                 f"{before[-12:]!r}")
    return found


def lone_words(layout: Layout) -> list[str]:
    """Lines of running text, other than an element's last on its page, holding one short
    word (the line breaker gave up on the clause after it)."""
    return [f"page {page.number}: {b.tag} line {i + 1} holds only {line.strip()!r}"
            for page in layout.pages for b in page.boxes if b.tag in PROSE
            for i, line in enumerate(b.lines[:-1])
            if len(line.split()) == 1 and len(line.strip()) <= SHORT_WORD]


CHECKS = [too_wide, orphan_captions, split_short_tables, headers_not_repeated, last_headings,
          split_words, lone_words]


@pytest.mark.parametrize("check", CHECKS, ids=lambda c: c.__name__)
def test_every_page_of_every_demo(demo_layouts, check):
    assert set(demo_layouts) == {"seed-coating", "greenhouse-split", "wound-dose"}
    for name, layout in demo_layouts.items():
        assert len(layout.pages) > 5, name
        assert check(layout) == [], name


def _laid_out(body: str, css: str = "") -> Layout:
    return Layout(typeset(f"<html><head><style>{css}</style></head><body>{body}</body></html>",
                          RenderOptions(paper="A4")))


def _table(rows: int, caption: str = "Table 1. Values", columns: int = 2,
           label: str = "level") -> str:
    head = "".join(f"<th class='num'>{label} {j}</th>" for j in range(columns))
    body = "".join("<tr>" + "".join(f"<td class='num'>{i}.{j}</td>" for j in range(columns))
                   + "</tr>" for i in range(rows))
    return (f"<div class='table-block'><table class='journal'><caption>{caption}</caption>"
            f"<thead><tr>{head}</tr></thead><tbody>{body}</tbody></table></div>")


# text standing in for the page above a table: ~900 px on A4 leaves room for a caption only
FILLER = "<div style='height: 905px'></div>"
HOLDS = "@page { size: A4; margin: 22mm 18mm 20mm 18mm; }"


# a heading whose paragraph cannot follow it on the page
LAST_HEADING = ("<div style='height: 930px'></div><h3 style='margin: 0; line-height: 20px'>"
                "Heading</h3><p style='margin: 0; line-height: 20px'>text</p>")
# a table's level labels with no space (a plan with long level names), in the column
# heads as the templates write them (`breakable`)
WIDE = _table(3, columns=9, label=breakable("coating_formulation_with_long_name"))
# short column heads beside a long text column, which takes the width a head may give up
SQUEEZED = ("<div class='table-block'><table class='journal'><caption>Table 1. Counts</caption>"
            "<thead><tr><th class='text'>Stage</th>"
            + "".join(f"<th class='num'>{w}</th>" for w in
                      ("vehicle", "treated", "Statistic", "placebo", "reference", "Total"))
            + "</tr></thead><tbody><tr><th class='text'>" + "excluded by a rule " * 12
            + "</th>" + "<td class='num'>12</td>" * 6 + "</tr></tbody></table></div>")
# a summary bullet of the seed-coating demo (INVENTED data) at the widths where, without
# the space before a tied clause in a span of its own, the PDF renderer's line breaker
# left "Mean" alone on the first line (found by a sweep of widths 380-660 px, fonts
# shipped with the package)
BULLET = ("Mean leaf chlorophyll index at day 21 under humic was 0.6 index units higher than "
          "under uncoated (95% CI [\u22121.6, 2.9], adjusted p > .999, Holm); the hypothesis "
          "of no difference is not rejected at \u03b1 = .05, which is not evidence that there "
          "is no difference.")


@pytest.mark.parametrize(("check", "body", "plain_css"), [
    (too_wide, WIDE, "td, th { white-space: nowrap; }"),
    (orphan_captions, FILLER + _table(5), ""),
    (orphan_captions, FILLER + _table(120), ""),
    (split_short_tables, FILLER + _table(12), ""),
    (headers_not_repeated, _table(120), "thead { display: table-row-group; }"),
    (last_headings, LAST_HEADING, "h3 { break-after: auto; }"),
    (split_words, SQUEEZED, "th { overflow-wrap: anywhere; }"),
], ids=["too_wide", "orphan_captions", "orphan_captions_long", "split_short_tables",
        "headers_not_repeated", "last_headings", "split_words"])
def test_a_page_built_to_fail_fails_and_the_appendix_css_holds_it(check, body, plain_css):
    broken = _laid_out(body, HOLDS + plain_css)
    assert len(broken.pages) > 1 or check in (too_wide, split_words)
    assert check(broken) != []
    held = _laid_out(body, CSS + HOLDS)
    assert check(held) == []


def test_a_tied_clause_at_a_line_end_leaves_no_word_alone():
    bullets = "".join(f"<li style='width: {w}px'>{prose_html(BULLET)}</li>"
                      for w in range(470, 487))
    page = ("<ul class='conclusions'><li><ul class='hypothesis-conclusions'>%s</ul></li></ul>")
    held = _laid_out(page % bullets, CSS + HOLDS)
    assert lone_words(held) == [] and split_words(held) == []
    broken = _laid_out(page % bullets.replace("<span> </span>", " "), CSS + HOLDS)
    assert lone_words(broken)
    assert all("holds only 'Mean'" in found for found in lone_words(broken))
