"""Assumption diagnostics of the one-way model: normality, equal variances, outliers."""

from __future__ import annotations

import dataclasses
import math
import warnings as _warnings
from collections.abc import Sequence

import numpy as np
from scipy import stats as _st

from appendix.errors import InternalError
from appendix.results import FlaggedUnit, NormalityTest, OutlierScreen, StatWarning, VarianceTest
from appendix.stats.cells import (
    CellStats, cell_stats, check_inputs, layout_warnings, residuals, single_group_warning)
from appendix.stats.descriptives import split_by_code
from appendix.stats.oneway import partition

SHAPIRO_MAX_N = 5000  # upper end of the range scipy states for its p-value (Royston 1995)
_LAYOUT_CODES = frozenset({"empty-level", "group-n-one", "single-group"})


def shapiro_wilk(residuals: np.ndarray) -> NormalityTest:
    """Shapiro & Wilk (1965, Biometrika 52:591-611) W on the model residuals.

    scipy.stats.shapiro implements Royston's (1995, Appl. Stat. 44:547-551) AS R94
    algorithm; its p-value is stated for 3 <= n <= 5000, so larger n carries a warning.
    """
    x = np.asarray(residuals, dtype=np.float64)
    n = int(x.size)
    if n < 3:
        return NormalityTest("shapiro-wilk", None, None, n, (StatWarning(
            "normality-too-few", f"The Shapiro–Wilk test needs at least 3 residuals; there are {n}."),))
    if np.ptp(x) == 0.0:
        return NormalityTest("shapiro-wilk", None, None, n, (StatWarning(
            "normality-constant", "All residuals are equal; the Shapiro–Wilk test is undefined."),))
    notes: tuple[StatWarning, ...] = ()
    with _warnings.catch_warnings():
        # scipy's own note for n > 5000 is replaced by the typed warning below.
        _warnings.filterwarnings("ignore", message=r"scipy\.stats\.shapiro: For N > 5000",
                                 category=UserWarning)
        w, p = _st.shapiro(x)
    if n > SHAPIRO_MAX_N:
        notes = (StatWarning(
            "normality-p-approximate",
            f"With {n} residuals the Shapiro–Wilk p-value is an extrapolation beyond the "
            f"algorithm's stated range (n <= {SHAPIRO_MAX_N}); read it as approximate."),)
    return NormalityTest("shapiro-wilk", float(w), float(p), n, notes)


def shapiro_wilk_large(residuals: np.ndarray) -> NormalityTest:
    """`shapiro_wilk` of the residuals; beyond 5000 of them (where the Royston 1995
    approximation of its p-value is no longer validated) on a deterministic subsample of
    that many, and the result says so."""
    from appendix.stats.sampling import subsample_indices

    if residuals.size <= SHAPIRO_MAX_N:
        return shapiro_wilk(residuals)
    result = shapiro_wilk(residuals[subsample_indices(residuals.size, SHAPIRO_MAX_N)])
    note = StatWarning("normality-subsample",
                       f"Shapiro–Wilk was computed on a deterministic subsample of "
                       f"{SHAPIRO_MAX_N} of the {residuals.size} residuals.")
    return dataclasses.replace(result, warnings=(*result.warnings, note))


def brown_forsythe(
    values: np.ndarray, codes: np.ndarray, k: int, levels: Sequence[str] | None = None,
    *, decimals: int | None = None,
) -> VarianceTest:
    """Brown & Forsythe (1974, JASA 69:364-367) test of equal variances.

    Levene's (1960) one-way F test applied to |y - median of the unit's level|. With
    `decimals` (the data stage's count for decimal text) the deviations are exact
    decimals with one more digit, and their F test takes the engine's exact path.
    """
    values, codes = check_inputs(values, codes, k)
    spread = _median_deviations(values, codes, k, decimals)
    part = partition(cell_stats(spread, codes, k, levels,
                                decimals=None if decimals is None else decimals + 1))
    if part.statistic is None:
        # Keep the layout warnings; restate the F failure in terms of this test.
        kept = tuple(w for w in part.warnings if w.code in _LAYOUT_CODES)
        failure = (StatWarning(
            "brown-forsythe-undefined",
            "The absolute deviations from the level medians show no within-level variation "
            "(or there are too few units); the Brown–Forsythe test is undefined."),)
        return VarianceTest("brown-forsythe", None, None, None, None, kept + failure)
    return VarianceTest("brown-forsythe", part.statistic, float(part.df_between), float(part.df_within),
                        part.p, part.warnings)


def _median_deviations(values: np.ndarray, codes: np.ndarray, k: int,
                       digits: int | None) -> np.ndarray:
    """|y - median of the unit's level|, as exact decimals when the data are decimals.

    For decimal data (`digits` places) the deviations are formed on the scaled integers
    (a median of integers is an integer or a half), so that they are decimals with
    `digits + 1` places.
    """
    power = 10.0**digits if digits is not None else 1.0
    scaled = np.round(values * power) if digits is not None else values
    medians = np.array([np.median(g) if g.size else np.nan for g in split_by_code(scaled, codes, k)])
    return np.abs(scaled - medians[codes]) / power


