"""Contrast hypotheses and single-contrast estimates (classical, welch, rank-based).

Invented data are seeded normal draws (said where used). Reference libraries name their
function and version beside the expected value.
"""

from __future__ import annotations

import math
import warnings

import numpy as np
import pytest
import scipy.stats as st

from appendix.errors import InternalError
from appendix.stats.cells import cell_stats
from appendix.stats.contrasts import (
    Hypothesis, classical_contrast, hypotheses_for, orthogonal_polynomials, rank_contrast,
    welch_contrast,
)

COATINGS = ("uncoated", "chitosan", "seaweed", "humic")


def _invented(seed: int, sizes=(6, 8, 5, 7), spreads=(1.0, 2.0, 0.5, 3.0)):
    """Invented unbalanced data: seeded normal draws with unequal spreads."""
    rng = np.random.default_rng(seed)
    codes = np.repeat(np.arange(len(sizes)), sizes)
    centres = rng.uniform(10, 20, size=len(sizes))
    values = rng.normal(centres[codes], np.asarray(spreads)[codes])
    return values, codes


# --- hypotheses -------------------------------------------------------------------

def test_pairwise_ids_labels_and_weights_follow_the_contract() -> None:
    hs = hypotheses_for("pairwise", COATINGS, contrast_id="C3", label="all pairs of coatings")
    assert [h.id for h in hs] == ["C3:chitosan-uncoated", "C3:seaweed-uncoated", "C3:humic-uncoated",
                                  "C3:seaweed-chitosan", "C3:humic-chitosan", "C3:humic-seaweed"]
    assert hs[3].label == "seaweed \u2212 chitosan"
    assert hs[3].weights == (0.0, -1.0, 1.0, 0.0)
    assert {h.contrast for h in hs} == {"C3"} and {h.kind for h in hs} == {"pairwise"}


def test_versus_control_and_helmert_ids_and_labels() -> None:
    hs = hypotheses_for("versus-control", COATINGS, control="uncoated", contrast_id="C2",
                        label="each coating versus uncoated")
    assert [(h.id, h.label) for h in hs] == [
        ("C2:chitosan", "chitosan \u2212 uncoated"), ("C2:seaweed", "seaweed \u2212 uncoated"),
        ("C2:humic", "humic \u2212 uncoated")]
    assert hs[1].weights == (-1.0, 0.0, 1.0, 0.0)
    helmert = hypotheses_for("helmert", COATINGS, contrast_id="C5", label="each versus later")
    assert [h.id for h in helmert] == ["C5:uncoated", "C5:chitosan", "C5:seaweed"]
    assert helmert[0].label == "uncoated \u2212 mean of later levels"
    assert helmert[0].weights == pytest.approx((1.0, -1 / 3, -1 / 3, -1 / 3))
    assert helmert[2].weights == (0.0, 0.0, 1.0, -1.0)


def test_custom_weights_missing_levels_weigh_zero() -> None:
    (h,) = hypotheses_for("custom", COATINGS, weights={"uncoated": -2, "seaweed": 1, "humic": 1},
                          contrast_id="C1", label="coated versus uncoated")
    assert (h.id, h.label, h.weights) == ("C1", "coated versus uncoated", (-2.0, 0.0, 1.0, 1.0))


@pytest.mark.parametrize("kind, options", [
    ("custom", {"weights": {"uncoated": 1, "chitosan": 1}}),        # does not sum to 0
    ("custom", {"weights": {"uncoated": 0}}),                        # all zero
    ("custom", {"weights": {"uncoatd": 1, "chitosan": -1}}),        # unknown level
    ("pairwise", {"weights": {"uncoated": 1, "chitosan": -1}}),     # weights on a non-custom kind
    ("versus-control", {"control": "none of them"}),
    ("trend", {"degree": 4}),                                        # k - 1 = 3 at most
    ("trend", {"spacing": [0, 1, 1, 2]}),                            # not strictly increasing
    ("sideways", {}),
])
def test_invalid_contrasts_are_internal_errors(kind, options) -> None:
    with pytest.raises(InternalError):
        hypotheses_for(kind, COATINGS, contrast_id="C", label="x", **options)


