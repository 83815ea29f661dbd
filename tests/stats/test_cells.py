"""Cell statistics: exactness against rational arithmetic, stability, read-only results."""

from __future__ import annotations

from fractions import Fraction

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as hs

from appendix.errors import InternalError
from appendix.stats.cells import cell_stats, residuals, ss_between


def exact(values, codes, k):
    """Oracle: per-cell mean and SSD, and SS between, in exact rational arithmetic."""
    groups = [[Fraction(v) for v, c in zip(values.tolist(), codes.tolist()) if c == i] for i in range(k)]
    means = [sum(g, Fraction(0)) / len(g) if g else None for g in groups]
    ssd = [sum(((x - m) ** 2 for x in g), Fraction(0)) if g else Fraction(0) for g, m in zip(groups, means)]
    total = [x for g in groups for x in g]
    grand = sum(total, Fraction(0)) / len(total)
    ssb = sum((len(g) * (m - grand) ** 2 for g, m in zip(groups, means) if g), Fraction(0))
    return means, ssd, ssb


def test_small_example_by_hand() -> None:
    # Hand computation: cells {1, 2} and {3, 5}: means 1.5 and 4, SSD 0.5 and 2,
    # grand mean 2.75, SS between 2 (1.25^2) + 2 (1.25^2) = 6.25.
    cells = cell_stats(np.array([1.0, 3.0, 2.0, 5.0]), np.array([0, 1, 0, 1]), 2, ("x", "y"))
    assert cells.n.tolist() == [2, 2]
    assert cells.mean.tolist() == [1.5, 4.0]
    assert cells.ssd.tolist() == [0.5, 2.0]
    assert cells.grand_mean == 2.75 and cells.n_total == 4
    assert ss_between(cells) == 6.25
    assert residuals(np.array([1.0, 3.0, 2.0, 5.0]), np.array([0, 1, 0, 1]), cells).tolist() == [-0.5, -1.0, 0.5, 1.0]


def test_arrays_are_read_only() -> None:
    cells = cell_stats(np.array([1.0, 2.0]), np.array([0, 1]), 2)
    for array in (cells.n, cells.mean, cells.ssd, cells.centred_mean):
        with pytest.raises(ValueError):
            array[0] = 0


@settings(max_examples=50, deadline=None)
@given(hs.integers(0, 2**32 - 1), hs.sampled_from([0.0, 1e3, 1e6, 1e9]))
def test_matches_exact_arithmetic_even_with_a_large_offset(seed: int, offset: float) -> None:
    # Invented data: seeded normal draws around a common offset. The textbook one-pass
    # formula loses ~2 log10(offset) digits here; the centred two-pass does not.
    rng = np.random.default_rng(seed)
    k = int(rng.integers(1, 6))
    codes = rng.integers(0, k, size=int(rng.integers(2, 60)))
    values = offset + rng.normal(0, 1, size=codes.size) + rng.normal(0, 1, size=k)[codes]
    cells = cell_stats(values, codes, k)
    means, ssd, ssb = exact(values, codes, k)
    for i in range(k):
        if means[i] is None:
            assert np.isnan(cells.mean[i]) and cells.n[i] == 0
            continue
        assert cells.mean[i] == pytest.approx(float(means[i]), rel=1e-15, abs=1e-12)
        assert cells.ssd[i] == pytest.approx(float(ssd[i]), rel=1e-10, abs=1e-9)
    assert ss_between(cells) == pytest.approx(float(ssb), rel=1e-9, abs=1e-9)


@pytest.mark.parametrize(
    ("values", "codes", "k", "message"),
    [
        (np.array([1.0, np.nan]), np.array([0, 1]), 2, "finite"),
        (np.array([1.0, 2.0]), np.array([0, 2]), 2, "codes must lie in 0..1"),
        (np.array([1.0, 2.0]), np.array([0]), 2, "equal length"),
        (np.array([1, 2]), np.array([0, 1]), 2, "float64"),
        (np.array([1.0, 2.0]), np.array([0.0, 1.0]), 2, "integers"),
        (np.array([1.0]), np.array([0]), 0, "positive integer"),
    ],
)
def test_contract_violations_raise_internal_error(values, codes, k, message) -> None:
    with pytest.raises(InternalError, match=message):
        cell_stats(values, codes, k)


def test_constant_cell_has_exactly_zero_ssd() -> None:
    # Seven copies of 0.1: a naive mean (sum / 7) is not exactly 0.1 in float64, which
    # would leave an SSD of ~1e-33 and turn "zero variance" into a huge F.
    values = np.array([0.1] * 7 + [0.2, 0.25, 0.3])
    cells = cell_stats(values, np.repeat([0, 1], [7, 3]), 2)
    assert cells.ssd[0] == 0.0 and cells.mean[0] == 0.1
    assert cells.ssd[1] == pytest.approx(0.005, rel=1e-13)
