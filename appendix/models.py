"""Plan + dataset -> results of one outcome: the one analysis engine, for every design.

A one-factor study is the one-term case of the design engine: crossed treatment factors,
blocks and covariates are fitted by `appendix.stats.linear` from cell statistics, and
within-unit factors by `appendix.stats.split_plot` (the univariate approach with
sphericity corrections). Pure, like `appendix.runner`, which calls it with the plan as
each outcome sees it (`Plan.for_outcome`: its own covariates).

What is computed per outcome:
- between units: the variance table of the registered model (terms in `Plan.model_terms`
  order, the registered sums-of-squares type), with partial eta and omega squared and
  Cohen's f for every term; estimated marginal means of every treatment factor and
  registered interaction of treatment factors; the homogeneity-of-slopes check of every
  covariate; residual diagnostics (normality, equal variances, the outlier screen on the
  model's externally studentized residuals);
- with within factors: over the units complete on the whole within grid, one table per
  within stratum (each within factor, each listed interaction of within factors, with its
  listed interactions with between-unit terms), each with its Mauchly test and
  Greenhouse–Geisser and Huynh–Feldt corrections, and the means of every stratum's term;
- where they are defined (`Plan.robust_absent` is None: one treatment factor, nothing
  else): Welch's and the Kruskal–Wallis tests, the registered contingencies that may put
  one in force, and contrasts under every analysis the plan allows (Games–Howell, Welch
  t); elsewhere registered contrasts are taken on the marginal means (simple effects
  with `by`), under the registered multiplicity control.
"""

from __future__ import annotations

import itertools
import math
from dataclasses import dataclass, replace

import numpy as np

from appendix import families as one_factor
from appendix.data.dataset import OutcomeData
from appendix.families import provisional, shares_on
from appendix.plan.family_plan import SINGLE_STEP
from appendix.plan.model import Outcome, Plan
from appendix.results import (
    ContrastFamily,
    CovariateSlope,
    Descriptives,
    Deviation,
    Diagnostics,
    HypothesisResult,
    MarginalMean,
    MarginalMeans,
    ModelRow,
    ModelTable,
    OutcomeResult,
    RobustTests,
    SlopesCheck,
    StatWarning,
)
from appendix.stats.descriptives import describe, mean_interval
from appendix.stats.diagnostics import bartlett, brown_forsythe, shapiro_wilk_large, studentized_screen
from appendix.stats.hypotheses import hypotheses_for
from appendix.stats.multiplicity import apply_multiplicity
from appendix.stats.simultaneous import joint_results

DESCRIPTIVE_CONFIDENCE = 0.95

CROSS = " \u00d7 "


def _label(plan: Plan, names) -> str:
    return CROSS.join(plan.factor_named(n).label or n if _is_factor(plan, n) else _covariate_label(plan, n)
                      for n in names)


def _is_factor(plan: Plan, name: str) -> bool:
    return any(f.name == name for f in plan.design.factors)


def _covariate_label(plan: Plan, name: str) -> str:
    return next((c.label for c in plan.design.covariates if c.name == name), name)


def design_words(plan: Plan) -> str:
    """The design in words, e.g. 'two crossed treatment factors in blocks, covariate-adjusted,
    with repeated measures'."""
    count = len(plan.treatments)
    words = {0: "no treatment factor", 1: "one treatment factor", 2: "two crossed treatment factors",
             3: "three crossed treatment factors"}.get(count, f"{count} crossed treatment factors")
    parts = [words]
    if plan.blocks:
        parts.append("in blocks")
    if plan.design.covariates:
        parts.append("covariate-adjusted")
    if plan.within_factors:
        words = [f.label or f.name for f in plan.within_factors]
        parts.append("with repeated measures over " + ", ".join(words[:-1])
                     + (" and " if len(words) > 1 else "") + words[-1])
    return ", ".join(parts)


@dataclass(frozen=True)
class Residuals:
    """The fitted model's residuals of one outcome, for the residual figures (not written to
    results.json): per analysed unit (a unit's mean over the occasions in a split-plot
    design) its fitted value, residual and treatment cell (index into the run's cells).
    `of` says what a point is: ``units`` or ``unit means``."""

    outcome: str
    fitted: np.ndarray
    residuals: np.ndarray
    cells: np.ndarray
    of: str = "units"


def effect_size_confidence(alpha: float) -> float:
    """1 - 2 alpha: the CI for a variance-explained effect that excludes zero exactly when
    the F test rejects at alpha (Steiger 2004, Psychological Methods 9:164-182)."""
    return round(1.0 - 2.0 * alpha, 10)


def analyse_outcome(plan: Plan, outcome: Outcome, data: OutcomeData, missing_by_cell, cell_labels
                    ) -> tuple[OutcomeResult, dict[str, ContrastFamily], tuple[Deviation, ...], Residuals]:
    """Every registered analysis of one outcome; its exploratory families by id and the
    deviations it caused (a registered contingency applied), which the caller reports
    apart, and the model's residuals for the figures. Hypothesis sentences are added once
    any primary-family adjustment is done."""
    if plan.within_factors:
        return _repeated_outcome(plan, outcome, data, missing_by_cell, cell_labels)
    return _between_outcome(plan, outcome, data, missing_by_cell, cell_labels)


# --- between-unit designs ---------------------------------------------------------------


def _read_only(array: np.ndarray) -> np.ndarray:
    array = np.asarray(array, dtype=np.float64)
    array.flags.writeable = False
    return array


def _between_codes(plan: Plan, data: OutcomeData) -> list[np.ndarray]:
    index = {f.name: j for j, f in enumerate(plan.design.factors)}
    return [data.factors[index[f.name]] for f in plan.between]


