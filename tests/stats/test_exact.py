"""Exact sums of squares for decimal data."""

from __future__ import annotations

from decimal import Decimal
from fractions import Fraction

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as hs

from appendix.errors import InternalError
from appendix.stats.cells import cell_stats, ss_between
from appendix.stats.exact import decimal_digits, exact_sums


@pytest.mark.parametrize(
    ("values", "digits"),
    [
        ([1.0, 2.0, -7.0], 0),
        ([0.1, 0.25, 3.0], 2),
        ([1000000000000.4, 1000000000000.5], 1),
        ([196.3052, 196.124], 4),
        ([1 / 3], None),          # no short decimal rounds to 1/3's float64
        ([1e300], None),          # beyond exact float64 integers
        ([], None),
    ],
)
def test_decimal_digits(values, digits) -> None:
    assert decimal_digits(np.array(values, dtype=np.float64)) == digits


def test_hand_example() -> None:
    # Cells {0.1, 0.2, 0.3} and {1.5, 2.5}: SSD 0.02 and 0.5 exactly, grand mean 0.92,
    # SS between = 3 (0.2 - 0.92)^2 + 2 (2 - 0.92)^2 = 1.5552 + 2.3328 = 3.888 (by hand).
    sums = exact_sums(np.array([0.1, 0.2, 0.3, 1.5, 2.5]), np.array([0, 0, 0, 1, 1]), 2, 1)
    assert sums.n == (3, 2) and sums.sums == (6, 40)
    assert sums.ssd == (Fraction(2, 100), Fraction(1, 2))
    assert sums.ss_between == Fraction(3888, 1000)


@settings(max_examples=60, deadline=None)
@given(
    digits=hs.integers(0, 6),
    integers=hs.lists(hs.integers(-10**12, 10**12), min_size=2, max_size=40),
    seed=hs.integers(0, 2**32 - 1),
)
def test_cell_stats_on_decimal_data_equal_exact_decimal_arithmetic(digits, integers, seed) -> None:
    # Oracle: Python's decimal/fractions arithmetic on the decimal strings themselves.
    texts = [str(Decimal(i).scaleb(-digits)) for i in integers]
    values = np.array([float(t) for t in texts])
    codes = np.random.default_rng(seed).integers(0, 3, size=values.size)
    cells = cell_stats(values, codes, 3, decimals=digits)
    assert cells.arithmetic == "exact-decimal" and cells.exact is not None
    groups = [[Fraction(Decimal(t)) for t, c in zip(texts, codes) if c == i] for i in range(3)]
    grand = sum((x for g in groups for x in g), Fraction(0)) / values.size
    ssb = Fraction(0)
    for i, g in enumerate(groups):
        if not g:
            continue
        mean = sum(g, Fraction(0)) / len(g)
        assert cells.mean[i] == float(mean)
        assert cells.ssd[i] == float(sum(((x - mean) ** 2 for x in g), Fraction(0)))
        ssb += len(g) * (mean - grand) ** 2
    assert ss_between(cells) == float(ssb)


def test_the_path_follows_the_decimals_argument() -> None:
    values = np.round(np.random.default_rng(1).normal(size=50), 3)  # invented, seeded
    codes = np.repeat([0, 1], 25)
    floating = cell_stats(values, codes, 2)
    exact = cell_stats(values, codes, 2, decimals=3)
    assert (floating.arithmetic, floating.exact, floating.fallback) == ("float64", None, None)
    assert exact.arithmetic == "exact-decimal" and exact.exact.digits == 3 and exact.fallback is None


def test_decimals_beyond_float64_fall_back_with_the_reason() -> None:
    # 16 significant digits: float64 cannot hold every such decimal, so no exact path.
    values = np.array([123456789012345.6, 123456789012345.8, 1.5])
    cells = cell_stats(values, np.array([0, 0, 1]), 2, decimals=1)
    assert cells.arithmetic == "float64" and cells.exact is None
    assert "beyond the 2**50" in cells.fallback
    assert cell_stats(values, np.array([0, 0, 1]), 2, decimals=23).fallback == (
        "23 decimals: 10**23 is not exact in float64")


def test_a_value_with_more_decimals_than_declared_is_a_bug() -> None:
    with pytest.raises(InternalError, match=r"value 0\.25 has more than the 1 decimals"):
        cell_stats(np.array([0.5, 0.25]), np.array([0, 1]), 2, decimals=1)


@pytest.mark.parametrize("width", [0, 10, 40, 49])
def test_wide_integers_are_summed_exactly_through_limbs(width: int) -> None:
    # Invented, seeded: integers spanning up to 2**49 inside one cell force the limb
    # split (a block's e**2 sums would pass 2**53); oracle: Python integers.
    rng = np.random.default_rng(width)
    ints = rng.integers(-(2**width), 2**width, size=40_000, endpoint=True)
    ints[:3] = [2**width, -(2**width), 0]
    codes = rng.integers(0, 3, size=ints.size)
    sums = exact_sums(ints.astype(np.float64), codes, 3, 0)
    for i in range(3):
        cell = [int(x) for x in ints[codes == i]]
        mean = Fraction(sum(cell), len(cell))
        assert sums.n[i] == len(cell) and sums.sums[i] == sum(cell)
        assert sums.ssd[i] == sum(((x - mean) ** 2 for x in cell), Fraction(0))
