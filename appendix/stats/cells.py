"""Per-cell statistics: the sufficient statistics of every one-way fit.

One grouped pass over the data gives, per cell (level), the count, the mean and the sum
of squared deviations from the cell mean (`ssd`). Everything in the variance table,
Welch's test and Bartlett's test is then computed from these k numbers per cell, so the
cost after the pass grows with the number of cells, not rows.

Numerics: float64 data go through a blocked two-pass sweep with each cell centred on
one of its own values (`appendix.stats.sweep`; Chan, Golub & LeVeque 1983, "Algorithms
for computing the sample variance", Am. Stat. 37:242-247). The textbook one-pass formula
sum(y^2) - (sum y)^2 / n is never used in floating point: it cancels catastrophically
when the mean is large relative to the spread. When the data stage reports that the
values are decimal text (`decimals`), counts, sums and sums of squares are instead exact
integer computations on the scaled values, rounded once (`appendix.stats.exact`).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from fractions import Fraction
from typing import Protocol

import numpy as np

from appendix.errors import InternalError
from appendix.results import StatWarning
from appendix.stats.exact import ExactSums, NotExact, exact_sums
from appendix.stats.sweep import BadInput, FloatSweep, float_sweep


class CellMoments(Protocol):
    """Per-level n, mean and sum of squared deviations, each an array over the levels (the
    data stage's `CellSummary` of a source aggregated out of core)."""

    n: np.ndarray
    mean: np.ndarray
    ssd: np.ndarray


def _read_only(array: np.ndarray) -> np.ndarray:
    array.flags.writeable = False
    return array


@dataclass(frozen=True, eq=False)
class CellStats:
    """Count, mean and sum of squared deviations of each cell, plus grand n and mean.

    `labels[i]` names cell i (the plan's level, in plan order). `centred_mean[i]` is
    ``mean[i] - shift`` kept at full precision: differences of means are taken from it so
    that a large common offset (NIST SmLs07-09: 13 constant leading digits) does not
    cost digits. Empty cells have n 0, mean NaN and ssd 0. `arithmetic` names the path
    that gave the numbers: "exact-decimal" (then `exact` holds the exact integer sums,
    see `appendix.stats.exact`, and SS within and between come from it, rounded once)
    or "float64" (`exact` None). `fallback` says why decimal data were not summed
    exactly (float64 could not carry their digits), else None.
    """

    labels: tuple[str, ...]
    n: np.ndarray
    mean: np.ndarray
    ssd: np.ndarray
    shift: float
    centred_mean: np.ndarray
    n_total: int
    grand_mean: float
    arithmetic: str = "float64"
    exact: ExactSums | None = None
    fallback: str | None = None

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
    decimals: int | None = None,
) -> CellStats:
    """Per-cell n, mean and sum of squared deviations in one grouped sweep.

    `decimals=None`: float64 values, blocked two-pass on values centred per cell
    (`appendix.stats.sweep`). `decimals=d`: the values are the float64 of decimal text
    with at most d digits after the point (the data stage says so); means and SSDs are
    then the correctly rounded exact values (`appendix.stats.exact`), or, when float64
    cannot carry those decimals exactly, the float64 result with the reason in
    `fallback`. `arithmetic` records which path gave the numbers.

    >>> c = cell_stats(np.array([1.0, 2.0, 3.0, 5.0]), np.array([0, 0, 1, 1]), 2)
    >>> c.mean.tolist(), c.ssd.tolist(), c.arithmetic
    ([1.5, 4.0], [0.5, 2.0], 'float64')
    >>> cell_stats(np.array([0.1, 0.2, 0.4]), np.array([0, 0, 1]), 2, decimals=1).ssd.tolist()
    [0.005, 0.0]
    """
    values, codes = _check_shapes(values, codes, k)
    labels = default_labels(k) if labels is None else tuple(labels)
    if len(labels) != k:
        raise InternalError(f"{len(labels)} labels given for {k} cells")
    fallback = None
    try:
        if decimals is not None:
            try:
                return _from_exact(labels, exact_sums(values, codes, k, decimals))
            except NotExact as why:
                fallback = why.reason
        return _from_float(labels, float_sweep(values, codes, k), fallback)
    except BadInput:
        check_inputs(values, codes, k)  # raises the precise contract violation
        raise InternalError("values too large to sum in float64") from None