def test_trend_equal_spacing_matches_fisher_yates_tables() -> None:
    # Fisher & Yates (1938), Statistical Tables, table XXIII, k = 4 and k = 5 (from memory).
    four = orthogonal_polynomials([0, 1, 2, 3], 3)
    assert four[0] == pytest.approx(np.array([-3, -1, 1, 3]) / math.sqrt(20), abs=1e-12)
    assert four[1] == pytest.approx(np.array([1, -1, -1, 1]) / 2, abs=1e-12)
    assert four[2] == pytest.approx(np.array([-1, 3, -3, 1]) / math.sqrt(20), abs=1e-12)
    five = orthogonal_polynomials([10, 20, 30, 40, 50], 4)
    for row, table in zip(five, ([-2, -1, 0, 1, 2], [2, -1, -2, -1, 2], [-1, 2, 0, -2, 1],
                                 [1, -4, 6, -4, 1])):
        table = np.asarray(table, dtype=float)
        assert row == pytest.approx(table / np.linalg.norm(table), abs=1e-12)
    hs = hypotheses_for("trend", COATINGS, degree=3, contrast_id="C4", label="dose trend")
    assert [(h.id, h.label) for h in hs] == [("C4:linear", "linear trend"),
                                            ("C4:quadratic", "quadratic trend"),
                                            ("C4:cubic", "cubic trend")]


def test_trend_unequal_spacing_matches_patsy() -> None:
    from patsy.contrasts import Poly

    spacing = [0.0, 1.0, 2.0, 4.0]
    # Reference: patsy 1.0.3 Poly(scores=...).code_without_intercept, columns = degrees.
    ref = Poly(scores=spacing).code_without_intercept(list(range(4))).matrix.T
    ours = orthogonal_polynomials(spacing, 3)
    assert ours == pytest.approx(ref, abs=1e-12)
    assert ours @ ours.T == pytest.approx(np.eye(3), abs=1e-12)
    hs = hypotheses_for("trend", ("a", "b", "c", "d", "e", "f"), degree=5,
                        spacing=[1, 2, 4, 8, 16, 32], contrast_id="T", label="t")
    assert hs[4].id == "T:degree-5" and hs[3].label == "degree-4 trend"


def _balanced(seed: int, k: int, n: int = 6):
    """Invented balanced data: seeded normal draws around a curved dose response."""
    rng = np.random.default_rng(seed)
    codes = np.repeat(np.arange(k), n)
    centres = 12 + 1.7 * np.arange(k) - 0.3 * np.arange(k) ** 2
    return rng.normal(centres[codes], 1.5), codes


@pytest.mark.parametrize("spacing", [None, [0.0, 1.0, 2.0, 4.0, 8.0]])
def test_trend_estimates_are_slope_and_leading_coefficients(spacing) -> None:
    """Balanced one-way data: the linear estimate is the least-squares slope of the level
    means on the scores, the degree-d estimate the x^d coefficient of the degree-d fit."""
    levels = ("a", "b", "c", "d", "e")
    values, codes = _balanced(21, 5)
    cells = cell_stats(values, codes, 5, levels)
    hs = hypotheses_for("trend", levels, degree=4, spacing=spacing, contrast_id="T",
                        label="dose trend", factor_label="dose")
    got = [classical_contrast(h, cells, "two-sided", 0.95) for h in hs]
    x = np.arange(5.0) if spacing is None else np.asarray(spacing)
    means = np.array([values[codes == i].mean() for i in range(5)])
    # Reference: scipy 1.17.1 stats.linregress(x, means).slope.
    assert got[0].estimate == pytest.approx(st.linregress(x, means).slope, rel=1e-10)
    for degree in (1, 2, 3, 4):
        # Reference: numpy 2.4.6 polyfit(x, means, degree)[0], the x^degree coefficient.
        assert got[degree - 1].estimate == pytest.approx(np.polyfit(x, means, degree)[0],
                                                         rel=1e-8)
    orthonormal = orthogonal_polynomials(x, 4)
    for degree, (h, r) in enumerate(zip(hs, got), start=1):
        # t and p are those of the orthonormal contrast; the estimate and its interval are
        # scaled by 1 / (q_d . (x - mean x)^d), the factor trend_weights documents.
        q = orthonormal[degree - 1]
        unit = classical_contrast(Hypothesis(h.id, h.contrast, h.kind, h.label, tuple(q)), cells,
                                  "two-sided", 0.95)
        factor = 1.0 / float(np.dot(q, (x - x.mean()) ** degree))
        assert (r.statistic, r.p, r.df) == pytest.approx((unit.statistic, unit.p, unit.df), rel=1e-10)
        assert (r.estimate, r.ci_low, r.ci_high) == pytest.approx(
            (unit.estimate * factor, unit.ci_low * factor, unit.ci_high * factor), rel=1e-10)
        assert r.scale == h.scale
    assert [r.scale.name for r in got] == ["linear trend", "quadratic trend", "cubic trend",
                                           "degree-4 trend"]


