"""Registered fallbacks and planned-contrast families, from plan and cell statistics.

Part of the results stage (pure, no I/O): the runner calls `select_method` once the
diagnostics are known, then `registered_families` and `exploratory_families` per
outcome, and `adjust_primary_family` once all outcomes are done when the plan's scope is
``primary-family``.
"""

from __future__ import annotations

import dataclasses

import numpy as np

from appendix.plan.model import Contrast, Plan
from appendix.results import (
    Contingency,
    ContrastFamily,
    Deviation,
    Diagnostics,
    OutcomeResult,
)
from appendix.stats.cells import CellStats
from appendix.stats.graphical import Graph
from appendix.stats.hypotheses import hypotheses_for
from appendix.stats.multiplicity import adjust_across, fixed_sequence, test_family

#: The joint law each single-step control uses on one factor's levels (see ContrastFamily).
ONE_FACTOR_LAWS = {"tukey": "studentized-range", "dunnett": "many-to-one"}


def _diagnostic_p(diagnostics: Diagnostics, test: str) -> float | None:
    if test == "shapiro-wilk":
        return diagnostics.normality.p if diagnostics.normality is not None else None
    for result in diagnostics.equal_variance:
        if result.method == test:
            return result.p
    return None


def select_method(plan: Plan, diagnostics: Diagnostics) -> tuple[str, tuple[Contingency, ...]]:
    """The analysis method in force and the record of every registered fallback rule.

    Rules are evaluated in plan order; a rule fires when its test's p is below its
    threshold, and the first that fires selects its method. A rule whose test could not
    be computed does not fire (and says so through p = None).
    """
    selected = plan.analysis.method
    applied = False
    records = []
    for index, rule in enumerate(plan.assumptions.fallbacks):
        p = _diagnostic_p(diagnostics, rule.test)
        fired = p is not None and p < rule.threshold
        records.append(Contingency(rule=f"assumptions.fallbacks[{index}]", when=rule.when,
                                   test=rule.test, p=p, threshold=rule.threshold,
                                   fired=fired, use=rule.use))
        if fired and not applied:
            selected, applied = rule.use, True
    return selected, tuple(records)


def mean_difference_weights(weights: dict[str, float] | None) -> dict[str, float] | None:
    """Custom weights rescaled so that the positive ones sum to 1 (and the negative ones
    to -1): the estimate is then a difference between two weighted means of levels, in
    the outcome's unit, whatever multiple the plan wrote (-3, 1, 1, 1 reads as
    "mean of the three coatings minus the control"). The hypothesis is unchanged.

    >>> mean_difference_weights({"a": -3, "b": 1, "c": 1, "d": 1})["b"]
    0.3333333333333333
    """
    if not weights:
        return weights
    positive = sum(w for w in weights.values() if w > 0)
    return {level: w / positive for level, w in weights.items()} if positive else weights


def _hypotheses(plan: Plan, contrasts: tuple[Contrast, ...]):
    factor = plan.factor
    hypotheses, alternatives = [], []
    for contrast in contrasts:
        expanded = hypotheses_for(
            contrast.kind, factor.levels, control=factor.control,
            weights=mean_difference_weights(contrast.weights),
            degree=contrast.trend_degree, spacing=contrast.spacing,
            contrast_id=contrast.id, label=contrast.label,
            factor_label=factor.label or factor.name)
        hypotheses += expanded
        alternatives += [contrast.alternative] * len(expanded)
    return tuple(hypotheses), tuple(alternatives)


def sequence_order(plan: Plan, hypotheses) -> tuple[str, ...] | None:
    """Hypothesis ids of one family in the registered fixed-sequence order, or None under
    any other method.

    The walk is the registered `order` restricted to the contrasts in the family: a
    contrast that `outcomes` limits to other outcomes is skipped, the others keep their
    registered places; each contrast's hypotheses follow in their natural order (simple
    effects of a `by` contrast level after level). Every path (one factor, designs beyond
    one factor, the primary family) walks this order.
    """
    if plan.multiplicity.method != "fixed-sequence" or not plan.multiplicity.order:
        return None
    rank = {cid: i for i, cid in enumerate(plan.multiplicity.order)}
    ordered = sorted(enumerate(hypotheses),
                     key=lambda item: (rank.get(item[1].contrast, len(rank)), item[0]))
    return tuple(h.id for _, h in ordered)


def registered_graph(plan: Plan) -> Graph | None:
    """The registered graph of a graphical plan (contrast ids as nodes), else None."""
    settings = plan.multiplicity
    if settings.method != "graphical":
        return None
    return Graph(weights=dict(settings.weights or {}),
                 transitions={source: dict(row) for source, row in (settings.transitions or {}).items()})


