"""Small HTML inspection helpers for the render tests (standard library parser only),
changed copies of the frozen results they render, and the fonts a PDF embeds."""

from __future__ import annotations

import dataclasses
import re
from dataclasses import dataclass, field
from html.parser import HTMLParser
from pathlib import Path

import pypdf

from appendix.typefaces import FONT_FACES


_VOID = {"area", "base", "br", "col", "embed", "hr", "img", "input", "link", "meta", "source",
         "track", "wbr"}


@dataclass(eq=False)  # identity: equal-looking rows are still different rows
class Element:
    tag: str
    attrs: dict[str, str | None]
    text: str = ""


@dataclass
class Page(HTMLParser):
    """Every element with its attributes and the text inside it."""

    elements: list[Element] = field(default_factory=list)
    _open: list[Element] = field(default_factory=list)

    def __post_init__(self) -> None:
        HTMLParser.__init__(self, convert_charrefs=True)

    def handle_starttag(self, tag, attrs):
        element = Element(tag, dict(attrs))
        self.elements.append(element)
        if tag not in _VOID:
            self._open.append(element)

    def handle_endtag(self, tag):
        for i in range(len(self._open) - 1, -1, -1):
            if self._open[i].tag == tag:
                del self._open[i]
                break

    def handle_data(self, data):
        for element in self._open:
            element.text += data

    def ids(self) -> list[str]:
        return [e.attrs["id"] for e in self.elements if e.attrs.get("id")]

    def by_tag(self, tag: str) -> list[Element]:
        return [e for e in self.elements if e.tag == tag]


def parse(html: str) -> Page:
    page = Page()
    page.feed(html)
    page.close()
    return page


def squash(text: str) -> str:
    """Text as a reader sees it: whitespace collapsed."""
    return " ".join(text.split())


def journal_tables(page: Page) -> dict[str, list[tuple[str | None, list[str]]]]:
    """Each table by its title: its rows as (row class, cell texts), header rows included."""
    tables: dict[str, list[tuple[str | None, list[str]]]] = {}
    for index, element in enumerate(page.elements):
        if element.tag != "table":
            continue
        title, rows = "", []
        for inner in page.elements[index + 1:]:
            if inner.tag in {"table", "p", "div", "section", "figure"}:
                break
            if inner.attrs.get("class") == "table-title":
                title = squash(inner.text)
            elif inner.tag == "tr":
                rows.append((inner.attrs.get("class"), []))
            elif inner.tag in {"td", "th"} and rows:
                rows[-1][1].append(squash(inner.text))
        tables[title] = rows
    return tables


_STEP = re.compile(r"\.?([A-Za-z_]\w*)|\[(\d+)\]")


def _steps(path: str) -> list[str | int]:
    steps, at = [], 0
    while at < len(path):
        match = _STEP.match(path, at)
        assert match, f"bad path {path!r} at {at}"
        steps.append(match.group(1) if match.group(1) else int(match.group(2)))
        at = match.end()
    return steps


def at(value, path: str):
    """The object at `path` of frozen results (``outcomes[1].contrasts[0]``)."""
    for step in _steps(path):
        value = value[step] if isinstance(step, int) else getattr(value, step)
    return value


def changed(value, path: str, **fields):
    """`value` (frozen results) with the object at `path` (``outcomes[1].tables[0]``, or
    ``""`` for `value` itself) replaced by a copy with `fields` changed; nothing else moves."""
    def down(node, steps):
        if not steps:
            return dataclasses.replace(node, **fields)
        step, *rest = steps
        if isinstance(step, int):
            items = list(node)
            items[step] = down(items[step], rest)
            return tuple(items)
        return dataclasses.replace(node, **{step: down(getattr(node, step), rest)})

    return down(value, _steps(path))


def floats_to_none(value, keep, path: str = ""):
    """`value` (frozen results) with every float replaced by None where `keep(path)` is
    false (paths as `changed` reads them)."""
    if dataclasses.is_dataclass(value):
        return dataclasses.replace(value, **{
            f.name: floats_to_none(getattr(value, f.name), keep, f"{path}.{f.name}")
            for f in dataclasses.fields(value) if f.init})
    if isinstance(value, tuple):
        return tuple(floats_to_none(v, keep, f"{path}[{i}]") for i, v in enumerate(value))
    if isinstance(value, float) and not keep(path):
        return None
    return value


def base_fonts(path: Path) -> set[str]:
    """The names of the fonts a PDF embeds, without their subset tags."""
    reader = pypdf.PdfReader(path)
    return {str(font.get_object()["/BaseFont"]).split("+", 1)[1]
            for page in reader.pages for font in page["/Resources"]["/Font"].values()}


def shipped_names() -> set[str]:
    """The names WeasyPrint 70 gives an embedded @font-face font: its family, hyphenated,
    with the weight and style (observed)."""
    names = set()
    for family, weight, style, _ in FONT_FACES:
        suffix = "-".join(w for w, on in (("Bold", weight == "bold"),
                                         ("Italic", style == "italic")) if on)
        names.add(family.replace(" ", "-") + (f"-{suffix}" if suffix else ""))
    return names
