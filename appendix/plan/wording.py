"""Small helpers that word messages the same way everywhere: values, lists, suggestions."""

from __future__ import annotations

import difflib
from collections.abc import Iterable, Sequence

Loc = tuple[str | int, ...]


def key_path(loc: Loc) -> str:
    """A location as the user writes it: ``('contrasts', 2, 'weights')`` -> ``contrasts[2].weights``."""
    text = ""
    for part in loc:
        if isinstance(part, int):
            text += f"[{part}]"
        else:
            text += f".{part}" if text else str(part)
    return text


def show(value: object) -> str:
    """A received value as the message repeats it: text quoted, YAML spelling for the rest."""
    if value is None:
        return "null (empty)"
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, str):
        return repr(value)
    if isinstance(value, (int, float)):
        return repr(value)
    if isinstance(value, dict):
        return "a mapping"
    if isinstance(value, (list, tuple)):
        return f"a list of {len(value)} item{'s' if len(value) != 1 else ''}"
    return type(value).__name__


def one_of(words: Iterable[object], joiner: str = "or") -> str:
    """``'a', 'b' or 'c'`` from the allowed values."""
    items = [show(w) for w in words]
    if len(items) <= 1:
        return "".join(items)
    return f"{', '.join(items[:-1])} {joiner} {items[-1]}"


def did_you_mean(word: object, choices: Sequence[str]) -> str:
    """``"; did you mean 'levels'?"`` for a near miss (difflib ratio >= 0.6), else ``""``.

    Case is ignored when ranking so that ``ARM`` suggests ``arm``.
    """
    if not isinstance(word, str) or not choices:
        return ""
    folded = {c.casefold(): c for c in choices}
    close = difflib.get_close_matches(word.casefold(), list(folded), n=1, cutoff=0.6)
    return f"; did you mean {show(folded[close[0]])}?" if close else ""


def capped(items: Sequence[str], limit: int = 20) -> str:
    """Items joined by ', ', at most `limit` of them, then ``and N more``."""
    shown = ", ".join(items[:limit])
    rest = len(items) - limit
    return f"{shown} and {rest} more" if rest > 0 else shown


def more_of_kind(count: int, kind: str, first_line: int | None) -> str:
    """The line that ends a capped list of problems of one kind:
    ``... and 12 more cells that are not numbers (first on line 41)``."""
    where = f" (first on line {first_line})" if first_line is not None else ""
    return f"... and {count} more {kind}{where}"
