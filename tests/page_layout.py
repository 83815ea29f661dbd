"""What WeasyPrint laid out on each page of a typeset appendix, for layout tests: the
page's text block and the boxes of the elements on it (tag, classes, position, size in
CSS px, the element's key and its ancestors' keys, so that the parts of one element on
several pages can be matched, and the text of its lines). Read from the Document that `render.typeset` returns, which the PDF is written
from, so a test measures the PDF's own layout."""

from __future__ import annotations

import re
from dataclasses import dataclass


@dataclass(frozen=True)
class Box:
    """One element's box on one page (a box split over pages has a part on each, with the
    same `key`: the element's place in document order among those laid out)."""

    tag: str
    classes: frozenset[str]
    id: str
    x: float
    y: float
    width: float
    height: float
    key: int = 0
    parents: tuple[int, ...] = ()  # the ancestors' keys, nearest first
    lines: tuple[str, ...] = ()  # the text of each line box directly inside, in order
    text: str = ""  # the element's text, ASCII white space squashed (if two lines or more)

    @property
    def right(self) -> float:
        return self.x + self.width

    @property
    def bottom(self) -> float:
        return self.y + self.height


@dataclass(frozen=True)
class Page:
    """A page's text block (its content box inside the margins) and its element boxes."""

    number: int
    left: float
    top: float
    width: float
    height: float
    boxes: tuple[Box, ...]

    @property
    def right(self) -> float:
        return self.left + self.width

    @property
    def bottom(self) -> float:
        return self.top + self.height

    def having(self, tag: str | None = None, cls: str | None = None) -> list[Box]:
        return [b for b in self.boxes
                if (tag is None or b.tag == tag) and (cls is None or cls in b.classes)]

    def inside(self, key: int, tag: str | None = None) -> list[Box]:
        """The boxes on this page under the element `key` (with `tag`, if given)."""
        return [b for b in self.boxes if key in b.parents and (tag is None or b.tag == tag)]


def _text(box) -> str:
    """The text of a line box: its text boxes' text, in order."""
    from weasyprint.formatting_structure import boxes

    if isinstance(box, boxes.TextBox):
        return box.text
    return "".join(_text(child) for child in getattr(box, "children", ()))


def _element_boxes(root, keys: dict[int, int]) -> tuple[Box, ...]:
    """The block-level boxes under `root`, in tree order; `keys` (id of an element -> its
    key) is shared by the pages of one Document, whose elements stay alive meanwhile."""
    from weasyprint.formatting_structure import boxes

    out: list[Box] = []

    def walk(box, parents: tuple[int, ...]) -> None:
        element = getattr(box, "element", None)
        if element is not None and not isinstance(
                box, (boxes.LineBox, boxes.InlineBox, boxes.TextBox)):
            key = keys.setdefault(id(element), len(keys))
            # a table is two boxes of one element (its wrapper with the caption, then the
            # grid): both are listed, the element is one parent
            inner = parents[1:] if parents and parents[0] == key else parents
            lines = tuple(_text(c) for c in getattr(box, "children", ())
                          if isinstance(c, boxes.LineBox))
            out.append(Box(box.element_tag, frozenset((element.get("class") or "").split()),
                           element.get("id") or "", box.border_box_x(), box.border_box_y(),
                           box.border_width(), box.border_height(), key, inner, lines,
                           re.sub(r"[ \t\r\n]+", " ", "".join(element.itertext())).strip()
                           if len(lines) > 1 else ""))
            parents = (key, *inner)
        for child in getattr(box, "children", ()):
            walk(child, parents)

    walk(root, ())
    return tuple(out)


class Layout:
    """The pages of one typeset Document."""

    def __init__(self, document) -> None:
        keys: dict[int, int] = {}
        self.pages = tuple(
            Page(i + 1, page._page_box.content_box_x(), page._page_box.content_box_y(),
                 page._page_box.width, page._page_box.height,
                 _element_boxes(page._page_box, keys))
            for i, page in enumerate(document.pages))
