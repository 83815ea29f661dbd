"""What WeasyPrint laid out on each page of a typeset appendix, for layout tests: the
page's text block and the boxes of the elements on it (tag, classes, position, size in
CSS px). Read from the Document that `render.typeset` returns, which the PDF is written
from, so a test measures the PDF's own layout."""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class Box:
    """One element's box on one page (a box split over pages has a part on each)."""

    tag: str
    classes: frozenset[str]
    id: str
    x: float
    y: float
    width: float
    height: float

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

    def having(self, tag: str | None = None, cls: str | None = None) -> list[Box]:
        return [b for b in self.boxes
                if (tag is None or b.tag == tag) and (cls is None or cls in b.classes)]


def _element_boxes(root) -> tuple[Box, ...]:
    from weasyprint.formatting_structure import boxes

    out = []
    for box in root.descendants():
        element = getattr(box, "element", None)
        if element is None or isinstance(box, (boxes.LineBox, boxes.InlineBox, boxes.TextBox)):
            continue
        tag = box.element_tag
        classes = frozenset((element.get("class") or "").split())
        out.append(Box(tag, classes, element.get("id") or "", box.border_box_x(),
                       box.border_box_y(), box.border_width(), box.border_height()))
    return tuple(out)


class Layout:
    """The pages of one typeset Document."""

    def __init__(self, document) -> None:
        self.pages = tuple(
            Page(i + 1, page._page_box.content_box_x(), page._page_box.content_box_y(),
                 page._page_box.width, page._page_box.height,
                 _element_boxes(page._page_box))
            for i, page in enumerate(document.pages))