def _crossed_cells(plan: Plan, data: OutcomeData, factors) -> np.ndarray:
    """Each row's cell of the crossed `factors` (first slowest)."""
    index = {f.name: j for j, f in enumerate(plan.design.factors)}
    cell = np.zeros(data.values.size, dtype=np.int64)
    for factor in factors:
        cell = cell * len(factor.levels) + data.factors[index[factor.name]]
    return cell


def _treatment_cells(plan: Plan, data: OutcomeData) -> np.ndarray:
    return _crossed_cells(plan, data, plan.treatments)


def _between_outcome(plan, outcome, data, missing_by_cell, cell_labels):
    from appendix.stats.cells import cell_stats, cells_from_summary
    from appendix.stats.design import Grid, design_cells, design_cells_from_stats
    from appendix.stats.linear import fit_linear, fitted_values, leverages

    grid = Grid(names=tuple(f.name for f in plan.between), levels=tuple(f.levels for f in plan.between))
    codes = _between_codes(plan, data)
    covariates = {c.name: data.covariates[j] for j, c in enumerate(plan.design.covariates)}
    ss_type = plan.ss_type
    treatment = _treatment_cells(plan, data)
    if data.summary is not None:
        # Out of core (one factor): every test on cell statistics uses all units; row-level
        # diagnostics use the subsample, fitted on its own.
        whole = cells_from_summary(data.summary, cell_labels)
        cells = design_cells_from_stats(grid, whole)
        fit = fit_linear(cells, plan.model_terms, ss_type, plan.alpha)
        rows_fit = fit_linear(design_cells(grid, codes, data.values), plan.model_terms, ss_type, plan.alpha)
    else:
        cells = design_cells(grid, codes, data.values, covariates or None, decimals=data.decimals)
        fit = rows_fit = fit_linear(cells, plan.model_terms, ss_type, plan.alpha)
    table = _model_table(plan, fit)
    slopes = _slopes_checks(plan, cells, fit) if covariates else ()
    means = _marginal(plan, fit)
    cell_codes = grid.cell_codes(codes)
    residuals = data.values - fitted_values(rows_fit, cell_codes, covariates or None)
    screen = (residuals, leverages(rows_fit, cell_codes, covariates or None), rows_fit)
    diagnostics = _diagnostics(plan, data.values, treatment, cell_labels, data.units, screen,
                               decimals=data.decimals)
    descriptives = describe(data.values, treatment, cell_labels, missing_by_cell, DESCRIPTIVE_CONFIDENCE)
    robust, selected, contingencies, deviations = None, "classical", (), ()
    if plan.robust_absent is None:  # one treatment factor, nothing else
        from appendix.stats.oneway import welch_anova
        from appendix.stats.rank import kruskal_wallis

        k = len(cell_labels)
        one = whole if data.summary is not None else cell_stats(data.values, treatment, k, cell_labels,
                                                               decimals=data.decimals)
        if data.summary is not None:
            descriptives = _full_data_moments(descriptives, one, data)
        table = one_factor_notes(table, one)
        robust = RobustTests(welch=welch_anova(one),
                             kruskal=kruskal_wallis(data.values, treatment, k, cell_labels))
        selected, contingencies = one_factor.select_method(plan, diagnostics)
        families = one_factor.registered_families(plan, outcome.name, selected, one, data.values, treatment)
        exploratory = one_factor.exploratory_families(plan, outcome.name, selected, one, data.values,
                                                      treatment)
        deviations = one_factor.contingency_deviations(outcome.name, contingencies, selected,
                                                        outcome.label)
    else:
        families, exploratory = _contrast_families(plan, outcome, fit=fit)
    n = data.sample_of if data.sample_of is not None else int(data.values.size)
    return OutcomeResult(
        name=outcome.name, label=outcome.label, unit=outcome.unit, role=outcome.role,
        design=design_words(plan), n_units=n, n_observations=n,
        arithmetic=cells.arithmetic,
        descriptives=descriptives, tables=(table,), marginal_means=means, slopes=slopes,
        diagnostics=diagnostics, robust=robust, robust_absent=plan.robust_absent, selected_method=selected,
        contingencies=contingencies, sample_of=data.sample_of,
        sample_size=int(data.values.size) if data.sample_of is not None else None,
        contrasts=families, covariate_slopes=_covariate_slopes(plan, fit),
        warnings=tuple(fit.warnings)), exploratory, deviations, Residuals(
            outcome.name, _read_only(data.values - residuals), _read_only(residuals), treatment)


_SAID_BY_THE_LAYOUT = ("term-partly-estimable", "term-not-estimable", "type3-empty-cells")
"""The engine's row notes on a one-factor term that an empty level's note says in the
design's words (with one factor, an empty level only leaves that level out of the test)."""


def one_factor_notes(table: ModelTable, cells) -> ModelTable:
    """A one-factor table (the one-term model's) with the one-way layout's own notes
    (`appendix.stats.oneway.partition`: empty levels, single-unit levels, a single group,
    no within-group df, identical values, zero within-group variance), which say in the
    design's words why a test is missing; they stand for the engine's notes on the table.
    The factor's row carries them when its F is undefined; otherwise it keeps the engine's
    own notes (an effect-size interval that cannot be computed) except those on empty
    cells, which the empty-level notes say. Where the layout sees variation that the engine
    finds zero up to rounding, the engine's notes say why the F is missing."""
    from appendix.stats.oneway import partition

    layout = partition(cells)
    notes = tuple(layout.warnings)
    row = table.rows[0]
    own = tuple(w for w in row.warnings if w.code not in _SAID_BY_THE_LAYOUT)
    if row.statistic is not None:
        table_notes, row_notes = notes, own
    elif layout.statistic is not None:
        table_notes, row_notes = (*notes, *table.warnings), own
    else:
        table_notes, row_notes = notes, notes
    return replace(table, warnings=table_notes, rows=(replace(row, warnings=row_notes),))