def bartlett(cells: CellStats) -> VarianceTest:
    """Bartlett's (1937, Proc. R. Soc. A 160:268-282) test of equal variances.

    With s_i^2 = ssd_i / (n_i - 1), pooled s_p^2 = SS_within / (N - k):
    T = [(N - k) ln s_p^2 - sum (n_i - 1) ln s_i^2] /
        [1 + (sum 1/(n_i - 1) - 1/(N - k)) / (3 (k - 1))], chi-squared on k - 1 df.
    """
    found = list(layout_warnings(cells))
    single = single_group_warning(cells)
    if single is not None:
        return VarianceTest("bartlett", None, None, None, None, (*found, single))
    occupied = cells.occupied
    n = cells.n[occupied].astype(np.float64)
    ssd = cells.ssd[occupied]
    if np.any(n < 2) or np.any(ssd == 0.0):
        found.append(StatWarning(
            "bartlett-undefined",
            "Bartlett's test needs every level to have at least two units and a positive variance; "
            "it is not computed."))
        return VarianceTest("bartlett", None, None, None, None, tuple(found))
    k = float(n.size)
    df_within = float(n.sum() - k)
    pooled = float(ssd.sum()) / df_within
    numerator = df_within * math.log(pooled) - float(np.sum((n - 1) * np.log(ssd / (n - 1))))
    denominator = 1.0 + (float(np.sum(1.0 / (n - 1))) - 1.0 / df_within) / (3.0 * (k - 1))
    t = numerator / denominator
    return VarianceTest("bartlett", t, k - 1, None, float(_st.chi2.sf(t, k - 1)), tuple(found))


def outlier_screen(
    values: np.ndarray,
    codes: np.ndarray,
    cells: CellStats,
    units: Sequence[str],
    levels: Sequence[str],
    threshold: float,
) -> OutlierScreen:
    """`studentized_screen` of the one-way model: residuals from the group means, and the
    leverage of a unit in level i is h = 1/n_i."""
    values, codes = check_inputs(values, codes, cells.k)
    if len(units) != values.size or len(levels) != cells.k:
        raise InternalError("units must match values and levels must match the cells")
    return studentized_screen(values, residuals(values, codes, cells), 1.0 / cells.n[codes],
                              cells.ss_within, cells.df_within, units,
                              [str(levels[c]) for c in codes], threshold)


def studentized_screen(
    values: np.ndarray,
    residual: np.ndarray,
    leverage: np.ndarray,
    ss_residual: float,
    df_residual: int,
    units: Sequence[str],
    groups: Sequence[str],
    threshold: float,
) -> OutlierScreen:
    """Flag units whose externally studentized residual exceeds `threshold` in |t|.

    With residual e, leverage h (the diagonal of the hat matrix), the model's residual
    SS and df: t = e / sqrt(s_(-)^2 (1 - h)), s_(-)^2 = (SS - e^2 / (1 - h)) / (df - 1)
    (Belsley, Kuh & Welsch 1980, *Regression Diagnostics*, ch. 2). Units with leverage 1
    (alone in their cell) have no defined t and are skipped with a warning. `groups[i]`
    names unit i's cell for the report.
    """
    if not threshold > 0:
        raise InternalError(f"threshold must be positive, got {threshold!r}")
    values = np.asarray(values, dtype=np.float64)
    e = np.asarray(residual, dtype=np.float64)
    h = np.asarray(leverage, dtype=np.float64)
    if not (len(units) == len(groups) == values.size == e.size == h.size):
        raise InternalError("units, groups, values, residuals and leverages must match")
    method = "studentized-residual"
    notes: list[StatWarning] = []
    alone = h >= 1.0 - 1e-12
    if alone.any():
        notes.append(StatWarning(
            "outlier-leverage-one",
            f"{int(alone.sum())} unit(s) alone in their cell have leverage 1 and are not screened."))
    screened = ~alone & np.isfinite(e)
    df_left = df_residual - 1
    if df_left < 1 or ss_residual == 0.0:
        notes.append(StatWarning(
            "outlier-undefined",
            "Too few residual degrees of freedom or no residual variation; no unit is screened."))
        return OutlierScreen(method, float(threshold), 0, (), tuple(notes))
    keep = 1.0 - h[screened]
    e_kept = e[screened]
    # s_(-)^2 can reach 0 when one unit carries all residual variation: t is then
    # infinite and the unit is flagged, so the division is allowed to give inf here.
    s2 = np.maximum(ss_residual - e_kept**2 / keep, 0.0) / df_left
    with np.errstate(divide="ignore", invalid="ignore"):
        t = np.where(e_kept == 0.0, 0.0, e_kept / np.sqrt(s2 * keep))
    if np.isinf(t).any():
        notes.append(StatWarning(
            "outlier-infinite",
            f"{int(np.isinf(t).sum())} unit(s) carry all the residual variation left once they are "
            "set aside, so their studentized residual is infinite; they are flagged."))
    index = np.flatnonzero(screened)
    flagged = tuple(
        FlaggedUnit(str(units[i]), str(groups[i]), float(values[i]), float(e[i]), float(ti))
        for i, ti in zip(index, t) if abs(ti) > threshold
    )
    return OutlierScreen(method, float(threshold), int(index.size), flagged, tuple(notes))
