"""Registered fallbacks and planned-contrast families, from plan and cell statistics.

Part of the results stage (pure, no I/O): the runner calls `select_method` once the
diagnostics are known, then `registered_families` and `exploratory_families` per
outcome, and `test_families` once all outcomes are done.

Each registered family (`Plan.families`, one model for every form of the plan's
multiplicity) has a share on each outcome it has members on. The outcome engine computes
every share's hypotheses; a single-step share (Tukey, Dunnett: one outcome) is final
there, every other share is a provisional, unadjusted one that `test_families` replaces
by its part of the family's adjustment over all its members, across outcomes, and of
the serial gatekeeping sequence.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Mapping

import numpy as np

from appendix import numbers
from appendix.methods import ANALYSIS_NAMES, FALLBACK_CONDITIONS, TEST_NAMES, interval_note
from appendix.plan.family_plan import SINGLE_STEP, FamilyPlan, Node, gate_order
from appendix.plan.model import Contrast, Plan
from appendix.results import (
    Contingency,
    ContrastFamily,
    Deviation,
    Diagnostics,
    FamilyEdge,
    FamilyGate,
    FamilyMember,
    HypothesisRef,
    HypothesisResult,
    OutcomeResult,
    RegisteredFamily,
)
from appendix.stats.cells import CellStats
from appendix.stats.graphical import Graph
from appendix.stats.hypotheses import hypotheses_for
from appendix.stats.multiplicity import (
    apply_multiplicity,
    behind_gate,
    fixed_sequence,
    graphical,
    not_tested,
    test_family,
)

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


def provisional(method: str) -> str:
    """The control an outcome engine applies to a share of a family under `method`: the
    single-step ones in full (their family is the outcome's), every other none (the
    family's adjustment over all its members is `test_families`')."""
    return method if method in SINGLE_STEP else "none"


def shares_on(plan: Plan, outcome: str) -> list[tuple[FamilyPlan, tuple[Contrast, ...]]]:
    """Each registered family with members on `outcome` and its contrasts there, in plan
    order."""
    found = []
    for family in plan.families:
        ids = family.on(outcome)
        if ids:
            found.append((family, tuple(c for c in plan.contrasts if c.id in ids)))
    return found


def _family(plan: Plan, outcome: str, contrasts, method: str, family: FamilyPlan | None,
            registered: bool, cells: CellStats, values: np.ndarray,
            codes: np.ndarray) -> ContrastFamily | None:
    hypotheses, alternatives = _hypotheses(plan, contrasts)
    if not hypotheses:
        return None
    multiplicity = "none" if family is None else family.method
    tested = test_family(hypotheses, alternatives, method=method, multiplicity=provisional(multiplicity),
                         cells=cells, values=values, codes=codes, alpha=plan.alpha)
    return ContrastFamily(outcome=outcome, scope="exploratory" if family is None else family.scope,
                          multiplicity=multiplicity, method=method, alpha=plan.alpha,
                          registered=registered, hypotheses=tested,
                          joint=ONE_FACTOR_LAWS.get(multiplicity),
                          family=None if family is None else family.id)


def registered_families(plan: Plan, outcome: str, selected: str, cells: CellStats,
                        values: np.ndarray, codes: np.ndarray) -> tuple[ContrastFamily, ...]:
    """Each registered family's share on `outcome` under the method in force and, when a
    fallback changed the method, under the plan's own method for comparison."""
    methods = [selected] + ([plan.analysis.method] if selected != plan.analysis.method else [])
    families = (
        _family(plan, outcome, contrasts, method, family, method == selected, cells, values, codes)
        for family, contrasts in shares_on(plan, outcome)
        for method in methods
    )
    return tuple(f for f in families if f is not None)


def exploratory_families(plan: Plan, outcome: str, selected: str, cells: CellStats,
                         values: np.ndarray, codes: np.ndarray) -> dict[str, ContrastFamily]:
    """Each exploratory entry that applies to `outcome`, unadjusted and apart from the
    registered family, under the method in force for the outcome."""
    found = {}
    for entry in plan.exploratory_for(outcome):
        family = _family(plan, outcome, (entry,), selected, None, False, cells, values, codes)
        if family is not None:
            found[entry.id] = family
    return found


# --- the families as registered, across outcomes ------------------------------------------