def cells_from_summary(summary: CellMoments, labels: Sequence[str]) -> CellStats:
    """Cell statistics from per-level n, mean and SSD computed elsewhere (out of core).

    The aggregates arrive as float64, so `arithmetic` is "float64". Empty levels must
    have n 0; their mean is set to NaN and SSD to 0.

    >>> from types import SimpleNamespace
    >>> s = SimpleNamespace(n=np.array([2, 2]), mean=np.array([1.5, 4.0]), ssd=np.array([0.5, 2.0]))
    >>> ss_between(cells_from_summary(s, ("a", "b")))
    6.25
    """
    labels = tuple(labels)
    n = np.asarray(summary.n)
    if not np.issubdtype(n.dtype, np.integer):
        if not np.array_equal(n, np.round(n)):
            raise InternalError("summary counts must be whole numbers")
    n = n.astype(np.int64)
    mean = np.asarray(summary.mean, dtype=np.float64).copy()
    ssd = np.asarray(summary.ssd, dtype=np.float64).copy()
    if not n.shape == mean.shape == ssd.shape == (len(labels),):
        raise InternalError(f"summary arrays must have one entry per level ({len(labels)}), "
                            f"got shapes {n.shape}, {mean.shape}, {ssd.shape}")
    occupied = n > 0
    if np.any(n < 0) or not np.all(np.isfinite(mean[occupied])) or np.any(ssd[occupied] < 0):
        raise InternalError("summary needs n >= 0, finite means and SSD >= 0 for occupied levels")
    mean[~occupied] = np.nan
    ssd[~occupied] = 0.0
    shift = _centre_of(mean, occupied)
    return _assemble(labels, n, mean, ssd, shift, mean - shift, "float64")


def _check_shapes(values: np.ndarray, codes: np.ndarray, k: int) -> tuple[np.ndarray, np.ndarray]:
    """The contract checks that cost no pass over the data (the sweeps check the rest)."""
    values = np.asarray(values)
    codes = np.asarray(codes)
    if (not isinstance(k, (int, np.integer)) or k < 1 or values.ndim != 1 or codes.ndim != 1
            or values.shape != codes.shape or values.dtype != np.float64
            or (codes.size and not np.issubdtype(codes.dtype, np.integer))):
        check_inputs(values, codes, k)
    if not np.can_cast(codes.dtype, np.intp):  # uint64: np.bincount refuses it
        codes = codes.astype(np.intp)
    return values, codes


def _centre_of(means: np.ndarray, occupied: np.ndarray) -> float:
    """One common shift: the median of the occupied cells' centres (0 if none)."""
    return float(np.median(means[occupied])) if occupied.any() else 0.0


def _from_float(labels: tuple[str, ...], sweep: FloatSweep, fallback: str | None) -> CellStats:
    occupied = sweep.n > 0
    shift = _centre_of(sweep.pivot, occupied)
    mean = np.where(occupied, sweep.pivot + sweep.centred_mean, np.nan)
    # (pivot - shift) is exact when the pivots share leading digits (Sterbenz); one
    # rounding then joins it to the cell's centred mean.
    centred_mean = np.where(occupied, (sweep.pivot - shift) + sweep.centred_mean, np.nan)
    return _assemble(labels, sweep.n, mean, sweep.ssd, shift, centred_mean, "float64",
                     fallback=fallback)


def _from_exact(labels: tuple[str, ...], sums: ExactSums) -> CellStats:
    k = len(labels)
    mean, centred_mean, ssd = np.full(k, np.nan), np.full(k, np.nan), np.zeros(k)
    exact_means = {i: sums.mean(i) for i in range(k) if sums.n[i] > 0}
    for i, value in exact_means.items():
        mean[i] = float(value)  # Fraction -> float is correctly rounded
        ssd[i] = float(sums.ssd[i])
    n = np.array(sums.n, dtype=np.int64)
    shift = _centre_of(mean, n > 0)
    for i, value in exact_means.items():
        centred_mean[i] = float(value - Fraction(shift))
    grand = Fraction(sum(sums.sums), sum(sums.n) * 10**sums.digits) if sum(sums.n) else None
    return _assemble(labels, n, mean, ssd, shift, centred_mean, "exact-decimal", exact=sums,
                     grand_mean=float(grand) if grand is not None else None)


def _assemble(labels, n, mean, ssd, shift, centred_mean, arithmetic, *, exact=None,
              fallback=None, grand_mean=None) -> CellStats:
    n_total = int(n.sum())
    if grand_mean is None:
        grand_mean = shift + weighted_centre(n, centred_mean) if n_total else float("nan")
    return CellStats(
        labels=labels,
        n=_read_only(n.astype(np.int64)),
        mean=_read_only(mean),
        ssd=_read_only(ssd),
        shift=shift,
        centred_mean=_read_only(centred_mean),
        n_total=n_total,
        grand_mean=grand_mean,
        arithmetic=arithmetic,
        exact=exact,
        fallback=fallback,
    )


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
