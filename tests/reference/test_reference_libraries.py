"""Agreement with independent reference libraries on random (seeded, invented) designs.

References: statsmodels 0.15.0 (OLS + anova_lm, OLSInfluence), pingouin 0.7.0
(welch_anova), scipy 1.17 (kruskal, levene with center="median", bartlett, t), pandas 3
(groupby mean, std, quantile).
The data are invented: normal draws from numpy's seeded generator, drawn per example.
"""

from __future__ import annotations


import numpy as np
import pandas as pd
import pingouin
import pytest
import scipy.stats as st
import statsmodels.formula.api as smf
from hypothesis import given, settings
from hypothesis import strategies as hs
from statsmodels.stats.anova import anova_lm
from statsmodels.stats.outliers_influence import OLSInfluence

from appendix.stats.cells import cell_stats
from appendix.stats.descriptives import describe
from appendix.stats.diagnostics import bartlett, brown_forsythe, outlier_screen
from appendix.stats.oneway import welch_anova
from appendix.stats.rank import kruskal_wallis
from tests.one_term import one_term_table

REL = 1e-10


def _design(seed: int, ties: bool = False, decimals: int | None = None):
    """An invented unbalanced one-way design: 2-6 levels, 2-15 units each, unequal spreads.

    `decimals` rounds the values, as data read from text would be (the exact path)."""
    rng = np.random.default_rng(seed)
    k = int(rng.integers(2, 7))
    sizes = rng.integers(2, 16, size=k)
    codes = np.repeat(np.arange(k), sizes)
    values = rng.normal(rng.uniform(-50, 50), 1.0, size=codes.size)
    values += rng.normal(0, 2, size=k)[codes] * rng.uniform(0.1, 3.0, size=k)[codes]
    if ties:
        values = np.round(values)
    if decimals is not None:
        values = np.round(values, decimals)
    order = rng.permutation(codes.size)  # data need not arrive sorted by level
    return values[order], codes[order], k


def _groups(values, codes, k):
    return [values[codes == i] for i in range(k)]


def _frame(values, codes):
    return pd.DataFrame({"y": values, "g": [f"L{c}" for c in codes]})


seeds = hs.integers(min_value=0, max_value=2**32 - 1)


@settings(max_examples=40, deadline=None)
@given(seeds, hs.sampled_from([None, 0, 2, 5]))
def test_model_table_matches_statsmodels_anova_lm(seed: int, decimals: int | None) -> None:
    values, codes, k = _design(seed, decimals=decimals)
    cells = cell_stats(values, codes, k, decimals=decimals)
    assert cells.arithmetic == ("float64" if decimals is None else "exact-decimal")
    table = one_term_table(values, codes, k, decimals=decimals, alpha=0.05)
    (between,) = table.rows
    if cells.ss_within == 0.0:
        # Rounding made every level constant: the F ratio is undefined (statsmodels
        # returns a meaningless huge F from rounding noise).
        assert between.statistic is None
        assert table.warnings[-1].code in ("zero-within-variance", "all-identical")
        return
    fit = smf.ols("y ~ C(g)", data=_frame(values, codes)).fit()
    reference = anova_lm(fit, typ=1)  # statsmodels 0.15.0
    assert between.df == reference["df"].iloc[0] and table.residual_df == reference["df"].iloc[1]
    assert between.sum_of_squares == pytest.approx(reference["sum_sq"].iloc[0], rel=REL)
    assert table.residual_ss == pytest.approx(reference["sum_sq"].iloc[1], rel=REL)
    assert between.statistic == pytest.approx(reference["F"].iloc[0], rel=REL)
    assert between.p == pytest.approx(reference["PR(>F)"].iloc[0], rel=1e-8)
    assert table.r_squared == pytest.approx(fit.rsquared, rel=REL)
    assert table.residual_sd == pytest.approx(np.sqrt(fit.mse_resid), rel=REL)


@settings(max_examples=40, deadline=None)
@given(seeds, hs.sampled_from([None, 3]))
def test_welch_matches_pingouin(seed: int, decimals: int | None) -> None:
    values, codes, k = _design(seed, decimals=decimals)
    ours = welch_anova(cell_stats(values, codes, k))
    reference = pingouin.welch_anova(data=_frame(values, codes), dv="y", between="g")  # pingouin 0.7.0
    assert ours.df1 == reference["ddof1"].iloc[0]
    assert ours.df2 == pytest.approx(reference["ddof2"].iloc[0], rel=REL)
    assert ours.statistic == pytest.approx(reference["F"].iloc[0], rel=REL)
    assert ours.p == pytest.approx(reference["p_unc"].iloc[0], rel=1e-8)


