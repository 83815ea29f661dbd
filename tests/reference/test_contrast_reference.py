"""Simultaneous contrast tests against published examples and reference libraries.

The source of every expected value is named beside it. Where this code calls scipy
(studentized_range, norm, t), the expected values come from a publication or from a
library that computes them another way.
"""

from __future__ import annotations

import math

import numpy as np
import pingouin
import pytest

from appendix.stats import multiplicity as mult
from appendix.stats.cells import cell_stats
from appendix.stats.contrasts import hypotheses_for
from appendix.stats.simultaneous import many_to_one_critical, many_to_one_tail


def _cells(groups, labels):
    values = np.array([x for g in groups for x in g], dtype=np.float64)
    codes = np.repeat(np.arange(len(groups)), [len(g) for g in groups])
    return cell_stats(values, codes, len(groups), labels), values, codes


# --- Dunnett -----------------------------------------------------------------------

# Dunnett (1955, JASA 50:1096-1121), Table 1 (blood counts, millions of cells per mm^3):
# a control and two drugs; as copied in scipy 1.17 scipy/stats/tests/test_multicomp.py.
BLOOD = {"control": [7.40, 8.50, 7.20, 8.24, 9.84, 8.32],
         "drug A": [9.76, 8.80, 7.68, 9.36],
         "drug B": [12.80, 9.68, 12.16, 9.20, 10.55]}


def _blood(alternative):
    cells, _, _ = _cells(list(BLOOD.values()), tuple(BLOOD))
    hs = hypotheses_for("versus-control", cells.labels, control="control", contrast_id="C2",
                        label="each drug versus control")
    return mult.dunnett_family(hs, cells, alternative, 0.05)


def test_dunnett_blood_counts_two_sided() -> None:
    a, b = _blood("two-sided")
    # Dunnett 1955, section 2: differences 0.65 and 2.63 (from the paper, 2 decimals), s on 12 df.
    assert (a.estimate, b.estimate) == pytest.approx((0.65, 2.628), abs=1e-9)
    assert a.df == b.df == 12
    # Statistics and p: R multcomp::glht (Dunnett), as recorded in scipy 1.17
    # test_multicomp.py (statistic_2, p_2_twosided).
    assert (a.statistic, b.statistic) == pytest.approx((0.85703, 3.69375), abs=5e-6)
    assert (a.p_adjusted, b.p_adjusted) == pytest.approx((0.6201020, 0.0058254), abs=2e-6)
    # Simultaneous 95% limits: R multcomp (ci_2_twosided); Dunnett 1955 gives 0.65 +/- 1.91
    # and 2.63 +/- 1.79 (from memory). R's randomised integration is good to ~1e-3.
    assert (a.ci_low, a.ci_high) == pytest.approx((-1.2564116, 2.5564116), abs=1e-3)
    assert (b.ci_low, b.ci_high) == pytest.approx((0.8396274, 4.4163726), abs=1e-3)
    assert (a.decision, b.decision) == ("retain", "reject")
    assert a.ci_simultaneous and a.confidence_level == 0.95


def test_dunnett_blood_counts_one_sided() -> None:
    a, b = _blood("greater")
    # R multcomp::glht alternative "greater" (p_2_greater, ci_2_greater), scipy 1.17 test_multicomp.py.
    assert (a.p_adjusted, b.p_adjusted) == pytest.approx((0.3249776, 0.0029139), abs=2e-6)
    assert (a.ci_low, b.ci_low) == pytest.approx((-0.9588591, 1.1187564), abs=1e-3)
    assert a.ci_high is None and b.ci_high is None
    a, b = _blood("less")
    # R multcomp::glht alternative "less" (p_2_less, ci_2_less), scipy 1.17 test_multicomp.py.
    assert (a.p_adjusted, b.p_adjusted) == pytest.approx((0.91676, 0.99984), abs=2e-5)
    assert (a.ci_high, b.ci_high) == pytest.approx((2.2588591, 4.1372436), abs=1e-3)
    assert a.ci_low is None


