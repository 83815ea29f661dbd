"""Designs with one within-unit factor and at most one between-unit grouping.

Each unit (a participant, a plot, an animal) is measured at every level of the within
factor; units may belong to one of several groups (a mixed, or split-plot, design). The
univariate repeated-measures ANOVA splits the variation into a between-units stratum
(groups, and units within groups as its error) and a within-units stratum (the within
factor, its interaction with the groups, and the units' residual as its error); the
within tests are corrected for non-sphericity with the epsilons in `sphericity`
(Greenhouse & Geisser 1959; Huynh & Feldt 1976). Single-df within contrasts and level
means use each unit's own scores and need no sphericity.

Statistical output is not a clinical or regulatory decision: the study's own governance,
local regulations and a qualified, licensed statistician decide what the numbers mean.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import pandas as pd
from scipy import stats as _st

from appendix.errors import InternalError
from appendix.results import StatWarning
from appendix.stats.contrasts import ALTERNATIVES, critical_value, interval, p_value
from appendix.stats.descriptives import check_confidence
from appendix.stats.effect_sizes import noncentrality_interval
from appendix.stats.sphericity import Sphericity, centred, sphericity

__all__ = [
    "CompleteUnits", "LevelMean", "RepeatedFit", "RepeatedRow", "Sphericity", "WithinContrast",
    "WithinMeans", "complete_units", "repeated_measures", "within_contrast", "within_means",
]


# --- the complete-units rule ------------------------------------------------------------


@dataclass(frozen=True)
class CompleteUnits:
    """Units with a value at every within level, as a matrix, and who was left out.

    `y[i, l]` is unit `units[i]`'s value at within level l (read-only); `groups[i]` its
    between-group code (read-only), or None without a grouping; `dropped` lists each unit
    left out with the reason, in first-seen order.
    """

    y: np.ndarray
    units: tuple[str, ...]
    groups: np.ndarray | None
    dropped: tuple[tuple[str, str], ...]


def complete_units(unit_ids: Sequence[str], within_codes: np.ndarray, values: np.ndarray,
                   levels: int, group_codes: np.ndarray | None = None, *,
                   level_names: Sequence[str] | None = None) -> CompleteUnits:
    """Keep the units observed at every within level (listwise deletion of units).

    Input is long format, one row per (unit, within level): `within_codes` in
    0..levels-1, `values` float with NaN for a missing value, `group_codes` (optional)
    the unit's between-group code on each row, negative when missing. A unit with a
    missing or absent level, or no group, is dropped with a reason such as
    "no value at day14" (`level_names` name the levels; default "level 1", ...).

    Raises ValueError naming the unit when a (unit, level) pair occurs twice or a unit's
    group code differs between its rows; InternalError for malformed arrays.
    """
    ids = np.asarray(unit_ids, dtype=object)
    codes = np.asarray(within_codes)
    values = np.asarray(values, dtype=np.float64)
    names = _level_names(levels, level_names)
    if ids.ndim != 1 or codes.shape != ids.shape or values.shape != ids.shape:
        raise InternalError(f"unit_ids, within_codes and values must be 1-D of one length, got "
                            f"{ids.shape}, {codes.shape} and {values.shape}")
    if codes.size and not np.issubdtype(codes.dtype, np.integer):
        raise InternalError(f"within_codes must be integers, got {codes.dtype}")
    if codes.size and (codes.min() < 0 or codes.max() >= levels):
        raise InternalError(f"within_codes must lie in 0..{levels - 1}, got "
                            f"{codes.min()}..{codes.max()}")
    if np.isinf(values).any():
        raise InternalError("values must be finite or NaN (missing)")
    unit_code, uniques = pd.factorize(ids, sort=False, use_na_sentinel=True)
    if (unit_code < 0).any():
        raise InternalError("unit_ids must not be missing")
    unit_names = tuple(str(u) for u in uniques)
    slot = unit_code.astype(np.int64) * levels + codes
    counts = np.bincount(slot, minlength=len(unit_names) * levels)
    if (counts > 1).any():
        unit, level = divmod(int(np.flatnonzero(counts > 1)[0]), levels)
        raise ValueError(f"unit '{unit_names[unit]}' has more than one row for within level "
                         f"'{names[level]}'")
    y = np.full((len(unit_names), levels), np.nan)
    y.flat[slot] = values
    keep = ~np.isnan(y).any(axis=1)
    groups = None
    if group_codes is not None:
        groups = _unit_groups(np.asarray(group_codes), unit_code, unit_names)
        keep &= groups >= 0
    dropped = tuple((unit_names[i], _why_dropped(y[i], groups, i, names))
                    for i in np.flatnonzero(~keep))
    kept_y = np.ascontiguousarray(y[keep])
    kept_y.setflags(write=False)
    if groups is not None:
        groups = groups[keep]
        groups.setflags(write=False)
    return CompleteUnits(kept_y, tuple(unit_names[i] for i in np.flatnonzero(keep)), groups,
                         dropped)


def _level_names(levels: int, level_names: Sequence[str] | None) -> tuple[str, ...]:
    if not isinstance(levels, (int, np.integer)) or levels < 1:
        raise InternalError(f"levels must be a positive integer, got {levels!r}")
    if level_names is None:
        return tuple(f"level {i + 1}" for i in range(levels))
    if len(level_names) != levels:
        raise InternalError(f"{len(level_names)} level names given for {levels} levels")
    return tuple(str(n) for n in level_names)


def _unit_groups(group_codes: np.ndarray, unit_code: np.ndarray,
                 unit_names: tuple[str, ...]) -> np.ndarray:
    """Each unit's group code; ValueError naming the first unit whose rows disagree."""
    if group_codes.shape != unit_code.shape:
        raise InternalError(f"group_codes has shape {group_codes.shape}, expected "
                            f"{unit_code.shape}")
    if group_codes.size and not np.issubdtype(group_codes.dtype, np.integer):
        raise InternalError(f"group_codes must be integers, got {group_codes.dtype}")
    codes = group_codes.astype(np.int64)
    low = np.full(len(unit_names), np.iinfo(np.int64).max)
    high = np.full(len(unit_names), np.iinfo(np.int64).min)
    np.minimum.at(low, unit_code, codes)
    np.maximum.at(high, unit_code, codes)
    varying = np.flatnonzero(low != high)
    if varying.size:
        raise ValueError(f"unit '{unit_names[varying[0]]}' has more than one group code "
                         "across its rows")
    return low


