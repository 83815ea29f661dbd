"""One-way layouts from cell statistics: the between/within partition and Welch's test.

The variance table a one-factor outcome reports is the design engine's one-term model
(`appendix.stats.linear`); `partition` serves the tests that are themselves one-way
analyses of variance (Brown–Forsythe on absolute deviations) and words the one-way
layout's own notes on a one-factor table (`appendix.models`).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import stats as _st

from appendix.results import StatWarning, WelchAnova, Warnings
from appendix.stats.cells import CellStats, layout_warnings, single_group_warning, ss_between


@dataclass(frozen=True)
class Partition:
    """The partition of the total sum of squares into between- and within-cell parts.

    `statistic` is the F ratio MS_between / MS_within; it and `p` are None (with a
    warning) when the F ratio is undefined: fewer than two occupied cells, no within-cell
    degrees of freedom, or zero within-cell variance.
    """

    ss_between: float
    ss_within: float
    df_between: int
    df_within: int
    ms_between: float | None
    ms_within: float | None
    statistic: float | None
    p: float | None
    warnings: Warnings


def partition(cells: CellStats) -> Partition:
    """Split the variation of the data by cell and form F = MS_between / MS_within.

    F is referred to F(k - 1, N - k), right tail (Fisher 1925, *Statistical Methods for
    Research Workers*), where k counts occupied cells only.

    >>> from appendix.stats.cells import cell_stats
    >>> c = cell_stats(np.array([1.0, 2.0, 3.0, 5.0, 6.0, 7.0]), np.array([0, 0, 0, 1, 1, 1]), 2)
    >>> part = partition(c)
    >>> part.ss_between, part.ss_within, part.statistic
    (24.0, 4.0, 24.0)
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