@pytest.mark.parametrize("p, df, expected, alpha, two_sided", [
    # Dunnett 1955, Tables 1a/1b (one-sided), pp. 1117-1118, equal n (rho = 0.5); the
    # entries as cited in scipy 1.17 test_multicomp.py, plus (2, 12) read from section 2.
    (1, 10, 1.81, 0.05, False), (3, 10, 2.34, 0.05, False), (2, 30, 1.99, 0.05, False),
    (5, 30, 2.33, 0.05, False), (4, 12, 3.32, 0.01, False), (7, 12, 3.56, 0.01, False),
    (2, 60, 2.64, 0.01, False), (4, 60, 2.87, 0.01, False), (2, 12, 2.11, 0.05, False),
    # Dunnett 1955, Tables 2a/2b (two-sided), pp. 1119-1120: exact for p <= 2 only.
    (1, 10, 2.23, 0.05, True), (2, 30, 2.32, 0.05, True), (2, 60, 2.90, 0.01, True),
    (2, 12, 2.50, 0.05, True),
])
def test_dunnett_critical_values_tables(p, df, expected, alpha, two_sided) -> None:
    d = many_to_one_critical(alpha, [math.sqrt(0.5)] * p, df, two_sided)
    assert d == pytest.approx(expected, abs=0.006)  # tables print 2 decimals


@pytest.mark.parametrize("p, df, table_value, alpha", [
    (3, 10, 2.81, 0.05), (3, 20, 2.57, 0.05), (4, 12, 3.76, 0.01), (7, 12, 4.08, 0.01),
    (4, 60, 3.14, 0.01),
])
def test_dunnett_two_sided_beyond_two_comparisons(p, df, table_value, alpha) -> None:
    """Dunnett's 1955 two-sided entries for p > 2 were approximations on the safe side
    (Dunnett 1964, Biometrics 20:482-491, recomputed them, from memory): ours must lie
    below them, and must hit alpha under an independent algorithm, the randomised
    quasi-Monte Carlo multivariate t of Genz & Bretz (scipy 1.17 multivariate_t.cdf)."""
    from scipy import stats as st

    d = many_to_one_critical(alpha, [math.sqrt(0.5)] * p, df, True)
    assert table_value - 0.2 < d < table_value
    rho = np.full((p, p), 0.5)
    np.fill_diagonal(rho, 1.0)
    inside = st.multivariate_t(shape=rho, df=df, seed=20261201).cdf(
        np.full(p, d), lower_limit=np.full(p, -d), maxpts=200_000)
    assert 1.0 - inside == pytest.approx(alpha, abs=2e-4)


def test_many_to_one_tail_reduces_to_t_and_normal() -> None:
    from scipy import stats as st
    # One comparison: the two-sided tail is 2 P(t_10 > 2); scipy.stats.t.sf 1.17 (Boost).
    assert many_to_one_tail(2.0, [0.6], 10, True) == pytest.approx(2 * st.t.sf(2.0, 10), rel=1e-10)
    # One comparison on 1 df at alpha = .001: Dunnett's d is the t quantile (scipy.stats.t 1.17).
    assert many_to_one_critical(0.001, [0.7], 1, True) == pytest.approx(st.t.isf(0.0005, 1), rel=1e-6)
    assert many_to_one_critical(0.05, [0.7], 3, False) == pytest.approx(st.t.isf(0.05, 3), rel=1e-9)
    # Independent comparisons (lam = 0), normal: 1 - (1 - P(Z > 2))^3, exact arithmetic.
    tail = st.norm.sf(2.0)
    assert many_to_one_tail(2.0, [0.0, 0.0, 0.0], math.inf, False) == pytest.approx(
        -math.expm1(3 * math.log1p(-tail)), rel=1e-10)


# --- Tukey–Kramer -------------------------------------------------------------------