def _full_data_moments(descriptives: Descriptives, cells, data: OutcomeData) -> Descriptives:
    """Descriptives of an out-of-core outcome: n, mean, SD, SE and CI from every unit;
    median and quartiles from the subsample; minimum and maximum not available."""
    import dataclasses

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


def _model_table(plan: Plan, fit, scale: float = 1.0, stratum: str = "units") -> ModelTable:
    """The variance table of a fit, its terms labelled as the plan names them."""
    return model_table(fit, lambda term: _label(plan, term), scale, stratum, alpha=plan.alpha,
                       ss_type_stated=plan.design.sums_of_squares is not None)


def model_table(fit, label, scale: float = 1.0, stratum: str = "units", *, alpha: float,
                ss_type_stated: bool = True) -> ModelTable:
    """The variance table the appendix reports for a fit (`appendix.stats.linear.ModelFit`),
    each term labelled by `label(term)`; `scale` multiplies sums of squares and mean squares
    (m for a fit to the means of m repeated observations: the observation scale); each
    row's critical F is at `alpha`; `ss_type_stated` says whether the plan states the type."""
    def times(value):
        return None if value is None else value * scale

    rows = tuple(ModelRow(term=r.term, label=label(r.term), kind=r.kind, df=r.df,
                          sum_of_squares=times(r.ss), mean_square=times(r.ms), statistic=r.statistic, p=r.p,
                          **_effect_sizes(r), critical_f=_critical_f(alpha, r.df, fit.residual_df),
                          full_df=r.full_df, effect_ci_df=r.effect_ci_df, warnings=tuple(r.warnings))
                 for r in fit.terms)
    return ModelTable(ss_type=fit.ss_type, rows=rows, residual_df=fit.residual_df,
                      residual_ss=times(fit.residual_ss), residual_ms=times(fit.residual_ms),
                      total_df=fit.total_df, total_ss=times(fit.total_ss), r_squared=fit.r_squared,
                      estimability=fit.estimability,
                      empty_cells=tuple(CROSS.join(c) for c in fit.empty_cells),
                      ss_type_stated=ss_type_stated,
                      residual_sd=(math.sqrt(fit.residual_ms * scale) if fit.residual_ms is not None
                                   and fit.residual_ms >= 0 else None),
                      stratum=stratum, warnings=tuple(fit.warnings))


def _critical_f(alpha: float, df1: float, df2: float) -> float | None:
    """The upper-alpha quantile of F(df1, df2), the test's rejection bound."""
    from scipy import stats

    return float(stats.f.isf(alpha, df1, df2)) if df1 > 0 and df2 > 0 else None


def _effect_sizes(row) -> dict[str, float | None]:
    """A model row's effect-size fields from an engine row (`appendix.stats.linear.TermRow`
    or `appendix.stats.repeated.RepeatedRow`): partial eta and omega squared, which share
    one interval, and Cohen's f with that interval mapped to its scale."""
    low, high = row.partial_eta_ci or (None, None)
    omega_low, omega_high = row.partial_omega_ci or (None, None)
    return dict(partial_eta_squared=row.partial_eta_squared, partial_eta_ci_low=low,
                partial_eta_ci_high=high, partial_omega_squared=row.partial_omega_squared,
                partial_omega_ci_low=omega_low, partial_omega_ci_high=omega_high,
                confidence_level=row.confidence_level, cohens_f=_cohens_f(row.partial_eta_squared),
                cohens_f_ci_low=_cohens_f(low), cohens_f_ci_high=_cohens_f(high))


def _cohens_f(share: float | None) -> float | None:
    """Cohen's f = sqrt(eta^2 / (1 - eta^2)) of a (partial) eta squared (Cohen 1988,
    *Statistical Power Analysis*, 2nd ed., ch. 8); it maps the share's interval ends to
    sqrt(lambda / N), the noncentrality interval's own scale (Steiger 2004)."""
    if share is None:
        return None
    return math.sqrt(share / (1.0 - share)) if share < 1.0 else math.inf


def _slopes_checks(plan: Plan, cells, fit) -> tuple[SlopesCheck, ...]:
    """The homogeneity-of-slopes test of every covariate across the treatment cells; its
    error df is the model's residual df less the added interaction's df. A design without a
    treatment factor has no treatment cells whose slopes could differ: the check is not
    defined, and each covariate's entry says so."""
    from appendix.stats.linear import slopes_homogeneity

    by = tuple(f.name for f in plan.treatments)
    if not by:
        why = StatWarning("slopes-check-undefined",
                          "The design has no treatment factor, so there are no treatment cells "
                          "across which the covariate's slope could differ; the homogeneity-of-"
                          "slopes check is not defined and one common slope is fitted.")
        return tuple(SlopesCheck(covariate=c.label, by=(), df1=0.0, df2=fit.residual_df,
                                 statistic=None, p=None, warnings=(why,)) for c in plan.design.covariates)
    checks = []
    for covariate in plan.design.covariates:
        row = slopes_homogeneity(cells, plan.model_terms, covariate.name, by, plan.alpha)
        checks.append(SlopesCheck(covariate=covariate.label, by=tuple(plan.factor_named(n).label or n
                                                                      for n in by),
                                  df1=row.df, df2=fit.residual_df - row.df, statistic=row.statistic, p=row.p,
                                  warnings=tuple(row.warnings)))
    return tuple(checks)


