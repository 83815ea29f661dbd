"""Plan + dataset -> results: the analyses the plan fixed, and nothing else.

Pure: no file is read or written here. The caller passes the software versions in so
that this stage never looks at its environment.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass

from appendix import conclude, families
from appendix.data.dataset import Dataset, OutcomeData
from appendix.deviations import all_deviations, registration
from appendix.models import analyse_model_outcome
from appendix.plan.load import LoadedPlan
from appendix.plan.lock import Lock
from appendix.plan.model import Outcome, Plan
from appendix.results import (
    ContrastFamily,
    Descriptives,
    Deviation,
    Diagnostics,
    ExploratoryAnalysis,
    FactorInfo,
    LevelCount,
    OutcomeResult,
    Software,
    StatWarning,
    StudyInfo,
    StudyResults,
)
from appendix.stats.cells import cell_stats, cells_from_summary
from appendix.stats.cells import residuals as stats_residuals
from appendix.stats.descriptives import describe, mean_interval
from appendix.stats.diagnostics import (  # noqa: F401 - SHAPIRO_MAX_N is part of this module's API
    SHAPIRO_MAX_N, bartlett, brown_forsythe, outlier_screen, shapiro_wilk_large)
from appendix.stats.effect_sizes import effect_sizes
from appendix.stats.oneway import variance_table, welch_anova
from appendix.stats.rank import kruskal_wallis

DESCRIPTIVE_CONFIDENCE = 0.95


def effect_size_confidence(alpha: float) -> float:
    """1 - 2 alpha: the CI for a variance-explained effect that excludes zero exactly when
    the F test rejects at alpha (Steiger 2004, Psychological Methods 9:164-182)."""
    return round(1.0 - 2.0 * alpha, 10)


def _diagnostics(plan: Plan, data: OutcomeData, cells, levels) -> Diagnostics:
    settings = plan.assumptions
    residuals = stats_residuals(data.values, data.codes, cells)
    normality = shapiro_wilk_large(residuals) if settings.normality == "shapiro-wilk" else None
    tests = []
    for method in settings.equal_variance:
        if method == "brown-forsythe":
            tests.append(brown_forsythe(data.values, data.codes, len(levels), levels,
                                        decimals=data.decimals))
        else:
            tests.append(bartlett(cells))
    outliers = outlier_screen(data.values, data.codes, cells, data.units, levels,
                              settings.outliers.threshold)
    return Diagnostics(normality=normality, equal_variance=tuple(tests), outliers=outliers,
                       assumptions=conclude.assumption_statuses(plan, normality, tests))


def _full_data_moments(descriptives: Descriptives, cells, data: OutcomeData) -> Descriptives:
    """Descriptives of an out-of-core outcome: n, mean, SD, SE and CI from every unit;
    median and quartiles from the subsample; minimum and maximum not available."""
    groups = []
    for i, group in enumerate(descriptives.groups):
        n, mean = int(cells.n[i]), float(cells.mean[i])
        sd, se, low, high = mean_interval(n, mean, float(cells.ssd[i]),
                                          descriptives.confidence_level)
        groups.append(dataclasses.replace(
            group, n=n, mean=mean if n else None, sd=sd, se=se, ci_low=low, ci_high=high,
            minimum=None, maximum=None))
    note = StatWarning(
        "subsample-quantiles",
        f"Medians and quartiles come from a deterministic subsample of {data.values.size} "
        f"of the {data.sample_of} analysed units; minimum and maximum are not computed for "
        "a source aggregated out of core.")
    return dataclasses.replace(descriptives, groups=tuple(groups),
                               warnings=(*descriptives.warnings, note))


@dataclass(frozen=True)
class _OutcomeWork:
    """One outcome's results plus what is reported elsewhere (exploratory, deviations)."""

    result: OutcomeResult
    exploratory: dict[str, ContrastFamily]
    deviations: tuple[Deviation, ...]