# NIST/SEMATECH e-Handbook of Statistical Methods, section 7.4.7.1 (Tukey's method),
# four groups of five; as copied in scipy 1.17 test_hypotests.py (test_engineering_stat_handbook).
NIST = [[6.9, 5.4, 5.8, 4.6, 4.0], [8.3, 6.8, 7.8, 9.2, 6.5],
        [8.0, 10.5, 8.1, 6.9, 9.3], [5.8, 3.8, 6.1, 5.6, 6.2]]


def test_tukey_nist_handbook_intervals() -> None:
    cells, _, _ = _cells(NIST, ("1", "2", "3", "4"))
    hs = hypotheses_for("pairwise", cells.labels, contrast_id="P", label="all pairs")
    got = {r.id: r for r in mult.tukey_family(hs, cells, "two-sided", 0.05)}
    # The Handbook's 95% simultaneous intervals (2 decimals), mu_i - mu_j; ours are later
    # minus earlier, so (1, 4) and (2, 3), (3, 4) appear with the sign turned.
    expected = {"P:2-1": (0.29, 4.47), "P:3-1": (1.13, 5.31), "P:4-1": (-1.93, 2.25),
                "P:3-2": (-1.25, 2.93), "P:4-3": (-5.15, -0.97)}
    for hid, (low, high) in expected.items():
        assert (got[hid].ci_low, got[hid].ci_high) == pytest.approx((low, high), abs=0.006)
        assert got[hid].ci_simultaneous


def _pain_threshold():
    """Pain threshold by hair colour (McClave & Dietrich 1991), as shipped with pingouin 0.7.

    Unequal n (5, 5, 4, 5), so Tukey–Kramer."""
    frame = pingouin.read_dataset("anova")
    levels = tuple(dict.fromkeys(frame["Hair color"]))
    codes = np.array([levels.index(x) for x in frame["Hair color"]], dtype=np.intp)
    values = frame["Pain threshold"].to_numpy(np.float64)
    return cell_stats(values, codes, len(levels), levels), frame, levels


def _by_pair(results, levels):
    """Results keyed by the unordered pair of level names, with the sign of earlier-later."""
    out = {}
    for r in results:
        i, j = (n for n, w in enumerate(r.weights) if w != 0)
        out[frozenset((levels[i], levels[j]))] = r
    return out


def test_tukey_kramer_unequal_n_against_reference_libraries() -> None:
    from statsmodels.stats.multicomp import MultiComparison

    cells, frame, levels = _pain_threshold()
    hs = hypotheses_for("pairwise", levels, contrast_id="C3", label="all pairs")
    got = _by_pair(mult.tukey_family(hs, cells, "two-sided", 0.05), levels)
    ref = pingouin.pairwise_tukey(data=frame, dv="Pain threshold", between="Hair color")
    # Reference: pingouin 0.7.0 pairwise_tukey (columns A, B, diff = mean_A - mean_B, T, p_tukey).
    for row in ref.itertuples():
        r = got[frozenset((row.A, row.B))]
        sign = 1.0 if r.weights[levels.index(row.A)] > 0 else -1.0
        assert r.estimate == pytest.approx(sign * row.diff, rel=1e-12)
        assert r.statistic == pytest.approx(sign * row.T, rel=1e-10)
        assert r.p_adjusted == pytest.approx(row.p_tukey, rel=1e-6)
    # Reference: statsmodels 0.15.0 MultiComparison.tukeyhsd (meandiff = group2 - group1),
    # simultaneous 95% intervals.
    sm = MultiComparison(frame["Pain threshold"].to_numpy(), frame["Hair color"].to_numpy()).tukeyhsd(0.05)
    pairs = [(a, b) for i, a in enumerate(sm.groupsunique) for b in sm.groupsunique[i + 1:]]
    for (a, b), (low, high), p in zip(pairs, sm.confint, sm.pvalues):
        r = got[frozenset((a, b))]
        if r.weights[levels.index(b)] > 0:
            assert (r.ci_low, r.ci_high) == pytest.approx((low, high), rel=1e-6)
        else:
            assert (r.ci_low, r.ci_high) == pytest.approx((-high, -low), rel=1e-6)
        assert r.p_adjusted == pytest.approx(p, rel=1e-5)
    # Decisions at .05: only these two pairs differ (both libraries above agree).
    rejected = {frozenset(k) for k, r in got.items() if r.decision == "reject"}
    assert rejected == {frozenset(("Dark Brunette", "Light Blond")),
                        frozenset(("Light Blond", "Light Brunette"))}


