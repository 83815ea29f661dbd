"""Published one-way worked examples; the source is named beside every expected value.

The variance table and effect sizes are the design engine's one-term model, as a run
reports a one-factor outcome (`tests/one_term.py`)."""

from __future__ import annotations

import numpy as np
import pingouin
import pytest

from appendix.stats.cells import cell_stats
from appendix.stats.diagnostics import bartlett, brown_forsythe, shapiro_wilk
from appendix.stats.effect_sizes import noncentrality_interval
from appendix.stats.oneway import welch_anova
from appendix.stats.rank import kruskal_wallis
from tests.one_term import one_term_table


def _pain_threshold():
    """Pain threshold by hair colour (McClave & Dietrich 1991), as shipped with pingouin 0.7."""
    frame = pingouin.read_dataset("anova")
    levels = tuple(dict.fromkeys(frame["Hair color"]))
    codes = np.array([levels.index(x) for x in frame["Hair color"]], dtype=np.intp)
    return frame["Pain threshold"].to_numpy(np.float64), codes, levels


# Gear diameters, 10 batches of 10: NIST/SEMATECH e-Handbook of Statistical Methods,
# section 1.3.5.10 (Levene) and 1.3.5.7 (Bartlett), data GEAR.DAT; as copied in scipy 1.17
# scipy/stats/tests/test_morestats.py (g1..g10).
GEAR = [
    [1.006, 0.996, 0.998, 1.000, 0.992, 0.993, 1.002, 0.999, 0.994, 1.000],
    [0.998, 1.006, 1.000, 1.002, 0.997, 0.998, 0.996, 1.000, 1.006, 0.988],
    [0.991, 0.987, 0.997, 0.999, 0.995, 0.994, 1.000, 0.999, 0.996, 0.996],
    [1.005, 1.002, 0.994, 1.000, 0.995, 0.994, 0.998, 0.996, 1.002, 0.996],
    [0.998, 0.998, 0.982, 0.990, 1.002, 0.984, 0.996, 0.993, 0.980, 0.996],
    [1.009, 1.013, 1.009, 0.997, 0.988, 1.002, 0.995, 0.998, 0.981, 0.996],
    [0.990, 1.004, 0.996, 1.001, 0.998, 1.000, 1.018, 1.010, 0.996, 1.002],
    [0.998, 1.000, 1.006, 1.000, 1.002, 0.996, 0.998, 0.996, 1.002, 1.006],
    [1.002, 0.998, 0.996, 0.995, 0.996, 1.004, 1.004, 0.998, 0.999, 0.991],
    [0.991, 0.995, 0.984, 0.994, 0.997, 0.997, 0.991, 0.998, 1.004, 0.997],
]


def _gear():
    values = np.array([x for batch in GEAR for x in batch], dtype=np.float64)
    return values, np.repeat(np.arange(10), 10)


def test_model_table_pain_threshold() -> None:
    values, codes, levels = _pain_threshold()
    table = one_term_table(values, codes, len(levels), levels, alpha=0.05)
    (between,) = table.rows
    # Expected: pingouin 0.7.0 docstring of pingouin.anova (detailed=True, and effsize="n2").
    assert (between.df, table.residual_df, table.total_df) == (3, 15, 18)
    assert between.sum_of_squares == pytest.approx(1360.726, abs=5e-4)
    assert table.residual_ss == pytest.approx(1001.800, abs=5e-4)
    assert between.mean_square == pytest.approx(453.575, abs=5e-4)
    assert table.residual_ms == pytest.approx(66.787, abs=5e-4)
    assert between.statistic == pytest.approx(6.791407, abs=5e-7)
    assert between.p == pytest.approx(0.004114, abs=5e-7)
    assert table.r_squared == pytest.approx(0.575962, abs=5e-7)
    # With one factor, eta squared is the partial eta squared of its term: n2 = 0.575962.
    assert between.partial_eta_squared == pytest.approx(0.575962, abs=5e-7)
    assert table.warnings == () and between.warnings == ()


def test_welch_pain_threshold() -> None:
    values, codes, levels = _pain_threshold()
    welch = welch_anova(cell_stats(values, codes, len(levels), levels))
    # Expected: pingouin 0.7.0 docstring of pingouin.welch_anova.
    assert welch.df1 == 3
    assert welch.df2 == pytest.approx(8.329841, abs=5e-7)
    assert welch.statistic == pytest.approx(5.890115, abs=5e-7)
    assert welch.p == pytest.approx(0.018813, abs=5e-7)


def test_kruskal_wallis_pain_threshold() -> None:
    values, codes, levels = _pain_threshold()
    result = kruskal_wallis(values, codes, len(levels))
    # Expected: pingouin 0.7.0 docstring of pingouin.kruskal.
    assert result.df1 == 3
    assert result.statistic == pytest.approx(10.58863, abs=5e-6)
    assert result.p == pytest.approx(0.014172, abs=5e-7)


def test_kruskal_wallis_hand_computed_ties() -> None:
    # x = [1,1,1], y = [2,2,2], z = [2,2]: H_uncorrected = 5, C = 1 - (24 + 120)/504, so
    # H = 7.0 exactly (hand computation in scipy 1.17 test_stats.py
    # TestKruskal.test_three_groups; checked by hand from the definition).
    result = kruskal_wallis(np.array([1.0, 1, 1, 2, 2, 2, 2, 2]), np.array([0, 0, 0, 1, 1, 1, 2, 2]), 3)
    assert result.tie_correction == pytest.approx(1 - 144 / 504, rel=1e-15)
    assert result.statistic == pytest.approx(7.0, rel=1e-14)


