"""Exact sums of squares for data that are decimal numbers.

Trial data arrive as decimal text (``12.4``, ``1000000000000.4``). The data stage says
how many digits after the point the text has (`decimals`, d); the float64 values are then
the correctly rounded images of integers a / 10**d, and a = rint(value * 10**d) recovers
the integers exactly while |a| < 2**50 (the float64 error of value * 10**d stays below
1/4, and distinct decimals have distinct float64 images). Every cell count, sum and sum
of squared deviations is then an exact integer computation, rounded once to float64 at
the end (integer division is correctly rounded). The NIST StRD higher-difficulty sets (13
constant leading digits) then come out to all 15 certified digits, where even an ideal
float64 computation on the float64 data stops near 4.

How the integers are summed fast: each cell is shifted by one of its own integers
(e = a - pivot, small for real data), and the per-cell sums of e and e**2 are taken with
float64 `np.bincount` over blocks of rows. A float64 sum of integers is exact while every
partial sum stays below 2**53; when a block's values are too wide for that, they are
split into limbs of w bits (e = sum_j l_j 2**(j w), rows * 2**(2 w) <= 2**53) and the limb
products are summed instead, each exactly, then recombined in Python integers. The
within-cell sum of squares uses the exact integer identity
sum (a - mean)**2 = sum e**2 - (sum e)**2 / n, legitimate here because nothing is
rounded (in floating point it would cancel catastrophically, and is never used).
"""

from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction

import numpy as np

from appendix.errors import InternalError
from appendix.stats.sweep import BadInput, block_counts, blocks, claim_pivots

MAX_DIGITS = 15
_INTEGER_LIMIT = 2.0**53  # float64 integers are exact up to here
SCALED_LIMIT = 2.0**50  # |a| below this: rint(value * 10**d) is a, uniquely
MAX_DECIMALS = 22  # 10.0**d is exact in float64 up to here


class NotExact(Exception):
    """The decimals cannot be recovered exactly from float64; `reason` says why."""

    def __init__(self, reason: str) -> None:
        super().__init__(reason)
        self.reason = reason


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
    """Infer from float64 alone the fewest digits d <= MAX_DIGITS such that every value
    is the float64 of a decimal with d digits after the point; None if there is none.

    A guess, for callers that have no decimal text (the engine itself is told `decimals`
    by the data stage and never guesses).

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
    """Exact cell counts, sums and SSDs of `values` read as decimals with `digits` places.

    Raises NotExact when the integers cannot be recovered exactly (too many digits for
    float64), InternalError when a value has more than `digits` decimals (a data-stage
    bug), BadInput for a code outside 0..k-1 or a value that is not finite.

    >>> s = exact_sums(np.array([0.1, 0.2, 0.3, 1.5, 2.5]), np.array([0, 0, 0, 1, 1]), 2, 1)
    >>> s.sums, [str(x) for x in s.ssd]
    ((6, 40), ['1/50', '1/2'])
    """
    if not 0 <= digits <= MAX_DECIMALS:
        raise NotExact(f"{digits} decimals: 10**{digits} is not exact in float64")
    power = 10.0**digits
    n = np.zeros(k, dtype=np.int64)
    pivot = np.zeros(k)
    claimed = np.zeros(k, dtype=bool)
    totals = _Totals(k)
    for rows in blocks(values.size):
        c, x = codes[rows], values[rows]
        counts = block_counts(c, k)
        scaled = _scaled(x, power, digits)
        claim_pivots(pivot, claimed, counts, c, scaled)
        n += counts
        shifted = pivot[c]
        np.subtract(scaled, shifted, out=shifted)  # exact: integers below 2**51
        totals.add(c, shifted)
    return totals.result(n, pivot, digits)


def _scaled(x: np.ndarray, power: float, digits: int) -> np.ndarray:
    """The integers a = rint(x * 10**digits) of one block, as exact float64."""
    scaled = x * power
    np.rint(scaled, out=scaled)
    peak = np.max(np.abs(scaled)) if scaled.size else 0.0
    if not peak < SCALED_LIMIT:
        if not np.all(np.isfinite(x)):
            raise BadInput
        raise NotExact(f"a value times 10**{digits} reaches {peak:.4g}, beyond the 2**50 "
                       "up to which float64 holds every decimal of that length exactly")
    if not np.array_equal(scaled / power, x):
        bad = float(x[scaled / power != x][0])
        raise InternalError(f"value {bad!r} has more than the {digits} decimals the data stage declared")
    return scaled


class _Totals:
    """Per-cell Python-integer sums of e and e**2, fed block by block (private, mutable
    only while one `exact_sums` call runs)."""

    def __init__(self, k: int) -> None:
        self.first = np.zeros(k, dtype=object)
        self.second = np.zeros(k, dtype=object)
        self.k = k

    def add(self, c: np.ndarray, e: np.ndarray) -> None:
        if e.size == 0:
            return
        peak = float(np.max(np.abs(e)))
        if e.size * peak * peak < _INTEGER_LIMIT:
            width, limbs = 0, [e]
        else:
            width = (53 - e.size.bit_length()) // 2  # e.size * 2**(2 width) <= 2**53
            limbs = _limbs(e, width, -(-(int(peak).bit_length() + 1) // width))
        for j, high in enumerate(limbs):
            self.first += self._exact(c, high) << (j * width)
            for i, low in enumerate(limbs[:j + 1]):
                factor = 1 if i == j else 2
                self.second += (factor * self._exact(c, low * high)) << ((i + j) * width)

    def _exact(self, c: np.ndarray, weights: np.ndarray) -> np.ndarray:
        # Every partial sum is an integer below 2**53, so the float64 sum is exact.
        return np.bincount(c, weights=weights, minlength=self.k).astype(np.int64).astype(object)

    def result(self, n: np.ndarray, pivot: np.ndarray, digits: int) -> ExactSums:
        counts = [int(x) for x in n]
        pivots = [int(x) for x in pivot]
        first, second = self.first.tolist(), self.second.tolist()
        sums = tuple(m * b + e for m, b, e in zip(counts, pivots, first))
        scale = 10 ** (2 * digits)
        ssd = tuple(Fraction(m * q - e * e, m * scale) if m else Fraction(0)
                    for m, e, q in zip(counts, first, second))
        return ExactSums(digits, tuple(counts), sums, ssd)


def _limbs(e: np.ndarray, width: int, count: int) -> list[np.ndarray]:
    """e = sum_j limbs[j] * 2**(j width): lower limbs in [0, 2**width), the top one signed.

    Every step is exact in float64: scaling by a power of two, floor, and the difference
    of two integers below 2**53.
    """
    limbs, rest = [], e
    for _ in range(count - 1):
        high = np.floor(rest * 2.0**-width)
        limbs.append(rest - high * 2.0**width)
        rest = high
    limbs.append(rest)
    return limbs
