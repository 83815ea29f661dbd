"""Baseline values by group: each covariate's n, mean and SD per level of the treatment
factor, over the units analysed for the outcomes it adjusts (what a reader checks for
balance at baseline; CONSORT 2025 item on baseline data). Pure computation on the
dataset: no I/O, no formatting.
"""

from __future__ import annotations

import numpy as np

from appendix.data.dataset import Dataset, OutcomeData
from appendix.plan.model import Plan
from appendix.results import BaselineGroup, BaselineSummary


def baseline_summaries(plan: Plan, dataset: Dataset) -> tuple[BaselineSummary, ...]:
    """One summary per covariate and distinct set of analysed units: the outcomes it
    adjusts (primary first, then plan order) share a summary when their analysed units
    are the same. A unit measured on several occasions counts once (its first row).

    Mean and SD (divisor n - 1) per level of ``plan.factor``, computed two-pass by numpy;
    the SD is None below two units, the mean None without units.
    """
    levels = plan.factor.levels
    ordered = sorted(plan.outcomes, key=lambda o: o.role != "primary")
    found: list[BaselineSummary] = []
    for covariate in plan.design.covariates:
        seen: dict[frozenset, int] = {}
        for outcome in ordered:
            own = plan.covariates_for(outcome.name)
            if covariate not in own:
                continue
            data = dataset.outcome(outcome.name)
            units, codes, values = _per_unit(data, data.covariates[own.index(covariate)])
            key = frozenset(units)
            if key in seen:
                i = seen[key]
                found[i] = BaselineSummary(found[i].covariate, found[i].label, found[i].unit,
                                           (*found[i].outcomes, outcome.name), found[i].groups)
                continue
            seen[key] = len(found)
            found.append(BaselineSummary(
                covariate=covariate.name, label=covariate.label or covariate.name,
                unit=covariate.unit, outcomes=(outcome.name,),
                groups=tuple(_group(level, values[codes == j]) for j, level in enumerate(levels))))
    return tuple(found)


def _per_unit(data: OutcomeData, covariate: np.ndarray) -> tuple[list[str], np.ndarray, np.ndarray]:
    """Each unit's first row: its id, level code and covariate value."""
    first: dict[str, int] = {}
    for i, unit in enumerate(data.units):
        first.setdefault(unit, i)
    rows = np.fromiter(first.values(), dtype=np.int64, count=len(first))
    return list(first), np.asarray(data.codes)[rows], np.asarray(covariate, dtype=np.float64)[rows]


def _group(level: str, x: np.ndarray) -> BaselineGroup:
    n = int(x.size)
    mean = float(np.mean(x)) if n else None
    sd = float(np.std(x, ddof=1)) if n > 1 else None
    return BaselineGroup(level=level, n=n, mean=mean, sd=sd)
