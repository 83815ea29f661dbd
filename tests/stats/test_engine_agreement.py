"""Agreement of the engine's two arithmetic paths with independent references on random designs.

Float path: every value of the one-factor variance table (the design engine's one-term
model, as a run reports it: `tests/one_term.py`) against statsmodels 0.15.0
(`statsmodels.formula.api.ols("y ~ C(g)").fit()` then `statsmodels.stats.anova.anova_lm`,
typ 1) to relative 1e-10. Exact path: against rational arithmetic (`fractions.Fraction`)
on the decimals themselves, which the engine must reproduce correctly rounded, i.e. equal.
All data are invented, drawn from seeded generators.
"""

from __future__ import annotations

from decimal import Decimal
from fractions import Fraction

import numpy as np
import pandas as pd
import pytest
import statsmodels.formula.api as smf
from hypothesis import assume, given, settings
from hypothesis import strategies as hs
from statsmodels.stats.anova import anova_lm

from appendix.data.dataset import CellSummary
from appendix.errors import InternalError
from appendix.stats.cells import cell_stats, cells_from_summary, ss_between
from appendix.stats.sweep import BLOCK
from tests.one_term import one_term_table, summary_table

REL = 1e-10

designs = hs.fixed_dictionaries({
    "seed": hs.integers(0, 2**32 - 1),
    "k": hs.integers(2, 8),
    "balanced": hs.booleans(),
    "size": hs.sampled_from([2, 5, 30, 3000]),  # 3000 per level: several sweep blocks
    "sorted": hs.booleans(),  # data grouped by level, or in random order
})


def _codes(design: dict, rng: np.random.Generator) -> np.ndarray:
    k, size = design["k"], design["size"]
    sizes = np.full(k, size) if design["balanced"] else rng.integers(2, size + 2, size=k)
    codes = np.repeat(np.arange(k), sizes)
    return codes if design["sorted"] else rng.permutation(codes)


def _statsmodels_table(values: np.ndarray, codes: np.ndarray) -> pd.DataFrame:
    frame = pd.DataFrame({"y": values, "g": [f"L{c}" for c in codes]})
    return anova_lm(smf.ols("y ~ C(g)", data=frame).fit(), typ=1)


@settings(max_examples=60, deadline=None)
@given(designs, hs.floats(-3, 3), hs.sampled_from([0.0, 1e3, -1e6, 1e9, 3.7e12]))
def test_float_path_matches_statsmodels_anova_lm(design, log_scale, offset) -> None:
    rng = np.random.default_rng(design["seed"])
    codes = _codes(design, rng)
    scale = 10.0**log_scale
    if offset:
        scale = min(scale, abs(offset) / 1000)
    effects = rng.normal(0, 1, size=design["k"]) * rng.uniform(0, 2)
    spreads = rng.uniform(0.2, 3.0, size=design["k"])
    values = offset + scale * (effects[codes] + spreads[codes] * rng.normal(size=codes.size))
    # statsmodels' least squares loses ~log10(offset / scale) digits to the offset; the
    # variance table does not depend on it, so the reference is given the data minus the
    # offset, which is exact here (checked in rational arithmetic).
    shifted = values - offset
    assume(all(Fraction(v) - Fraction(offset) == Fraction(s)
               for v, s in zip(values.tolist(), shifted.tolist())))
    table = one_term_table(values, codes, design["k"], alpha=0.05)
    reference = _statsmodels_table(shifted, codes)  # statsmodels 0.15.0
    (between,) = table.rows
    assert between.df == reference["df"].iloc[0] and table.residual_df == reference["df"].iloc[1]
    assert between.sum_of_squares == pytest.approx(reference["sum_sq"].iloc[0], rel=REL)
    assert between.mean_square == pytest.approx(reference["mean_sq"].iloc[0], rel=REL)
    assert table.residual_ss == pytest.approx(reference["sum_sq"].iloc[1], rel=REL)
    assert table.residual_ms == pytest.approx(reference["mean_sq"].iloc[1], rel=REL)
    assert between.statistic == pytest.approx(reference["F"].iloc[0], rel=REL)
    assert between.p == pytest.approx(reference["PR(>F)"].iloc[0], rel=REL)
    assert table.total_ss == pytest.approx(reference["sum_sq"].sum(), rel=REL)


@settings(max_examples=40, deadline=None)
@given(designs, hs.integers(0, 6), hs.integers(-(10**9), 10**9), hs.integers(0, 7))
def test_exact_path_equals_rational_arithmetic_correctly_rounded(design, digits, offset, width) -> None:
    rng = np.random.default_rng(design["seed"])
    codes = _codes(design, rng)
    k = design["k"]
    # Scaled integers: an offset of up to 1e14 units plus per-level effects and noise of
    # up to 10**width units, below the 2**50 limit of exact recovery. The values are what
    # the data stage gives for their decimal text: float() of it.
    ints = offset * 10 ** min(digits, 5) + rng.integers(-(10**width), 10**width + 1, size=codes.size)
    ints += rng.integers(-(10**width), 10**width + 1, size=k)[codes]
    values = np.array([float(Decimal(int(a)).scaleb(-digits)) for a in ints])
    cells = cell_stats(values, codes, k, decimals=digits)
    assert cells.arithmetic == "exact-decimal"
    groups = [[Fraction(int(a), 10**digits) for a in ints[codes == i].tolist()] for i in range(k)]
    everything = [x for g in groups for x in g]
    grand = sum(everything, Fraction(0)) / len(everything)
    ssb = Fraction(0)
    for i, g in enumerate(groups):
        mean = sum(g, Fraction(0)) / len(g)
        assert cells.n[i] == len(g)
        assert cells.mean[i] == float(mean)
        assert cells.ssd[i] == float(sum(((x - mean) ** 2 for x in g), Fraction(0)))
        ssb += len(g) * (mean - grand) ** 2
    assert cells.grand_mean == float(grand)
    assert ss_between(cells) == float(ssb)
    assert cells.ss_within == float(sum(cells.exact.ssd, Fraction(0)))