def _why_dropped(row: np.ndarray, groups: np.ndarray | None, i: int,
                 names: tuple[str, ...]) -> str:
    reasons = []
    if groups is not None and groups[i] < 0:
        reasons.append("no group")
    missing = [names[level] for level in np.flatnonzero(np.isnan(row))]
    if missing:
        reasons.append("no value at " + ", ".join(missing))
    return "; ".join(reasons)


# --- the univariate repeated-measures ANOVA ---------------------------------------------


@dataclass(frozen=True)
class RepeatedRow:
    """One source of variation in the repeated-measures table.

    `kind` is ``between`` (tested against the between-units error), ``within`` (tested
    against the within-units error; has Greenhouse–Geisser and Huynh–Feldt corrected df
    and p, except with two within levels, where sphericity holds by construction) or
    ``error``. Partial eta and omega squared share one noncentral-F interval at
    `confidence_level` (1 - 2 alpha; Steiger 2004), computed on `effect_ci_df`: the df of
    the test in force, i.e. the Greenhouse–Geisser corrected df of a within term (when
    its epsilon exists), else the term's df and its error df; None without an interval.
    `statistic` is the F ratio MS / MS_error, `p` its right tail on (`df`, error df).
    """

    term: tuple[str, ...]
    label: str
    kind: str
    df: float
    ss: float
    ms: float | None
    statistic: float | None
    p: float | None
    gg_df: tuple[float, float] | None
    gg_p: float | None
    hf_df: tuple[float, float] | None
    hf_p: float | None
    partial_eta_squared: float | None
    partial_eta_ci: tuple[float, float] | None
    partial_omega_squared: float | None
    partial_omega_ci: tuple[float, float] | None
    confidence_level: float
    warnings: tuple[StatWarning, ...] = ()
    effect_ci_df: tuple[float, float] | None = None


@dataclass(frozen=True, eq=False)
class RepeatedFit:
    """The repeated-measures table of one outcome.

    Rows in order: the between factor, the between-units error, the within factor, the
    within x between interaction, the within-units error (the between rows and the
    interaction only with a grouping). `n_units` counts the complete units analysed.
    """

    within: str
    within_levels: tuple[str, ...]
    between: str | None
    between_levels: tuple[str, ...]
    rows: tuple[RepeatedRow, ...]
    sphericity: Sphericity
    n_units: int
    warnings: tuple[StatWarning, ...] = ()


