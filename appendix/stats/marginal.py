"""Estimated marginal means of a fitted linear model, and contrasts among them.

A marginal mean of some factors' levels is the model's predicted cell mean averaged with
equal weights over the levels of the other factors, with every covariate at its overall
mean (Searle, Speed & Milliken 1980, "Population marginal means in the linear model",
Am. Stat. 34:216-221). It is a linear function l'b of the coefficients, so its standard
error is sqrt(l' V l) with V the coefficients' covariance (MS_res times a generalized
inverse of X'X), and it is reported only when l lies in the row space of the design
(estimable: Searle 1971, *Linear Models*, sec. 5.4), which fails when the average needs
an empty cell that the model's terms cannot reach. Intervals and p-values use Student's
t on the residual df.

A contrast applies weights to one factor's marginal means, or, with `at`, to its cell
means at given levels of other factors (a simple effect), averaged over the rest.
"""

from __future__ import annotations

import itertools
import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np

from appendix.results import StatWarning
from appendix.stats.contrasts import ALTERNATIVES, critical_value, interval, p_value
from appendix.stats.descriptives import check_confidence
from appendix.stats.design import Term
from appendix.stats.linear import ModelFit


@dataclass(frozen=True)
class MarginalMean:
    """The estimated marginal mean of `factors` at `levels`, with a t interval."""

    factors: Term
    levels: tuple[str, ...]
    estimate: float | None
    se: float | None
    df: int
    ci_low: float | None
    ci_high: float | None
    confidence_level: float
    warnings: tuple[StatWarning, ...] = ()


@dataclass(frozen=True)
class MarginalContrast:
    """sum_i w_i m_i over `factor`'s marginal means m_i (at the levels `at`), with its t test.

    `statistic` is the t ratio estimate / `se` on `df` df. For a one-sided `alternative`
    the open end of the interval is None.
    """

    factor: str
    weights: tuple[float, ...]
    at: tuple[tuple[str, str], ...]
    estimate: float | None
    se: float | None
    df: int
    statistic: float | None
    p: float | None
    alternative: str
    ci_low: float | None
    ci_high: float | None
    confidence_level: float
    warnings: tuple[StatWarning, ...] = ()


def _level_rows(fit: ModelFit) -> np.ndarray:
    """(cells, p): each grid cell's coefficient row with covariates at their means."""
    plain = np.array([c is None for c in fit.column_covariate])
    return np.where(plain, fit.cell_design, 0.0)


def average_row(fit: ModelFit, fixed: Mapping[int, int]) -> np.ndarray:
    """The mean of the level rows over the cells whose factor i has level code fixed[i]."""
    codes = fit.grid.level_codes()
    chosen = np.ones(fit.grid.n_cells, dtype=bool)
    for i, code in fixed.items():
        chosen &= codes[:, i] == code
    return _level_rows(fit)[chosen].mean(axis=0)


def _factor_index(fit: ModelFit, name: str) -> int:
    if name not in fit.grid.names:
        raise ValueError(f"'{name}' is not a factor of the design {fit.grid.names}")
    return fit.grid.index(name)


def _level_code(fit: ModelFit, name: str, level: str) -> int:
    levels = fit.grid.levels[_factor_index(fit, name)]
    if level not in levels:
        raise ValueError(f"'{level}' is not a level of '{name}' {levels}")
    return levels.index(level)


def _not_estimable(what: str) -> StatWarning:
    return StatWarning("not-estimable",
                       f"{what} is not estimable: it needs cells that have no units and that "
                       "the model's terms cannot reach.")


_NO_RESIDUAL = StatWarning("no-residual-df",
                           "The model leaves no residual degrees of freedom (or no residual "
                           "variation), so no standard error can be computed.")


def _variance(fit: ModelFit, l: np.ndarray) -> float | None:
    if fit.residual_ms is None or fit.residual_ms == 0.0:
        return None
    return max(float(l @ fit.covariance @ l), 0.0)


def marginal_means(fit: ModelFit, factors: Term, confidence: float) -> tuple[MarginalMean, ...]:
    """Estimated marginal means of every level combination of `factors` (first slowest)."""
    confidence = check_confidence(confidence)
    factors = tuple(factors)
    if not factors or len(set(factors)) != len(factors):
        raise ValueError(f"marginal means need distinct factors, got {factors}")
    indices = [_factor_index(fit, name) for name in factors]
    out = []
    ranges = [range(fit.grid.shape[i]) for i in indices]
    for combo in itertools.product(*ranges):
        levels = tuple(fit.grid.levels[i][c] for i, c in zip(indices, combo))
        l = average_row(fit, dict(zip(indices, combo)))
        what = f"The marginal mean at {', '.join(levels)}"
        out.append(_mean_result(fit, factors, levels, l, confidence, what))
    return tuple(out)


