"""One number style everywhere in the demos' appendix HTML (APA 7th ed., from memory:
section 6.36 for leading zeros, 6.43 for intervals in brackets, 6.45 for italic symbols):

- no leading zero before a statistic that cannot exceed 1 (p, W, epsilon, eta and omega
  squared, R squared), in prose and in table columns;
- every confidence interval in brackets, ``95% CI [1.20, 3.40]``, never ``CI (``, ``CI:``
  or ``CI 1.20 to 3.40``;
- no breakable space inside a number clause (``p < .001``, ``F(3, 39) = 4.21``,
  ``95% CI [a, b]``): a line break there splits one reading in two (typographic common
  practice, no source);
- statistic symbols in italics in prose as in the tables.

The checks read the rendered HTML of all three demos (`rendered_demos`, once per session).
"""

from __future__ import annotations

import html as htmllib
import re
from html.parser import HTMLParser

import pytest

DEMOS = ("seed-coating", "greenhouse-split", "wound-dose")
NBSP = "\u00a0"
MINUS = "\u2212"

#: Latin statistic symbols, set in italics (Greek letters are not, APA 7 section 6.45).
SYMBOLS = ("SD", "SE", "df", "F", "H", "M", "N", "W", "n", "p", "t", "z")
#: Statistics bounded by 1, as the page writes their symbols.
BOUNDED = ("p", "W", "\u03b5", "\u03b7\u00b2", "\u03c9\u00b2", "R\u00b2", "r")


class _Text(HTMLParser):
    """The page's visible text in order (figures, styles and code left out), and each text
    run that stands outside an <i> element, with the tag it sits in."""

    SKIP = {"svg", "style", "script", "code", "title", "head"}

    def __init__(self) -> None:
        super().__init__(convert_charrefs=True)
        self.stack: list[str] = []
        self.text: list[str] = []
        self.upright: list[tuple[str, str]] = []

    def handle_starttag(self, tag, attrs):
        if tag not in ("br", "img", "meta", "link", "hr", "col", "wbr", "source"):
            self.stack.append(tag)

    def handle_endtag(self, tag):
        if tag in self.stack:
            while self.stack and self.stack.pop() != tag:
                pass

    def handle_data(self, data):
        if any(t in self.SKIP for t in self.stack):
            return
        self.text.append(data)
        if "i" not in self.stack and "sub" not in self.stack:
            self.upright.append((self.stack[-1] if self.stack else "", data))


def _read(page: str) -> _Text:
    reader = _Text()
    reader.feed(page)
    return reader


def _around(text: str, match: re.Match) -> str:
    return text[max(0, match.start() - 50):match.end() + 30]


# --- the rules, each a function of the page, so that they read any HTML ----------------

_BOUNDED_WITH_ZERO = re.compile(
    r"(?<![\w\u00b2])(" + "|".join(re.escape(s) for s in BOUNDED)
    + r")[\s\u00a0]*[=<>\u2264\u2265][\s\u00a0]*[\u2212-]?0\.\d")
_BOUNDED_HEADS = re.compile(r"^(Adjusted )?p$|\u03b7\u00b2|\u03c9\u00b2|^R\u00b2$")


def leading_zeros(page: str) -> list[str]:
    """Bounded statistics written with a leading zero: in running text (``p = 0.041``,
    ``W = 0.97``) and in the cells of table columns headed by a bounded statistic, or of a
    row of Shapiro–Wilk's W or Mauchly's W."""
    text = "".join(_read(page).text)
    found = [_around(text, m) for m in _BOUNDED_WITH_ZERO.finditer(text)]
    for table in re.findall(r"<table.*?</table>", page, flags=re.S):
        heads = [_plain(h) for h in re.findall(r"<th[^>]*>(.*?)</th>", _thead(table), flags=re.S)]
        columns = [i for i, h in enumerate(heads) if _BOUNDED_HEADS.search(h)]
        for row in re.findall(r"<tr[^>]*>(.*?)</tr>", _tbody(table), flags=re.S):
            cells = [_plain(c) for c in re.findall(r"<t[hd][^>]*>(.*?)</t[hd]>", row, flags=re.S)]
            bounded_row = bool(cells) and re.search(r"\bW\b", cells[0]) is not None
            for i, cell in enumerate(cells):
                if (i in columns or (bounded_row and i > 0)) and re.match(r"[\[(]?[\u2212-]?0\.\d", cell):
                    found.append(f"{heads[i] if i < len(heads) else '?'}: {cell} ({cells[0]})")
    return found