@dataclass(frozen=True)
class _Strata:
    """Sums of squares of the two strata, each from centred quantities."""

    ss_between: float
    ss_units: float
    ss_within: float
    ss_interaction: float
    ss_error: float
    n_units: int
    n_groups: int
    levels: int
    noise: float


def _strata(y: np.ndarray, codes: np.ndarray) -> _Strata:
    """Partition the variation of `y` (units x levels) with groups `codes`.

    Between units: m sum_j n_j (G_j - G)^2 for the groups and m sum_i (U_i - G_j(i))^2
    for units within groups, from the unit means U_i, group means G_j and grand mean G.
    Within units, on r_il = y_il - U_i: N sum_l rbar_l^2 for the within factor,
    sum_j n_j sum_l (rbar_jl - rbar_l)^2 for the interaction and
    sum_il (r_il - rbar_j(i)l)^2 for the error. With unequal group sizes the within
    factor is averaged over all units (weighted by group size), as its test adjusted for
    the grouping (the two strata are orthogonal) and not for the interaction. `noise` is
    the size a sum of squares can reach from rounding alone.
    """
    n_units, levels = y.shape
    if n_units == 0:
        return _Strata(0.0, 0.0, 0.0, 0.0, 0.0, 0, 0, levels, 0.0)
    scale = float(np.max(np.abs(y)))
    y, _ = centred(y)
    unit_mean = y.mean(axis=1)
    grand = unit_mean.mean()
    r = y - unit_mean[:, None]
    level_dev = r.mean(axis=0)
    occupied = np.unique(codes)
    ss_between = ss_units = ss_interaction = ss_error = 0.0
    for code in occupied:
        rows = codes == code
        n_j = int(rows.sum())
        group_mean = unit_mean[rows].mean()
        cell_dev = r[rows].mean(axis=0)
        ss_between += levels * n_j * (group_mean - grand) ** 2
        ss_units += levels * float(np.sum((unit_mean[rows] - group_mean) ** 2))
        ss_interaction += n_j * float(np.sum((cell_dev - level_dev) ** 2))
        ss_error += float(np.sum((r[rows] - cell_dev) ** 2))
    ss_within = n_units * float(np.sum(level_dev**2))
    noise = y.size * (64.0 * np.finfo(float).eps * scale) ** 2
    return _Strata(float(ss_between), ss_units, ss_within, ss_interaction, ss_error,
                   n_units, int(occupied.size), levels, noise)


def repeated_measures(data: CompleteUnits, within: str, within_levels: Sequence[str],
                      between: str | None = None, between_levels: Sequence[str] = (),
                      alpha: float = 0.05) -> RepeatedFit:
    """Univariate repeated-measures (split-plot) ANOVA with sphericity corrections.

    F tests as in Winer, Brown & Michels (1991, *Statistical Principles in Experimental
    Design*, 3rd ed.): the between factor against units within groups, on
    (g - 1, N - g) df; the within factor and the interaction against the within-units
    error, on (d, d(N - g)) and (d(g - 1), d(N - g)) df, d = levels - 1. With d > 1 every
    within term also gets df multiplied by the Greenhouse–Geisser and by the Huynh–Feldt
    (Lecoutre 1991) epsilon and the p on them (see `sphericity`); with d = 1 epsilon is 1
    by construction and no correction is given. Without `between` any groups in
    `data` are ignored. Effect sizes: partial eta squared SS / (SS + SS_error) and
    partial omega squared df1 (F - 1) / (df1 (F - 1) + df1 + df2 + 1); their interval is
    the noncentral-F interval at 1 - 2 alpha (Steiger 2004) on the df of the test in
    force (see `effect_row`).
    """
    if not 0.0 < alpha < 0.5:
        raise InternalError(f"alpha must lie strictly between 0 and 0.5, got {alpha!r}")
    y = data.y
    if len(within_levels) != y.shape[1]:
        raise InternalError(f"{len(within_levels)} within levels named for {y.shape[1]} columns")
    if y.shape[1] < 2:
        raise InternalError("a within factor needs at least two levels")
    codes = _design_groups(data, between, between_levels)
    notes = list(_fit_notes(data, codes, between_levels))
    confidence = 1.0 - 2.0 * alpha
    if y.shape[0] == 0:
        notes.append(StatWarning("no-complete-units",
                                 "No unit has a value at every within level, so nothing can be "
                                 "estimated."))
    strata = _strata(y, codes)
    spher = sphericity(y, codes)
    d = strata.levels - 1
    df_units = max(strata.n_units - strata.n_groups, 0)
    df_groups = max(strata.n_groups - 1, 0)
    within_error = (strata.ss_error, d * df_units)
    rows = []
    if between is not None:
        rows.append(effect_row((between,), between, "between", strata.ss_between, df_groups,
                               (strata.ss_units, df_units), strata.noise, None, confidence))
    rows.append(error_row(("units",), "Error between units", strata.ss_units, df_units,
                          confidence))
    rows.append(effect_row((within,), within, "within", strata.ss_within, d, within_error,
                           strata.noise, spher, confidence))
    if between is not None:
        rows.append(effect_row((within, between), f"{within} x {between}", "within",
                               strata.ss_interaction, d * df_groups, within_error,
                               strata.noise, spher, confidence))
    rows.append(error_row((within, "units"), "Error within units", strata.ss_error,
                          d * df_units, confidence))
    return RepeatedFit(within, tuple(within_levels), between, tuple(between_levels),
                       tuple(rows), spher, strata.n_units, tuple(notes))