def _covariate_slopes(plan: Plan, fit, confidence: float = 0.95) -> tuple[CovariateSlope, ...]:
    """Each covariate's common slope (its coefficient; covariates are centred) with a t
    interval on the residual df."""
    from appendix.stats.contrasts import critical_value, interval

    means = dict(fit.covariate_means)
    out = []
    for covariate in plan.design.covariates:
        j = next(k for k, t in enumerate(fit.column_terms)
                 if t == (covariate.name,) and fit.column_covariate[k] == covariate.name)
        estimate = float(fit.coefficients[j])
        variance = float(fit.covariance[j, j])
        se = math.sqrt(variance) if math.isfinite(variance) and variance >= 0 else None
        low = high = None
        if se is not None and fit.residual_df > 0:
            low, high = interval(estimate, se, critical_value(fit.residual_df, "two-sided", confidence),
                                 "two-sided")
        out.append(CovariateSlope(covariate=covariate.name, label=covariate.label, unit=covariate.unit,
                                  mean=float(means[covariate.name]), estimate=estimate, se=se,
                                  df=fit.residual_df, ci_low=low, ci_high=high,
                                  confidence_level=confidence))
    return tuple(out)


def _marginal(plan: Plan, fit, over: str | None = None) -> tuple[MarginalMeans, ...]:
    from appendix.stats.marginal import marginal_means

    groups = [(f.name,) for f in plan.treatments]
    treatment_names = {f.name for f in plan.treatments}
    groups += [tuple(i) for i in plan.design.interactions if set(i) <= treatment_names]
    out = []
    for factors in groups:
        means = marginal_means(fit, factors, 0.95)
        out.append(MarginalMeans(
            factors=factors, label=_label(plan, factors), confidence_level=0.95,
            means=tuple(MarginalMean(levels=m.levels, estimate=m.estimate, se=m.se, df=m.df,
                                     ci_low=m.ci_low, ci_high=m.ci_high, warnings=tuple(m.warnings))
                        for m in means),
            basis=("predicted cell means averaged with equal weights over the other factors' "
                   "levels" + (", covariates at their mean" if plan.design.covariates else "")
                   + (f", of each unit's mean over {over}" if over else "")
                   + "; CIs from Student's t on the residual degrees of freedom")))
    return tuple(out)


def _diagnostics(plan: Plan, values: np.ndarray, cells: np.ndarray, cell_labels, units, screen, *,
                 decimals: int | None = None, within_residuals: np.ndarray | None = None,
                 spread: bool = True) -> Diagnostics:
    """The registered checks of one outcome, for every design: Shapiro–Wilk of the
    residuals each registered test relies on (the model's, or in a split-plot design those
    of the unit means, between units, and of the within-units error); the registered
    equal-variance tests across the cells of the treatment factors, of the values with one
    factor and of the model's residuals beyond it (`spread`; not for repeated
    observations); the outlier screen on the model's externally studentized
    residuals (`screen`: residuals, leverages and the fit that gave them; a unit's mean
    over the occasions in a split-plot design)."""
    from appendix.stats.cells import cell_stats

    settings = plan.assumptions
    residuals, leverage, fit = screen
    normality = within = None
    if settings.normality == "shapiro-wilk":
        normality = shapiro_wilk_large(residuals)
        if within_residuals is not None:
            normality = replace(normality, residuals="unit-means")
            within = replace(shapiro_wilk_large(np.ravel(within_residuals)), residuals="within-units")
    tests = []
    k = len(cell_labels)
    # one factor: the values' spread by group; beyond it blocks and covariates shift the
    # values, so the spread is that of the model's residuals by cell
    spread_of = values if plan.robust_absent is None else residuals
    for method in settings.equal_variance if spread else ():
        if method == "brown-forsythe":
            tests.append(brown_forsythe(spread_of, cells, k, cell_labels,
                                        decimals=decimals if plan.robust_absent is None else None))
        else:
            tests.append(bartlett(cell_stats(spread_of, cells, k, cell_labels)))
    outliers = studentized_screen(values, residuals, leverage, fit.residual_ss, fit.residual_df, units,
                                  [str(cell_labels[c]) for c in cells], settings.outliers.threshold)
    return Diagnostics(normality=normality, equal_variance=tuple(tests), outliers=outliers,
                       within_normality=within)


# --- contrasts on marginal means --------------------------------------------------------


def _hypotheses(plan: Plan, contrast):
    """The contrast's factor and its hypotheses (custom weights rescaled as for one-way
    designs: the positive ones sum to 1)."""
    from appendix.families import mean_difference_weights

    factor = plan.factor_of(contrast)
    weights = mean_difference_weights(contrast.weights) if contrast.kind == "custom" else None
    return factor, hypotheses_for(contrast.kind, factor.levels, control=factor.control,
                                  weights=weights, degree=contrast.trend_degree,
                                  spacing=contrast.spacing, contrast_id=contrast.id,
                                  label=contrast.label, factor_label=factor.label or factor.name)