def test_brown_forsythe_gear() -> None:
    values, codes = _gear()
    result = brown_forsythe(values, codes, 10)
    # NIST/SEMATECH e-Handbook 1.3.5.10, gear data: W = 1.705910 on (9, 90) df (from the
    # handbook page as quoted with more digits in scipy 1.17 TestLevene.test_data:
    # W = 1.7059176930008939, p = 0.0990829755522).
    assert (result.df1, result.df2) == (9.0, 90.0)
    assert result.statistic == pytest.approx(1.7059176930008939, rel=1e-12)
    assert result.p == pytest.approx(0.0990829755522, rel=1e-9)


def test_bartlett_gear() -> None:
    values, codes = _gear()
    result = bartlett(cell_stats(values, codes, 10))
    # NIST/SEMATECH e-Handbook 1.3.5.7, gear data: T = 20.78587 on 9 df (quoted in scipy
    # 1.17 TestBartlett.test_data as T = 20.78587342806484, p = 0.0136358632781).
    assert result.df1 == 9.0
    assert result.statistic == pytest.approx(20.78587342806484, rel=1e-12)
    assert result.p == pytest.approx(0.0136358632781, rel=1e-9)


def test_shapiro_wilk_published_sample() -> None:
    # Sample and values "extracted from original paper" per scipy 1.17 test_morestats.py
    # TestShapiro.test_basic (x4): W = 0.83467, p = 0.000914.
    x = np.array([0.139, 0.157, 0.175, 0.256, 0.344, 0.413, 0.503, 0.577, 0.614, 0.655, 0.954,
                  1.392, 1.557, 1.648, 1.690, 1.994, 2.174, 2.206, 3.245, 3.510, 3.571, 4.354,
                  4.980, 6.084, 8.351])
    result = shapiro_wilk(x - x.mean())
    assert result.n == 25 and result.warnings == ()
    assert result.statistic == pytest.approx(0.83467, abs=5e-5)
    assert result.p == pytest.approx(0.000914, abs=5e-6)


def test_noncentrality_interval_steiger_example_3() -> None:
    # Steiger (2004, Psychological Methods 9:164-182), example 3, p. 169: F = 5 on (3, 76),
    # 95% CI for lambda = [1.8666, 32.563]; RMSSE CI [0.1764, 0.7367] with n = 20 per group
    # (values as quoted in statsmodels 0.15 stats/tests/test_oneway.py).
    low, high = noncentrality_interval(5.0, 3, 76, 0.95)
    assert low == pytest.approx(1.8666, abs=5e-5)
    assert high == pytest.approx(32.563, abs=5e-4)
    rmsse = np.sqrt(np.array([low, high]) / (3 * 20))
    assert rmsse == pytest.approx([0.1764, 0.7367], abs=5e-5)


def test_noncentrality_interval_r_effectsize() -> None:
    # R package effectsize, F_to_eta2(45.8, 3, 35): 90% CI for eta2 = [0.685670133284926,
    # 0.855981325777856] (quoted in statsmodels 0.15 test_oneway.py). That package maps
    # lambda to eta2 = lambda / (lambda + df2), so lambda = eta2 df2 / (1 - eta2).
    low, high = noncentrality_interval(45.8, 3, 35, 0.90)
    expected = [e * 35 / (1 - e) for e in (0.685670133284926, 0.855981325777856)]
    assert [low, high] == pytest.approx(expected, rel=1e-6)


def _steiger_example_data():
    """Invented data with Steiger's example-3 table: 4 levels of 20 units, level means
    10.75, 9.75, 9.75, 9.75 (SS between 20 * 0.75 = 15) and deviations of +1, -1 and 0
    (SS within 2 * (10 + 10 + 9 + 9) = 76), so F = 5 on (3, 76), N = 80. Every value is
    exact in binary."""
    values, codes = [], []
    for level, (mean, pairs) in enumerate(zip((10.75, 9.75, 9.75, 9.75), (10, 10, 9, 9))):
        deviations = [1.0] * pairs + [-1.0] * pairs + [0.0] * (20 - 2 * pairs)
        values += [mean + d for d in deviations]
        codes += [level] * 20
    return np.array(values), np.array(codes)


def test_effect_sizes_on_the_steiger_example() -> None:
    # A table with F = 5 on (3, 76), N = 80 (SS between 15, SS within 76): Steiger's example 3.
    # alpha = 0.025 gives the engine's 1 - 2 alpha = 95% intervals, the example's level.
    values, codes = _steiger_example_data()
    table = one_term_table(values, codes, 4, alpha=0.025)
    (row,) = table.rows
    assert (row.sum_of_squares, table.residual_ss) == pytest.approx((15.0, 76.0), rel=1e-14)
    assert row.statistic == pytest.approx(5.0, rel=1e-14) and row.confidence_level == 0.95
    # Lambda bounds from Steiger (2004) example 3 (above), converted with f^2 = lambda / N.
    assert row.partial_eta_squared == pytest.approx(15 / 91, rel=1e-15)
    assert row.partial_omega_squared == pytest.approx((15 - 3 * 1.0) / (91 + 1.0), rel=1e-15)
    assert row.cohens_f == pytest.approx(np.sqrt(15 / 76), rel=1e-15)
    eta_ci = (row.partial_eta_ci_low, row.partial_eta_ci_high)
    assert eta_ci == pytest.approx((1.8666 / 81.8666, 32.563 / 112.563), abs=1e-5)
    assert (row.partial_omega_ci_low, row.partial_omega_ci_high) == eta_ci
    assert (row.cohens_f_ci_low, row.cohens_f_ci_high) == pytest.approx(
        (np.sqrt(1.8666 / 80), np.sqrt(32.563 / 80)), abs=1e-5)
    assert row.effect_ci_df == (3.0, 76.0)