def _design_groups(data: CompleteUnits, between: str | None,
                   between_levels: Sequence[str]) -> np.ndarray:
    """The group code of each unit (all 0 without a grouping)."""
    n_units = data.y.shape[0]
    if between is None:
        return np.zeros(n_units, dtype=np.intp)
    if data.groups is None:
        raise InternalError(f"between factor '{between}' given but the units carry no groups")
    codes = np.asarray(data.groups)
    if codes.size and (codes.min() < 0 or codes.max() >= len(between_levels)):
        raise InternalError(f"group codes must lie in 0..{len(between_levels) - 1}")
    return codes.astype(np.intp)


def _fit_notes(data: CompleteUnits, codes: np.ndarray, between_levels: Sequence[str]):
    if data.dropped:
        count = len(data.dropped)
        yield StatWarning("units-dropped",
                          f"{count} unit{'s' if count != 1 else ''} without a value at every "
                          "within level (or without a group) "
                          f"{'were' if count != 1 else 'was'} left out of the analysis.")
    empty = [f"'{name}'" for i, name in enumerate(between_levels) if not np.any(codes == i)]
    if empty:
        yield StatWarning("group-no-complete-units",
                          f"Group(s) {', '.join(empty)} have no complete units and take no part "
                          "in the analysis.")


def error_row(term: tuple[str, ...], label: str, ss: float, df: int,
              confidence: float) -> RepeatedRow:
    ms = ss / df if df > 0 else None
    return RepeatedRow(term, label, "error", float(df), ss, ms, None, None, None, None, None,
                       None, None, None, None, None, confidence)


def effect_row(term: tuple[str, ...], label: str, kind: str, ss: float, df: int,
               error: tuple[float, int], noise: float, spher: Sphericity | None,
               confidence: float) -> RepeatedRow:
    """One tested term: F, p, corrected df and p (within terms), effect sizes. An error
    SS at or below `noise` counts as no variation (F undefined).

    With two within levels (lower bound 1/d = 1) there is a single contrast, so
    sphericity holds by construction and epsilon is 1: no corrected df or p are given
    and the test in force is the uncorrected one.

    The effect-size interval inverts the noncentral F (Steiger 2004, Psychological
    Methods 9:164-182) on the df of the test in force: for a within term the
    Greenhouse–Geisser corrected (eps df1, eps df2), which need not be integers; for a
    between term, or when the epsilon is undefined, (df1, df2). Its noncentrality bounds
    are turned into partial eta squared as lambda / (lambda + df1 + df2 + 1) on those same
    df, so that the 1 - 2 alpha interval excludes zero exactly when that test rejects at
    alpha. The point estimates do not use the correction: partial eta squared
    SS / (SS + SS_error) = df1 F / (df1 F + df2) is the same on either df, and partial
    omega squared keeps its usual uncorrected df.
    """
    ss_error, df_error = error
    ms = ss / df if df > 0 else None
    why = _f_undefined(ss, df, ss_error, df_error, noise)
    if why is not None:
        return RepeatedRow(term, label, kind, float(df), ss, ms, None, None, None, None, None,
                           None, None, None, None, None, confidence, (why,))
    f = ms / (ss_error / df_error)
    p = float(_st.f.sf(f, df, df_error))
    gg_df = gg_p = hf_df = hf_p = None
    if spher is not None and spher.lower_bound < 1.0:
        gg_df, gg_p = _corrected(f, df, df_error, spher.greenhouse_geisser)
        hf_df, hf_p = _corrected(f, df, df_error, spher.huynh_feldt)
    eta = ss / (ss + ss_error)
    omega = df * (f - 1.0) / (df * (f - 1.0) + df + df_error + 1.0)
    notes: tuple[StatWarning, ...] = ()
    share = None
    # The interval must answer to the test that decides (the corrected one), or it can
    # exclude zero while that test does not reject.
    on = gg_df if gg_df is not None else (float(df), float(df_error))
    bounds = noncentrality_interval(f, *on, confidence)
    if bounds is None:
        notes = (StatWarning("effect-size-ci-unavailable",
                             f"F = {f:.4g} is too large for the noncentral-F interval to be "
                             "computed reliably; the interval is not reported."),)
        on = None
    else:
        size = on[0] + on[1] + 1.0
        share = (bounds[0] / (bounds[0] + size), bounds[1] / (bounds[1] + size))
    return RepeatedRow(term, label, kind, float(df), ss, ms, float(f), p, gg_df, gg_p, hf_df,
                       hf_p, eta, share, omega, share, confidence, notes, on)


