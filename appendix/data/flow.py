"""Unit counts per level, and the findings they lead to."""

from __future__ import annotations

from collections import Counter
from collections.abc import Iterable, Sequence
from dataclasses import replace

import numpy as np

from appendix.plan.model import Plan, PlannedN
from appendix.plan.wording import show
from appendix.results import Finding, LevelCount, OutcomeFlow, UnitFlow


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


def with_shortfall(flow: UnitFlow, planned: PlannedN | None) -> UnitFlow:
    """The flow with each outcome's analysed units short of `planned` (the plan's
    ``data.planned_n``): per level against ``per_group`` (0 where it is met), and in all
    against ``total``, else the sum of the levels' shortfalls; unchanged without a plan.

    >>> flow = UnitFlow((), (), (), (OutcomeFlow("y", (), (LevelCount("a", 10), LevelCount("b", 13))),))
    >>> o = with_shortfall(flow, PlannedN(per_group=12)).outcomes[0]
    >>> [c.n for c in o.short], o.short_in_all
    ([2, 0], 2)
    """
    if planned is None:
        return flow
    outcomes = []
    for o in flow.outcomes:
        short = () if planned.per_group is None else tuple(
            LevelCount(c.level, max(planned.per_group - c.n, 0)) for c in o.analysed)
        if planned.total is not None:
            in_all = max(planned.total - sum(c.n for c in o.analysed), 0)
        else:
            in_all = sum(c.n for c in short)
        outcomes.append(replace(o, short=short, short_in_all=in_all))
    return replace(flow, outcomes=tuple(outcomes))


def _plural(n: int, word: str) -> str:
    return f"{n} {word}{'' if n == 1 else 's'}"


def analysed_words(counts: Sequence[tuple[str, int]]) -> str:
    """``10 units analysed`` when every outcome agrees, else each outcome's count.

    >>> analysed_words([("a", 10), ("b", 11)])
    'units analysed: 10 for a, 11 for b'
    """
    if len({n for _, n in counts}) == 1:
        return f"{_plural(counts[0][1], 'unit')} analysed"
    return "units analysed: " + ", ".join(f"{n} for {name}" for name, n in counts)


def labelled(plan: Plan, counts: Sequence[tuple[str, int]]) -> list[tuple[str, int]]:
    """Each outcome's count under the outcome's label, as a sentence names it."""
    labels = {o.name: o.label or o.name for o in plan.outcomes}
    return [(labels.get(name, name), n) for name, n in counts]


def analysed_in_all(flow: UnitFlow) -> list[tuple[str, int]]:
    """Each outcome's number of analysed units, over every level."""
    return [(o.outcome, sum(c.n for c in o.analysed)) for o in flow.outcomes]


def groups_below(flow: UnitFlow, required: int) -> list[tuple[str, list[tuple[str, int]]]]:
    """The levels (cells) with eligible units where some outcome has fewer than `required`
    analysed units, each with every outcome's analysed count: the one count that both
    the findings (against the planned number) and the deviations (against the registered
    minimum) compare. A level without eligible units is a finding of its own."""
    analysed = [(o.outcome, {c.level: c.n for c in o.analysed}) for o in flow.outcomes]
    found = []
    for count in flow.eligible:
        if count.n == 0 or not analysed:
            continue
        counts = [(name, by_level.get(count.level, 0)) for name, by_level in analysed]
        if min(n for _, n in counts) < required:
            found.append((count.level, counts))
    return found


def flow_findings(plan: Plan, flow: UnitFlow, grouping: str | None = None) -> tuple[Finding, ...]:
    """What the reader must see about plan versus data.

    The flow counts units per level of the treatment factor, or, given `grouping` (the
    crossed treatment factors in words), per cell of that crossing.

    ``level-without-units``: a plan level with no eligible unit. ``level-without-values``:
    an outcome with no analysed value at a level that does have eligible units (a level
    without units is reported once, not again per outcome). ``below-planned-n``: fewer
    analysed units, for some outcome, than ``data.planned_n`` states, in all (``total``)
    or at a level that has eligible units (``per_group``): the count the deviations
    compare with ``data.planned_n.minimum`` (`groups_below`).
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
    if planned_n is not None and planned_n.total is not None:
        counts = analysed_in_all(flow)
        if counts and min(n for _, n in counts) < planned_n.total:
            found.append(Finding("below-planned-n",
                                 f"In all: {analysed_words(labelled(plan, counts))}; {planned_n.total} planned."))
    if planned_n is not None and planned_n.per_group is not None:
        per = level if level == "cell" else "group"
        for group, counts in groups_below(flow, planned_n.per_group):
            found.append(Finding("below-planned-n",
                                 f"{level.capitalize()} {show(group)} of {factor}: "
                                 f"{analysed_words(labelled(plan, counts))}; "
                                 f"{planned_n.per_group} planned "
                                 f"per {per}."))
    for outcome in flow.outcomes:
        missing = {c.level: c.n for c in outcome.missing}
        for count in outcome.analysed:
            if count.n == 0 and count.level not in empty:
                found.append(Finding("level-without-values",
                                     f"Outcome {labelled(plan, [(outcome.outcome, 0)])[0][0]}: "
                                     f"no analysed values at {level} "
                                     f"{show(count.level)} ({missing[count.level]} eligible "
                                     "units, all missing)."))
    return tuple(found)
