"""Descriptive statistics per level of the factor."""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np
from scipy import stats as _st

from appendix.errors import InternalError
from appendix.results import Descriptives, GroupSummary
from appendix.stats.cells import cell_stats, layout_warnings


def check_confidence(confidence: float) -> float:
    """Return `confidence` if it lies strictly between 0 and 1, else raise InternalError."""
    if not 0.0 < confidence < 1.0:
        raise InternalError(f"confidence must lie strictly between 0 and 1, got {confidence!r}")
    return float(confidence)


def split_by_code(values: np.ndarray, codes: np.ndarray, k: int) -> list[np.ndarray]:
    """The values of each cell, in data order, one array per code 0..k-1."""
    order = np.argsort(codes, kind="stable")
    bounds = np.searchsorted(codes[order], np.arange(1, k))
    return np.split(values[order], bounds)


def describe(
    values: np.ndarray,
    codes: np.ndarray,
    levels: Sequence[str],
    n_missing_by_level: Sequence[int],
    confidence: float,
) -> Descriptives:
    """Per level: n, missing, mean, SD (n - 1), SE, t-based CI of the mean, quartiles, range.

    The CI is mean +/- t_{1-(1-confidence)/2, n-1} * SE (Student 1908). Quartiles use
    linear interpolation between order statistics (Hyndman & Fan 1996, definition 7).
    A level with no units gets None throughout; one unit gives no SD, SE or CI.
    """
    confidence = check_confidence(confidence)
    k = len(levels)
    if len(n_missing_by_level) != k:
        raise InternalError(f"{len(n_missing_by_level)} missing counts given for {k} levels")
    cells = cell_stats(values, codes, k, levels)
    groups = []
    for i, (level, group) in enumerate(zip(cells.labels, split_by_code(np.asarray(values), np.asarray(codes), k))):
        groups.append(_summary(level, group, cells.mean[i], cells.ssd[i],
                               int(n_missing_by_level[i]), confidence))
    return Descriptives(confidence, tuple(groups), layout_warnings(cells))


def _summary(level: str, group: np.ndarray, mean: float, ssd: float, n_missing: int,
             confidence: float) -> GroupSummary:
    n = int(group.size)
    if n == 0:
        return GroupSummary(level, 0, n_missing, *([None] * 10))
    q1, median, q3 = (float(q) for q in np.quantile(group, [0.25, 0.5, 0.75], method="linear"))
    sd, se, low, high = mean_interval(n, float(mean), float(ssd), confidence)
    return GroupSummary(level, n, n_missing, float(mean), sd, se, low, high, median, q1, q3,
                        float(group.min()), float(group.max()))


def mean_interval(n: int, mean: float, ssd: float, confidence: float):
    """(SD, SE, CI low, CI high) of a mean from n, mean and the sum of squared deviations;
    all None for n < 2. The CI is mean +/- t_{1-(1-confidence)/2, n-1} SE (Student 1908).

    >>> [round(x, 4) for x in mean_interval(4, 10.0, 12.0, 0.95)]
    [2.0, 1.0, 6.8176, 13.1824]
    """
    if n < 2:
        return None, None, None, None
    sd = math.sqrt(ssd / (n - 1))
    se = sd / math.sqrt(n)
    half = float(_st.t.isf((1 - confidence) / 2, n - 1)) * se
    return sd, se, mean - half, mean + half
