"""Plan + dataset -> results for designs beyond one factor: crossed treatment factors,
blocks, covariates (fitted by `appendix.stats.linear` from cell statistics) and a
within-unit factor (`appendix.stats.repeated`, the univariate approach with sphericity
corrections). Pure, like `appendix.runner`, which calls it.

What is computed per outcome:
- between units: the variance table of the registered model (terms in `Plan.model_terms`
  order, the registered sums-of-squares type), estimated marginal means of every
  treatment factor and registered interaction of treatment factors, the
  homogeneity-of-slopes check of every covariate, residual diagnostics;
- with a within factor: the repeated-measures table over complete units, with the
  between grouping the cells of the crossed treatment factors, Mauchly's test and the
  Greenhouse-Geisser and Huynh-Feldt corrections, and within-level means;
- registered contrasts on marginal means (simple effects with `by`), under the
  registered multiplicity control.
"""

from __future__ import annotations

import math
from dataclasses import replace

import numpy as np

from appendix import conclude
from appendix.data.dataset import OutcomeData
from appendix.plan.model import Outcome, Plan
from appendix.results import (
    ContrastFamily,
    CovariateSlope,
    Diagnostics,
    HypothesisResult,
    MarginalMean,
    MarginalMeans,
    ModelOutcome,
    ModelRow,
    ModelTable,
    SlopesCheck,
    StatWarning,
)
from appendix.stats.descriptives import describe
from appendix.stats.diagnostics import brown_forsythe, shapiro_wilk_large
from appendix.stats.hypotheses import hypotheses_for
from appendix.stats.multiplicity import apply_multiplicity
from appendix.stats.simultaneous import dunnett_results, tukey_results

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
    if plan.within is not None:
        parts.append(f"with repeated measures over {plan.within.label or plan.within.name}")
    return ", ".join(parts)


def analyse_model_outcome(plan: Plan, outcome: Outcome, data: OutcomeData, missing_by_cell,
                          cell_labels) -> tuple[ModelOutcome, dict[str, ContrastFamily]]:
    """Every registered analysis of one outcome of a design beyond one factor, and its
    exploratory families by id (the caller reports them apart; hypothesis sentences are
    added once any primary-family adjustment is done)."""
    if plan.within is not None:
        return _repeated_outcome(plan, outcome, data, missing_by_cell, cell_labels)
    return _between_outcome(plan, outcome, data, missing_by_cell, cell_labels)


# --- between-unit designs ---------------------------------------------------------------


def _between_codes(plan: Plan, data: OutcomeData) -> list[np.ndarray]:
    index = {f.name: j for j, f in enumerate(plan.design.factors)}
    return [data.factors[index[f.name]] for f in plan.between]


def _treatment_cells(plan: Plan, data: OutcomeData) -> np.ndarray:
    index = {f.name: j for j, f in enumerate(plan.design.factors)}
    cell = np.zeros(data.values.size, dtype=np.int64)
    for factor in plan.treatments:
        cell = cell * len(factor.levels) + data.factors[index[factor.name]]
    return cell


def _between_outcome(plan, outcome, data, missing_by_cell, cell_labels) -> ModelOutcome:
    from appendix.stats.design import Grid, design_cells
    from appendix.stats.linear import fit_linear, fitted_values

    grid = Grid(names=tuple(f.name for f in plan.between), levels=tuple(f.levels for f in plan.between))
    codes = _between_codes(plan, data)
    covariates = {c.name: data.covariates[j] for j, c in enumerate(plan.design.covariates)}
    cells = design_cells(grid, codes, data.values, covariates or None, decimals=data.decimals)
    fit = fit_linear(cells, plan.model_terms, plan.design.sums_of_squares or 2, plan.alpha)
    table = _model_table(plan, fit)
    slopes = _slopes_checks(plan, cells, fit)
    means = _marginal(plan, fit)
    residuals = data.values - fitted_values(fit, grid.cell_codes(codes), covariates or None)
    diagnostics = _diagnostics(plan, data, residuals, cell_labels)
    families, exploratory = _contrast_families(plan, outcome, fit=fit)
    descriptives = describe(data.values, _treatment_cells(plan, data), cell_labels,
                            missing_by_cell, 0.95)
    return ModelOutcome(
        name=outcome.name, label=outcome.label, unit=outcome.unit, role=outcome.role,
        design=design_words(plan), n_units=int(data.values.size),
        n_observations=int(data.values.size), arithmetic=cells.arithmetic,
        descriptives=descriptives, tables=(table,), marginal_means=means, slopes=slopes,
        sphericity=None, diagnostics=diagnostics,
        conclusions=tuple(conclude.term_conclusion(plan, outcome, row, table.ss_type, table.residual_df)
                          for row in table.rows if _concluded(plan, row.term)),
        contrasts=families, covariate_slopes=_covariate_slopes(plan, fit),
        warnings=tuple(fit.warnings)), exploratory