def _f_undefined(ss: float, df: int, ss_error: float, df_error: int,
                 noise: float) -> StatWarning | None:
    if df <= 0:
        return StatWarning("term-no-df", "This term has no degrees of freedom (a single "
                                         "group or level has complete units), so it is not "
                                         "tested.")
    if not math.isfinite(ss):
        return StatWarning("term-not-estimable", "The data do not estimate this term's "
                                                 "hypothesis (a cell mean it needs is missing), "
                                                 "so it is not tested.")
    if df_error <= 0:
        return StatWarning("no-error-df", "There are no error degrees of freedom (too few "
                                          "units), so the F ratio is undefined.")
    if ss_error <= noise:
        return StatWarning("zero-error-variance", "The error term shows no variation, so the "
                                                  "F ratio is undefined.")
    return None


def _corrected(f: float, df: int, df_error: int,
               epsilon: float | None) -> tuple[tuple[float, float] | None, float | None]:
    """(epsilon df, epsilon df_error) and the p of F on them; None without an epsilon."""
    if epsilon is None:
        return None, None
    df1, df2 = epsilon * df, epsilon * df_error
    return (df1, df2), float(_st.f.sf(f, df1, df2))


# --- contrasts and means of the within factor -------------------------------------------


@dataclass(frozen=True)
class WithinContrast:
    """A contrast sum_l w_l mu_l of the within levels, tested on the units' own scores.

    `estimate` is the mean contrast score; `se` its standard error on `df` df; `statistic`
    (the t ratio), `p` (for `alternative`) and the CI at `confidence_level` (one-sided:
    one end None).
    """

    weights: tuple[float, ...]
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


@dataclass(frozen=True)
class LevelMean:
    """The mean of one within level (index `level`) over `n` units, with its CI."""

    level: int
    n: int
    mean: float | None
    se: float | None
    df: int
    ci_low: float | None
    ci_high: float | None
    warnings: tuple[StatWarning, ...] = ()


@dataclass(frozen=True)
class WithinMeans:
    """Means of every within level (all units, or the units of `group`), with CIs."""

    group: int | None
    confidence_level: float
    means: tuple[LevelMean, ...]


@dataclass(frozen=True)
class _ScoreSummary:
    n: int
    mean: float | None
    se: float | None
    df: int
    warning: StatWarning | None


def _scores(data: CompleteUnits, group: int | None) -> tuple[np.ndarray, np.ndarray]:
    """The rows of `data.y` in use and their group codes (one code when `group` is set)."""
    y = data.y
    if group is None:
        codes = (np.zeros(y.shape[0], dtype=np.intp) if data.groups is None
                 else np.asarray(data.groups))
        return y, codes
    if data.groups is None:
        raise InternalError(f"group {group} requested but the units carry no groups")
    rows = np.asarray(data.groups) == group
    return y[rows], np.zeros(int(rows.sum()), dtype=np.intp)


