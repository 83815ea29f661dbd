"""Unit counts per level, and the findings they lead to."""

from __future__ import annotations

from collections import Counter
from collections.abc import Iterable, Sequence

import numpy as np

from appendix.plan.model import Plan
from appendix.plan.wording import show
from appendix.results import Finding, LevelCount, UnitFlow


def level_counts(codes: Iterable[int], levels: Sequence[str]) -> tuple[LevelCount, ...]:
    """How many of `codes` fall at each level, every level listed in plan order."""
    counter = Counter(codes)
    return tuple(LevelCount(level=level, n=counter.get(i, 0)) for i, level in enumerate(levels))


def count_levels(codes: np.ndarray, levels: Sequence[str]) -> tuple[LevelCount, ...]:
    """`level_counts` of an array of codes, counted in one pass.

    >>> count_levels(np.array([0, 2, 2]), ["a", "b", "c"])[2]
    LevelCount(level='c', n=2)
    """
    counts = np.bincount(codes, minlength=len(levels)) if codes.size else np.zeros(len(levels), int)
    return tuple(LevelCount(level=level, n=int(counts[i])) for i, level in enumerate(levels))


def flow_findings(plan: Plan, flow: UnitFlow, grouping: str | None = None) -> tuple[Finding, ...]:
    """What the reader must see about plan versus data.

    The flow counts units per level of the treatment factor, or, given `grouping` (the
    crossed treatment factors in words), per cell of that crossing.

    ``level-without-units``: a plan level with no eligible unit. ``level-without-values``:
    an outcome with no analysed value at a level that does have eligible units (a level
    without units is reported once, not again per outcome). ``below-planned-n``: fewer
    eligible units (after exclusions, before missing values) than ``data.planned_n``
    states, in all (``total``) or at a level that has units (``per_group``).
    """
    factor = grouping or plan.factor.label or plan.factor.name
    level = "cell" if grouping else "level"
    found: list[Finding] = []
    read = {c.level: c.n for c in flow.read}
    empty = set()
    for count in flow.eligible:
        if count.n == 0:
            empty.add(count.level)
            n_read = read[count.level]
            why = "none in the data" if n_read == 0 else f"all {n_read} excluded"
            found.append(Finding("level-without-units",
                                 f"No eligible units at {level} {show(count.level)} of {factor} "
                                 f"({why})."))
    planned_n = plan.data.planned_n
    planned = planned_n.per_group if planned_n else None
    total = sum(c.n for c in flow.eligible)
    if planned_n and planned_n.total is not None and total < planned_n.total:
        found.append(Finding("below-planned-n",
                             f"{total} eligible units in all, {planned_n.total} planned."))
    if planned is not None:
        for count in flow.eligible:
            if 0 < count.n < planned:
                found.append(Finding("below-planned-n",
                                     f"{level.capitalize()} {show(count.level)} of {factor}: {count.n} eligible "
                                     f"unit{'s' if count.n != 1 else ''}, {planned} planned."))
    for outcome in flow.outcomes:
        missing = {c.level: c.n for c in outcome.missing}
        for count in outcome.analysed:
            if count.n == 0 and count.level not in empty:
                found.append(Finding("level-without-values",
                                     f"Outcome {outcome.outcome}: no analysed values at {level} "
                                     f"{show(count.level)} ({missing[count.level]} eligible "
                                     "units, all missing)."))
    return tuple(found)
