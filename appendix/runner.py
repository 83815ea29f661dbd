"""Plan + dataset -> results: the analyses the plan fixed, and nothing else.

Pure: no file is read or written here. The caller passes the software versions in so
that this stage never looks at its environment.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass

from appendix import conclude, families
from appendix.baselines import baseline_summaries
from appendix.data.dataset import Dataset
from appendix.deviations import all_deviations, registration
from appendix.models import Residuals, analyse_outcome
from appendix.plan.load import LoadedPlan
from appendix.plan.lock import Lock
from appendix.plan.model import Plan
from appendix.results import (
    ContrastFamily,
    ExploratoryAnalysis,
    FactorInfo,
    OutcomeResult,
    PlannedNumbers,
    RegisteredFamily,
    Software,
    StudyInfo,
    StudyResults,
)


def _with_conclusions(plan: Plan, result: OutcomeResult,
                      tested: tuple[RegisteredFamily, ...]) -> OutcomeResult:
    """The outcome's results worded: the status of each assumption, one sentence per
    tested term and one per registered hypothesis (under its family's record)."""
    plan = plan.for_outcome(result.name)
    outcome = next(o for o in plan.outcomes if o.name == result.name)
    caveat = conclude.slopes_caveat(result.slopes, plan.alpha)
    records = {r.id: r for r in tested}
    sentences = tuple(
        conclude.with_caveat(conclude.hypothesis_conclusion(plan, outcome, h, family.multiplicity,
                                                            records.get(family.family)),
                             caveat if _between_units(plan, h) else "")
        for family in result.contrasts if family.registered for h in family.hypotheses)
    found = result.diagnostics
    statuses = conclude.assumption_statuses(plan, found.normality, found.equal_variance,
                                            within=found.within_normality, qq_plot=True,
                                            welch_shown=result.robust is not None)
    return dataclasses.replace(result, diagnostics=dataclasses.replace(found, assumptions=statuses),
                               conclusions=conclude.term_conclusions(plan, outcome, result),
                               hypothesis_conclusions=sentences)


def _between_units(plan: Plan, h) -> bool:
    """Whether hypothesis `h` compares covariate-adjusted between-unit means (not a within
    factor's levels, whose contrasts are taken on the units' own scores)."""
    contrast = next((c for c in plan.contrasts if c.id == h.contrast), None)
    return not (contrast is not None and plan.is_within(plan.factor_of(contrast).name))


def _exploratory(plan: Plan, found: list[dict[str, ContrastFamily]]) -> tuple[ExploratoryAnalysis, ...]:
    """Each exploratory entry with its family from every outcome it applies to."""
    return tuple(
        ExploratoryAnalysis(id=entry.id, label=entry.label, reason=entry.reason,
                            families=tuple(f[entry.id] for f in found if entry.id in f))
        for entry in plan.exploratory)


@dataclass(frozen=True)
class Analysis:
    """The results of a run and, for the figures only, each outcome's model residuals."""

    results: StudyResults
    residuals: dict[str, Residuals]


def analyse(loaded: LoadedPlan, dataset: Dataset, software: tuple[Software, ...],
            lock: Lock | None = None) -> StudyResults:
    """All registered analyses of the study (`study_analysis` without the residuals)."""
    return study_analysis(loaded, dataset, software, lock).results


def study_analysis(loaded: LoadedPlan, dataset: Dataset, software: tuple[Software, ...],
                   lock: Lock | None = None) -> Analysis:
    """All registered analyses of the study, primary outcomes first, in plan order, and
    every deviation from the registered plan (`lock`: its registration lock, if any)."""
    plan = loaded.plan
    flows = {flow.outcome: flow for flow in dataset.unit_flow.outcomes}
    ordered = sorted(plan.outcomes, key=lambda o: o.role != "primary")
    work = [analyse_outcome(plan.for_outcome(outcome.name), outcome, dataset.outcome(outcome.name),
                            [c.n for c in flows[outcome.name].missing], dataset.levels)
            for outcome in ordered]
    outcomes, tested = families.test_families(plan, tuple(result for result, _, _, _ in work))
    outcomes = tuple(_with_conclusions(plan, o, tested) for o in outcomes)
    exploratory = _exploratory(plan, [found for _, found, _, _ in work])
    factor = plan.factor
    study = plan.study
    declared = "declared" if plan.multiplicity.families is not None else None
    results = StudyResults(
        study=StudyInfo(
            id=study.id,
            title=study.title,
            registered=study.registered.isoformat() if study.registered else None,
            population=study.population,
        ),
        plan_sha256=loaded.sha256,
        alpha=plan.alpha,
        factor=FactorInfo(
            name=factor.name,
            label=factor.label or factor.name,
            levels=factor.levels,
            control=factor.control,
            ordered=factor.ordered,
        ),
        inputs=dataset.inputs,
        unit_flow=dataset.unit_flow,
        outcomes=outcomes,
        findings=dataset.findings,
        software=software,
        exploratory=exploratory,
        deviations=all_deviations(plan, plan.model_dump(mode="json"), lock, dataset.unit_flow,
                                  [d for _, _, caused, _ in work for d in caused]),
        multiplicity=(plan.multiplicity.method if plan.contrasts and declared is None else None),
        multiplicity_scope=(None if not plan.contrasts else declared or plan.multiplicity.scope),
        factors=tuple(_factor_info(f) for f in plan.design.factors),
        registration=registration(lock),
        plan_settings=loaded.settings,
        families=tested,
        planned_n=(None if plan.data.planned_n is None else PlannedNumbers(
            plan.data.planned_n.per_group, plan.data.planned_n.total,
            plan.data.planned_n.minimum, plan.data.planned_n.minimum_total)),
        baselines=baseline_summaries(plan, dataset),
    )
    return Analysis(results, {r.outcome: r for _, _, _, r in work})


def _factor_info(factor) -> FactorInfo:
    return FactorInfo(name=factor.name, label=factor.label or factor.name, levels=factor.levels,
                      control=factor.control, ordered=factor.ordered, role=factor.role)
