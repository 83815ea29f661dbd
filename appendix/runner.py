"""Plan + dataset -> results: the analyses the plan fixed, and nothing else.

Pure: no file is read or written here. The caller passes the software versions in so
that this stage never looks at its environment.
"""

from __future__ import annotations

from appendix import conclude
from appendix.data.dataset import Dataset, OutcomeData
from appendix.plan.load import LoadedPlan
from appendix.plan.model import Outcome, Plan
from appendix.results import (
    Diagnostics,
    FactorInfo,
    LevelCount,
    OutcomeResult,
    Software,
    StudyInfo,
    StudyResults,
)
from appendix.stats.cells import cell_stats
from appendix.stats.cells import residuals as stats_residuals
from appendix.stats.descriptives import describe
from appendix.stats.diagnostics import bartlett, brown_forsythe, outlier_screen, shapiro_wilk
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
    normality = shapiro_wilk(residuals) if settings.normality == "shapiro-wilk" else None
    tests = []
    for method in settings.equal_variance:
        if method == "brown-forsythe":
            tests.append(brown_forsythe(data.values, data.codes, len(levels), levels))
        else:
            tests.append(bartlett(cells))
    outliers = outlier_screen(data.values, data.codes, cells, data.units, levels,
                              settings.outliers.threshold)
    return Diagnostics(normality=normality, equal_variance=tuple(tests), outliers=outliers,
                       assumptions=conclude.assumption_statuses(plan, normality, tests))


def analyse_outcome(plan: Plan, outcome: Outcome, data: OutcomeData,
                    missing: tuple[LevelCount, ...]) -> OutcomeResult:
    """Every registered one-way analysis of one outcome."""
    levels = plan.factor.levels
    k = len(levels)
    cells = cell_stats(data.values, data.codes, k, levels)
    missing_by_level = [count.n for count in missing]
    descriptives = describe(data.values, data.codes, levels, missing_by_level,
                            DESCRIPTIVE_CONFIDENCE)
    table = variance_table(cells, plan.alpha)
    welch = welch_anova(cells)
    kruskal = kruskal_wallis(data.values, data.codes, k, levels)
    effects = effect_sizes(table, effect_size_confidence(plan.alpha))
    diagnostics = _diagnostics(plan, data, cells, levels)
    sentence = conclude.conclusion(plan, outcome, table, effects)
    return OutcomeResult(
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
    )


def analyse(loaded: LoadedPlan, dataset: Dataset,
            software: tuple[Software, ...]) -> StudyResults:
    """All registered analyses of the study, primary outcomes first, in plan order."""
    plan = loaded.plan
    flows = {flow.outcome: flow for flow in dataset.unit_flow.outcomes}
    ordered = sorted(plan.outcomes, key=lambda o: o.role != "primary")
    outcomes = tuple(
        analyse_outcome(plan, outcome, dataset.outcome(outcome.name),
                        flows[outcome.name].missing)
        for outcome in ordered
    )
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
    )