def _concluded(plan: Plan, term: tuple[str, ...]) -> bool:
    """Whether a term's test is a conclusion: terms of treatment and within factors only;
    blocks and covariates adjust the model and are reported in its table."""
    tested = {f.name for f in plan.treatments} | ({plan.within.name} if plan.within else set())
    return set(term) <= tested


def _model_table(plan: Plan, fit, scale: float = 1.0, stratum: str = "units") -> ModelTable:
    """The variance table of a fit; `scale` multiplies sums of squares and mean squares
    (m for a fit to the means of m repeated observations: the observation scale)."""
    def times(value):
        return None if value is None else value * scale

    rows = tuple(ModelRow(term=r.term, label=_label(plan, r.term), kind=r.kind, df=r.df,
                          sum_of_squares=times(r.ss), mean_square=times(r.ms), f=r.f, p=r.p,
                          partial_eta_squared=r.partial_eta_squared, partial_eta_ci=r.partial_eta_ci,
                          partial_omega_squared=r.partial_omega_squared,
                          partial_omega_ci=r.partial_omega_ci, confidence_level=r.confidence_level,
                          full_df=r.full_df, warnings=tuple(r.warnings))
                 for r in fit.terms)
    return ModelTable(ss_type=fit.ss_type, rows=rows, residual_df=fit.residual_df,
                      residual_ss=times(fit.residual_ss), residual_ms=times(fit.residual_ms),
                      total_df=fit.total_df, total_ss=times(fit.total_ss), r_squared=fit.r_squared,
                      estimability=fit.estimability,
                      empty_cells=tuple(CROSS.join(c) for c in fit.empty_cells),
                      stratum=stratum, warnings=tuple(fit.warnings))


