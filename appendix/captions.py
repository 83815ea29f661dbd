"""The captions and notes of one rendering of the appendix, kept as the templates write them.

A `Captions` is made per rendering and handed to the templates, which consult it as they
write each table caption, figure caption and table note, in page order:

- tables and figures are numbered in the order they are first asked for (a caption, or a
  sentence that refers to one, "Table 2 gives them");
- each caption is listed (`Listed`: number, title, anchor, outcome section) for the lists
  of tables and figures in the contents, which the page writes after its body, so that the
  lists are the captions themselves and the page is rendered once;
- a sentence of a note or caption already said under an earlier table or figure is not
  said again: the later note keeps its own sentences and ends with a pointer to where the
  others stand ("Other notes as for Table 3.", or "As for Table 3." when nothing is left),
  so that a definition or a caveat is read once and not on every outcome.

>>> c = Captions()
>>> c.table("a", "Means"), c.note(Markup("SD = standard deviation of the values."))
(1, Markup('SD = standard deviation of the values.'))
>>> c.table("b", "More means"), c.note(Markup("SD = standard deviation of the values."))
(2, Markup('As for Table 1.'))
"""

from __future__ import annotations

import html as _html
import re
from dataclasses import dataclass, field

from markupsafe import Markup

#: Sentences no longer than this (tag-free, spaces squashed) are repeated where they stand:
#: "Blank cells: not applicable." costs less than a pointer to it.
SHORTEST_THINNED = 30

# a sentence ends at a full stop followed by a space and a capital (perhaps inside a tag)
_SENTENCE_END = re.compile(r'(?<=\.)\s+(?=(?:<[^>]+>)*[A-Z\u0391-\u03a9])')
_TAG = re.compile(r"<[^>]+>")


@dataclass(frozen=True)
class Listed:
    """An entry of the list of tables or of figures: its number and anchor as the page
    shows them, a short title (the caption's title, or its first clause for a figure), and
    the label of the outcome whose section holds it (None outside the outcome sections);
    `pattern` is the whole title with that label masked, what makes two outcomes' entries
    alike (`grouped`)."""

    number: int
    title: str
    anchor: str
    outcome: str | None
    pattern: str = field(default="", compare=False)


@dataclass(frozen=True)
class ListGroup:
    """The entries of one outcome section in a list of tables or of figures (`outcome`
    None: of the sections outside them). `alike` are those titled as the entries of the
    earlier outcome labelled `like` are, with this outcome's label in place of that
    one's: they are listed by number only (each a link), the other `entries` with their
    titles, so that a further outcome of the same design costs a line of the list and
    not a column of titles that differ only in the outcome they name."""

    outcome: str | None
    alike: tuple[Listed, ...]
    like: str | None
    entries: tuple[Listed, ...]


#: An outcome's entries are listed by number as an earlier outcome's only from this many alike.
FEWEST_ALIKE = 2


def _masked(title: str, label: str) -> str:
    """`title` with each `label` in it (any case) replaced by one mark."""
    return re.sub(re.escape(label), "\x00", title, flags=re.IGNORECASE)


def grouped(entries: list[Listed]) -> list[ListGroup]:
    """`entries` in their runs by outcome section, in order, each outcome's entries set
    against the first earlier outcome with at least `FEWEST_ALIKE` alike titles
    (`ListGroup`). An entry without a `pattern` is compared by its title, masked here."""
    runs: list[list[Listed]] = []
    for entry in entries:
        if runs and runs[-1][0].outcome == entry.outcome:
            runs[-1].append(entry)
        else:
            runs.append([entry])
    earlier: list[tuple[str, set[str]]] = []  # outcome label, its masked titles
    groups: list[ListGroup] = []
    for run in runs:
        label = run[0].outcome
        if label is None:
            groups.append(ListGroup(None, (), None, tuple(run)))
            continue
        masked = [e.pattern or _masked(e.title, label) for e in run]
        like, seen = next(((other, titles) for other, titles in earlier
                           if sum(m in titles for m in masked) >= FEWEST_ALIKE), (None, set()))
        alike = tuple(e for e, m in zip(run, masked) if m in seen)
        groups.append(ListGroup(label, alike, like,
                                tuple(e for e, m in zip(run, masked) if m not in seen)))
        earlier.append((label, set(masked)))
    return groups


def sentence_key(html: str) -> str:
    """The words of an HTML sentence, without tags and with spaces squashed: what makes
    two sentences the same."""
    return " ".join(_TAG.sub(" ", html).split())


