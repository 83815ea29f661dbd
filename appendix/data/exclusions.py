"""Registered exclusion rules, applied in plan order, counted per rule and level."""

from __future__ import annotations

from collections.abc import Sequence

from appendix.data.flow import level_counts
from appendix.data.table import Table
from appendix.data.values import match_key
from appendix.plan.model import Exclusion
from appendix.results import ExclusionCount


def _rule_hits(table: Table, rules: Sequence[Exclusion]):
    """(rule, rows it sets aside) in plan order, each row under the first rule that
    matches it only. A cell matches when `appendix.data.values.match_key` gives the same
    key for it and for the rule's value (numbers by value, true/false in any case, other
    text exactly, spaces trimmed)."""
    eligible = [True] * table.n_rows
    for rule in rules:
        target = match_key(rule.equals)
        cells = table.column(rule.column)
        hit = [i for i, keep in enumerate(eligible) if keep and match_key(cells[i]) == target]
        for i in hit:
            eligible[i] = False
        yield rule, hit


def apply_exclusions(table: Table, rules: Sequence[Exclusion], codes: Sequence[int],
                     levels: Sequence[str]) -> tuple[tuple[bool, ...], tuple[ExclusionCount, ...]]:
    """Which rows stay eligible, and what each rule set aside (`_rule_hits`), so the counts
    add up to the units excluded."""
    eligible = [True] * table.n_rows
    counts: list[ExclusionCount] = []
    for rule, hit in _rule_hits(table, rules):
        for i in hit:
            eligible[i] = False
        by_level = level_counts((codes[i] for i in hit), levels)
        counts.append(ExclusionCount(rule=rule.id, column=rule.column, equals=rule.equals,
                                     reason=rule.reason, by_level=by_level, total=len(hit)))
    return tuple(eligible), tuple(counts)


#: At most this many excluded unit identifiers are listed per rule by `appendix check`.
UNITS_LISTED = 10


def exclusion_lines(table: Table, rules: Sequence[Exclusion], unit: str) -> list[str]:
    """For `appendix check`: the units each rule excluded (first `UNITS_LISTED`, then
    ``and N more``), and a note for each rule that matched no cell while cells differing
    from its value only in letter case exist (a rule that silently excludes nothing)."""
    from appendix.plan.wording import capped, show

    units = table.column(unit)
    lines: list[str] = []
    for rule, hit in _rule_hits(table, rules):
        if hit:
            lines.append(f"units excluded by {rule.id}: "
                         f"{capped([str(units[i]) for i in hit], UNITS_LISTED)}")
            continue
        near = _near_matches(table.column(rule.column), rule.equals)
        if near:
            spelled = ", ".join(f"{show(text)} on {n} row{'s' if n != 1 else ''}"
                                for text, n in near.items())
            lines.append(f"exclusion rule {rule.id} ({rule.column} equals {show(rule.equals)}) "
                         f"matched no cell, but the column holds {spelled}, which differ only "
                         "in letter case or spaces; values match exactly, so these units are "
                         "not excluded")
    return lines


def _near_matches(cells: Sequence[str | None], value: str) -> dict[str, int]:
    wanted = value.strip().casefold()
    near: dict[str, int] = {}
    for cell in cells:
        if cell is not None and cell.strip().casefold() == wanted:
            near[cell] = near.get(cell, 0) + 1
    return near
