"""Reading the raw parsed study file for the cross-field checks, and wording repeats.

The checks see plain values before (or after) the model: anything of an unexpected shape
is skipped, since field validation reports it. Numbers count as their canonical text,
as the model reads level names.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence

from appendix.plan.scalars import scalar_text
from appendix.plan.wording import Loc, show

Found = tuple[Loc, str]


def mapping(value: object) -> Mapping:
    """`value` if it is a mapping, else an empty one."""
    return value if isinstance(value, Mapping) else {}


def items(value: object) -> list[tuple[int, Mapping]]:
    """The (index, item) pairs of a list whose items are mappings; others are skipped."""
    if not isinstance(value, (list, tuple)):
        return []
    return [(i, item) for i, item in enumerate(value) if isinstance(item, Mapping)]


def text(value: object) -> str | None:
    """Text, or a number as its canonical text; None for anything else."""
    if isinstance(value, str):
        return value
    if isinstance(value, (int, float)) and not isinstance(value, bool):
        return scalar_text(value)
    return None


def number(value: object) -> float | None:
    """A YAML number as float (booleans are not numbers); None for anything else."""
    if isinstance(value, (int, float)) and not isinstance(value, bool):
        return float(value)
    return None


def texts(value: object) -> list[str]:
    """The text items of a list (numbers as text), in order; other items are skipped."""
    if not isinstance(value, (list, tuple)):
        return []
    return [t for t in (text(item) for item in value) if t is not None]


def repeats(loc: Loc, values: Sequence[object], rule: str) -> list[Found]:
    """A problem at ``loc[j]`` for every text value already given earlier in the list.

    >>> repeats(("levels",), ["a", "b", "a"], "each level must be named once")
    [(('levels', 2), "got 'a' again; each level must be named once (first at levels[0])")]
    """
    found: list[Found] = []
    first: dict[str, int] = {}
    for j, value in enumerate(values):
        value = text(value)
        if value is None:
            continue
        if value in first:
            found.append(((*loc, j), f"got {show(value)} again; {rule} (first at {loc[-1]}[{first[value]}])"))
        else:
            first[value] = j
    return found


def unique(sections: Sequence[tuple[Loc, object]], key: str, what: str) -> list[Found]:
    """A problem for every item whose `key` repeats that of an earlier item, across sections."""
    found: list[Found] = []
    first: dict[str, str] = {}
    for loc, value in sections:
        for i, item in items(value):
            name = item.get(key)
            if not isinstance(name, str):
                continue
            if name in first:
                found.append(((*loc, i, key), f"got {show(name)} again; {what} must be unique "
                                              f"(first at {first[name]})"))
            else:
                first[name] = f"{loc[-1]}[{i}]"
    return found