def test_trend_scales_are_worded_with_the_factor_and_spacing() -> None:
    linear, quadratic = hypotheses_for("trend", COATINGS, degree=2, contrast_id="C4",
                                       label="dose", factor_label="dose")
    assert (linear.scale.meaning, linear.scale.per) == (
        "least-squares slope per step between adjacent levels of dose", "per step")
    assert (quadratic.scale.meaning, quadratic.scale.per) == (
        "coefficient of x\u00b2 in the least-squares quadratic in x, x in steps between "
        "adjacent levels of dose", "per step\u00b2")
    (spaced,) = hypotheses_for("trend", COATINGS, spacing=[0, 1, 2, 4], contrast_id="C4",
                               label="dose", factor_label="dose")
    assert (spaced.scale.meaning, spaced.scale.per) == (
        "least-squares slope per dose unit of the registered spacing 0, 1, 2, 4", "per dose unit")
    # (x - mean x) / sum (x - mean x)^2 for x = 0, 1, 2, 4: mean 7/4, sum of squares 35/4
    assert spaced.weights == pytest.approx(tuple((v - 1.75) / 8.75 for v in (0, 1, 2, 4)), rel=1e-12)
    pairs = hypotheses_for("pairwise", COATINGS, contrast_id="C3", label="pairs")
    assert all(h.scale is None for h in pairs)


def test_welch_and_rank_trends_keep_t_and_p_on_the_new_scale() -> None:
    values, codes = _invented(15)
    cells = cell_stats(values, codes, 4, COATINGS)
    (h,) = hypotheses_for("trend", COATINGS, contrast_id="C4", label="dose")
    q = tuple(orthogonal_polynomials([0, 1, 2, 3], 1)[0])
    unit = Hypothesis(h.id, h.contrast, h.kind, h.label, q)
    factor = 1.0 / float(np.dot(q, np.arange(4.0) - 1.5))  # = 1 / sqrt(5)
    assert factor == pytest.approx(1 / math.sqrt(5), rel=1e-12)
    for new, old in ((welch_contrast(h, cells, "less", 0.95), welch_contrast(unit, cells, "less", 0.95)),
                     (rank_contrast(h, values, codes, 4, "two-sided"),
                      rank_contrast(unit, values, codes, 4, "two-sided"))):
        assert (new.statistic, new.p) == pytest.approx((old.statistic, old.p), rel=1e-10)
        assert new.estimate == pytest.approx(old.estimate * factor, rel=1e-10)


# --- classical --------------------------------------------------------------------

def test_classical_trend_contrast_matches_ols_t_test() -> None:
    import statsmodels.api as sm

    values, codes = _invented(11)
    cells = cell_stats(values, codes, 4, COATINGS)
    (h,) = hypotheses_for("trend", COATINGS, spacing=[0, 1, 2, 4], contrast_id="C4", label="dose")
    got = classical_contrast(h, cells, "two-sided", 0.95)
    # Reference: statsmodels 0.15.0 OLS on cell-mean dummies, .t_test(weights).
    fit = sm.OLS(values, np.eye(4)[codes]).fit()
    ref = fit.t_test(np.array([h.weights]))
    assert got.estimate == pytest.approx(float(ref.effect[0]), rel=1e-10)
    assert got.se == pytest.approx(float(ref.sd[0, 0]), rel=1e-10)
    assert got.statistic == pytest.approx(float(ref.tvalue[0, 0]), rel=1e-10)
    assert got.df == fit.df_resid == 22
    assert got.p == pytest.approx(float(ref.pvalue), rel=1e-8)
    low, high = ref.conf_int(alpha=0.05)[0]
    assert (got.ci_low, got.ci_high) == pytest.approx((low, high), rel=1e-10)
    assert got.statistic_name == "t" and not got.ci_simultaneous


