"""Per-cell statistics: the sufficient statistics of every one-way fit.

One grouped pass over the data gives, per cell (level), the count, the mean and the sum
of squared deviations from the cell mean (`ssd`). Everything in the variance table,
Welch's test and Bartlett's test is then computed from these k numbers per cell, so the
cost after the pass grows with the number of cells, not rows.

Numerics: the data are first centred on one shift (their median), then the classical
two-pass algorithm runs on the centred values: cell means first, squared deviations from
them second (Chan, Golub & LeVeque 1983, "Algorithms for computing the sample variance",
Am. Stat. 37:242-247). The textbook one-pass formula sum(y^2) - (sum y)^2 / n is never
used: it cancels catastrophically when the mean is large relative to the spread.
When the values are decimals (the usual case: data read from text), means and sums of
squares are instead computed exactly on scaled integers and rounded once
(`appendix.stats.exact`); the float64 path remains for other data.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from fractions import Fraction

import numpy as np

from appendix.errors import InternalError
from appendix.results import StatWarning
from appendix.stats.exact import ExactSums, decimal_digits, exact_sums


def _read_only(array: np.ndarray) -> np.ndarray:
    array.flags.writeable = False
    return array


@dataclass(frozen=True, eq=False)
class CellStats:
    """Count, mean and sum of squared deviations of each cell, plus grand n and mean.

    `labels[i]` names cell i (the plan's level, in plan order). `centred_mean[i]` is
    ``mean[i] - shift`` kept at full precision: differences of means are taken from it so
    that a large common offset (NIST SmLs07-09: 13 constant leading digits) does not
    cost digits. Empty cells have n 0, mean NaN and ssd 0. `exact` holds the exact
    integer sums when the data were read as decimals (see `appendix.stats.exact`), else
    None; SS within and between then come from it, rounded once.
    """

    labels: tuple[str, ...]
    n: np.ndarray
    mean: np.ndarray
    ssd: np.ndarray
    shift: float
    centred_mean: np.ndarray
    n_total: int
    grand_mean: float
    exact: ExactSums | None = None

    @property
    def k(self) -> int:
        """Number of cells, empty ones included."""
        return len(self.labels)

    @property
    def occupied(self) -> np.ndarray:
        """Boolean mask of cells with at least one unit."""
        return self.n > 0

    @property
    def k_occupied(self) -> int:
        return int(np.count_nonzero(self.n))

    @property
    def ss_within(self) -> float:
        """Pooled within-cell sum of squares, sum over cells of ssd."""
        if self.exact is not None:
            return float(self.exact.ss_within)
        return float(self.ssd.sum())

    @property
    def df_within(self) -> int:
        return self.n_total - self.k_occupied


def check_inputs(values: np.ndarray, codes: np.ndarray, k: int) -> tuple[np.ndarray, np.ndarray]:
    """Validate the numeric contract (1-D finite float64 values, int codes in 0..k-1).

    A violation is a bug in the stage that built the arrays, so it raises InternalError.
    """
    values = np.asarray(values)
    codes = np.asarray(codes)
    if not isinstance(k, (int, np.integer)) or k < 1:
        raise InternalError(f"k must be a positive integer, got {k!r}")
    if values.ndim != 1 or codes.ndim != 1 or values.shape != codes.shape:
        raise InternalError(
            f"values and codes must be 1-D of equal length, got shapes {values.shape} and {codes.shape}"
        )
    if values.dtype != np.float64:
        raise InternalError(f"values must be float64, got {values.dtype}")
    if codes.size and not np.issubdtype(codes.dtype, np.integer):
        raise InternalError(f"codes must be integers, got {codes.dtype}")
    if not np.all(np.isfinite(values)):
        raise InternalError("values must be finite (missing values are removed before the stats stage)")
    if codes.size and (codes.min() < 0 or codes.max() >= k):
        raise InternalError(f"codes must lie in 0..{k - 1}, got {codes.min()}..{codes.max()}")
    return values, codes.astype(np.intp, copy=False)


def default_labels(k: int) -> tuple[str, ...]:
    return tuple(f"level {i + 1}" for i in range(k))


def cell_stats(
    values: np.ndarray,
    codes: np.ndarray,
    k: int,
    labels: Sequence[str] | None = None,
    *,
    exact: bool = True,
) -> CellStats:
    """Per-cell n, mean and sum of squared deviations in one grouped two-pass sweep.

    With `exact` (the default) and decimal data, means and SSDs are the correctly
    rounded exact values (`appendix.stats.exact`); otherwise the float64 two-pass result.

    >>> c = cell_stats(np.array([1.0, 2.0, 3.0, 5.0]), np.array([0, 0, 1, 1]), 2)
    >>> c.mean.tolist(), c.ssd.tolist()
    ([1.5, 4.0], [0.5, 2.0])
    """
    values, codes = check_inputs(values, codes, k)
    labels = default_labels(k) if labels is None else tuple(labels)
    if len(labels) != k:
        raise InternalError(f"{len(labels)} labels given for {k} cells")
    n = np.bincount(codes, minlength=k)
    # Centring on the median makes each subtraction nearly exact (Sterbenz) when the
    # data share leading digits; the median is robust to a stray extreme value.
    shift = float(np.median(values)) if values.size else 0.0
    mean, centred_mean, ssd = _two_pass(values, codes, n, shift)
    digits = decimal_digits(values) if exact else None
    sums = exact_sums(values, codes, k, digits) if digits is not None else None
    if sums is not None:
        for i in np.flatnonzero(n):
            exact_mean = sums.mean(int(i))
            mean[i] = float(exact_mean)
            centred_mean[i] = float(exact_mean - Fraction(shift))
            ssd[i] = float(sums.ssd[i])
    n_total = int(values.size)
    grand_mean = shift + weighted_centre(n, centred_mean) if n_total else float("nan")
    if sums is not None:
        grand_mean = float(Fraction(sum(sums.sums), n_total * 10**sums.digits))
    return CellStats(
        labels=labels,
        n=_read_only(n.astype(np.int64)),
        mean=_read_only(mean),
        ssd=_read_only(ssd),
        shift=shift,
        centred_mean=_read_only(centred_mean),
        n_total=n_total,
        grand_mean=grand_mean,
        exact=sums,
    )


def _two_pass(values: np.ndarray, codes: np.ndarray, n: np.ndarray, shift: float):
    """Float64 cell means, centred means and SSDs: means of the centred data first,
    squared deviations from them second."""
    k = n.size
    occupied = n > 0
    centred = values - shift
    centred_mean = np.full(k, np.nan)
    centred_mean[occupied] = np.bincount(codes, weights=centred, minlength=k)[occupied] / n[occupied]
    mean = shift + centred_mean
    # A cell whose units are all equal must get SSD exactly 0 and its value as mean (the
    # zero-variance checks downstream depend on it), but n copies of x need not sum to n x.
    low = np.full(k, np.inf)
    high = np.full(k, -np.inf)
    np.minimum.at(low, codes, values)
    np.maximum.at(high, codes, values)
    constant = occupied & (low == high)
    mean[constant] = low[constant]
    centred_mean[constant] = low[constant] - shift
    deviation = centred - centred_mean[codes]
    ssd = np.bincount(codes, weights=deviation * deviation, minlength=k).astype(np.float64)
    return mean, centred_mean, ssd


def weighted_centre(n: np.ndarray, means: np.ndarray) -> float:
    """The n-weighted mean of cell means over occupied cells (NaN if there are none)."""
    occupied = n > 0
    total = int(n[occupied].sum())
    if total == 0:
        return float("nan")
    return float(np.dot(n[occupied], means[occupied]) / total)


def ss_between(cells: CellStats) -> float:
    """Between-cell sum of squares, sum of n_i (mean_i - grand mean)^2 over occupied cells.

    Computed from the centred means, so a large common offset cancels exactly before
    the squares are taken.
    """
    if cells.exact is not None:
        return float(cells.exact.ss_between)
    occupied = cells.occupied
    if not occupied.any():
        return 0.0
    grand = weighted_centre(cells.n, cells.centred_mean)
    gap = cells.centred_mean[occupied] - grand
    return float(np.dot(cells.n[occupied], gap * gap))


def residuals(values: np.ndarray, codes: np.ndarray, cells: CellStats) -> np.ndarray:
    """Residuals of the one-way model, y - mean of the unit's cell, in data order."""
    values, codes = check_inputs(values, codes, cells.k)
    return (values - cells.shift) - cells.centred_mean[codes]


def layout_warnings(cells: CellStats) -> tuple[StatWarning, ...]:
    """Warnings about empty cells and single-unit cells, one per affected level."""
    found: list[StatWarning] = []
    for label, count in zip(cells.labels, cells.n.tolist()):
        if count == 0:
            found.append(StatWarning(
                "empty-level", f"Level '{label}' has no analysed units; it is left out of the tests."))
        elif count == 1:
            found.append(StatWarning(
                "group-n-one",
                f"Level '{label}' has a single unit, so its variance cannot be estimated."))
    return tuple(found)


def single_group_warning(cells: CellStats) -> StatWarning | None:
    """A warning when fewer than two levels have units (no comparison is possible)."""
    if cells.k_occupied >= 2:
        return None
    return StatWarning(
        "single-group",
        f"Fewer than two levels have analysed units (found {cells.k_occupied}); "
        "groups cannot be compared.",
    )