def _mean_result(fit: ModelFit, factors: Term, levels: tuple[str, ...], l: np.ndarray,
                 confidence: float, what: str) -> MarginalMean:
    df = fit.residual_df
    if not fit.estimable(l):
        return MarginalMean(factors, levels, None, None, df, None, None, confidence,
                            (_not_estimable(what),))
    estimate = fit.y_mean + float(l @ fit.coefficients)
    variance = _variance(fit, l)
    if variance is None:
        return MarginalMean(factors, levels, estimate, None, df, None, None, confidence,
                            (_NO_RESIDUAL,))
    se = math.sqrt(variance)
    low, high = interval(estimate, se, critical_value(df, "two-sided", confidence), "two-sided")
    return MarginalMean(factors, levels, estimate, se, df, low, high, confidence)


def contrast_row(fit: ModelFit, factor: str, weights: Sequence[float],
                  at: Mapping[str, str] | None) -> np.ndarray:
    """l of sum_i w_i (marginal mean of level i of `factor`, at the levels `at`)."""
    index = _factor_index(fit, factor)
    k = fit.grid.shape[index]
    weights = np.asarray(weights, dtype=np.float64)
    if weights.shape != (k,) or not np.all(np.isfinite(weights)):
        raise ValueError(f"'{factor}' has {k} levels, so the contrast needs {k} finite weights")
    fixed = {}
    for name, level in (at or {}).items():
        if name == factor:
            raise ValueError(f"`at` cannot fix the contrasted factor '{factor}'")
        fixed[_factor_index(fit, name)] = _level_code(fit, name, level)
    return sum(w * average_row(fit, {**fixed, index: i}) for i, w in enumerate(weights))


def marginal_contrast(fit: ModelFit, factor: str, weights: Sequence[float], *,
                      at: Mapping[str, str] | None = None, alternative: str = "two-sided",
                      confidence: float = 0.95) -> MarginalContrast:
    """Estimate, SE, t, p and interval of sum_i w_i m_i on t(residual df).

    m_i is the marginal mean of level i of `factor` or, with `at`, its mean at the given
    levels of other factors (averaged over the factors in neither). Weights need not sum
    to zero; when they do not, the estimate includes sum(w) times the overall level.
    """
    confidence = check_confidence(confidence)
    if alternative not in ALTERNATIVES:
        raise ValueError(f"alternative must be one of {ALTERNATIVES}, got {alternative!r}")
    l = contrast_row(fit, factor, weights, at)
    weights = tuple(float(w) for w in weights)
    at_pairs = tuple((name, str(level)) for name, level in (at or {}).items())
    df = fit.residual_df

    def result(estimate=None, se=None, t=None, p=None, low=None, high=None, warnings=()):
        return MarginalContrast(factor, weights, at_pairs, estimate, se, df, t, p, alternative,
                                low, high, confidence, tuple(warnings))

    if not fit.estimable(l):
        return result(warnings=(_not_estimable(f"The contrast of '{factor}'"),))
    estimate = fit.y_mean * float(sum(weights)) + float(l @ fit.coefficients)
    variance = _variance(fit, l)
    if variance is None:
        return result(estimate, warnings=(_NO_RESIDUAL,))
    if variance == 0.0:
        return result(estimate, warnings=(StatWarning(
            "contrast-zero-variance", "The contrast has zero standard error (all weights "
                                      "zero?), so its t statistic is undefined."),))
    se = math.sqrt(variance)
    t = estimate / se
    low, high = interval(estimate, se, critical_value(df, alternative, confidence), alternative)
    return result(estimate, se, t, p_value(t, df, alternative), low, high)


def contrast_covariance(fit: ModelFit, factor: str, weight_rows: Sequence[Sequence[float]],
                        at: Mapping[str, str] | None = None) -> np.ndarray:
    """Covariance matrix of several contrasts of `factor` (as `marginal_contrast` forms them).

    Rows and columns of a contrast that is not estimable, and the whole matrix when the
    model has no residual variance, are NaN.
    """
    rows = np.array([contrast_row(fit, factor, w, at) for w in weight_rows])
    if not fit.residual_ms:  # None or 0: no residual variance
        return np.full((len(rows), len(rows)), math.nan)
    covariance = rows @ fit.covariance @ rows.T
    bad = np.array([not fit.estimable(row) for row in rows], dtype=bool)
    covariance[bad, :] = math.nan
    covariance[:, bad] = math.nan
    return covariance