Shares = dict[str, tuple[HypothesisResult, ...]]


def adjust_family(family: FamilyPlan, shares: Shares, alpha: float) -> Shares:
    """Every share of `family` under its method, over all its members together.

    Single-step shares are final from the outcome engine. Otherwise the hypotheses are
    pooled outcome after outcome (the family's listing order) and adjusted as one family:
    fixed-sequence walks the registered node order (a node's hypotheses in their natural
    order), graphical tests one node per hypothesis, each named as the plan names it.
    """
    if family.method in SINGLE_STEP:
        return dict(shares)
    outcomes = [o for o in family.outcomes if o in shares]
    flat = [(o, i, r) for o in outcomes for i, r in enumerate(shares[o])]
    results = [r for _, _, r in flat]
    if family.method == "graphical":
        names = [family.node_name(Node(r.contrast, o)) for o, _, r in flat]
        graph = Graph(weights={family.node_name(n): w for n, w in (family.weights or {}).items()},
                      transitions={family.node_name(s): {family.node_name(t): v for t, v in row.items()}
                                   for s, row in (family.transitions or {}).items()})
        tested = list(graphical(results, graph, alpha, nodes=names))
    elif family.method == "fixed-sequence":
        walk = [k for node in family.order or () for k, (o, _, r) in enumerate(flat)
                if o == node.outcome and r.contrast == node.contrast]
        walk += [k for k in range(len(flat)) if k not in walk]  # none, by the plan checks
        tested = [None] * len(flat)
        for k, r in zip(walk, fixed_sequence([results[k] for k in walk], alpha)):
            tested[k] = r
    else:
        tested = list(apply_multiplicity(results, family.method, alpha))
    out: Shares = {o: () for o in outcomes}
    for (o, _, _), r in zip(flat, tested):
        out[o] += (r,)
    return out


def gate_before(family: FamilyPlan, before: RegisteredFamily | None,
                shares: Shares) -> FamilyGate | None:
    """The serial gate before `family`: open when every hypothesis of the family before it
    in the sequence (`before`, tested as `shares`) was rejected and that family was tested
    itself."""
    if family.gate is None or before is None:
        return None
    not_rejected = tuple(HypothesisRef(o, h.id) for o, hs in shares.items() for h in hs
                         if h.decision != "reject")
    is_open = before.tested and not not_rejected and before.hypotheses > 0
    # the family's largest adjusted p already holds the level of its own gate
    return FamilyGate(after=family.gate, status="open" if is_open else "closed",
                      p=before.p, not_rejected=not_rejected, after_tested=before.tested)


def through_gate(shares: Shares, gate: FamilyGate | None, alpha: float) -> Shares:
    """The shares after their gate: not tested behind a closed one, and each adjusted p at
    least the gate's level behind an open one."""
    if gate is None:
        return shares
    if gate.status == "closed":
        return {o: tuple(not_tested(r, alpha) for r in hs) for o, hs in shares.items()}
    level = gate.p if gate.p is not None else 0.0
    return {o: tuple(behind_gate(r, level, alpha) for r in hs) for o, hs in shares.items()}


def _record(family: FamilyPlan, shares: Shares, gate: FamilyGate | None, alpha: float) -> RegisteredFamily:
    hypotheses = [h for hs in shares.values() for h in hs]
    tested = gate is None or gate.status == "open"
    available = sum(h.p is not None for h in hypotheses)
    kind, note = interval_note(family.method, available, tested)
    ids = {(o, c): tuple(h.id for h in hs if h.contrast == c) for o, hs in shares.items()
           for c in {h.contrast for h in hs}}
    adjusted = [h.p_adjusted for h in hypotheses]
    return RegisteredFamily(
        id=family.id, label=family.label, method=family.method, scope=family.scope, alpha=alpha,
        members=tuple(FamilyMember(node=family.node_name(n), contrast=n.contrast, outcome=n.outcome,
                                   hypotheses=ids.get((n.outcome, n.contrast), ()),
                                   weight=(family.weights or {}).get(n, 0.0)
                                   if family.method == "graphical" else None)
                      for n in family.members),
        tested=tested, hypotheses=len(hypotheses),
        rejected=sum(h.decision == "reject" for h in hypotheses), intervals=kind, interval_note=note,
        order=tuple(family.node_name(n) for n in family.order or ()),
        transitions=tuple(FamilyEdge(family.node_name(s), family.node_name(t), v)
                          for s, row in (family.transitions or {}).items() for t, v in row.items()),
        gate=gate,
        p=max(adjusted) if tested and adjusted and None not in adjusted else None)


