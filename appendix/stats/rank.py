"""Kruskal–Wallis rank test for a one-way layout."""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
from scipy import stats as _st

from appendix.results import KruskalWallis, StatWarning
from appendix.stats.cells import cell_stats, check_inputs, layout_warnings, single_group_warning, ss_between


def kruskal_wallis(
    values: np.ndarray, codes: np.ndarray, k: int, levels: Sequence[str] | None = None
) -> KruskalWallis:
    """Kruskal & Wallis (1952, JASA 47:583-621) H test, corrected for ties.

    Values are ranked jointly (ties get mid-ranks). H is computed as the one-way
    between/total ratio of the ranks, H = (N - 1) SS_between(ranks) / SS_total(ranks),
    which equals the textbook 12 / (N (N + 1)) sum R_i^2 / n_i - 3 (N + 1) divided by the
    tie correction C = 1 - sum (t^3 - t) / (N^3 - N), and avoids its cancellation.
    H is referred to chi-squared on (occupied levels - 1) df, right tail.

    >>> kruskal_wallis(np.array([1.0, 3, 5, 7, 9, 2, 4, 6, 8, 10]), np.repeat([0, 1], 5), 2).statistic
    0.2727272727272727
    """
    values, codes = check_inputs(values, codes, k)
    ranks = _st.rankdata(values, method="average")
    cells = cell_stats(ranks, codes, k, levels)
    warnings = list(layout_warnings(cells))
    single = single_group_warning(cells)
    if single is not None:
        return KruskalWallis(None, None, None, None, (*warnings, single))
    n = float(values.size)
    _, ties = np.unique(values, return_counts=True)
    ties = ties.astype(np.float64)
    correction = 1.0 - float(np.sum(ties**3 - ties)) / (n**3 - n)
    df = cells.k_occupied - 1
    ss_ranks_between = ss_between(cells)
    ss_total = ss_ranks_between + cells.ss_within
    if ss_total == 0.0:
        warnings.append(StatWarning(
            "all-identical", "All analysed values are tied; the Kruskal–Wallis test is undefined."))
        return KruskalWallis(None, df, None, correction, tuple(warnings))
    h = (n - 1.0) * ss_ranks_between / ss_total
    return KruskalWallis(h, df, float(_st.chi2.sf(h, df)), correction, tuple(warnings))
