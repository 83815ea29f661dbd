"""Registered exclusion rules, applied in plan order, counted per rule and level."""

from __future__ import annotations

from collections.abc import Sequence

from appendix.data.flow import level_counts
from appendix.data.table import Table
from appendix.data.values import match_key
from appendix.plan.model import Exclusion
from appendix.results import ExclusionCount


def apply_exclusions(table: Table, rules: Sequence[Exclusion], codes: Sequence[int],
                     levels: Sequence[str]) -> tuple[tuple[bool, ...], tuple[ExclusionCount, ...]]:
    """Which rows stay eligible, and what each rule set aside.

    Rules apply in plan order and a unit is counted under the first rule that matches
    it only, so the counts add up to the units excluded. A cell matches when
    `appendix.data.values.match_key` gives the same key for it and for the rule's value
    (numbers by value, true/false in any case, other text exactly, spaces trimmed).
    """
    eligible = [True] * table.n_rows
    counts: list[ExclusionCount] = []
    for rule in rules:
        target = match_key(rule.equals)
        cells = table.column(rule.column)
        hit = [i for i, keep in enumerate(eligible) if keep and match_key(cells[i]) == target]
        for i in hit:
            eligible[i] = False
        by_level = level_counts((codes[i] for i in hit), levels)
        counts.append(ExclusionCount(rule=rule.id, column=rule.column, equals=rule.equals,
                                     reason=rule.reason, by_level=by_level, total=len(hit)))
    return tuple(eligible), tuple(counts)