def _raw_result(h, contrast, estimate, by=None, level: str | None = None, factor=None) -> HypothesisResult:
    """A hypothesis result from a contrast estimate; a simple effect's id ends
    ``@level`` and its label names the level of `by` it is taken within."""
    hid = h.id if level is None else f"{h.id}@{level}"
    label = h.label if level is None else f"{h.label} within {by.label or by.name} {level}"
    return HypothesisResult(
        id=hid, contrast=contrast.id, kind=contrast.kind, label=label, weights=h.weights,
        alternative=contrast.alternative, method="marginal-means", estimate=estimate.estimate,
        se=estimate.se, statistic=estimate.statistic, statistic_name="t", df=estimate.df, p=estimate.p,
        p_adjusted=None, ci_low=estimate.ci_low, ci_high=estimate.ci_high,
        confidence_level=estimate.confidence_level, ci_simultaneous=False, standardized=None,
        decision="unavailable" if estimate.p is None else "retain",
        warnings=tuple(estimate.warnings), scale=h.scale, within=level,
        factor=factor.name if factor is not None else None)


def _members(plan: Plan, contrasts):
    """(contrast, factor, hypothesis, by, level) of every hypothesis of `contrasts`, simple
    effects expanded over the `by` levels, in the order the family lists them."""
    for contrast in contrasts:
        factor, hypotheses = _hypotheses(plan, contrast)
        by = plan.factor_named(contrast.by) if contrast.by else None
        for h in hypotheses:
            for level in [None] if by is None else list(by.levels):
                yield contrast, factor, h, by, level


def _raw_results(plan: Plan, contrasts, fit, complete, occasion_fit=None) -> list[HypothesisResult]:
    """Every hypothesis of `contrasts` (simple effects expanded over the `by` levels),
    estimated and tested unadjusted."""
    confidence = 1.0 - plan.alpha
    return [_raw_result(h, contrast, _estimate(plan, contrast, factor, h.weights, by, level, fit,
                                               complete, confidence, occasion_fit), by, level, factor)
            for contrast, factor, h, by, level in _members(plan, contrasts)]


def _contrast_families(plan: Plan, outcome: Outcome, *, fit=None, complete=None, occasion_fit=None,
                       occasion_residuals=None):
    """The share on one outcome of each registered family with members there (a
    single-step share adjusted in full, every other share unadjusted until
    `appendix.families.test_families` adjusts the whole family), and the outcome's
    exploratory families by id (unadjusted).

    Contrasts of between-unit factors are taken on the model's marginal means (`fit`);
    contrasts of the within factor on the complete units' own contrast scores
    (`appendix.stats.repeated.within_contrast`, which needs no sphericity), a simple
    effect within one treatment level on that level's units only. Tukey and Dunnett
    adjust over the whole family, every slice of a simple effect included, from the joint
    multivariate t of its estimates (`_family_correlation`)."""
    exploratory = {}
    for entry in plan.exploratory_for(outcome.name):
        tested = apply_multiplicity(_raw_results(plan, (entry,), fit, complete, occasion_fit), "none",
                                    plan.alpha)
        exploratory[entry.id] = ContrastFamily(
            outcome=outcome.name, scope="exploratory", multiplicity="none", method="marginal-means",
            alpha=plan.alpha, registered=False, hypotheses=tuple(tested))
    families = []
    for registered, contrasts in shares_on(plan, outcome.name):
        raw = _raw_results(plan, contrasts, fit, complete, occasion_fit)
        method = registered.method
        joint = error = None
        if method in SINGLE_STEP:
            corr, approximate = _family_correlation(plan, list(_members(plan, contrasts)), fit, complete,
                                                    occasion_residuals)
            tested, error = joint_results(raw, corr, plan.alpha, approximate)
            joint = "multivariate-t" if approximate is None else "multivariate-t-approximate"
        else:  # adjusted over the whole family, across outcomes, by families.test_families
            tested = apply_multiplicity(raw, provisional(method), plan.alpha)
        families.append(ContrastFamily(
            outcome=outcome.name, scope=registered.scope, multiplicity=method,
            method="marginal-means", alpha=plan.alpha, registered=True, hypotheses=tuple(tested),
            joint=joint, joint_error=error, by=_slicing_label(plan, contrasts), family=registered.id))
    return tuple(families), exploratory


def _slicing_label(plan: Plan, contrasts) -> str | None:
    """The label of the factor that slices every contrast of a family, if one does."""
    names = {c.by for c in contrasts}
    if len(names) != 1 or None in names:
        return None
    factor = plan.factor_named(names.pop())
    return factor.label or factor.name


