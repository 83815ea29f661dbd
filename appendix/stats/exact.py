"""Exact sums of squares for data that are decimal numbers.

Trial data arrive as decimal text (``12.4``, ``1000000000000.4``). When every float64
value is the correctly rounded image of a decimal with at most `MAX_DIGITS` digits after
the point (the same reading Python's shortest ``repr`` gives), the values are taken as
those decimals, scaled to integers, and every cell sum and sum of squared deviations is
computed in exact integer arithmetic, then rounded once to float64. The NIST StRD
higher-difficulty sets (13 constant leading digits) then come out to all 15 certified
digits, where even an ideal float64 computation on the float64 data stops near 4.

Squared deviations are formed from integers as n_i^2 * SSD_i = sum_j (n_i a_j - S_i)^2
(a_j the scaled values, S_i their cell sum): deviation form, never sum(y^2) - (sum y)^2/n.
"""

from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction

import numpy as np

MAX_DIGITS = 15
_INTEGER_LIMIT = 2.0**53  # float64 integers are exact up to here


@dataclass(frozen=True)
class ExactSums:
    """Per-cell exact sums of decimal data scaled by 10**`digits`.

    `sums[i]` is the integer sum of the scaled values of cell i; `ssd[i]` the exact sum of
    squared deviations from the cell mean, in the data's own units.
    """

    digits: int
    n: tuple[int, ...]
    sums: tuple[int, ...]
    ssd: tuple[Fraction, ...]

    def mean(self, i: int) -> Fraction:
        return Fraction(self.sums[i], self.n[i] * 10**self.digits)

    @property
    def ss_within(self) -> Fraction:
        return sum(self.ssd, Fraction(0))

    @property
    def ss_between(self) -> Fraction:
        """sum n_i (mean_i - grand)^2 = sum (N S_i - n_i S)^2 / (n_i N^2 10^(2d)), exactly."""
        total_n = sum(self.n)
        if total_n == 0:
            return Fraction(0)
        total = sum(self.sums)
        scale = total_n * total_n * 10 ** (2 * self.digits)
        return sum((Fraction((total_n * s - n * total) ** 2, n * scale)
                    for n, s in zip(self.n, self.sums) if n > 0), Fraction(0))


def decimal_digits(values: np.ndarray) -> int | None:
    """The fewest digits d <= MAX_DIGITS such that every value is the float64 of a
    decimal with d digits after the point; None if there is none (not decimal data).

    >>> decimal_digits(np.array([12.5, 1000000000000.4])), decimal_digits(np.array([1 / 3]))
    (1, None)
    """
    if values.size == 0:
        return None
    for digits in range(MAX_DIGITS + 1):
        power = 10.0**digits
        scaled = np.round(values * power)
        if np.max(np.abs(scaled)) >= _INTEGER_LIMIT:
            return None
        # Division of two exact float64 integers is correctly rounded (IEEE 754), so
        # equality means: value == float64(scaled / 10**digits).
        if np.array_equal(scaled / power, values):
            return digits
    return None


def exact_sums(values: np.ndarray, codes: np.ndarray, k: int, digits: int) -> ExactSums:
    """Exact cell sums and SSDs of `values` read as decimals with `digits` places."""
    scaled = np.round(values * 10.0**digits).astype(np.int64)
    order = np.argsort(codes, kind="stable")
    bounds = np.searchsorted(codes[order], np.arange(1, k))
    n, sums, ssd = [], [], []
    for cell in np.split(scaled[order], bounds):
        # Python integers: the products below exceed 64 bits.
        items = cell.tolist()
        count, total = len(items), sum(items)
        squares = sum((count * a - total) ** 2 for a in items)
        n.append(count)
        sums.append(total)
        ssd.append(Fraction(squares, count * count * 10 ** (2 * digits)) if count else Fraction(0))
    return ExactSums(digits, tuple(n), tuple(sums), tuple(ssd))