def _thead(table: str) -> str:
    match = re.search(r"<thead>(.*?)</thead>", table, flags=re.S)
    return match.group(1) if match else ""


def _tbody(table: str) -> str:
    match = re.search(r"<tbody>(.*?)</tbody>", table, flags=re.S)
    return match.group(1) if match else ""


def _plain(cell: str) -> str:
    return htmllib.unescape(re.sub(r"<[^>]+>", "", cell)).strip()


_CI_OTHERWISE = re.compile(r"\bCI(?:[\s\u00a0]*[:(]|[\s\u00a0]+[\d\u2212\-\u221e])")


def interval_variants(page: str) -> list[str]:
    """Intervals not written in brackets: ``CI (``, ``CI:``, ``CI 1.20 to 3.40``."""
    text = "".join(_read(page).text)
    return [_around(text, m) for m in _CI_OTHERWISE.finditer(text)]


_NUMBERISH = r"[\d.\u2212\u221e]"
_BREAKABLE = (
    # a relation sign between a symbol or closing bracket and a number: ``p < .001``
    re.compile(r"[\w\u00b2)](?: [=<>\u2264\u2265][\s\u00a0]|\u00a0[=<>\u2264\u2265] )(?=" + _NUMBERISH + ")"),
    # the comma between two degrees of freedom or two limits: ``(3, 39)``, ``[1.2, 3.4]``
    re.compile(r"[(\[]" + _NUMBERISH + r"+, " + _NUMBERISH),
    # a level and CI, CI and its bracket: ``95% CI [``
    re.compile(r"% (?:simultaneous )?CI"),
    re.compile(r"CI \["),
)


def breakable_clauses(page: str) -> list[str]:
    """Number clauses holding an ordinary (breakable) space."""
    text = "".join(_read(page).text)
    return [_around(text, m) for pattern in _BREAKABLE for m in pattern.finditer(text)]


_UPRIGHT_SYMBOL = re.compile(
    r"(?<![\w'\u2019\u00b2-])(" + "|".join(sorted(SYMBOLS, key=len, reverse=True))
    + r")(?=\(|[\s\u00a0][=<>\u2264\u2265][\s\u00a0]" + _NUMBERISH + ")")


def upright_symbols(page: str) -> list[str]:
    """Statistic symbols opening a number clause (``F(``, ``p =``) outside an <i>."""
    found = []
    for tag, text in _read(page).upright:
        found += [f"<{tag}> {_around(text, m)}" for m in _UPRIGHT_SYMBOL.finditer(text)]
    return found


RULES = {"leading zero": leading_zeros, "interval": interval_variants,
         "breakable space": breakable_clauses, "upright symbol": upright_symbols}


@pytest.mark.parametrize("rule", RULES)
@pytest.mark.parametrize("demo", DEMOS)
def test_the_demo_pages_keep_the_number_style(rendered_demos, demo, rule):
    assert RULES[rule](rendered_demos[demo].html) == []


# --- each rule finds what it is for ------------------------------------------------------