def _family(plan: Plan, outcome: str, contrasts, method: str, multiplicity: str, scope: str,
            registered: bool, cells: CellStats, values: np.ndarray,
            codes: np.ndarray) -> ContrastFamily | None:
    hypotheses, alternatives = _hypotheses(plan, contrasts)
    if not hypotheses:
        return None
    tested = test_family(hypotheses, alternatives, method=method, multiplicity=multiplicity,
                         cells=cells, values=values, codes=codes, alpha=plan.alpha,
                         order=sequence_order(plan, hypotheses) if scope != "exploratory" else None,
                         graph=registered_graph(plan) if scope != "exploratory" else None)
    return ContrastFamily(outcome=outcome, scope=scope, multiplicity=multiplicity,
                          method=method, alpha=plan.alpha, registered=registered,
                          hypotheses=tested, joint=ONE_FACTOR_LAWS.get(multiplicity))


def registered_families(plan: Plan, outcome: str, selected: str, cells: CellStats,
                        values: np.ndarray, codes: np.ndarray) -> tuple[ContrastFamily, ...]:
    """The registered family under the method in force and, when a fallback changed the
    method, the plan's own method's family for comparison."""
    contrasts = plan.contrasts_for(outcome)
    methods = [selected] + ([plan.analysis.method] if selected != plan.analysis.method else [])
    families = (
        _family(plan, outcome, contrasts, method, plan.multiplicity.method,
                plan.multiplicity.scope, method == selected, cells, values, codes)
        for method in methods
    )
    return tuple(f for f in families if f is not None)


def exploratory_families(plan: Plan, outcome: str, selected: str, cells: CellStats,
                         values: np.ndarray, codes: np.ndarray) -> dict[str, ContrastFamily]:
    """Each exploratory entry that applies to `outcome`, unadjusted and apart from the
    registered family, under the method in force for the outcome."""
    found = {}
    for entry in plan.exploratory_for(outcome):
        family = _family(plan, outcome, (entry,), selected, "none", "exploratory", False,
                         cells, values, codes)
        if family is not None:
            found[entry.id] = family
    return found


def adjust_primary_family(plan: Plan,
                          outcomes: tuple[OutcomeResult, ...]) -> tuple[OutcomeResult, ...]:
    """Re-adjust the registered hypotheses of all primary outcomes as one family.

    Each primary outcome's registered family is replaced by its share of the joint
    adjustment (for fixed-sequence: each outcome's registered order, outcome after
    outcome in plan order); secondary outcomes keep their per-outcome adjustment.
    """
    primary = [(i, f) for i, o in enumerate(outcomes) if o.role == "primary"
               for f in o.contrasts if f.registered]
    if not primary:
        return outcomes
    if plan.multiplicity.method == "fixed-sequence":
        adjusted = _joint_fixed_sequence(plan, [f.hypotheses for _, f in primary])
    else:
        adjusted = adjust_across([f.hypotheses for _, f in primary], plan.multiplicity.method,
                                 plan.alpha)
    replaced = list(outcomes)
    for (index, family), hypotheses in zip(primary, adjusted):
        new_family = dataclasses.replace(family, scope="primary-family", hypotheses=hypotheses)
        outcome = replaced[index]
        replaced[index] = dataclasses.replace(outcome, contrasts=tuple(
            new_family if f is family else f for f in outcome.contrasts))
    return tuple(replaced)


def _joint_fixed_sequence(plan: Plan, families) -> list[tuple]:
    """One fixed-sequence walk through several outcomes' hypotheses: each outcome's
    hypotheses in its registered order, outcome after outcome in plan order."""
    walk = []
    for n, hypotheses in enumerate(families):
        ids = sequence_order(plan, hypotheses) or tuple(h.id for h in hypotheses)
        position = {h.id: i for i, h in enumerate(hypotheses)}
        walk += [(n, position[hid]) for hid in ids]
    tested = fixed_sequence([families[n][i] for n, i in walk], plan.alpha)
    placed = [list(hypotheses) for hypotheses in families]
    for (n, i), result in zip(walk, tested):
        placed[n][i] = result
    return [tuple(hypotheses) for hypotheses in placed]


def contingency_deviations(outcome: str, records: tuple[Contingency, ...],
                           selected: str) -> tuple[Deviation, ...]:
    """A registered contingency applied is listed among the deviations (acknowledged by
    the plan itself, which registered the rule)."""
    for record in records:
        if record.fired:
            return (Deviation(
                kind="registered-contingency", subject=outcome,
                message=(f"{record.test} p = {record.p:.4g} is below the registered "
                         f"threshold {record.threshold:g}: the registered rule "
                         f"{record.rule} ({record.when}) selects the {selected} analysis "
                         f"for {outcome}."),
                acknowledged=True,
                justification="registered in the plan's fallback rules"),)
    return ()