def test_classical_one_sided_and_hedges_correction() -> None:
    values, codes = _invented(12)
    cells = cell_stats(values, codes, 4, COATINGS)
    (h,) = hypotheses_for("custom", COATINGS, weights={"uncoated": -3, "chitosan": 1, "seaweed": 1,
                                                        "humic": 1}, contrast_id="C1", label="c")
    two = classical_contrast(h, cells, "two-sided", 0.95)
    greater = classical_contrast(h, cells, "greater", 0.95)
    less = classical_contrast(h, cells, "less", 0.95)
    # One-sided p from the t survival function on N - k = 22 df (scipy.stats.t 1.17).
    assert greater.p == pytest.approx(st.t.sf(two.statistic, 22), rel=1e-12)
    assert less.p == pytest.approx(st.t.sf(-two.statistic, 22), rel=1e-12)
    assert two.p == pytest.approx(2 * min(greater.p, less.p), rel=1e-12)
    assert greater.ci_high is None and less.ci_low is None
    assert greater.ci_low == pytest.approx(two.estimate - st.t.isf(0.05, 22) * two.se, rel=1e-12)
    # Hedges (1981): estimate / sqrt(MS_within) * (1 - 3 / (4 * 22 - 1)).
    ms_within = cells.ss_within / 22
    assert two.standardized == pytest.approx(two.estimate / math.sqrt(ms_within) * (1 - 3 / 87),
                                             rel=1e-12)


# --- welch ------------------------------------------------------------------------

def test_welch_pairwise_matches_statsmodels_ttest_ind() -> None:
    from statsmodels.stats.weightstats import CompareMeans, DescrStatsW, ttest_ind

    values, codes = _invented(13)
    cells = cell_stats(values, codes, 4, COATINGS)
    h = hypotheses_for("pairwise", COATINGS, contrast_id="C3", label="pairs")[4]  # humic - chitosan
    got = welch_contrast(h, cells, "two-sided", 0.90)
    humic, chitosan = values[codes == 3], values[codes == 1]
    # Reference: statsmodels 0.15.0 weightstats.ttest_ind(usevar="unequal") and tconfint_diff.
    t, p, df = ttest_ind(humic, chitosan, usevar="unequal")
    assert (got.statistic, got.p, got.df) == pytest.approx((t, p, df), rel=1e-10)
    low, high = CompareMeans(DescrStatsW(humic), DescrStatsW(chitosan)).tconfint_diff(
        alpha=0.10, usevar="unequal")
    assert (got.ci_low, got.ci_high) == pytest.approx((low, high), rel=1e-10)
    assert got.method == "welch"


def test_welch_general_contrast_direct_formula() -> None:
    values, codes = _invented(14)
    cells = cell_stats(values, codes, 4, COATINGS)
    (h,) = hypotheses_for("trend", COATINGS, contrast_id="C4", label="dose")
    got = welch_contrast(h, cells, "less", 0.95)
    # Welch (1947) / Satterthwaite (1946) by hand: a_i = w_i^2 s_i^2 / n_i.
    w = np.asarray(h.weights)
    groups = [values[codes == i] for i in range(4)]
    a = np.array([wi**2 * g.var(ddof=1) / g.size for wi, g in zip(w, groups)])
    df = a.sum() ** 2 / np.sum(a**2 / (np.array([g.size for g in groups]) - 1))
    estimate = float(np.dot(w, [g.mean() for g in groups]))
    assert got.estimate == pytest.approx(estimate, rel=1e-10)
    assert got.se == pytest.approx(math.sqrt(a.sum()), rel=1e-12)
    assert got.df == pytest.approx(df, rel=1e-12)
    assert got.p == pytest.approx(st.t.sf(-estimate / math.sqrt(a.sum()), df), rel=1e-9)
    assert got.ci_high == pytest.approx(estimate + st.t.isf(0.05, df) * math.sqrt(a.sum()), rel=1e-10)


# --- rank-based -------------------------------------------------------------------

def test_dunn_two_groups_equals_mann_whitney_and_kruskal_wallis() -> None:
    # Invented data with ties: seeded integers.
    rng = np.random.default_rng(15)
    values = rng.integers(0, 8, size=23).astype(np.float64)
    codes = np.repeat([0, 1], [11, 12])
    h = hypotheses_for("pairwise", ("a", "b"), contrast_id="P", label="b versus a")[0]
    got = rank_contrast(h, values, codes, 2, "two-sided")
    # With two groups Dunn's z is the tie-corrected normal-approximation rank-sum z:
    # scipy 1.17 kruskal (H = z^2) and mannwhitneyu(method="asymptotic", use_continuity=False).
    assert got.statistic**2 == pytest.approx(st.kruskal(values[codes == 0], values[codes == 1]).statistic,
                                             rel=1e-10)
    ref = st.mannwhitneyu(values[codes == 1], values[codes == 0], method="asymptotic",
                          use_continuity=False)
    assert got.p == pytest.approx(ref.pvalue, rel=1e-10)
    assert got.statistic_name == "z" and got.df is None and got.standardized is None


