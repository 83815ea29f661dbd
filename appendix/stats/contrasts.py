"""Estimates and tests of single contrast hypotheses under the three registered methods.

A `LevelModel` says, for one method, what is estimated for each level (its mean, or its
mean rank) and how precisely (the estimated variance of that level estimate). A contrast
sum_i w_i m_i then has variance sum_i w_i^2 v_i, and the three methods differ only in v_i
and the reference distribution:

- classical: v_i = MS_within / n_i, Student's t on N - k df;
- welch: v_i = s_i^2 / n_i, t on the Welch–Satterthwaite df (Welch 1947, Biometrika
  34:28-35; Satterthwaite 1946, Biometrics Bulletin 2:110-114);
- rank-based: m_i the mean joint rank, v_i = S^2 / n_i with the tie-corrected rank
  variance S^2 = N(N+1)/12 - sum(t^3 - t) / (12 (N - 1)), standard normal z
  (Dunn 1964, Technometrics 6:241-252).

Simultaneous inference for families of such hypotheses lives in `simultaneous` and
`multiplicity`; the covariances the families need come from the same `LevelModel`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy import stats as _st

from appendix.errors import InternalError
from appendix.results import HypothesisResult, StatWarning, Warnings
from appendix.stats.cells import CellStats, cell_stats, check_inputs
from appendix.stats.descriptives import check_confidence
from appendix.stats.hypotheses import Hypothesis, hypotheses_for, orthogonal_polynomials

__all__ = [
    "Hypothesis", "LevelModel", "classical_contrast", "classical_model", "contrast_result",
    "critical_value", "hypotheses_for", "interval", "orthogonal_polynomials", "rank_contrast",
    "rank_model", "welch_contrast", "welch_model",
]

ALTERNATIVES = ("two-sided", "greater", "less")
METHODS = ("classical", "welch", "rank-based")


@dataclass(frozen=True, eq=False)
class LevelModel:
    """Per-level estimates and their estimated variances under one method.

    `centre[i]` is level i's mean (centred on a common shift, which every contrast
    cancels because its weights sum to 0) or mean rank; `var_mean[i]` the estimated
    variance of `centre[i]` (NaN where it cannot be estimated); `df` the common degrees
    of freedom (N - k for classical, infinity for the normal z of rank-based, None for
    welch, whose df depend on the contrast); `sd` the pooled SD sqrt(MS_within) used for
    standardized effects (None for rank-based or when undefined); `why_undefined` the
    warning a contrast gets when it needs an undefined `var_mean`.
    """

    method: str
    labels: tuple[str, ...]
    n: np.ndarray
    centre: np.ndarray
    var_mean: np.ndarray
    df: float | None
    sd: float | None
    df_within: int
    why_undefined: StatWarning | None = None

    @property
    def k(self) -> int:
        return len(self.labels)


def classical_model(cells: CellStats) -> LevelModel:
    """Level means with the pooled variance: v_i = MS_within / n_i, df N - k."""
    n = cells.n.astype(np.float64)
    df_w = cells.df_within
    ms_w = cells.ss_within / df_w if df_w > 0 else math.nan
    var_mean = np.full(cells.k, math.nan)
    occupied = cells.occupied
    var_mean[occupied] = ms_w / n[occupied]
    why = None
    if df_w <= 0:
        why = StatWarning("contrast-no-within-df",
                          "There are no within-group degrees of freedom, so the contrast has no "
                          "standard error.")
    sd = math.sqrt(ms_w) if df_w > 0 and ms_w > 0 else None
    return LevelModel("classical", cells.labels, cells.n, cells.centred_mean, var_mean,
                      float(df_w) if df_w > 0 else None, sd, df_w, why)


def welch_model(cells: CellStats) -> LevelModel:
    """Level means with their own variances: v_i = s_i^2 / n_i (undefined for n_i < 2)."""
    n = cells.n.astype(np.float64)
    var_mean = np.full(cells.k, math.nan)
    several = cells.n >= 2
    var_mean[several] = cells.ssd[several] / (n[several] - 1) / n[several]
    df_w = cells.df_within
    ms_w = cells.ss_within / df_w if df_w > 0 else math.nan
    sd = math.sqrt(ms_w) if df_w > 0 and ms_w > 0 else None
    why = StatWarning("welch-contrast-undefined",
                      "A level in this contrast has a single unit, so its own variance (needed "
                      "by the Welch contrast) cannot be estimated.")
    return LevelModel("welch", cells.labels, cells.n, cells.centred_mean, var_mean, None, sd,
                      df_w, why)


def rank_model(values: np.ndarray, codes: np.ndarray, k: int,
               levels: tuple[str, ...] | None = None) -> LevelModel:
    """Mean joint ranks with Dunn's (1964) tie-corrected variance S^2 / n_i, normal z.

    Ranks are mid-ranks over all analysed units; S^2 = N(N+1)/12 - sum(t^3 - t)/(12(N-1))
    where t runs over the sizes of tied groups.
    """
    values, codes = check_inputs(values, codes, k)
    ranks = _st.rankdata(values, method="average")
    cells = cell_stats(ranks, codes, k, levels)
    total = float(values.size)
    _, ties = np.unique(values, return_counts=True)
    ties = ties.astype(np.float64)
    s2 = total * (total + 1) / 12 - float(np.sum(ties**3 - ties)) / (12 * (total - 1)) if total > 1 else 0.0
    var_mean = np.full(k, math.nan)
    occupied = cells.occupied
    var_mean[occupied] = s2 / cells.n[occupied]
    return LevelModel("rank-based", cells.labels, cells.n, cells.centred_mean, var_mean,
                      math.inf, None, cells.df_within, None)


def reference(df: float | None):
    """Student's t on `df`, or the standard normal when df is infinite."""
    return _st.norm() if df is None or math.isinf(df) else _st.t(df)


