"""Registered exclusion rules, applied to units in plan order, counted per rule and cell."""

from __future__ import annotations

from collections.abc import Mapping, Sequence

from appendix.data.flow import level_counts
from appendix.data.table import Table
from appendix.data.values import match_key
from appendix.plan.model import Exclusion
from appendix.results import ExclusionCount


def _rule_hits(table: Table, rules: Sequence[Exclusion], rows_of: Mapping[str, Sequence[int]]):
    """(rule, units it sets aside) in plan order: a unit is set aside when any of its rows
    (`rows_of`: row indices per unit) matches, under the first rule that matches it only.
    A cell matches when `appendix.data.values.match_key` gives the same key for it and for
    the rule's value (numbers by value, true/false in any case, other text exactly,
    spaces trimmed)."""
    first_row = {unit: rows[0] for unit, rows in rows_of.items()}
    unit_of = {i: unit for unit, rows in rows_of.items() for i in rows} if rules else {}
    excluded: set[str] = set()
    for rule in rules:
        target = match_key(rule.equals)
        keys: dict[str | None, object] = {}  # each distinct cell text is keyed once
        matched = {unit_of[i] for i, cell in enumerate(table.column(rule.column))
                   if (keys[cell] if cell in keys else keys.setdefault(cell, match_key(cell))) == target}
        hit = sorted(matched - excluded, key=first_row.__getitem__)
        excluded.update(hit)
        yield rule, hit


def apply_exclusions(table: Table, rules: Sequence[Exclusion], rows_of: Mapping[str, Sequence[int]],
                     cell: Mapping[str, int], labels: Sequence[str]
                     ) -> tuple[dict[str, str], tuple[ExclusionCount, ...]]:
    """The rule that set each excluded unit aside, and what each rule set aside per cell
    (`cell`: each unit's index into `labels`), so the counts add up to the units excluded."""
    excluded_by: dict[str, str] = {}
    counts: list[ExclusionCount] = []
    for rule, hit in _rule_hits(table, rules, rows_of):
        excluded_by.update((unit, rule.id) for unit in hit)
        counts.append(ExclusionCount(rule=rule.id, column=rule.column, equals=rule.equals,
                                     reason=rule.reason, by_level=level_counts((cell[u] for u in hit), labels),
                                     total=len(hit)))
    return excluded_by, tuple(counts)


#: At most this many excluded unit identifiers are listed per rule by `appendix check`.
UNITS_LISTED = 10


def exclusion_lines(table: Table, rules: Sequence[Exclusion], unit: str) -> list[str]:
    """For `appendix check`: the units each rule excluded (first `UNITS_LISTED`, then
    ``and N more``), and a note for each rule that matched no cell while cells differing
    from its value only in letter case exist (a rule that silently excludes nothing)."""
    from appendix.plan.wording import capped, show

    lines: list[str] = []
    for rule, hit in _rule_hits(table, rules, table.rows_of(unit)):
        if hit:
            lines.append(f"units excluded by {rule.id}: {capped(hit, UNITS_LISTED)}")
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
