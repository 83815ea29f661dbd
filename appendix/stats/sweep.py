"""Blocked grouped sweeps: per-cell counts, sums and sums of squared deviations.

The rows are visited in blocks of `BLOCK` rows, so that every temporary array stays in
the processor cache and the working memory does not grow with the number of rows. Each
cell is centred on one of its own values (its `pivot`, see `claim_pivots`), then the
classical two-pass algorithm runs on the centred values: cell means first, squared
deviations from them second (Chan, Golub & LeVeque 1983, "Algorithms for computing the
sample variance", Am. Stat. 37:242-247). Centring on a value of the cell makes each
subtraction exact when the cell's values lie within a factor of two of each other
(Sterbenz 1974), so a large common offset costs no digits, and a cell whose values are
all equal centres to exact zeros: its mean is its value and its SSD exactly 0 without a
separate test. The sum of squares is never formed as sum(y^2) - (sum y)^2 / n.
"""

from __future__ import annotations

from collections.abc import Iterator
from dataclasses import dataclass

import numpy as np

# 16384 rows: 128 KiB per float64 temporary, small enough for the L2 cache of current
# processors; of 2**14, 2**16 and 2**18 the fastest on 10M rows and 100 levels (the
# setting of benchmarks/bench_engine.py).
BLOCK = 1 << 14


class BadInput(Exception):
    """The arrays break the numeric contract; `cells.check_inputs` names the violation."""


@dataclass(frozen=True)
class FloatSweep:
    """Float64 per-cell statistics: `pivot[i]` is the value cell i was centred on and
    `centred_mean[i]` the mean of its values minus the pivot (0 for an empty cell)."""

    n: np.ndarray
    pivot: np.ndarray
    centred_mean: np.ndarray
    ssd: np.ndarray


def blocks(size: int) -> Iterator[slice]:
    """Consecutive row ranges of at most BLOCK rows covering 0..size-1."""
    for start in range(0, size, BLOCK):
        yield slice(start, min(start + BLOCK, size))


def block_counts(codes: np.ndarray, k: int) -> np.ndarray:
    """Units per cell within one block; BadInput for a code outside 0..k-1."""
    try:
        counts = np.bincount(codes, minlength=k)
    except ValueError as error:  # a negative code
        raise BadInput from error
    if counts.size > k:
        raise BadInput
    return counts


def claim_pivots(pivot: np.ndarray, claimed: np.ndarray, counts: np.ndarray,
                 codes: np.ndarray, values: np.ndarray) -> None:
    """Give every cell first seen in this block a pivot: its largest value in the block.

    The largest (a ufunc reduction, deterministic) rather than "any" value, so that two
    runs on the same data centre on the same numbers. Updates `pivot` and `claimed`.
    """
    new = (counts > 0) & ~claimed
    if new.any():
        largest = np.full(pivot.size, -np.inf)
        np.fmax.at(largest, codes, values)  # fmax: a NaN is left for the sum to expose
        pivot[new] = largest[new]
        claimed |= new


def float_sweep(values: np.ndarray, codes: np.ndarray, k: int) -> FloatSweep:
    """Per-cell n, centred mean and SSD of float64 `values` in two blocked passes.

    Raises BadInput when a code is outside 0..k-1 or a value is not finite (a non-finite
    value makes its cell's sum non-finite, so finiteness costs no pass of its own).

    >>> s = float_sweep(np.array([1.0, 2.0, 3.0, 5.0]), np.array([0, 0, 1, 1]), 2)
    >>> (s.pivot + s.centred_mean).tolist(), s.ssd.tolist()
    ([1.5, 4.0], [0.5, 2.0])
    """
    n = np.zeros(k, dtype=np.int64)
    total = np.zeros(k)
    pivot = np.zeros(k)
    claimed = np.zeros(k, dtype=bool)
    for rows in blocks(values.size):
        c, x = codes[rows], values[rows]
        counts = block_counts(c, k)
        claim_pivots(pivot, claimed, counts, c, x)
        n += counts
        total += np.bincount(c, weights=_centred(x, c, pivot), minlength=k)
    if not np.all(np.isfinite(total)):
        raise BadInput
    centred_mean = total / np.maximum(n, 1)
    ssd = np.zeros(k)
    for rows in blocks(values.size):
        c, x = codes[rows], values[rows]
        deviation = _centred(x, c, pivot)
        deviation -= centred_mean[c]
        deviation *= deviation
        ssd += np.bincount(c, weights=deviation, minlength=k)
    return FloatSweep(n, pivot, centred_mean, ssd)


def _centred(x: np.ndarray, c: np.ndarray, pivot: np.ndarray) -> np.ndarray:
    """x - pivot of each row's cell, in one new block-sized array."""
    out = pivot[c]
    np.subtract(x, out, out=out)
    return out