def critical_value(df: float | None, alternative: str, confidence: float) -> float:
    """The multiplier of the SE for a `confidence` interval (one-sided: one tail)."""
    tail = 1.0 - confidence
    return float(reference(df).isf(tail / 2 if alternative == "two-sided" else tail))


def interval(estimate: float, se: float, multiplier: float,
             alternative: str) -> tuple[float | None, float | None]:
    """estimate -/+ multiplier * se; the open end of a one-sided interval is None.

    ``greater`` (H1: estimate > 0) gives a lower bound only, ``less`` an upper bound only.
    """
    half = multiplier * se
    if alternative == "greater":
        return estimate - half, None
    if alternative == "less":
        return None, estimate + half
    return estimate - half, estimate + half


def p_value(statistic: float, df: float | None, alternative: str) -> float:
    """The p of `statistic` under t(df) or N(0, 1), from survival functions only."""
    dist = reference(df)
    if alternative == "greater":
        return float(dist.sf(statistic))
    if alternative == "less":
        return float(dist.sf(-statistic))
    return float(min(1.0, 2.0 * dist.sf(abs(statistic))))


def check_hypothesis(h: Hypothesis, model: LevelModel, alternative: str) -> None:
    """Raise InternalError for an unknown alternative or a weight vector of the wrong length."""
    if alternative not in ALTERNATIVES:
        raise InternalError(f"alternative must be one of {ALTERNATIVES}, got {alternative!r}")
    if len(h.weights) != model.k:
        raise InternalError(f"hypothesis {h.id} has {len(h.weights)} weights for {model.k} levels")


def unavailable(h: Hypothesis, model: LevelModel, alternative: str, confidence: float,
                warnings: Warnings) -> HypothesisResult:
    """A result with no numbers and decision ``unavailable``, explained by `warnings`."""
    return HypothesisResult(
        id=h.id, contrast=h.contrast, kind=h.kind, label=h.label, weights=h.weights,
        alternative=alternative, method=model.method, estimate=None, se=None, statistic=None,
        statistic_name=_statistic_name(model), df=None, p=None, p_adjusted=None, ci_low=None,
        ci_high=None, confidence_level=confidence, ci_simultaneous=False, standardized=None,
        decision="unavailable", warnings=tuple(warnings), scale=h.scale)


def _statistic_name(model: LevelModel) -> str:
    return "z" if model.method == "rank-based" else "t"