def _family_correlation(plan: Plan, members, fit, complete, occasion_residuals):
    """The correlation matrix of a family's estimates, and a warning when the joint law
    built on it is approximate (None when it is exact).

    - Contrasts on the model's marginal means, simple effects within levels of another
      between-unit factor included: Cov = L V L' from the coefficients' covariance V, one
      variance estimate for all (exact).
    - Between-unit contrasts at each level of a within factor (one fit per occasion,
      same design): Cov_ij = (l_i G l_j) Sigma_ij with G = (X'X)^- and Sigma_ij the
      cross-product of the two occasions' residuals (`occasion_residuals()`: one column per
      cell of the within grid, combined by each occasion's weights u: R u); each occasion
      has its own error variance.
    - Contrasts of a within factor on the units' scores: Cov_ij = v_i' C v_j / n with v the
      contrasts' weights over the within grid and C the cross-products of the units'
      values pooled within the treatment cells, over the units both use: every complete
      unit, or those at one level of a treatment factor `by` (different levels use
      different units, so their covariance is 0); each contrast has its own variance
      estimate.
    """
    from appendix.stats.marginal import contrast_row

    factor, by = members[0][1], members[0][3]
    m = len(members)
    occasions = by is not None and plan.is_within(by.name)
    if not plan.is_within(factor.name):
        rows = np.array([contrast_row(fit, f.name, h.weights,
                                      None if level is None or occasions else {b.name: level})
                         for _, f, h, b, level in members])
        if occasions:
            residuals = np.asarray(occasion_residuals())
            weights = np.column_stack([_occasion_weights(plan, b, level) for *_, b, level in members])
            combined = residuals @ weights
            design = rows @ fit.inverse @ rows.T
            covariance = design * (combined.T @ combined)
            words = _factors_words(plan, {b.name for *_, b, _ in members})
            why = StatWarning("joint-law-approximate",
                              f"The comparisons at each level of {words} come from separate fits, "
                              "each with its own error variance; their joint law is taken as the "
                              "multivariate t with the correlations of the occasions' residuals, "
                              "an approximation.")
        else:
            covariance, why = rows @ fit.covariance @ rows.T, None
    else:
        covariance = np.zeros((m, m))
        keys = [_slice_key(plan, b, level) for *_, b, level in members]
        vectors = [_within_weights(plan, f, h.weights, b, level) for _, f, h, b, level in members]
        slices = {key: _units_at(plan, complete, *key) if key else complete for key in keys}
        for i in range(m):
            for j in range(m):
                units = slices[keys[i]]
                if keys[i] == keys[j] and units.y.shape[0]:  # a slice without units has no covariance
                    covariance[i, j] = (vectors[i] @ _pooled_cross(units) @ vectors[j]) / units.y.shape[0]
        split = [b for *_, b, level in members if b is not None and not plan.is_within(b.name)]
        why = None if m < 2 else StatWarning(
            "joint-law-approximate",
            "Each within-unit comparison has its own variance estimate from the units' scores; "
            "their joint law is taken as the multivariate t with the correlations of the pooled "
            "scores" + (f" (independent between levels of {split[0].label or split[0].name}, which "
                        "have different units)" if split else "") + ", an approximation.")
    scale = np.sqrt(np.clip(np.diag(covariance), 0.0, None))
    with np.errstate(divide="ignore", invalid="ignore"):
        corr = covariance / np.outer(scale, scale)
    corr = np.where(np.isfinite(corr), corr, 0.0)
    np.fill_diagonal(corr, 1.0)
    return corr, why


def _factors_words(plan: Plan, names) -> str:
    """The factors called `names`, in plan order, in prose: ``Visit``, ``Phase or Hour``."""
    words = [f.label or f.name for f in plan.design.factors if f.name in names]
    return ", ".join(words[:-1]) + (" or " if len(words) > 1 else "") + words[-1]


def _slice_key(plan: Plan, by, level):
    """Which units a within-unit comparison uses: None for every complete unit (no `by`,
    or `by` a within factor), else (`by`, `level`) for the units at that treatment level."""
    return None if by is None or plan.is_within(by.name) else (by, level)


def _pooled_cross(units) -> np.ndarray:
    """Cross-products of the units' values about their treatment cell's means."""
    y = np.asarray(units.y, dtype=np.float64)
    groups = np.zeros(y.shape[0], np.int64) if units.groups is None else np.asarray(units.groups)
    centred = y.copy()
    for g in np.unique(groups):
        chosen = groups == g
        centred[chosen] -= y[chosen].mean(axis=0)
    return centred.T @ centred


def _grid_weights(plan: Plan, given) -> np.ndarray:
    """Weights over the within grid (first within factor slowest): the Kronecker product
    over the within factors of `given[name]`, or of equal weights 1/m (the mean over the
    factor's m levels) for a factor not given."""
    vector = np.ones(1)
    for f in plan.within_factors:
        part = given.get(f.name)
        vector = np.kron(vector, np.full(len(f.levels), 1.0 / len(f.levels)) if part is None
                         else np.asarray(part, dtype=np.float64))
    return vector


def _at_level(factor, level: str) -> np.ndarray:
    return (np.asarray(factor.levels) == level).astype(np.float64)


def _occasion_weights(plan: Plan, by, level: str) -> np.ndarray:
    """The grid weights of one occasion: level `level` of the within factor `by`, averaged
    over the other within factors."""
    return _grid_weights(plan, {by.name: _at_level(by, level)})


def _within_weights(plan: Plan, factor, weights, by, level) -> np.ndarray:
    """The grid weights of a contrast of the within factor `factor`: its level weights,
    averaged over the other within factors, or, with `by` a within factor, taken at
    `level` of `by` (a simple effect on the same units)."""
    given = {factor.name: weights}
    if by is not None and level is not None and plan.is_within(by.name):
        given[by.name] = _at_level(by, level)
    return _grid_weights(plan, given)


def _estimate(plan: Plan, contrast, factor, weights, by, level, fit, complete, confidence,
              occasion_fit=None):
    """One contrast estimate.

    - A between-unit factor: on the model's marginal means, within one level of `by`
      when given; `by` a within factor: on the model fitted to that occasion's values
      alone (`occasion_fit(by, level)`: each unit's mean over the other within factors).
    - A within factor: on the complete units' contrast scores (no sphericity needed),
      averaged over the other within factors, their variance pooled within the treatment
      cells; `by` a treatment factor: on the units at that level only; `by` another
      within factor: on every unit's scores at that level of it.
    """
    from appendix.stats.marginal import marginal_contrast
    from appendix.stats.repeated import within_contrast

    if not plan.is_within(factor.name):
        if level is not None and plan.is_within(by.name):
            return marginal_contrast(occasion_fit(by, level), factor.name, weights,
                                     alternative=contrast.alternative, confidence=confidence)
        at = None if level is None else {by.name: level}
        return marginal_contrast(fit, factor.name, weights, at=at, alternative=contrast.alternative,
                                 confidence=confidence)
    key = _slice_key(plan, by, level)
    units = complete if key is None else _units_at(plan, complete, *key)
    return within_contrast(units, _within_weights(plan, factor, weights, by, level),
                           alternative=contrast.alternative, confidence=confidence)


