"""Exact sums of squares for decimal data."""

from __future__ import annotations

from decimal import Decimal
from fractions import Fraction

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as hs

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
    cells = cell_stats(values, codes, 3)
    assert cells.exact is not None
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


def test_non_decimal_data_take_the_float_path() -> None:
    values = np.random.default_rng(1).normal(size=50)  # invented, seeded
    assert cell_stats(values, np.repeat([0, 1], 25), 2).exact is None
    assert cell_stats(np.round(values, 3), np.repeat([0, 1], 25), 2).exact is not None
