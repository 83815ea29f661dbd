"""Degenerate one-factor data: statistics are None with typed warnings, never an exception.

The variance table and effect sizes are the design engine's one-term model, as a run
reports a one-factor outcome (`tests/one_term.py`). Every test runs with Python warnings
turned into errors, so a RuntimeWarning (division by zero, invalid value) leaking from the
numeric core fails it.
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as hs

from appendix.stats.cells import cell_stats
from appendix.stats.descriptives import describe
from appendix.stats.diagnostics import bartlett, brown_forsythe, outlier_screen, shapiro_wilk
from appendix.stats.oneway import welch_anova
from appendix.stats.rank import kruskal_wallis
from tests.one_term import one_term_table

pytestmark = pytest.mark.filterwarnings("error")

LEVELS = ("a", "b", "c")


def codes_of(*sizes: int) -> np.ndarray:
    return np.repeat(np.arange(len(sizes)), sizes)


def run_all(values, codes, levels=LEVELS):
    values = np.asarray(values, dtype=np.float64)
    k = len(levels)
    cells = cell_stats(values, codes, k, levels)
    table = one_term_table(values, codes, k, levels)
    units = tuple(f"u{i}" for i in range(values.size))
    return {
        "descriptives": describe(values, codes, levels, [0] * k, 0.95),
        "table": table,
        "test": table.rows[0],  # the factor's row: its F test and effect sizes
        "welch": welch_anova(cells),
        "kruskal": kruskal_wallis(values, codes, k, levels),
        "bf": brown_forsythe(values, codes, k, levels),
        "bartlett": bartlett(cells),
        "outliers": outlier_screen(values, codes, cells, units, levels, 3.0),
        "normality": shapiro_wilk(values - cells.mean[codes]) if values.size else shapiro_wilk(values),
    }


def codes_in(result) -> list[str]:
    return [w.code for w in result.warnings]


def test_group_with_one_unit() -> None:
    r = run_all([1.0, 2.0, 4.0, 3.0, 5.0, 9.0], codes_of(3, 2, 1))
    assert codes_in(r["table"]) == ["group-n-one"]
    assert r["test"].statistic is not None  # the other levels still give within-group df
    assert r["test"].warnings == ()
    assert codes_in(r["welch"]) == ["group-n-one", "welch-undefined"]
    assert r["welch"].statistic is None and r["welch"].p is None and r["welch"].df2 is None
    assert codes_in(r["bartlett"]) == ["group-n-one", "bartlett-undefined"]
    assert r["bartlett"].statistic is None
    assert codes_in(r["outliers"]) == ["outlier-leverage-one"]
    assert r["outliers"].n_screened == 5
    c = r["descriptives"].groups[2]
    assert (c.n, c.mean, c.median, c.minimum) == (1, 9.0, 9.0, 9.0)
    assert c.sd is None and c.se is None and c.ci_low is None and c.ci_high is None
    assert codes_in(r["descriptives"]) == ["group-n-one"]
    assert "Level 'c' has a single unit" in r["descriptives"].warnings[0].message


def test_zero_within_variance() -> None:
    r = run_all([2.0, 2.0, 5.0, 5.0, 7.0, 7.0], codes_of(2, 2, 2))
    table, test = r["table"], r["test"]
    assert codes_in(table) == ["zero-within-variance"]
    assert test.statistic is None and test.p is None
    assert table.residual_ss == pytest.approx(0.0, abs=1e-13 * table.total_ss) and table.residual_sd == 0.0
    assert table.r_squared == pytest.approx(1.0, abs=1e-13)
    assert test.critical_f == pytest.approx(9.552094495921, rel=1e-9)  # F(2, 3) upper 5%, scipy 1.17 f.isf
    assert codes_in(r["welch"]) == ["zero-group-variance"]
    assert "'a', 'b', 'c'" in r["welch"].warnings[0].message
    # The effect sizes need the F ratio; the row says why it is missing.
    assert (test.partial_eta_squared, test.partial_omega_squared, test.cohens_f) == (None, None, None)
    assert codes_in(test) == ["zero-within-variance"]
    assert r["bartlett"].statistic is None and codes_in(r["bartlett"]) == ["bartlett-undefined"]
    assert r["bf"].statistic is None and codes_in(r["bf"]) == ["brown-forsythe-undefined"]
    assert r["outliers"].flagged == () and codes_in(r["outliers"]) == ["outlier-undefined"]
    assert r["kruskal"].statistic is not None  # ranks still separate the levels


def test_single_occupied_group_and_empty_levels() -> None:
    r = run_all([1.0, 2.0, 4.0], np.zeros(3, dtype=np.intp))
    table, test = r["table"], r["test"]
    assert codes_in(table) == ["empty-level", "empty-level", "single-group"]
    assert codes_in(test) == codes_in(table)
    assert (test.df, table.residual_df) == (0, 2)
    assert test.statistic is None and test.p is None and test.critical_f is None and table.r_squared is None
    assert test.mean_square is None
    for key in ("welch", "kruskal", "bartlett"):
        assert codes_in(r[key])[-1] == "single-group", key
    assert codes_in(r["bf"]) == ["empty-level", "empty-level", "single-group", "brown-forsythe-undefined"]
    assert r["welch"].statistic is None and r["kruskal"].statistic is None
    assert r["bf"].statistic is None and r["bartlett"].statistic is None
    empty = r["descriptives"].groups[1]
    assert empty.n == 0 and empty.mean is None and empty.q1 is None and empty.maximum is None


def test_empty_level_is_left_out_of_the_tests() -> None:
    values = np.array([1.0, 2.0, 4.0, 3.0, 5.0, 9.0])
    with_empty = run_all(values, np.repeat([0, 2], 3))
    without = run_all(values, np.repeat([0, 1], 3), levels=("a", "c"))
    assert codes_in(with_empty["table"]) == ["empty-level"]
    assert "Level 'b' has no analysed units" in with_empty["table"].warnings[0].message
    assert with_empty["test"].df == 1 and with_empty["test"].warnings == ()
    assert with_empty["test"].statistic == pytest.approx(without["test"].statistic, rel=1e-12)
    assert with_empty["welch"].statistic == without["welch"].statistic
    assert with_empty["kruskal"].statistic == without["kruskal"].statistic
    assert with_empty["bartlett"].statistic == without["bartlett"].statistic


def test_all_values_identical() -> None:
    r = run_all([3.0] * 6, codes_of(2, 2, 2))
    assert codes_in(r["table"]) == ["all-identical"]
    assert codes_in(r["test"]) == ["all-identical"]
    assert r["test"].statistic is None and r["table"].r_squared is None
    assert codes_in(r["kruskal"]) == ["all-identical"]
    assert r["kruskal"].statistic is None and r["kruskal"].tie_correction == 0.0 and r["kruskal"].df1 == 2
    assert codes_in(r["normality"]) == ["normality-constant"]
    assert r["normality"].statistic is None


def test_every_level_has_one_unit() -> None:
    r = run_all([1.0, 2.0, 4.0], codes_of(1, 1, 1))
    assert codes_in(r["table"]) == ["group-n-one"] * 3 + ["no-within-df"]
    assert codes_in(r["test"]) == codes_in(r["table"])
    assert r["test"].statistic is None and r["table"].residual_sd is None and r["test"].critical_f is None
    assert r["table"].residual_ms is None and r["table"].residual_df == 0


def test_no_units_at_all() -> None:
    r = run_all([], np.zeros(0, dtype=np.intp))
    assert r["test"].statistic is None and r["table"].total_df == 0
    assert codes_in(r["test"])[-1] == "single-group"
    assert r["normality"].n == 0 and codes_in(r["normality"]) == ["normality-too-few"]
    assert all(g.n == 0 for g in r["descriptives"].groups)


def test_shapiro_small_and_large_samples() -> None:
    assert codes_in(shapiro_wilk(np.array([0.5, -0.5]))) == ["normality-too-few"]
    # Invented residuals from a seeded normal generator.
    big = shapiro_wilk(np.random.default_rng(11).normal(size=5001))
    assert codes_in(big) == ["normality-p-approximate"]
    assert big.statistic is not None and 0.99 < big.statistic <= 1.0
    assert shapiro_wilk(np.random.default_rng(11).normal(size=5000)).warnings == ()


@settings(max_examples=150, deadline=None)
@given(
    sizes=hs.lists(hs.integers(0, 4), min_size=3, max_size=3),
    pool=hs.lists(hs.sampled_from([0.0, 1.0, 1.0, 2.5, -3.0, 1e9]), min_size=1, max_size=3),
    seed=hs.integers(0, 2**32 - 1),
)
def test_no_exception_and_every_gap_is_explained(sizes, pool, seed) -> None:
    # Invented small designs drawn from a tiny pool of values: empty and single-unit
    # levels, heavy ties and constant levels are common. Warnings are errors here.
    rng = np.random.default_rng(seed)
    codes = codes_of(*sizes)
    values = rng.choice(np.array(pool), size=codes.size) if codes.size else np.zeros(0)
    r = run_all(values, codes)
    for key in ("test", "welch", "kruskal", "bf", "bartlett", "normality"):
        if r[key].statistic is None:
            assert r[key].warnings, f"{key}: statistic missing without a warning"
        else:
            assert np.isfinite(r[key].statistic) and 0.0 <= r[key].p <= 1.0, key
    if r["test"].statistic is None:
        assert r["table"].warnings, "the table says nothing of the missing test"
    test = r["test"]
    for measure in ("partial_eta", "partial_omega", "cohens_f"):
        estimate = getattr(test, "cohens_f" if measure == "cohens_f" else f"{measure}_squared")
        low, high = getattr(test, f"{measure}_ci_low"), getattr(test, f"{measure}_ci_high")
        if low is None:
            assert high is None and test.warnings, f"{measure}: interval missing without a warning"
        else:
            assert estimate is not None and 0.0 <= low <= high, measure


def test_brown_forsythe_with_two_units_per_level() -> None:
    # With two units per level both |y - median| are equal, so the deviations carry no
    # within-level variation and the F ratio on them is undefined (scipy 1.17 levene: inf).
    values = np.array([1.0, 3.0, 2.0, 7.0, 5.0, 6.0])
    result = brown_forsythe(values, codes_of(2, 2, 2), 3, LEVELS)
    assert result.statistic is None and result.p is None
    assert [w.code for w in result.warnings] == ["brown-forsythe-undefined"]


def test_residual_zero_up_to_rounding_says_so_beside_the_layout_notes() -> None:
    # Invented: levels {0, 1} and {1e9, 1e9}, level 'c' empty. SS within 0.5 is below
    # 1e-13 of SS total (5e17), which the engine takes as rounding: no F. The one-way
    # layout sees no gap of its own, so the engine's notes say why beside the empty level.
    r = run_all([0.0, 1.0, 1e9, 1e9], codes_of(2, 2))
    assert r["test"].statistic is None and r["test"].partial_eta_squared is None
    assert codes_in(r["table"]) == ["empty-level", "zero-residual-variance"]
    assert codes_in(r["test"]) == ["f-undefined"]
    assert r["test"].warnings[0].message == (
        "The F ratio of group is undefined: the model leaves no residual variation.")