def plain_text(value: str) -> str:
    """What a reader sees of a caption: markup without its tags and entities, a plain
    string as it is; ASCII white space squashed (no-break spaces stay)."""
    text = _html.unescape(_TAG.sub("", value)) if isinstance(value, Markup) else str(value)
    return re.sub(r"[ \t\r\n]+", " ", text).strip()


def first_clause(text: str, limit: int | None = 90) -> str:
    """A caption's first clause: up to the first full stop, comma, colon or semicolon
    outside parentheses, cut at a word before `limit` characters (None: not cut).

    >>> first_clause("Means of yield (raw, by group) with 95% confidence intervals. Bars")
    'Means of yield (raw, by group) with 95% confidence intervals'
    """
    depth = 0
    for i, ch in enumerate(text):
        if ch == "(":
            depth += 1
        elif ch == ")" and depth:
            depth -= 1
        if depth == 0 and ch in ".,:;" and (i + 1 == len(text) or text[i + 1] == " "):
            text = text[:i]
            break
    if limit is not None and len(text) > limit:
        text = text[:limit].rsplit(" ", 1)[0] + "\u2026"
    return text


class Captions:
    """The tables, figures and note sentences of one rendering, in page order."""

    def __init__(self) -> None:
        self._numbers: dict[str, dict[str, int]] = {"table": {}, "figure": {}}
        self.tables: list[Listed] = []
        self.figures: list[Listed] = []
        self._outcome: str | None = None
        self._current = ""  # "Table 3": the table or figure whose notes are being written
        self._said: dict[str, str] = {}  # sentence key -> where it was first said

    def table_groups(self) -> list[ListGroup]:
        """The list of tables by outcome section (`grouped`)."""
        return grouped(self.tables)

    def figure_groups(self) -> list[ListGroup]:
        """The list of figures by outcome section (`grouped`)."""
        return grouped(self.figures)

    def _listed(self, number: int, title: str, whole: str, anchor: str) -> Listed:
        outcome = self._outcome
        return Listed(number, title, anchor, outcome, _masked(whole, outcome) if outcome else "")

    def _number(self, kind: str, key: str) -> int:
        numbers = self._numbers[kind]
        return numbers.setdefault(key, len(numbers) + 1)

    def table_number(self, key: str) -> int:
        """The number of table `key`, given in the order tables are first asked for."""
        return self._number("table", key)

    def figure_number(self, key: str) -> int:
        """The number of figure `key`, given in the order figures are first asked for."""
        return self._number("figure", key)

    def within(self, outcome: str | None) -> str:
        """Enter the section of the outcome labelled `outcome` (None: leave it); what
        follows is listed under it. Returns "" so that a template may call it anywhere."""
        self._outcome = outcome
        return ""

    def table(self, key: str, title: str) -> int:
        """The caption of table `key` is being written: its number, the table listed under
        its title, and the notes that follow belong to it."""
        number = self.table_number(key)
        if all(entry.number != number for entry in self.tables):
            text = plain_text(title)
            self.tables.append(self._listed(number, text, text, f"table-{number}"))
        self._current = f"Table {number}"
        return number

    def figure(self, key: str, caption: Markup) -> Markup:
        """The caption of figure `key` (numbered before its text was written, which may
        number other tables): the figure listed under the caption's first clause, and the
        caption as the page shows it, without the sentences said before (`note`)."""
        number = self.figure_number(key)
        if all(entry.number != number for entry in self.figures):
            clause = first_clause(plain_text(caption), limit=None)
            self.figures.append(self._listed(number, first_clause(clause), clause,
                                             f"figure-{key}"))
        self._current = f"Figure {number}"
        return self.note(caption)

    def note(self, body: Markup) -> Markup:
        """A note of the current table or figure without the sentences (longer than
        `SHORTEST_THINNED` characters) said under an earlier one, and then a pointer to
        where they stand; as it is when it repeats nothing."""
        kept: list[str] = []
        sources: list[str] = []
        for sentence in (s for s in _SENTENCE_END.split(str(body).strip()) if s):
            key = sentence_key(sentence)
            if key in self._said and len(key) > SHORTEST_THINNED:
                sources.append(self._said[key])
                continue
            self._said.setdefault(key, self._current)
            kept.append(sentence)
        if not sources:
            return Markup(body)
        where = " and ".join(dict.fromkeys(sources))
        tail = f"Other notes as for {where}." if kept else f"As for {where}."
        return Markup(" ".join([*kept, tail]))