@pytest.mark.parametrize(("rule", "html", "found"), [
    ("leading zero", "<p>Shapiro–Wilk: <i>W</i> = 0.971, <i>p</i> = .684.</p>", 1),
    ("leading zero", "<p><i>W</i>\u00a0=\u00a0.971, <i>p</i>\u00a0=\u00a0.684.</p>", 0),
    ("leading zero", "<table><thead><tr><th>Term</th><th><i>p</i></th></tr></thead>"
                     "<tbody><tr><th>a</th><td>0.041</td></tr></tbody></table>", 1),
    ("leading zero", "<table><thead><tr><th>Test</th><th>Statistic</th></tr></thead><tbody>"
                     "<tr><th>Shapiro–Wilk <i>W</i></th><td>0.971</td></tr></tbody></table>", 1),
    ("interval", "<p>(95% CI 2.18 to 7.71 mg)</p>", 1),
    ("interval", "<p>95% CI: 2.18, 7.71</p><p>95% CI (2.18, 7.71)</p>", 2),
    ("interval", "<p>(95%\u00a0CI\u00a0[2.18,\u00a07.71])</p><th>95% CI</th>", 0),
    ("breakable space", "<p><i>F</i>(3, 39) = 4.21, <i>p</i> < .001</p>", 3),
    ("breakable space", "<p>95% CI [1.20, 3.40]</p>", 3),
    ("breakable space", "<p><i>F</i>(3,\u00a039)\u00a0=\u00a04.21, <i>p</i>\u00a0&lt;\u00a0.001, "
                        "95%\u00a0CI\u00a0[1.20,\u00a03.40]</p>", 0),
    ("upright symbol", "<p>F(3, 39) = 4.21, p &lt; .001, W = .97</p>", 3),
    ("upright symbol", "<p><i>F</i>(3, 39), <i>p</i> &lt; .001; at step 2; the t-test</p>", 0),
])
def test_each_rule_finds_what_it_is_for(rule, html, found):
    assert len(RULES[rule](html)) == found


# --- a leading decimal point stays with its digits, invisibly ----------------------------

def _lines(document) -> list[str]:
    """The text of each laid-out line of a WeasyPrint document, in order."""
    from weasyprint.formatting_structure import boxes

    found: list[str] = []

    def text(box) -> str:
        own = box.text if isinstance(box, boxes.TextBox) else ""
        return own + "".join(text(c) for c in getattr(box, "children", ()))

    def walk(box) -> None:
        if isinstance(box, boxes.LineBox):
            found.append(text(box))
            return
        for child in getattr(box, "children", ()):
            walk(child)

    for page in document.pages:
        walk(page._page_box)
    return found


@pytest.mark.parametrize(("typeset_with", "whole"), [("prose_html", 13), ("tie only", 10)])
def test_a_p_clause_never_breaks_after_its_decimal_point(typeset_with, whole, tmp_path):
    """Narrow paragraphs put the line end at every position around ``p = .121``; typeset by
    `numbers.prose_html` (a nowrap span) the clause stays on one line every time, where
    no-break spaces alone (`numbers.tie`) let WeasyPrint break after the point three times.
    The PDF's text holds the clause and no invisible character (pdftotext)."""
    import subprocess

    from appendix import numbers
    from appendix.render import RenderOptions, typeset
    from appendix.typefaces import template_root

    write = (lambda t: str(numbers.prose_html(t))) if typeset_with == "prose_html" else numbers.tie
    css = (template_root() / "appendix.css").read_text(encoding="utf-8")
    paragraphs = "".join(f'<p style="width: 9em">{write("x" * k + " aa bb p = .121 and more")}</p>'
                         for k in range(1, 14))
    document = typeset(f"<html><head><style>{css}</style></head><body>{paragraphs}</body></html>",
                       RenderOptions())
    lines = _lines(document)
    assert sum(f"p{NBSP}={NBSP}.121" in line for line in lines) == whole
    if typeset_with == "prose_html":
        assert not [line for line in lines if line.rstrip().endswith(".") or line.startswith("121")]
        document.write_pdf(tmp_path / "clauses.pdf")
        text = subprocess.run(["pdftotext", "-enc", "UTF-8", str(tmp_path / "clauses.pdf"), "-"],
                              capture_output=True, text=True, check=True).stdout
        assert text.count(".121") == 13 and "\u2060" not in text


@pytest.mark.parametrize("demo", DEMOS)
def test_the_demo_pages_hold_no_word_joiner(rendered_demos, demo):
    html = rendered_demos[demo].html
    assert "\u2060" not in html and "&#8288;" not in html
    assert '<span class="nobreak">' in html