def test_float_path_across_blocks_keeps_constant_cells_exact() -> None:
    # Invented: a level of 3 * BLOCK copies of 0.1 spread over every block, next to a
    # varying level. n copies of 0.1 need not sum to n * 0.1 in float64; centred on its
    # own value the level sums to exact zeros.
    rng = np.random.default_rng(7)
    codes = rng.permutation(np.repeat([0, 1], [3 * BLOCK, BLOCK]))
    values = np.where(codes == 0, 0.1, rng.normal(5.0, 1.0, size=codes.size))
    cells = cell_stats(values, codes, 2)
    assert cells.mean[0] == 0.1 and cells.ssd[0] == 0.0
    assert np.all(values[codes == 0] - cells.shift - cells.centred_mean[0] == 0.0)
    exact_mean = sum(map(Fraction, values[codes == 1].tolist()), Fraction(0)) / BLOCK
    assert cells.mean[1] == pytest.approx(float(exact_mean), rel=1e-15)


def test_float_path_reports_a_bad_code_or_value_in_a_late_block() -> None:
    values = np.zeros(5 * BLOCK)
    codes = np.zeros(5 * BLOCK, dtype=np.int64)
    late = 4 * BLOCK + 3
    with pytest.raises(InternalError, match="codes must lie in 0..1"):
        cell_stats(values, np.where(np.arange(codes.size) == late, 2, codes), 2)
    with pytest.raises(InternalError, match="codes must lie in 0..1"):
        cell_stats(values, np.where(np.arange(codes.size) == late, -1, codes), 2)
    for bad in (np.nan, np.inf, -np.inf):
        spoiled = values.copy()
        spoiled[late] = bad
        with pytest.raises(InternalError, match="finite"):
            cell_stats(spoiled, codes, 2)
        with pytest.raises(InternalError, match="finite"):
            cell_stats(spoiled, codes, 2, decimals=1)


def test_cells_from_summary_give_the_table_of_the_rows() -> None:
    # Invented, seeded data with an empty third level. The summary is what an out-of-core
    # aggregation would deliver: n, mean and SSD per level (here from pandas 3 groupby);
    # its table is checked against statsmodels 0.15.0 anova_lm (typ 1) on the rows.
    rng = np.random.default_rng(3)
    codes = rng.integers(0, 2, size=500)
    values = 1e6 + rng.normal(0, 1, size=500) + codes
    frame = pd.DataFrame({"y": values, "g": codes}).groupby("g")["y"]
    n = np.array([*frame.count(), 0])
    mean = np.array([*frame.mean(), 0.0])
    ssd = np.array([*(frame.var(ddof=1) * (frame.count() - 1)), 0.0])
    summary = cells_from_summary(CellSummary(n, mean, ssd), ("a", "b", "c"))
    rows = cell_stats(values, codes, 3, ("a", "b", "c"))
    assert summary.arithmetic == "float64" and summary.n.tolist() == rows.n.tolist()
    assert np.isnan(summary.mean[2]) and summary.ssd[2] == 0.0
    assert summary.grand_mean == pytest.approx(rows.grand_mean, rel=1e-15)
    table = summary_table(summary, alpha=0.05)
    reference = _statsmodels_table(values - 1e6, codes)  # exact (Sterbenz); not in the table
    (between,) = table.rows
    assert [w.code for w in table.warnings] == ["empty-level"] and between.warnings == ()
    assert between.df == reference["df"].iloc[0] and table.residual_df == reference["df"].iloc[1]
    assert between.statistic == pytest.approx(reference["F"].iloc[0], rel=1e-9)
    assert between.sum_of_squares == pytest.approx(reference["sum_sq"].iloc[0], rel=1e-9)
    assert table.residual_ss == pytest.approx(reference["sum_sq"].iloc[1], rel=1e-9)
    assert table.total_ss == pytest.approx(reference["sum_sq"].sum(), rel=1e-9)


@pytest.mark.parametrize(
    ("n", "mean", "ssd", "message"),
    [
        ([2, 2], [1.0, 2.0, 3.0], [0.0, 0.0], "one entry per level"),
        ([2, -1], [1.0, 2.0], [0.0, 0.0], "n >= 0"),
        ([2, 2], [1.0, np.nan], [0.0, 0.0], "finite means"),
        ([2, 2], [1.0, 2.0], [0.0, -1.0], "SSD >= 0"),
        ([2.5, 2], [1.0, 2.0], [0.0, 0.0], "whole numbers"),
    ],
)
def test_cells_from_summary_rejects_a_broken_summary(n, mean, ssd, message) -> None:
    with pytest.raises(InternalError, match=message):
        cells_from_summary(CellSummary(np.array(n), np.array(mean), np.array(ssd)), ("a", "b"))


@pytest.mark.parametrize("dtype", [np.int8, np.int32, np.uint32, np.uint64])
@pytest.mark.parametrize("decimals", [None, 1])
def test_any_integer_code_type_gives_the_same_cells(dtype, decimals) -> None:
    # Hand example: cells {1.5, 2.5} and {3, 5, 7}: means 2 and 5, SSD 0.5 and 8.
    values = np.array([1.5, 3.0, 2.5, 5.0, 7.0])
    cells = cell_stats(values, np.array([0, 1, 0, 1, 1], dtype=dtype), 2, decimals=decimals)
    assert cells.mean.tolist() == [2.0, 5.0] and cells.ssd.tolist() == [0.5, 8.0]