def _summarise(scores: np.ndarray, codes: np.ndarray, scale: float,
               offset: float) -> _ScoreSummary:
    """Mean of `scores` + `offset` and its SE from their variance pooled within groups,
    df n - g (`scores` come from centred data; `offset` puts the shift back).

    With group sizes n_j the mean over all units is sum_j n_j m_j / n, whose variance is
    sigma^2 / n when the group means are fixed effects (the groups are part of the
    design), so its SE is sqrt(SS_pooled / (n - g) / n).
    """
    n = int(scores.size)
    if n == 0:
        return _ScoreSummary(0, None, None, 0, StatWarning(
            "no-units", "No complete units are available, so nothing can be estimated."))
    occupied = np.unique(codes)
    ssd = 0.0
    for code in occupied:
        part = scores[codes == code]
        ssd += float(np.sum((part - part.mean()) ** 2))
    df = n - int(occupied.size)
    mean = float(scores.mean()) + offset
    if df <= 0:
        return _ScoreSummary(n, mean, None, 0, StatWarning(
            "single-unit", "A single unit (per group) gives no estimate of variation, so "
                           "there is no standard error."))
    if ssd <= n * (64.0 * np.finfo(float).eps * scale) ** 2:
        return _ScoreSummary(n, mean, None, df, StatWarning(
            "zero-variance", "The scores show no variation between units, so the test "
                             "statistic and interval are undefined."))
    return _ScoreSummary(n, mean, math.sqrt(ssd / df / n), df, None)


def within_contrast(data: CompleteUnits, weights: Sequence[float], *, group: int | None = None,
                    alternative: str = "two-sided", confidence: float = 0.95) -> WithinContrast:
    """One-sample t test of the units' contrast scores s_i = sum_l w_l y_il.

    Each unit's own score carries its own error, so the test needs no sphericity
    (Maxwell & Delaney 2004, *Designing Experiments and Analyzing Data*, 2nd ed., chs.
    11-14: the separate-variance test of a within contrast). Without groups: t on n - 1
    df. In a mixed design the mean over all units is tested with the scores' variance
    pooled within groups, on N - g df. `group` restricts the data to that group's units
    (a simple effect), then t on n_group - 1 df from that group's scores alone, with no
    assumption that the groups share a covariance matrix.
    """
    confidence = check_confidence(confidence)
    if alternative not in ALTERNATIVES:
        raise InternalError(f"alternative must be one of {ALTERNATIVES}, got {alternative!r}")
    w = np.asarray(weights, dtype=np.float64)
    if w.shape != (data.y.shape[1],):
        raise InternalError(f"{w.size} weights given for {data.y.shape[1]} within levels")
    if not np.any(w != 0.0):
        raise InternalError("a within contrast needs at least one nonzero weight")
    y, codes = _scores(data, group)
    scale = float(np.max(np.abs(y))) * float(np.sum(np.abs(w))) if y.size else 0.0
    y, shift = centred(y)
    s = _summarise(y @ w, codes, scale, shift * float(w.sum()))
    weights_out = tuple(float(v) for v in w)
    if s.se is None:
        return WithinContrast(weights_out, s.mean, None, s.df, None, None, alternative, None,
                              None, confidence, (s.warning,) if s.warning else ())
    t = s.mean / s.se
    low, high = interval(s.mean, s.se, critical_value(s.df, alternative, confidence), alternative)
    return WithinContrast(weights_out, s.mean, s.se, s.df, t, p_value(t, s.df, alternative),
                          alternative, low, high, confidence)


def within_means(data: CompleteUnits, confidence: float,
                 group: int | None = None) -> WithinMeans:
    """Mean of each within level with a two-sided t interval.

    The error of a level mean is the variation among units at that level (pooled within
    groups, df N - g, in a mixed design; that group's own units, df n - 1, for one group
    or with `group`), not the ANOVA's within-units error mean square: that term measures
    how units' differences between levels vary once each unit's own mean is removed, so
    it is the error for comparing levels and assumes sphericity, while a level mean also
    varies with the units' overall level (Loftus & Masson 1994, Psychon Bull Rev
    1:476-490, discuss the distinction). Each level mean is `within_contrast` with weight
    1 at that level.
    """
    confidence = check_confidence(confidence)
    y, codes = _scores(data, group)
    scale = float(np.max(np.abs(y))) if y.size else 0.0
    y, shift = centred(y)
    means = []
    for level in range(y.shape[1]):
        s = _summarise(y[:, level], codes, scale, shift)
        low = high = None
        if s.se is not None:
            low, high = interval(s.mean, s.se,
                                 critical_value(s.df, "two-sided", confidence), "two-sided")
        means.append(LevelMean(level, s.n, s.mean, s.se, s.df, low, high,
                               (s.warning,) if s.warning else ()))
    return WithinMeans(group, confidence, tuple(means))