def test_dunn_contrast_by_hand_with_ties() -> None:
    values, codes = _invented(16)
    values = np.round(values)  # ties
    h = hypotheses_for("helmert", COATINGS, contrast_id="H", label="h")[0]
    got = rank_contrast(h, values, codes, 4, "greater", confidence=0.9)
    ranks = st.rankdata(values)
    n_total = values.size
    _, t = np.unique(values, return_counts=True)
    s2 = n_total * (n_total + 1) / 12 - np.sum(t**3 - t) / (12 * (n_total - 1))  # Dunn 1964, eq. 2
    w = np.asarray(h.weights)
    n = np.bincount(codes)
    estimate = float(np.dot(w, [ranks[codes == i].mean() for i in range(4)]))
    se = math.sqrt(s2 * np.sum(w**2 / n))
    assert got.estimate == pytest.approx(estimate, rel=1e-12)
    assert got.se == pytest.approx(se, rel=1e-12)
    assert got.p == pytest.approx(st.norm.sf(estimate / se), rel=1e-10)
    assert got.ci_low == pytest.approx(estimate - st.norm.isf(0.10) * se, rel=1e-12)


# --- degenerate data: None and a typed warning, never a crash or a RuntimeWarning -----

def _strict(fn, *args):
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        return fn(*args)


def test_empty_level_makes_its_hypotheses_unavailable() -> None:
    values, codes = _invented(17)
    keep = codes != 2  # no seaweed units
    cells = cell_stats(values[keep], codes[keep], 4, COATINGS)
    hs = hypotheses_for("versus-control", COATINGS, control="uncoated", contrast_id="C2", label="v")
    results = [_strict(classical_contrast, h, cells, "two-sided", 0.95) for h in hs]
    assert [r.p is None for r in results] == [False, True, False]
    gap = results[1]
    assert gap.decision == "unavailable" and gap.p_adjusted is None
    assert (gap.estimate, gap.se, gap.p, gap.ci_low) == (None, None, None, None)
    assert [w.code for w in gap.warnings] == ["hypothesis-empty-level"]
    assert "'seaweed'" in gap.warnings[0].message


def test_single_unit_level_welch_and_zero_variance() -> None:
    values = np.array([1.0, 2.0, 3.0, 7.0, 5.0, 5.0, 5.0])
    codes = np.array([0, 0, 0, 1, 2, 2, 2])
    cells = cell_stats(values, codes, 3, ("a", "b", "c"))
    hs = hypotheses_for("pairwise", cells.labels, contrast_id="P", label="p")
    welch = [_strict(welch_contrast, h, cells, "two-sided", 0.95) for h in hs]
    assert [r.decision == "unavailable" for r in welch] == [True, False, True]
    assert welch[0].warnings[0].code == welch[2].warnings[0].code == "welch-contrast-undefined"
    assert welch[1].p is not None  # c - a: a has variance, c has none, so the SE is a's
    flat = cell_stats(np.array([4.0, 4.0, 6.0, 6.0]), np.array([0, 0, 1, 1]), 2, ("a", "b"))
    h = hypotheses_for("pairwise", ("a", "b"), contrast_id="P", label="b versus a")[0]
    for compute in (classical_contrast, welch_contrast):
        r = _strict(compute, h, flat, "two-sided", 0.95)
        assert r.decision == "unavailable" and r.warnings[0].code == "contrast-zero-variance"


def test_no_within_df_and_all_tied_ranks() -> None:
    cells = cell_stats(np.array([1.0, 2.0]), np.array([0, 1]), 2, ("a", "b"))
    h = hypotheses_for("pairwise", ("a", "b"), contrast_id="P", label="b versus a")[0]
    r = _strict(classical_contrast, h, cells, "two-sided", 0.95)
    assert r.decision == "unavailable" and r.warnings[0].code == "contrast-no-within-df"
    tied = _strict(rank_contrast, h, np.full(6, 3.0), np.repeat([0, 1], 3), 2, "two-sided")
    assert tied.decision == "unavailable" and tied.warnings[0].code == "contrast-zero-variance"