def analyse_outcome(plan: Plan, outcome: Outcome, data: OutcomeData,
                    missing: tuple[LevelCount, ...]) -> _OutcomeWork:
    """Every registered one-way analysis of one outcome, its planned contrasts under the
    method in force (after any registered fallback), and its exploratory analyses."""
    levels = plan.factor.levels
    k = len(levels)
    missing_by_level = [count.n for count in missing]
    descriptives = describe(data.values, data.codes, levels, missing_by_level,
                            DESCRIPTIVE_CONFIDENCE)
    if data.summary is not None:
        # Out of core: moments from every unit, row-level statistics from the subsample.
        cells = cells_from_summary(data.summary, levels)
        descriptives = _full_data_moments(descriptives, cells, data)
    else:
        cells = cell_stats(data.values, data.codes, k, levels, decimals=data.decimals)
    table = variance_table(cells, plan.alpha)
    welch = welch_anova(cells)
    kruskal = kruskal_wallis(data.values, data.codes, k, levels)
    effects = effect_sizes(table, effect_size_confidence(plan.alpha))
    row_cells = cell_stats(data.values, data.codes, k, levels) if data.summary is not None \
        else cells
    diagnostics = _diagnostics(plan, data, row_cells, levels)
    selected, contingencies = families.select_method(plan, diagnostics)
    sentence = conclude.conclusion(plan, outcome, table, effects, method=selected,
                                   welch=welch, kruskal=kruskal)
    contrasts = families.registered_families(plan, outcome.name, selected, cells,
                                             data.values, data.codes)
    result = OutcomeResult(
        name=outcome.name,
        label=outcome.label,
        unit=outcome.unit,
        role=outcome.role,
        n_analysed=int(data.values.size),
        descriptives=descriptives,
        table=table,
        welch=welch,
        kruskal=kruskal,
        effect_sizes=effects,
        diagnostics=diagnostics,
        conclusion=sentence,
        selected_method=selected,
        arithmetic=cells.arithmetic,
        sample_of=data.sample_of,
        sample_size=int(data.values.size) if data.sample_of is not None else None,
        contrasts=contrasts,
        contingencies=contingencies,
    )
    return _OutcomeWork(
        result=result,
        exploratory=families.exploratory_families(plan, outcome.name, selected, cells,
                                                  data.values, data.codes),
        deviations=families.contingency_deviations(outcome.name, contingencies, selected),
    )


def _with_hypothesis_conclusions(plan: Plan, result: OutcomeResult) -> OutcomeResult:
    outcome = next(o for o in plan.outcomes if o.name == result.name)
    caveat = conclude.slopes_caveat(getattr(result, "slopes", ()), plan.alpha)
    sentences = tuple(
        conclude.with_caveat(conclude.hypothesis_conclusion(plan, outcome, h, family.multiplicity),
                             caveat if _between_units(plan, h) else "")
        for family in result.contrasts if family.registered for h in family.hypotheses)
    return dataclasses.replace(result, hypothesis_conclusions=sentences)


def _between_units(plan: Plan, h) -> bool:
    """Whether hypothesis `h` compares covariate-adjusted between-unit means (not a within
    factor's levels, whose contrasts are taken on the units' own scores)."""
    contrast = next((c for c in plan.contrasts if c.id == h.contrast), None)
    return not (plan.within is not None and contrast is not None
                and plan.factor_of(contrast).name == plan.within.name)


def _exploratory(plan: Plan, found: list[dict[str, ContrastFamily]]) -> tuple[ExploratoryAnalysis, ...]:
    """Each exploratory entry with its family from every outcome it applies to."""
    return tuple(
        ExploratoryAnalysis(id=entry.id, label=entry.label, reason=entry.reason,
                            families=tuple(f[entry.id] for f in found if entry.id in f))
        for entry in plan.exploratory)


def analyse(loaded: LoadedPlan, dataset: Dataset, software: tuple[Software, ...],
            lock: Lock | None = None) -> StudyResults:
    """All registered analyses of the study, primary outcomes first, in plan order, and
    every deviation from the registered plan (`lock`: its registration lock, if any)."""
    plan = loaded.plan
    flows = {flow.outcome: flow for flow in dataset.unit_flow.outcomes}
    ordered = sorted(plan.outcomes, key=lambda o: o.role != "primary")
    work, models, model_exploratory = [], (), []
    if plan.is_one_way:
        work = [analyse_outcome(plan, outcome, dataset.outcome(outcome.name),
                                flows[outcome.name].missing)
                for outcome in ordered]
    else:
        pairs = [analyse_model_outcome(plan, outcome, dataset.outcome(outcome.name),
                                       [c.n for c in flows[outcome.name].missing], dataset.levels)
                 for outcome in ordered]
        models = tuple(result for result, _ in pairs)
        model_exploratory = [found for _, found in pairs]
    outcomes = tuple(w.result for w in work)
    if plan.contrasts and plan.multiplicity.scope == "primary-family":
        outcomes = families.adjust_primary_family(plan, outcomes)
        models = families.adjust_primary_family(plan, models)
    outcomes = tuple(_with_hypothesis_conclusions(plan, o) for o in outcomes)
    models = tuple(_with_hypothesis_conclusions(plan, m) for m in models)
    exploratory = (_exploratory(plan, [w.exploratory for w in work]) if plan.is_one_way
                   else _exploratory(plan, model_exploratory))
    factor = plan.factor
    study = plan.study
    return StudyResults(
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
                                  [d for w in work for d in w.deviations]),
        multiplicity=plan.multiplicity.method if plan.contrasts else None,
        multiplicity_scope=plan.multiplicity.scope if plan.contrasts else None,
        factors=tuple(_factor_info(f) for f in plan.design.factors),
        models=models,
        registration=registration(lock),
    )


def _factor_info(factor) -> FactorInfo:
    return FactorInfo(name=factor.name, label=factor.label or factor.name, levels=factor.levels,
                      control=factor.control, ordered=factor.ordered, role=factor.role)