# --- Games–Howell -------------------------------------------------------------------

def test_games_howell_penguins_pingouin_docstring() -> None:
    # Palmer penguins body mass by species (Gorman, Williams & Fraser 2014), pingouin 0.7 dataset.
    frame = pingouin.read_dataset("penguins").dropna(subset=["body_mass_g"])
    levels = ("Adelie", "Chinstrap", "Gentoo")
    codes = np.array([levels.index(x) for x in frame["species"]], dtype=np.intp)
    cells = cell_stats(frame["body_mass_g"].to_numpy(np.float64), codes, 3, levels)
    hs = hypotheses_for("pairwise", levels, contrast_id="C3", label="all pairs")
    got = {r.id: r for r in mult.tukey_family(hs, cells, "two-sided", 0.05, welch=True)}
    # pingouin 0.7.0 docstring of pairwise_gameshowell (rounded to 3 decimals); A - B there,
    # later minus earlier here.
    chin = got["C3:Chinstrap-Adelie"]
    assert chin.estimate == pytest.approx(32.426, abs=5e-4)
    assert chin.se == pytest.approx(59.706, abs=5e-4)
    assert chin.statistic == pytest.approx(0.543, abs=5e-4)
    assert chin.df == pytest.approx(152.455, abs=5e-4)
    assert chin.p_adjusted == pytest.approx(0.85, abs=5e-3)
    gentoo = got["C3:Gentoo-Chinstrap"]
    assert (gentoo.se, gentoo.statistic, gentoo.df) == pytest.approx((65.103, 20.628, 170.404), abs=5e-4)
    assert got["C3:Gentoo-Adelie"].df == pytest.approx(249.643, abs=5e-4)
    assert all(w.code == "games-howell-approximate" for r in got.values() for w in r.warnings)


def test_games_howell_unequal_n_against_reference_libraries() -> None:
    from statsmodels.stats.multicomp import MultiComparison

    cells, frame, levels = _pain_threshold()
    hs = hypotheses_for("pairwise", levels, contrast_id="C3", label="all pairs")
    got = _by_pair(mult.tukey_family(hs, cells, "two-sided", 0.05, welch=True), levels)
    ref = pingouin.pairwise_gameshowell(data=frame, dv="Pain threshold", between="Hair color")
    # Reference: pingouin 0.7.0 pairwise_gameshowell (T, df, pval).
    for row in ref.itertuples():
        r = got[frozenset((row.A, row.B))]
        assert abs(r.statistic) == pytest.approx(abs(row.T), rel=1e-10)
        assert r.df == pytest.approx(row.df, rel=1e-10)
        assert r.p_adjusted == pytest.approx(row.pval, rel=1e-6)
    # Reference: statsmodels 0.15.0 tukeyhsd(use_var="unequal") simultaneous intervals.
    sm = MultiComparison(frame["Pain threshold"].to_numpy(),
                         frame["Hair color"].to_numpy()).tukeyhsd(0.05, use_var="unequal")
    pairs = [(a, b) for i, a in enumerate(sm.groupsunique) for b in sm.groupsunique[i + 1:]]
    for (a, b), (low, high) in zip(pairs, sm.confint):
        r = got[frozenset((a, b))]
        bounds = (low, high) if r.weights[levels.index(b)] > 0 else (-high, -low)
        assert (r.ci_low, r.ci_high) == pytest.approx(bounds, rel=1e-6)
