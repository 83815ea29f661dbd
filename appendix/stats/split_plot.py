"""Repeated measures with any between-unit model: the split-plot analysis in two strata.

Each unit is measured once at each of m levels of a within-unit factor. With d = m - 1
orthonormal contrasts C of the within levels (columns of `helmert_contrasts`), unit i's
scores are s_i = C'y_i, and its mean is ybar_i:

- between units: the registered model (covariates, blocks, treatment factors and their
  interactions) fitted to the unit means, by `appendix.stats.linear.fit_linear`; its sums
  of squares are multiplied by m, the scale of the observations (F, p and effect sizes do
  not change);
- within units: each score column is fitted by the model of the between terms that
  interact with the within factor (those listed with it), and the strata add up over
  the d columns (the transformed-response approach of the multivariate linear model,
  whose univariate tests these are; e.g. O'Brien & Kaiser 1985, Psychological Bulletin
  97:316-333, from memory): the within factor's SS is the sum over columns of the SS of
  the hypothesis that the column's mean is zero: under type 3 its marginal mean with
  equal weights over the cells (t_j^2 MS_j), under types 1 and 2 its mean over the
  units, n sbar_j^2 (the intercept first, as in the classical table); a term T x within
  has the sum of T's SS over the columns, df_T d; the error is the sum of the residual
  SS, df_res d. Between terms not listed
  with the within factor (blocks above all) and covariates are pooled into that error.
- sphericity: Mauchly's test and the Greenhouse-Geisser and Huynh-Feldt (Lecoutre)
  epsilons from the residual cross-products of the scores (`appendix.stats.sphericity`).

For one treatment factor and nothing else this is the classical split-plot table
(Winer, Brown & Michels 1991) that `appendix.stats.repeated` computes directly.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np

from appendix.results import StatWarning
from appendix.stats.design import Grid, Term, design_cells
from appendix.stats.linear import ModelFit, fit_linear, fitted_values
from appendix.stats.marginal import average_row
from appendix.stats.repeated import RepeatedRow, effect_row, error_row
from appendix.stats.sphericity import (
    Sphericity,
    greenhouse_geisser,
    helmert_contrasts,
    huynh_feldt,
    mauchly_p,
    undefined_sphericity,
)

#: Residual sums of squares below this share of the total are rounding, not variation.
_NOISE = 1e-12


@dataclass(frozen=True, eq=False)
class SplitPlotFit:
    """Both strata: `between` fitted to the unit means (sums of squares on the unit-mean
    scale; multiply by `levels` for the observation scale), `within_rows` the within
    factor, its listed interactions and the within-units error, `sphericity` of the
    within stratum. `within_residuals` (units, m) are the residuals of the within-units
    error: each observation's deviation from its unit's mean less the fitted within-unit
    effects (the scores' residuals turned back by the orthonormal contrasts)."""

    between: ModelFit
    within_rows: tuple[RepeatedRow, ...]
    sphericity: Sphericity
    levels: int
    n_units: int
    within_residuals: np.ndarray
    warnings: tuple[StatWarning, ...] = ()


def split_plot(grid: Grid, codes: Sequence[np.ndarray], y: np.ndarray,
               covariates: Mapping[str, np.ndarray] | None, between_terms: Sequence[Term],
               interacting: Sequence[Term], ss_type: int, within: str, alpha: float) -> SplitPlotFit:
    """The split-plot analysis of complete units `y` (units, m), `codes` each unit's level
    codes of the `grid` factors, `covariates` each unit's values; `interacting` lists the
    between terms T with T x `within` in the model."""
    y = np.asarray(y, dtype=np.float64)
    n, m = y.shape
    d = m - 1
    between = fit_linear(design_cells(grid, codes, y.mean(axis=1), covariates), between_terms,
                         ss_type, alpha)
    basis = helmert_contrasts(m)
    scores = y @ basis
    fits = [fit_linear(design_cells(grid, codes, scores[:, j]), interacting, ss_type, alpha)
            for j in range(d)]
    cell_codes = grid.cell_codes(codes)
    residuals = np.column_stack([scores[:, j] - fitted_values(fits[j], cell_codes) for j in range(d)])
    df_res = fits[0].residual_df
    ss_error = float(sum(f.residual_ss for f in fits))
    noise = _NOISE * float(np.sum((y - y.mean()) ** 2)) if n else 0.0
    spher = _sphericity(residuals, df_res, n, d, noise)
    confidence = 1.0 - 2.0 * alpha
    error = (ss_error, d * df_res)
    if ss_type == 3:
        main = _main_ss(fits)
    else:
        main = float(n * np.sum(scores.mean(axis=0) ** 2)) if n else 0.0
    rows = [effect_row((within,), within, "within", main, d, error, noise, spher, confidence)]
    for term in interacting:
        ss = float(sum(next(r.ss for r in f.terms if r.term == tuple(term)) or 0.0 for f in fits))
        df = next(r.df for r in fits[0].terms if r.term == tuple(term)) * d
        rows.append(effect_row((*term, within), " x ".join((*term, within)), "within", ss, df, error,
                                noise, spher, confidence))
    rows.append(error_row((within, "units"), "Error within units", ss_error, d * df_res, confidence))
    return SplitPlotFit(between=between, within_rows=tuple(rows), sphericity=spher, levels=m,
                        n_units=n, within_residuals=residuals @ basis.T,
                        warnings=tuple(between.warnings))


def _main_ss(fits: Sequence[ModelFit]) -> float:
    """Sum over the score columns of estimate^2 / (l G l') for the column's equally weighted
    marginal mean l b (G a generalized inverse of X'X; t^2 MS_res without MS_res, so a column
    that its model fits exactly counts too): the type 3 SS of the hypothesis that it is zero.
    NaN when a column's mean is not estimable."""
    total = 0.0
    for fit in fits:
        l = average_row(fit, {})
        estimate = fit.y_mean + float(l @ fit.coefficients)
        scale = float(l @ fit.inverse @ l)
        if not scale > 0.0:
            return math.nan
        total += estimate**2 / scale
    return total


def _sphericity(residuals: np.ndarray, df: int, n_units: int, d: int, noise: float) -> Sphericity:
    """Mauchly's W and the epsilons from the residual cross-products of the scores; not
    defined when those residuals (the within-units error SS) are at or below `noise`, the
    level below which the error term counts as no variation."""
    lower = 1.0 / d
    if d == 1:
        return Sphericity(None, None, 0, None, 1.0, 1.0, lower,
                          (StatWarning("sphericity-trivial", "With two within levels there is a "
                                       "single contrast, so sphericity holds by construction: no "
                                       "test or correction is needed."),))
    if df <= d:
        return Sphericity(None, None, d * (d + 1) // 2 - 1, None, None, None, lower,
                          (StatWarning("sphericity-too-few-units",
                                       "Too few units for Mauchly's test and the epsilons."),))
    eigen = np.sort(np.linalg.svd(residuals, compute_uv=False) ** 2 / df)[::-1]
    if not eigen.sum() * df > noise:  # every score equals its cell's fit, up to rounding
        return undefined_sphericity(d)
    gg = greenhouse_geisser(eigen, d)
    hf = huynh_feldt(gg, n_units, n_units - df, d)
    if eigen[-1] <= 0.0:
        return Sphericity(None, None, d * (d + 1) // 2 - 1, None, gg, hf, lower)
    log_w = float(np.sum(np.log(eigen)) - d * math.log(eigen.mean()))
    chi_square, p = mauchly_p(log_w, df, d)
    return Sphericity(math.exp(log_w), chi_square, d * (d + 1) // 2 - 1, p, gg, hf, lower)