def contrast_parts(h: Hypothesis, model: LevelModel) -> tuple[float, float, float | None] | StatWarning:
    """(estimate, SE, df) of one contrast, or the warning saying why it is undefined."""
    w = np.asarray(h.weights, dtype=np.float64)
    used = w != 0.0
    empty = [label for label, u, n in zip(model.labels, used, model.n.tolist()) if u and n == 0]
    if empty:
        names = ", ".join(f"'{label}'" for label in empty)
        return StatWarning("hypothesis-empty-level",
                           f"Level(s) {names} have no analysed units, so '{h.label}' cannot be "
                           "estimated.")
    terms = w[used] ** 2 * model.var_mean[used]
    if not np.all(np.isfinite(terms)):
        return model.why_undefined or StatWarning("contrast-undefined",
                                                  f"'{h.label}' has no standard error.")
    variance = float(terms.sum())
    if variance <= 0.0:
        return StatWarning("contrast-zero-variance",
                           f"The levels in '{h.label}' show no variation, so its test statistic "
                           "is undefined.")
    estimate = float(np.dot(w[used], model.centre[used]))
    df = model.df
    if model.method == "welch":
        # Welch–Satterthwaite: df = (sum a_i)^2 / sum a_i^2 / (n_i - 1), a_i = w_i^2 s_i^2 / n_i.
        n = model.n[used].astype(np.float64)
        df = variance**2 / float(np.sum(terms**2 / (n - 1)))
    return estimate, math.sqrt(variance), df


def contrast_result(h: Hypothesis, model: LevelModel, alternative: str,
                    confidence: float) -> HypothesisResult:
    """Estimate, SE, statistic, raw p and (1 - alpha) CI of one hypothesis under `model`.

    p_adjusted is the raw p and the decision compares it with 1 - `confidence` (no
    multiplicity control); `multiplicity.apply_multiplicity` replaces both for a family.
    `standardized` = estimate / sqrt(MS_within) * J with Hedges' (1981, J Educ Stat
    6:107-128) J = 1 - 3 / (4 df_within - 1); None for rank-based.
    """
    confidence = check_confidence(confidence)
    check_hypothesis(h, model, alternative)
    parts = contrast_parts(h, model)
    if isinstance(parts, StatWarning):
        return unavailable(h, model, alternative, confidence, (parts,))
    estimate, se, df = parts
    statistic = estimate / se
    p = p_value(statistic, df, alternative)
    low, high = interval(estimate, se, critical_value(df, alternative, confidence), alternative)
    standardized = None
    if model.sd is not None and model.df_within > 1:
        standardized = estimate / model.sd * (1.0 - 3.0 / (4.0 * model.df_within - 1.0))
    return HypothesisResult(
        id=h.id, contrast=h.contrast, kind=h.kind, label=h.label, weights=h.weights,
        alternative=alternative, method=model.method, estimate=estimate, se=se,
        statistic=statistic, statistic_name=_statistic_name(model),
        df=None if df is None or math.isinf(df) else df, p=p, p_adjusted=p,
        ci_low=low, ci_high=high, confidence_level=confidence, ci_simultaneous=False,
        standardized=standardized, decision="reject" if p < 1.0 - confidence else "retain",
        scale=h.scale)


def classical_contrast(h: Hypothesis, cells: CellStats, alternative: str,
                       confidence: float) -> HypothesisResult:
    """One contrast with the pooled within-group variance (MS_within) and t on N - k df.

    >>> c = cell_stats(np.array([1.0, 2, 3, 4, 5, 6]), np.repeat([0, 1], 3), 2)
    >>> h = hypotheses_for("pairwise", ["a", "b"], contrast_id="P", label="b versus a")[0]
    >>> round(classical_contrast(h, c, "two-sided", 0.95).statistic, 6)
    3.674235
    """
    return contrast_result(h, classical_model(cells), alternative, confidence)


def welch_contrast(h: Hypothesis, cells: CellStats, alternative: str,
                   confidence: float) -> HypothesisResult:
    """One contrast with each level's own variance and Welch–Satterthwaite df."""
    return contrast_result(h, welch_model(cells), alternative, confidence)


def rank_contrast(h: Hypothesis, values: np.ndarray, codes: np.ndarray, k: int,
                  alternative: str, confidence: float = 0.95) -> HypothesisResult:
    """Dunn's (1964) z for one contrast of mean ranks, tie-corrected; estimate in rank units."""
    return contrast_result(h, rank_model(values, codes, k), alternative, confidence)


def level_model(method: str, *, cells: CellStats | None = None, values: np.ndarray | None = None,
                codes: np.ndarray | None = None) -> LevelModel:
    """The `LevelModel` of `method` (``classical``, ``welch`` or ``rank-based``)."""
    if method not in METHODS:
        raise InternalError(f"method must be one of {METHODS}, got {method!r}")
    if cells is None:
        raise InternalError("cells are required for every method (they give k and the level names)")
    if method == "classical":
        return classical_model(cells)
    if method == "welch":
        return welch_model(cells)
    if values is None or codes is None:
        raise InternalError("rank-based contrasts need the values and codes")
    return rank_model(values, codes, cells.k, cells.labels)