@settings(max_examples=60, deadline=None)
@given(seeds, hs.booleans())
def test_kruskal_matches_scipy(seed: int, ties: bool) -> None:
    values, codes, k = _design(seed, ties=ties)
    ours = kruskal_wallis(values, codes, k)
    h, p = st.kruskal(*_groups(values, codes, k))  # scipy 1.17
    assert ours.statistic == pytest.approx(h, rel=REL)
    assert ours.p == pytest.approx(p, rel=1e-8)


@settings(max_examples=60, deadline=None)
@given(seeds, hs.booleans(), hs.sampled_from([None, 1, 4]))
def test_brown_forsythe_matches_scipy_levene_median(seed: int, ties: bool, decimals: int | None) -> None:
    values, codes, k = _design(seed, ties=ties, decimals=decimals)
    ours = brown_forsythe(values, codes, k)
    w, p = st.levene(*_groups(values, codes, k), center="median")  # scipy 1.17
    if not np.isfinite(w):
        # No within-level variation of the deviations (e.g. two units per level, or tied
        # levels): scipy says inf or nan, we say undefined.
        assert ours.statistic is None and ours.warnings[-1].code == "brown-forsythe-undefined"
        return
    assert ours.statistic == pytest.approx(w, rel=REL)
    assert ours.p == pytest.approx(p, rel=1e-8)


@settings(max_examples=60, deadline=None)
@given(seeds, hs.sampled_from([None, 2]))
def test_bartlett_matches_scipy(seed: int, decimals: int | None) -> None:
    values, codes, k = _design(seed, decimals=decimals)
    ours = bartlett(cell_stats(values, codes, k))
    t, p = st.bartlett(*_groups(values, codes, k))  # scipy 1.17
    if not np.isfinite(t):
        # A level without variation (two-decimal values can tie within a level): scipy
        # says inf, we say the test is undefined.
        assert ours.statistic is None and ours.warnings[-1].code == "bartlett-undefined"
        return
    assert ours.statistic == pytest.approx(t, rel=REL)
    assert ours.p == pytest.approx(p, rel=1e-8)


@pytest.mark.parametrize("seed", [3, 17, 2024])
def test_studentized_residuals_match_statsmodels(seed: int) -> None:
    values, codes, k = _design(seed)
    values = values.copy()
    values[0] += 12.0  # one planted gross error so that something is flagged
    cells = cell_stats(values, codes, k)
    units = tuple(f"u{i}" for i in range(values.size))
    screen = outlier_screen(values, codes, cells, units, tuple(f"L{i}" for i in range(k)), 0.0001)
    fit = smf.ols("y ~ C(g)", data=_frame(values, codes)).fit()
    reference = OLSInfluence(fit).resid_studentized_external  # statsmodels 0.15.0
    got = {unit.unit: unit.studentized for unit in screen.flagged}
    assert screen.n_screened == values.size
    for i, unit in enumerate(units):
        if abs(reference[i]) > 0.0001:
            assert got[unit] == pytest.approx(reference[i], rel=1e-9)
    big = outlier_screen(values, codes, cells, units, tuple(f"L{i}" for i in range(k)), 3.0)
    assert "u0" in {unit.unit for unit in big.flagged}


@settings(max_examples=30, deadline=None)
@given(seeds, hs.sampled_from([None, 1]))
def test_describe_matches_pandas_and_scipy(seed: int, decimals: int | None) -> None:
    values, codes, k = _design(seed, decimals=decimals)
    levels = tuple(f"L{i}" for i in range(k))
    ours = describe(values, codes, levels, [0] * k, 0.95)
    grouped = _frame(values, codes).groupby("g")["y"]  # pandas 3
    for group in ours.groups:
        y = grouped.get_group(group.level)
        assert group.n == y.size
        assert group.mean == pytest.approx(y.mean(), rel=1e-13)
        assert group.sd == pytest.approx(y.std(ddof=1), rel=1e-12)
        assert group.median == pytest.approx(y.median(), rel=1e-15)
        assert group.minimum == y.min() and group.maximum == y.max()
        assert group.q1 == pytest.approx(y.quantile(0.25), rel=1e-14)  # pandas default: linear
        assert group.q3 == pytest.approx(y.quantile(0.75), rel=1e-14)
        if group.sd == 0.0:  # scipy returns NaN for a zero scale; ours is the point itself
            assert group.ci_low == group.ci_high == group.mean
            continue
        low, high = st.t.interval(0.95, y.size - 1, loc=y.mean(), scale=st.sem(y))  # scipy 1.17
        assert (group.ci_low, group.ci_high) == pytest.approx((low, high), rel=1e-12)