def run_families(families: tuple[FamilyPlan, ...], shares: Mapping[str, Shares], alpha: float
                 ) -> tuple[dict[str, Shares], dict[str, RegisteredFamily]]:
    """Each family of `families` tested on its shares (`shares[family id][outcome]`: the
    hypotheses of its members there), the gatekeeping sequence first: the tested shares
    and the record of each family, by id."""
    tested: dict[str, Shares] = {}
    records: dict[str, RegisteredFamily] = {}
    for family in gate_order(families):
        gate = gate_before(family, records.get(family.gate), tested.get(family.gate, {}))
        tested[family.id] = through_gate(adjust_family(family, shares.get(family.id, {}), alpha),
                                         gate, alpha)
        records[family.id] = _record(family, tested[family.id], gate, alpha)
    return tested, records


def test_families(plan: Plan, outcomes: tuple[OutcomeResult, ...]
                  ) -> tuple[tuple[OutcomeResult, ...], tuple[RegisteredFamily, ...]]:
    """Every registered family tested over all its members, in the serial gatekeeping order.

    Each family's registered shares (the analyses in force) are adjusted together; a
    comparison share (an outcome's analysis under the plan's own method, when a fallback
    changed it) is adjusted with the other outcomes' shares in force, so it shows what
    the family would have given had that outcome kept the plan's method. Behind a gate
    (`FamilyGate`) a family is tested only when every hypothesis of the family before it
    in the sequence was rejected (serial gatekeeping: Maurer, Hothorn & Lehmacher 1995;
    Westfall & Krishen 2001; Dmitrienko & Tamhane 2007); otherwise its hypotheses are not
    tested. The outcomes come back with their shares replaced, and one record per family.
    """
    found: dict[tuple[str, str, bool], ContrastFamily] = {
        (f.family, o.name, f.registered): f for o in outcomes for f in o.contrasts
        if f.family is not None}
    registered = {family.id: {o: found[(family.id, o, True)].hypotheses for o in family.outcomes
                              if (family.id, o, True) in found} for family in plan.families}
    tested, records = run_families(plan.families, registered, plan.alpha)
    replaced: dict[tuple[str, str, bool], tuple[HypothesisResult, ...]] = {}
    for family in plan.families:
        for o, hypotheses in tested[family.id].items():
            replaced[(family.id, o, True)] = hypotheses
            comparison = found.get((family.id, o, False))
            if comparison is not None:
                swapped = {**registered[family.id], o: comparison.hypotheses}
                replaced[(family.id, o, False)] = through_gate(
                    adjust_family(family, swapped, plan.alpha), records[family.id].gate, plan.alpha)[o]
    out = tuple(dataclasses.replace(o, contrasts=tuple(
        dataclasses.replace(f, hypotheses=replaced[key]) if (key := (f.family, o.name, f.registered))
        in replaced else f for f in o.contrasts)) for o in outcomes)
    return out, tuple(records[f.id] for f in plan.families)


test_families.__test__ = False  # a library function whose name pytest would otherwise collect


def contingency_deviations(outcome: str, records: tuple[Contingency, ...],
                           selected: str, label: str | None = None) -> tuple[Deviation, ...]:
    """A pre-specified fallback rule applied is listed among the deviations (acknowledged by
    the plan itself, which registered the rule), in words: the test by its name, p in the
    appendix's number style, the outcome by its `label`."""
    for record in records:
        if record.fired:
            return (Deviation(
                kind="registered-contingency", subject=outcome,
                message=(f"{TEST_NAMES.get(record.test, record.test)} "
                         f"{numbers.p_clause(record.p)} is below the pre-specified threshold "
                         f"{numbers.no_leading_zero(f'{record.threshold:g}')}: the fallback rule "
                         f"for {FALLBACK_CONDITIONS.get(record.when, record.when)} selects the "
                         f"{ANALYSIS_NAMES.get(selected, selected)} analysis for "
                         f"{label or outcome}."),
                acknowledged=True,
                justification="pre-specified in the plan's fallback rules"),)
    return ()