def _slopes_checks(plan: Plan, cells, fit) -> tuple[SlopesCheck, ...]:
    """The homogeneity-of-slopes test of every covariate across the treatment cells; its
    error df is the model's residual df less the added interaction's df."""
    from appendix.stats.linear import slopes_homogeneity

    by = tuple(f.name for f in plan.treatments)
    checks = []
    for covariate in plan.design.covariates:
        row = slopes_homogeneity(cells, plan.model_terms, covariate.name, by, plan.alpha)
        checks.append(SlopesCheck(covariate=covariate.label, by=tuple(plan.factor_named(n).label or n
                                                                      for n in by),
                                  df=row.df, df_residual=fit.residual_df - row.df, f=row.f, p=row.p,
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


def _diagnostics(plan: Plan, data: OutcomeData | None, residuals: np.ndarray, cell_labels) -> Diagnostics:
    """Shapiro-Wilk of the residuals (of the unit means in a split-plot design) and
    Brown-Forsythe across the treatment cells (not for repeated observations)."""
    settings = plan.assumptions
    normality = shapiro_wilk_large(residuals) if settings.normality == "shapiro-wilk" else None
    tests = []
    if data is not None and "brown-forsythe" in settings.equal_variance:
        tests.append(brown_forsythe(data.values, _treatment_cells(plan, data), len(cell_labels),
                                    cell_labels, decimals=data.decimals))
    return Diagnostics(normality=normality, equal_variance=tuple(tests), outliers=None,
                       assumptions=conclude.assumption_statuses(plan, normality, tests))


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


def _raw_result(h, contrast, estimate, by=None, level: str | None = None) -> HypothesisResult:
    """A hypothesis result from a contrast estimate; a simple effect's id ends
    ``@level`` and its label names the level of `by` it is taken within."""
    hid = h.id if level is None else f"{h.id}@{level}"
    label = h.label if level is None else f"{h.label} within {by.label or by.name} {level}"
    return HypothesisResult(
        id=hid, contrast=contrast.id, kind=contrast.kind, label=label, weights=h.weights,
        alternative=contrast.alternative, method="marginal-means", estimate=estimate.estimate,
        se=estimate.se, statistic=estimate.t, statistic_name="t", df=estimate.df, p=estimate.p,
        p_adjusted=None, ci_low=estimate.ci_low, ci_high=estimate.ci_high,
        confidence_level=estimate.confidence_level, ci_simultaneous=False, standardized=None,
        decision="unavailable" if estimate.p is None else "retain",
        warnings=tuple(estimate.warnings), scale=h.scale)


def _raw_results(plan: Plan, contrasts, fit, complete, occasion_fit=None) -> list[HypothesisResult]:
    """Every hypothesis of `contrasts` (simple effects expanded over the `by` levels),
    estimated and tested unadjusted."""
    confidence = 1.0 - plan.alpha
    raw: list[HypothesisResult] = []
    for contrast in contrasts:
        factor, hypotheses = _hypotheses(plan, contrast)
        by = plan.factor_named(contrast.by) if contrast.by else None
        places = [None] if by is None else list(by.levels)
        for h in hypotheses:
            for level in places:
                estimate = _estimate(plan, contrast, factor, h.weights, by, level, fit, complete,
                                     confidence, occasion_fit)
                raw.append(_raw_result(h, contrast, estimate, by, level))
    return raw


def _contrast_families(plan: Plan, outcome: Outcome, *, fit=None, complete=None, occasion_fit=None):
    """The registered family of one outcome (all its contrasts' hypotheses) under the
    registered multiplicity control, and its exploratory families by id (unadjusted).

    Contrasts of between-unit factors are taken on the model's marginal means (`fit`);
    contrasts of the within factor on the complete units' own contrast scores
    (`appendix.stats.repeated.within_contrast`, which needs no sphericity), a simple
    effect within one treatment level on that level's units only."""
    exploratory = {}
    for entry in plan.exploratory_for(outcome.name):
        tested = apply_multiplicity(_raw_results(plan, (entry,), fit, complete, occasion_fit), "none",
                                    plan.alpha)
        exploratory[entry.id] = ContrastFamily(
            outcome=outcome.name, scope="exploratory", multiplicity="none", method="marginal-means",
            alpha=plan.alpha, registered=False, hypotheses=tuple(tested))
    contrasts = plan.contrasts_for(outcome.name)
    if not contrasts:
        return (), exploratory
    raw = _raw_results(plan, contrasts, fit, complete, occasion_fit)
    method = plan.multiplicity.method
    if method == "tukey":
        tested = tukey_results(raw, plan.alpha)
    elif method == "dunnett":
        tested = _dunnett(plan, contrasts[0], raw, fit, complete)
    else:
        tested = apply_multiplicity(raw, method, plan.alpha, order=plan.multiplicity.order)
    family = ContrastFamily(outcome=outcome.name, scope=plan.multiplicity.scope, multiplicity=method,
                            method="marginal-means", alpha=plan.alpha, registered=True,
                            hypotheses=tuple(tested))
    return (family,), exploratory


def _estimate(plan: Plan, contrast, factor, weights, by, level, fit, complete, confidence,
              occasion_fit=None):
    """One contrast estimate.

    - A between-unit factor: on the model's marginal means, within one level of `by`
      when given; `by` the within factor: on the model fitted to that occasion's values
      alone (`occasion_fit(level)`).
    - The within factor: on the complete units' contrast scores (no sphericity needed),
      their variance pooled within the treatment cells; `by` a treatment factor: on the
      units at that level only.
    """
    from appendix.stats.marginal import marginal_contrast
    from appendix.stats.repeated import CompleteUnits, within_contrast

    within = plan.within
    if within is None or factor.name != within.name:
        if level is not None and within is not None and by.name == within.name:
            return marginal_contrast(occasion_fit(level), factor.name, weights,
                                     alternative=contrast.alternative, confidence=confidence)
        at = None if level is None else {by.name: level}
        return marginal_contrast(fit, factor.name, weights, at=at, alternative=contrast.alternative,
                                 confidence=confidence)
    if level is not None:  # the units whose treatment cell has this level of `by`
        position = [f.name for f in plan.treatments].index(by.name)
        sizes = [len(f.levels) for f in plan.treatments]
        step = int(np.prod(sizes[position + 1:], dtype=np.int64))
        chosen = (complete.groups // step) % sizes[position] == by.levels.index(level)
        _, recoded = np.unique(complete.groups[chosen], return_inverse=True)
        complete = CompleteUnits(y=complete.y[chosen], units=tuple(np.asarray(complete.units)[chosen]),
                                 groups=recoded.astype(np.int64), dropped=())
    return within_contrast(complete, weights, alternative=contrast.alternative, confidence=confidence)


def _dunnett(plan: Plan, contrast, raw, fit, complete):
    """Dunnett's many-to-one adjustment of a versus-control family on marginal means.

    Its correlations are rho_ij = lam_i lam_j, lam_i = sqrt(v_c / (v_c + v_i)) from the
    variances v of the marginal means (within-level means for a within factor): exact
    when the means are uncorrelated (balanced designs without covariates), an
    approximation otherwise, which a warning says.
    """
    from appendix.stats.marginal import marginal_means
    from appendix.stats.repeated import within_means

    factor = plan.factor_of(contrast)
    if plan.within is not None and factor.name == plan.within.name:
        variances = [m.se**2 if m.se is not None else math.nan
                     for m in within_means(complete, 0.95).means]
    else:
        variances = [m.se**2 if m.se is not None else math.nan
                     for m in marginal_means(fit, (factor.name,), 0.95)]
    tested = dunnett_results(raw, variances, plan.alpha)
    note = StatWarning("dunnett-marginal-approximate",
                       "Dunnett's correlations are taken from the variances of the marginal "
                       "means, as if these were uncorrelated: exact in balanced designs without "
                       "covariates, an approximation otherwise.")
    return tuple(replace(h, warnings=(*h.warnings, note)) if h.p_adjusted is not None else h
                 for h in tested)


# --- repeated measures ------------------------------------------------------------------


def _repeated_outcome(plan, outcome, data, missing_by_cell, cell_labels) -> ModelOutcome:
    """The split-plot analysis (`appendix.stats.split_plot`) over complete units."""
    from appendix.stats.design import Grid
    from appendix.stats.linear import fitted_values
    from appendix.stats.repeated import complete_units
    from appendix.stats.split_plot import split_plot

    within = plan.within
    index = {f.name: j for j, f in enumerate(plan.design.factors)}
    m = len(within.levels)
    complete = complete_units(list(data.units), data.factors[index[within.name]], data.values, m,
                              _treatment_cells(plan, data), level_names=within.levels)
    first = {}
    for row, unit in enumerate(data.units):
        first.setdefault(unit, row)
    rows_of_units = np.array([first[u] for u in complete.units], dtype=np.int64)
    if plan.between:
        grid = Grid(names=tuple(f.name for f in plan.between), levels=tuple(f.levels for f in plan.between))
        codes = [data.factors[index[f.name]][rows_of_units] for f in plan.between]
    else:  # repeated measures alone: one between-unit cell
        grid, codes = Grid(names=("all",), levels=(tuple(cell_labels),)), [np.zeros(rows_of_units.size, np.int64)]
    covariates = {c.name: data.covariates[j][rows_of_units] for j, c in enumerate(plan.design.covariates)}
    interacting = _interacting(plan)
    fit = split_plot(grid, codes, complete.y, covariates or None, plan.model_terms, interacting,
                     plan.design.sums_of_squares or 2, within.name, plan.alpha)
    between = _model_table(plan, fit.between, scale=m, stratum="between units")
    within_rows = tuple(_repeated_row(plan, r) for r in fit.within_rows)
    error = within_rows[-1]
    within_table = ModelTable(
        ss_type=fit.between.ss_type, rows=within_rows[:-1], residual_df=error.df,
        residual_ss=error.sum_of_squares, residual_ms=error.mean_square,
        total_df=sum(r.df for r in within_rows), total_ss=sum(r.sum_of_squares or 0.0 for r in within_rows),
        r_squared=None, estimability=("Within units every listed effect is estimable from the "
                                      f"{fit.n_units} complete units."), stratum="within units")
    sphericity = fit.sphericity
    cells = _treatment_cells(plan, data)
    descriptives = describe(data.values, cells * m + data.factors[index[within.name]],
                            tuple(f"{c}{CROSS}{w}" for c in cell_labels for w in within.levels),
                            [0] * (len(cell_labels) * m), 0.95)
    unit_means = complete.y.mean(axis=1)
    slopes = ()
    if covariates:
        from appendix.stats.design import design_cells

        slopes = _slopes_checks(plan, design_cells(grid, codes, unit_means, covariates), fit.between)
    residuals = unit_means - fitted_values(fit.between, grid.cell_codes(codes), covariates or None)
    diagnostics = _diagnostics(plan, None, residuals, cell_labels)
    def occasion_fit(level: str):
        """The between-unit model fitted to one occasion's values."""
        from appendix.stats.design import design_cells
        from appendix.stats.linear import fit_linear

        y = complete.y[:, within.levels.index(level)]
        return fit_linear(design_cells(grid, codes, y, covariates or None), plan.model_terms,
                          plan.design.sums_of_squares or 2, plan.alpha)

    families, exploratory = _contrast_families(plan, outcome, fit=fit.between, complete=complete,
                                               occasion_fit=occasion_fit)
    conclusions = tuple(conclude.term_conclusion(plan, outcome, row, between.ss_type, between.residual_df)
                        for row in between.rows if _concluded(plan, row.term))
    conclusions += tuple(conclude.term_conclusion(plan, outcome, row, between.ss_type, error.df)
                         for row in within_table.rows if _concluded(plan, row.term))
    notes = tuple(fit.warnings)
    if complete.dropped:
        notes += (StatWarning("units-dropped", f"{len(complete.dropped)} units without a value at every "
                              f"level of {within.label or within.name} were left out."),)
    return ModelOutcome(
        name=outcome.name, label=outcome.label, unit=outcome.unit, role=outcome.role,
        design=design_words(plan), n_units=fit.n_units, n_observations=int(complete.y.size),
        arithmetic="float64", descriptives=descriptives, tables=(between, within_table),
        marginal_means=(_marginal(plan, fit.between, over=within.label or within.name)
                        + _occasion_means(plan, complete, cell_labels)),
        slopes=slopes, sphericity=sphericity, diagnostics=diagnostics, conclusions=conclusions,
        contrasts=families, covariate_slopes=_covariate_slopes(plan, fit.between),
        warnings=notes), exploratory


def _occasion_means(plan: Plan, complete, cell_labels) -> tuple[MarginalMeans, ...]:
    """Means at each level of the within factor over the complete units, and per cell of
    the treatment factors; each mean's interval uses its own spread across units
    (`appendix.stats.repeated.within_means`), not the within-units error term."""
    from appendix.stats.repeated import within_means

    within = plan.within
    basis = ("the mean of the complete units at each level, with an interval from their "
             "spread at that level (pooled within the treatment cells; Student's t on the units' "
             "degrees of freedom)")

    def group(means, prefix=()):
        return tuple(MarginalMean(levels=(*prefix, within.levels[m.level]), estimate=m.mean, se=m.se,
                                  df=m.df, ci_low=m.ci_low, ci_high=m.ci_high,
                                  warnings=tuple(m.warnings)) for m in means.means)

    overall = within_means(complete, 0.95)
    out = [MarginalMeans(factors=(within.name,), label=within.label or within.name,
                         confidence_level=overall.confidence_level, means=group(overall), basis=basis)]
    if plan.treatments:
        rows = tuple(m for g, label in enumerate(cell_labels)
                     for m in group(within_means(complete, 0.95, group=g), (label,)))
        names = tuple(f.name for f in plan.treatments) + (within.name,)
        out.append(MarginalMeans(factors=names, label=_label(plan, names),
                                 confidence_level=overall.confidence_level, means=rows,
                                 basis="the mean of each cell's complete units at each level, with "
                                       "an interval from that cell's own units (Student's t on their "
                                       "degrees of freedom)"))
    return tuple(out)


def _interacting(plan: Plan) -> tuple[tuple[str, ...], ...]:
    """The between terms T whose T x within the plan lists, lower order first."""
    within = plan.within.name
    order = [f.name for f in plan.between]
    terms = {tuple(sorted((n for n in i if n != within), key=order.index))
             for i in plan.design.interactions if within in i}
    return tuple(sorted(terms, key=lambda t: (len(t), [order.index(n) for n in t])))


def _repeated_row(plan: Plan, row) -> ModelRow:
    label = _label(plan, [n for n in row.term if n != "units"]) if row.kind != "error" else row.label
    return ModelRow(term=row.term, label=label, kind=row.kind, df=row.df, sum_of_squares=row.ss,
                    mean_square=row.ms, f=row.f, p=row.p, partial_eta_squared=row.partial_eta_squared,
                    partial_eta_ci=row.partial_eta_ci, partial_omega_squared=row.partial_omega_squared,
                    partial_omega_ci=row.partial_omega_ci, confidence_level=row.confidence_level,
                    gg_df=row.gg_df, gg_p=row.gg_p, hf_df=row.hf_df, hf_p=row.hf_p,
                    warnings=tuple(row.warnings))
