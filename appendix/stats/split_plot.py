"""Repeated measures with any between-unit model: the split-plot analysis in error strata.

Each unit is measured once at each of the M cells of the within grid (one or more crossed
within-unit factors, first slowest). Unit i's mean is ybar_i, and each within stratum S
(a within factor, or a listed interaction of within factors) has d_S orthonormal
contrasts C_S of the grid (`stratum_basis`: Helmert contrasts of S's factors crossed with
the means of the others), so its scores are s_i = C_S'y_i:

- between units: the registered model (covariates, blocks, treatment factors and their
  interactions) fitted to the unit means, by `appendix.stats.linear.fit_linear`; its sums
  of squares are multiplied by M, the scale of the observations (F, p and effect sizes do
  not change);
- within units, stratum by stratum (unit x S): each score column is fitted by the model
  of the between terms that interact with S (those listed with S), and the stratum adds
  up over its d_S columns (the transformed-response approach of the multivariate linear
  model, whose univariate tests these are; e.g. O'Brien & Kaiser 1985, Psychological
  Bulletin 97:316-333, from memory): S's SS is the sum over columns of the SS of the
  hypothesis that the column's mean is zero: under type 3 its marginal mean with equal
  weights over the cells (t_j^2 MS_j), under types 1 and 2 its mean over the units,
  n sbar_j^2 (the intercept first, as in the classical table); a term T x S has the sum
  of T's SS over the columns, df_T d_S; the error unit x S is the sum of the residual
  SS, df_res d_S. Between terms not listed with S (blocks above all) and covariates are
  pooled into that error. With one within factor there is one stratum.
- sphericity of each stratum: Mauchly's test and the Greenhouse–Geisser and Huynh–Feldt
  (Lecoutre) epsilons from the residual cross-products of its scores
  (`appendix.stats.sphericity`); a stratum of one contrast has epsilon 1.

For one treatment factor and one within factor this is the classical split-plot table
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


@dataclass(frozen=True)
class WithinStratum:
    """One within-unit error stratum (unit x `term`): `term` its within factors, `basis`
    the (M, d) orthonormal contrasts of the within grid that span it (`stratum_basis`),
    `interacting` the between terms T whose T x `term` the model holds."""

    term: tuple[str, ...]
    basis: np.ndarray
    interacting: tuple[Term, ...] = ()


def stratum_basis(levels: Sequence[int], members: Sequence[bool]) -> np.ndarray:
    """The orthonormal contrasts of one stratum over a within grid of `levels` (first
    factor slowest): the Kronecker product over the factors of their normalised Helmert
    contrasts where `members` (the stratum's factors) and of the normalised mean,
    1/sqrt(m), elsewhere. Its columns are orthonormal and orthogonal to 1; the strata of a
    grid are orthogonal to each other.

    >>> stratum_basis([2, 3], [True, False]).shape
    (6, 1)
    """
    basis = np.ones((1, 1))
    for m, member in zip(levels, members):
        part = helmert_contrasts(m) if member else np.full((m, 1), 1.0 / math.sqrt(m))
        basis = np.kron(basis, part)
    return basis


def strata_of(factors: Sequence[tuple[str, int]],
              terms: Mapping[tuple[str, ...], Sequence[Term]]) -> tuple[WithinStratum, ...]:
    """The strata of a within grid: `factors` the within factors (name, levels) in grid
    order, `terms` each stratum's term with the between terms that interact with it."""
    names = [name for name, _ in factors]
    levels = [m for _, m in factors]
    return tuple(WithinStratum(tuple(term), stratum_basis(levels, [n in term for n in names]),
                               tuple(tuple(t) for t in interacting))
                 for term, interacting in terms.items())


@dataclass(frozen=True, eq=False)
class StratumFit:
    """The tests of one within stratum: `rows` its term, its listed interactions with
    between terms and, last, its error (unit x term); `sphericity` of its contrasts."""

    term: tuple[str, ...]
    rows: tuple[RepeatedRow, ...]
    sphericity: Sphericity


@dataclass(frozen=True, eq=False)
class SplitPlotFit:
    """Every stratum: `between` fitted to the unit means (sums of squares on the unit-mean
    scale; multiply by `levels`, the cells of the within grid, for the observation
    scale), `strata` the within strata in the order given. `within_residuals` (units, M)
    are the residuals of the within strata together: each observation's deviation from its
    unit's mean less the fitted within-unit effects (each stratum's score residuals turned
    back by its orthonormal contrasts)."""

    between: ModelFit
    strata: tuple[StratumFit, ...]
    levels: int
    n_units: int
    within_residuals: np.ndarray
    warnings: tuple[StatWarning, ...] = ()


def split_plot(grid: Grid, codes: Sequence[np.ndarray], y: np.ndarray,
               covariates: Mapping[str, np.ndarray] | None, between_terms: Sequence[Term],
               strata: Sequence[WithinStratum], ss_type: int, alpha: float) -> SplitPlotFit:
    """The split-plot analysis of complete units `y` (units, M: the cells of the within
    grid), `codes` each unit's level codes of the `grid` factors, `covariates` each unit's
    values; each of `strata` is tested in its own error stratum."""
    y = np.asarray(y, dtype=np.float64)
    n, m = y.shape
    between = fit_linear(design_cells(grid, codes, y.mean(axis=1), covariates), between_terms,
                         ss_type, alpha)
    noise = _NOISE * float(np.sum((y - y.mean()) ** 2)) if n else 0.0
    fits = tuple(_stratum(grid, codes, y, stratum, ss_type, alpha, noise, several=len(strata) > 1)
                 for stratum in strata)
    residuals = sum((r @ stratum.basis.T for (_, r), stratum in zip(fits, strata)),
                    np.zeros((n, m)))
    return SplitPlotFit(between=between, strata=tuple(f for f, _ in fits), levels=m, n_units=n,
                        within_residuals=residuals, warnings=tuple(between.warnings))


def _stratum(grid: Grid, codes, y: np.ndarray, stratum: WithinStratum, ss_type: int, alpha: float,
             noise: float, *, several: bool) -> tuple[StratumFit, np.ndarray]:
    """One stratum's rows and sphericity, and its score residuals (units, d).

    Each score column is fitted by the model of the stratum's interacting between terms;
    the stratum's own term has the SS of the hypothesis that the columns' means are zero,
    T x term the sum of T's SS over the columns, the error the sum of the residual SS."""
    n = y.shape[0]
    d = stratum.basis.shape[1]
    scores = y @ stratum.basis
    interacting = stratum.interacting
    fits = [fit_linear(design_cells(grid, codes, scores[:, j]), interacting, ss_type, alpha)
            for j in range(d)]
    cell_codes = grid.cell_codes(codes)
    residuals = np.column_stack([scores[:, j] - fitted_values(fits[j], cell_codes) for j in range(d)])
    df_res = fits[0].residual_df
    ss_error = float(sum(f.residual_ss for f in fits))
    spher = _sphericity(residuals, df_res, n, d, noise, stratum.term)
    confidence = 1.0 - 2.0 * alpha
    error = (ss_error, d * df_res)
    term = stratum.term
    if ss_type == 3:
        main = _main_ss(fits)
    else:
        main = float(n * np.sum(scores.mean(axis=0) ** 2)) if n else 0.0
    rows = [effect_row(term, " x ".join(term), "within", main, d, error, noise, spher, confidence)]
    for between_term in interacting:
        ss = float(sum(next(r.ss for r in f.terms if r.term == tuple(between_term)) or 0.0 for f in fits))
        df = next(r.df for r in fits[0].terms if r.term == tuple(between_term)) * d
        rows.append(effect_row((*between_term, *term), " x ".join((*between_term, *term)), "within",
                               ss, df, error, noise, spher, confidence))
    label = f"Error units x {' x '.join(term)}" if several else "Error within units"
    rows.append(error_row((*term, "units"), label, ss_error, d * df_res, confidence))
    return StratumFit(term=term, rows=tuple(rows), sphericity=spher), residuals


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


def _sphericity(residuals: np.ndarray, df: int, n_units: int, d: int, noise: float,
                term: tuple[str, ...] = ()) -> Sphericity:
    """Mauchly's W and the epsilons from the residual cross-products of the scores; not
    defined when those residuals (the within-units error SS) are at or below `noise`, the
    level below which the error term counts as no variation."""
    lower = 1.0 / d
    if d == 1:
        why = ("With two within levels there is a single contrast" if len(term) < 2 else
               f"With two levels of each of {' and '.join(term)} their interaction is a single "
               "contrast")
        return Sphericity(None, None, 0, None, 1.0, 1.0, lower,
                          (StatWarning("sphericity-trivial", f"{why}, so sphericity holds by "
                                       "construction: no test or correction is needed."),))
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
