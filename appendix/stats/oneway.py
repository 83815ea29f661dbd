"""One-way analysis of variance from cell statistics: Fisher's F test and Welch's test."""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy import stats as _st

from appendix.errors import InternalError
from appendix.results import OneWayTable, StatWarning, VarianceRow, WelchAnova, Warnings
from appendix.stats.cells import CellStats, layout_warnings, single_group_warning, ss_between


@dataclass(frozen=True)
class Partition:
    """The partition of the total sum of squares into between- and within-cell parts.

    `f` and `p` are None (with a warning) when the F ratio is undefined: fewer than two
    occupied cells, no within-cell degrees of freedom, or zero within-cell variance.
    """

    ss_between: float
    ss_within: float
    df_between: int
    df_within: int
    ms_between: float | None
    ms_within: float | None
    f: float | None
    p: float | None
    warnings: Warnings

    @property
    def ss_total(self) -> float:
        return self.ss_between + self.ss_within

    @property
    def df_total(self) -> int:
        return self.df_between + self.df_within


def partition(cells: CellStats) -> Partition:
    """Split the variation of the data by cell and form F = MS_between / MS_within.

    F is referred to F(k - 1, N - k), right tail (Fisher 1925, *Statistical Methods for
    Research Workers*), where k counts occupied cells only.
    """
    warnings: list[StatWarning] = list(layout_warnings(cells))
    ssb = ss_between(cells)
    ssw = cells.ss_within
    df_b = max(cells.k_occupied - 1, 0)
    df_w = max(cells.df_within, 0)
    ms_b = ssb / df_b if df_b > 0 else None
    ms_w = ssw / df_w if df_w > 0 else None
    f = p = None
    single = single_group_warning(cells)
    if single is not None:
        warnings.append(single)
    elif df_w == 0:
        warnings.append(StatWarning(
            "no-within-df",
            "Every level has a single unit, so there is no within-group variation to test against."))
    elif ssb + ssw == 0.0:
        warnings.append(StatWarning(
            "all-identical", "All analysed values are identical; the F test is undefined."))
    elif ssw == 0.0:
        warnings.append(StatWarning(
            "zero-within-variance",
            "Every level has zero within-group variance; the F ratio is undefined (infinite)."))
    else:
        f = ms_b / ms_w
        p = float(_st.f.sf(f, df_b, df_w))
    return Partition(ssb, ssw, df_b, df_w, ms_b, ms_w, f, p, tuple(warnings))


def variance_table(cells: CellStats, alpha: float) -> OneWayTable:
    """The classical one-way variance table: between, within and total rows.

    `critical_f` is the upper-`alpha` point of F(df_between, df_within) (from `isf`);
    `r_squared` = SS_between / SS_total; `residual_sd` = sqrt(MS_within).

    >>> from appendix.stats.cells import cell_stats
    >>> c = cell_stats(np.array([1.0, 2.0, 3.0, 5.0, 6.0, 7.0]), np.array([0, 0, 0, 1, 1, 1]), 2)
    >>> variance_table(c, 0.05).f
    24.0
    """
    if not 0.0 < alpha < 1.0:
        raise InternalError(f"alpha must lie strictly between 0 and 1, got {alpha!r}")
    part = partition(cells)
    ss_total = part.ss_total
    rows = (
        VarianceRow("between", part.df_between, part.ss_between, part.ms_between, part.f, part.p),
        VarianceRow("within", part.df_within, part.ss_within, part.ms_within, None, None),
        VarianceRow("total", part.df_total, ss_total, None, None, None),
    )
    critical = None
    if part.df_between > 0 and part.df_within > 0:
        critical = float(_st.f.isf(alpha, part.df_between, part.df_within))
    return OneWayTable(
        rows=rows,
        df_between=part.df_between,
        df_within=part.df_within,
        f=part.f,
        p=part.p,
        alpha=alpha,
        critical_f=critical,
        r_squared=part.ss_between / ss_total if ss_total > 0 and part.df_between > 0 else None,
        residual_sd=math.sqrt(part.ms_within) if part.ms_within is not None else None,
        warnings=part.warnings,
    )


def welch_anova(cells: CellStats) -> WelchAnova:
    """Welch's (1951, Biometrika 38:330-336) one-way test for unequal variances.

    With weights w_i = n_i / s_i^2, W = sum w_i, the weighted mean m = sum w_i ybar_i / W
    and L = sum (1 - w_i / W)^2 / (n_i - 1):
    F = [sum w_i (ybar_i - m)^2 / (k - 1)] / [1 + 2 (k - 2) L / (k^2 - 1)],
    on k - 1 and (k^2 - 1) / (3 L) degrees of freedom. Empty levels are left out; a
    level with one unit or zero variance makes the test undefined.
    """
    warnings: list[StatWarning] = list(layout_warnings(cells))
    single = single_group_warning(cells)
    if single is not None:
        return WelchAnova(None, None, None, None, (*warnings, single))
    occupied = cells.occupied
    n = cells.n[occupied].astype(np.float64)
    if np.any(n < 2):
        warnings.append(StatWarning(
            "welch-undefined",
            "Welch's test needs at least two units in every level; it is not computed."))
        return WelchAnova(None, None, None, None, tuple(warnings))
    variance = cells.ssd[occupied] / (n - 1)
    labels = [label for label, occ in zip(cells.labels, occupied) if occ]
    flat = [f"'{label}'" for label, v in zip(labels, variance) if v == 0.0]
    if flat:
        warnings.append(StatWarning(
            "zero-group-variance",
            f"Level(s) {', '.join(flat)} have zero variance, so Welch's weights are undefined; "
            "the test is not computed."))
        return WelchAnova(None, None, None, None, tuple(warnings))
    k = float(n.size)
    weight = n / variance
    total_weight = weight.sum()
    means = cells.centred_mean[occupied]
    centre = np.dot(weight, means) / total_weight
    gap = means - centre
    numerator = np.dot(weight, gap * gap) / (k - 1)
    lam = float(np.sum((1 - weight / total_weight) ** 2 / (n - 1)))
    denominator = 1 + 2 * (k - 2) * lam / (k * k - 1)
    f = float(numerator / denominator)
    df_num = k - 1
    df_den = (k * k - 1) / (3 * lam)
    return WelchAnova(f, df_num, df_den, float(_st.f.sf(f, df_num, df_den)), tuple(warnings))