def _units_at(plan: Plan, complete, by, level):
    """The complete units whose treatment cell has `level` of the treatment factor `by`,
    their cells recoded from 0."""
    from appendix.stats.repeated import CompleteUnits

    position = [f.name for f in plan.treatments].index(by.name)
    sizes = [len(f.levels) for f in plan.treatments]
    step = int(np.prod(sizes[position + 1:], dtype=np.int64))
    chosen = (complete.groups // step) % sizes[position] == by.levels.index(level)
    _, recoded = np.unique(complete.groups[chosen], return_inverse=True)
    return CompleteUnits(y=complete.y[chosen], units=tuple(np.asarray(complete.units)[chosen]),
                         groups=recoded.astype(np.int64), dropped=())


# --- repeated measures ------------------------------------------------------------------


def _stratum_name(plan: Plan, term: tuple[str, ...]) -> str:
    """``within units`` for the one stratum of a single within factor, else
    ``units × Phase × Hour``: the error stratum a term of those within factors is tested in."""
    return "within units" if len(plan.within_strata) == 1 else f"units{CROSS}{_label(plan, term)}"


def _repeated_outcome(plan, outcome, data, missing_by_cell, cell_labels):
    """The split-plot analysis (`appendix.stats.split_plot`) over complete units, each
    within term in its own error stratum."""
    from appendix.stats.design import Grid
    from appendix.stats.linear import fitted_values
    from appendix.stats.repeated import complete_units
    from appendix.stats.split_plot import split_plot, strata_of

    within = plan.within_factors
    grid_cells = plan.within_cells
    index = {f.name: j for j, f in enumerate(plan.design.factors)}
    m = len(grid_cells)
    occasion_codes = _crossed_cells(plan, data, plan.within_factors)  # `Plan.within_cells`
    complete = complete_units(list(data.units), occasion_codes, data.values, m,
                              _treatment_cells(plan, data), level_names=grid_cells)
    first = {}
    for row, unit in enumerate(data.units):
        first.setdefault(unit, row)
    rows_of_units = np.array([first[u] for u in complete.units], dtype=np.int64)
    if plan.between:
        grid = Grid(names=tuple(f.name for f in plan.between), levels=tuple(f.levels for f in plan.between))
        codes = [data.factors[index[f.name]][rows_of_units] for f in plan.between]
    else:  # repeated measures alone: one between-unit cell, under an internal name that
        # is in no model term, so nothing the fit reports (warnings, notes) mentions it
        grid, codes = Grid(names=("all",), levels=(tuple(cell_labels),)), [np.zeros(rows_of_units.size, np.int64)]
    covariates = {c.name: data.covariates[j][rows_of_units] for j, c in enumerate(plan.design.covariates)}
    strata = strata_of([(f.name, len(f.levels)) for f in within],
                       {term: _interacting(plan, term) for term in plan.within_strata})
    fit = split_plot(grid, codes, complete.y, covariates or None, plan.model_terms, strata,
                     plan.ss_type, plan.alpha)
    between = _model_table(plan, fit.between, scale=m, stratum="between units")
    within_tables = tuple(_stratum_table(plan, stratum, fit.between.ss_type, fit.n_units,
                                         between.ss_type_stated) for stratum in fit.strata)
    cells = _treatment_cells(plan, data)
    descriptives = describe(data.values, cells * m + occasion_codes,
                            tuple(f"{c}{CROSS}{w}" for c in cell_labels for w in grid_cells),
                            [0] * (len(cell_labels) * m), 0.95)
    unit_means = complete.y.mean(axis=1)
    slopes = ()
    if covariates:
        from appendix.stats.design import design_cells

        slopes = _slopes_checks(plan, design_cells(grid, codes, unit_means, covariates), fit.between)
    from appendix.stats.linear import leverages

    cell_codes = grid.cell_codes(codes)
    residuals = unit_means - fitted_values(fit.between, cell_codes, covariates or None)
    screen = (residuals, leverages(fit.between, cell_codes, covariates or None), fit.between)
    diagnostics = _diagnostics(plan, unit_means, complete.groups, cell_labels, complete.units, screen,
                               within_residuals=fit.within_residuals, spread=False)

    def fit_to(y):
        """The between-unit model fitted to one value per complete unit."""
        from appendix.stats.design import design_cells
        from appendix.stats.linear import fit_linear

        return fit_linear(design_cells(grid, codes, y, covariates or None), plan.model_terms,
                          plan.ss_type, plan.alpha)

    def occasion_fit(by, level: str):
        """The between-unit model fitted to one occasion's values: level `level` of the
        within factor `by`, each unit's mean over the other within factors."""
        return fit_to(complete.y @ _occasion_weights(plan, by, level))

    def occasion_residuals():
        """The between-unit model's residuals at each cell of the within grid."""
        return np.column_stack([complete.y[:, j] - fitted_values(fit_to(complete.y[:, j]), cell_codes,
                                                                 covariates or None)
                                for j in range(m)])

    families, exploratory = _contrast_families(plan, outcome, fit=fit.between, complete=complete,
                                               occasion_fit=occasion_fit,
                                               occasion_residuals=occasion_residuals)
    notes = tuple(fit.warnings)
    if complete.dropped:
        grid_words = (f"level of {within[0].label or within[0].name}" if len(within) == 1
                      else f"cell of {_label(plan, [f.name for f in within])}")
        notes += (StatWarning("units-dropped", f"{len(complete.dropped)} units without a value at every "
                              f"{grid_words} were left out."),)
    over = (within[0].label or within[0].name if len(within) == 1
            else f"the cells of {_label(plan, [f.name for f in within])}")
    return OutcomeResult(
        name=outcome.name, label=outcome.label, unit=outcome.unit, role=outcome.role,
        design=design_words(plan), n_units=fit.n_units, n_observations=int(complete.y.size),
        arithmetic="float64", descriptives=descriptives, tables=(between, *within_tables),
        marginal_means=(_marginal(plan, fit.between, over=over)
                        + _occasion_means(plan, complete, cell_labels)),
        slopes=slopes, diagnostics=diagnostics,
        robust_absent=plan.robust_absent, contrasts=families,
        covariate_slopes=_covariate_slopes(plan, fit.between), warnings=notes), exploratory, (), Residuals(
            outcome.name, _read_only(unit_means - residuals), _read_only(residuals), complete.groups,
            of="unit means")


def _stratum_table(plan: Plan, stratum, ss_type: int, n_units: int, stated: bool) -> ModelTable:
    """The variance table of one within stratum: its tested terms, its error as the
    residual, its sphericity."""
    rows = tuple(_repeated_row(plan, r) for r in stratum.rows)
    error = rows[-1]
    return ModelTable(
        ss_type=ss_type, rows=rows[:-1], residual_df=error.df,
        residual_ss=error.sum_of_squares, residual_ms=error.mean_square,
        total_df=sum(r.df for r in rows), total_ss=sum(r.sum_of_squares or 0.0 for r in rows),
        r_squared=None, estimability=("Within units every listed effect is estimable from the "
                                      f"{n_units} complete units."),
        stratum=_stratum_name(plan, stratum.term), ss_type_stated=stated,
        within=stratum.term, sphericity=stratum.sphericity)


def _occasion_means(plan: Plan, complete, cell_labels) -> tuple[MarginalMeans, ...]:
    """Means of each within term of within factors alone (every within factor, each listed
    interaction of within factors) over the complete units, each unit's mean over the
    other within factors, and per cell of the treatment factors; each mean's interval
    uses its own spread across units (`appendix.stats.repeated.within_means`), not a
    within-units error term."""
    out = []
    for term in plan.within_strata:
        out += _term_means(plan, complete, cell_labels, term)
    return tuple(out)


def _term_means(plan: Plan, complete, cell_labels, term) -> list[MarginalMeans]:
    from appendix.stats.repeated import CompleteUnits, within_means

    factors = [plan.factor_named(n) for n in term]
    alone = len(plan.within_factors) == 1
    # each unit's mean at every cell of `term`, over the other within factors
    average = np.column_stack([_grid_weights(plan, {f.name: _at_level(f, level)
                                                    for f, level in zip(factors, levels)})
                               for levels in itertools.product(*(f.levels for f in factors))])
    reduced = complete if alone else CompleteUnits(y=complete.y @ average, units=complete.units,
                                                   groups=complete.groups, dropped=())
    names = list(itertools.product(*(f.levels for f in factors)))
    where = "level" if len(term) == 1 else "combination of levels"
    over = ("" if len(term) == len(plan.within_factors)
            else ", each unit's mean over the other within factors")
    basis = (f"the mean of the complete units at each {where}{over}, with an interval from their "
             f"spread {'at that level' if len(term) == 1 else 'there'} (pooled within the treatment cells; Student's t on the units' "
             "degrees of freedom)")

    def group(means, prefix=()):
        return tuple(MarginalMean(levels=(*prefix, *names[m.level]), estimate=m.mean, se=m.se,
                                  df=m.df, ci_low=m.ci_low, ci_high=m.ci_high,
                                  warnings=tuple(m.warnings)) for m in means.means)

    overall = within_means(reduced, 0.95)
    out = [MarginalMeans(factors=tuple(term), label=_label(plan, term),
                         confidence_level=overall.confidence_level, means=group(overall), basis=basis)]
    if plan.treatments:
        rows = tuple(m for g, label in enumerate(cell_labels)
                     for m in group(within_means(reduced, 0.95, group=g), (label,)))
        names_all = tuple(f.name for f in plan.treatments) + tuple(term)
        out.append(MarginalMeans(factors=names_all, label=_label(plan, names_all),
                                 confidence_level=overall.confidence_level, means=rows,
                                 basis=f"the mean of each cell's complete units at each {where}{over}, "
                                       "with an interval from that cell's own units (Student's t on "
                                       "their degrees of freedom)"))
    return out


def _interacting(plan: Plan, stratum: tuple[str, ...]) -> tuple[tuple[str, ...], ...]:
    """The between terms T whose T x `stratum` the plan lists, lower order first."""
    order = [f.name for f in plan.between]
    terms = {tuple(sorted((n for n in t if not plan.is_within(n)), key=order.index))
             for t in plan.stratum_terms(stratum)[1:]}
    return tuple(sorted(terms, key=lambda t: (len(t), [order.index(n) for n in t])))


def _repeated_row(plan: Plan, row) -> ModelRow:
    label = _label(plan, [n for n in row.term if n != "units"]) if row.kind != "error" else row.label
    return ModelRow(term=row.term, label=label, kind=row.kind, df=row.df, sum_of_squares=row.ss,
                    mean_square=row.ms, statistic=row.statistic, p=row.p, **_effect_sizes(row),
                    gg_df=row.gg_df, gg_p=row.gg_p, hf_df=row.hf_df, hf_p=row.hf_p,
                    effect_ci_df=row.effect_ci_df, warnings=tuple(row.warnings))
