"""The repeated-measures engine against outside references.

References (installed versions): pingouin 0.7.0 (rm_anova, mixed_anova, sphericity,
epsilon, and its shipped datasets rm_anova, rm_anova_wide, rm_anova2, mixed_anova,
mixed_anova_unbalanced, read from pingouin/datasets/), statsmodels 0.15.0 (AnovaRM, OLS,
and the test data of statsmodels/stats/tests/test_anova_rm.py), scipy (ncf, f, chi2).
The random designs of the last tests are invented: normal draws from numpy's seeded
generator, one design per example.
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pandas as pd
import pingouin as pg
import pytest
import scipy.linalg as sla
import scipy.stats as st
import statsmodels
import statsmodels.api as sm
from hypothesis import given, settings
from hypothesis import strategies as hs
from statsmodels.stats.anova import AnovaRM

from appendix.stats.repeated import (
    complete_units, repeated_measures, within_contrast, within_means,
)

TOL = 1e-9


def _codes(series: pd.Series) -> tuple[np.ndarray, list[str]]:
    levels = sorted(series.dropna().unique())
    lookup = {level: i for i, level in enumerate(levels)}
    return series.map(lambda v: lookup.get(v, -1)).to_numpy(dtype=np.int64), levels


def _fit(frame: pd.DataFrame, dv: str, within: str, subject: str, between: str | None = None):
    """Complete units and the fit of a long pandas frame (levels in sorted order)."""
    within_codes, within_levels = _codes(frame[within])
    group_codes, between_levels = (None, [])
    if between is not None:
        group_codes, between_levels = _codes(frame[between])
    data = complete_units(frame[subject].astype(str).tolist(), within_codes,
                          frame[dv].to_numpy(dtype=float), len(within_levels), group_codes,
                          level_names=within_levels)
    fit = repeated_measures(data, within, within_levels, between, between_levels)
    return data, fit


def _row(fit, kind: str, term_length: int = 1):
    return next(r for r in fit.rows if r.kind == kind and len(r.term) == term_length)


def _error(fit, stratum: str):
    term = ("units",) if stratum == "between" else (fit.within, "units")
    return next(r for r in fit.rows if r.term == term)


def _close(actual, expected, tol=TOL):
    assert actual == pytest.approx(expected, rel=tol, abs=tol)


def _w2(d: int, nu: int, k: int) -> float:
    """The second-order weight of Mauchly's chi-square with `k` in its 3k term.

    Anderson (2003, section 10.7.4) has k = d, the dimension, which appendix uses;
    pingouin (and, by its own comment in pingouin/distribution.py `_mauchly`, R's
    mauchly.test) put the number of conditions k = d + 1 there. The two p-values differ
    by (w2(d) - w2(d + 1)) (P(chi2_{f+4} > x) - P(chi2_f > x)); zero when d = 2.
    """
    rho = 1 - (2 * d**2 + d + 2) / (6 * d * nu)
    return ((d + 2) * (d - 1) * (d - 2) * (2 * d**3 + 6 * d**2 + 3 * k + 2)
            / (288 * (nu * d * rho) ** 2))


def _check_mauchly_p(spher, pg_p: float, nu: int) -> None:
    """Our Mauchly p against pingouin's, allowing exactly for the documented 3k term."""
    d = round(1 / spher.lower_bound)
    f = d * (d + 1) // 2 - 1
    tails = st.chi2.sf(spher.chi_square, f + 4) - st.chi2.sf(spher.chi_square, f)
    _close(spher.p, pg_p + (_w2(d, nu, d) - _w2(d, nu, d + 1)) * tails)


def _check_mixed(fit, aov: pd.DataFrame) -> None:
    """Every number of pingouin.mixed_anova(correction=True) against our rows."""
    rows = {"between": _row(fit, "between"), "within": _row(fit, "within"),
            "inter": _row(fit, "within", 2)}
    for name, source in zip(("between", "within", "inter"), range(3)):
        ref = aov.iloc[source]
        row = rows[name]
        _close(row.ss, ref["SS"])
        assert row.df == ref["DF1"]
        _close(row.ms, ref["MS"])
        _close(row.statistic, ref["F"])
        _close(row.p, ref["p_unc"])
        _close(row.partial_eta_squared, ref["np2"])
        if name != "between" and "p_GG_corr" in aov:
            _close(row.gg_p, ref["p_GG_corr"])
    assert _error(fit, "between").df == aov.iloc[0]["DF2"]
    assert _error(fit, "within").df == aov.iloc[1]["DF2"]
    _close(fit.sphericity.greenhouse_geisser, aov.iloc[1]["eps"])
    if "W_spher" in aov and fit.sphericity.mauchly_w is not None:
        _close(fit.sphericity.mauchly_w, aov.iloc[1]["W_spher"])
        _check_mauchly_p(fit.sphericity, aov.iloc[1]["p_spher"], _error(fit, "between").df)


def _mixed_against_pingouin(frame: pd.DataFrame, dv: str, within: str, subject: str,
                            between: str):
    """Our fit and pingouin.mixed_anova(correction=True) on one frame, compared."""
    data, fit = _fit(frame, dv, within, subject, between)
    aov = pg.mixed_anova(frame, dv=dv, within=within, between=between, subject=subject,
                         correction=True)
    _check_mixed(fit, aov)
    assert (fit.sphericity.mauchly_w is None) == (len(fit.within_levels) == 2)
    return data, fit, aov


# --- pingouin's shipped datasets --------------------------------------------------------


def test_mixed_dataset_against_pingouin_mixed_anova():
    # pingouin dataset mixed_anova (2 groups x 30 units, 3 time points), pingouin.mixed_anova.
    data, fit, _ = _mixed_against_pingouin(pg.read_dataset("mixed_anova"), "Scores", "Time",
                                           "Subject", "Group")
    assert fit.n_units == 60 and data.dropped == ()


def test_mixed_dataset_rounded_values_in_pingouin_docstring():
    # Published in pingouin/parametric.py, mixed_anova docstring (3 decimals):
    # Group SS 5.460 F 5.052 p 0.028 np2 0.080; Time SS 7.628 F 4.027 p 0.020 eps 0.998;
    # Interaction SS 5.167 F 2.728 p 0.070 np2 0.045.
    _, fit = _fit(pg.read_dataset("mixed_anova"), "Scores", "Time", "Subject", "Group")
    group, time, inter = _row(fit, "between"), _row(fit, "within"), _row(fit, "within", 2)
    assert [round(v, 3) for v in (group.ss, group.statistic, group.p, group.partial_eta_squared)] == [
        5.460, 5.052, 0.028, 0.080]
    assert [round(v, 3) for v in (time.ss, time.statistic, time.p)] == [7.628, 4.027, 0.020]
    assert round(fit.sphericity.greenhouse_geisser, 3) == 0.998
    assert [round(v, 3) for v in (inter.ss, inter.statistic, inter.p, inter.partial_eta_squared)] == [
        5.167, 2.728, 0.070, 0.045]


def test_unbalanced_mixed_dataset_against_pingouin():
    # pingouin dataset mixed_anova_unbalanced (groups of 7, 10 and 9 units, 4 time points).
    # Unequal group sizes: the within factor is averaged over all units, as pingouin does.
    _, fit, _ = _mixed_against_pingouin(pg.read_dataset("mixed_anova_unbalanced"), "Scores",
                                        "Time", "Subject", "Group")
    assert [len(r.term) for r in fit.rows] == [1, 1, 1, 2, 2]


def _insect_frame() -> pd.DataFrame:
    # pingouin dataset rm_anova (Ryan et al. 2013 per pingouin's datasets.csv): the two
    # within factors crossed into one within factor of four cells.
    frame = pg.read_dataset("rm_anova")
    frame["cell"] = frame["Disgustingness"] + "/" + frame["Frighteningness"]
    return frame


def test_insect_dataset_against_pingouin_rm_anova():
    frame = _insect_frame()
    data, fit = _fit(frame, "DesireToKill", "cell", "Subject")
    aov = pg.rm_anova(frame, dv="DesireToKill", within="cell", subject="Subject",
                      correction=True, detailed=True, effsize="np2")
    row, error = _row(fit, "within"), _error(fit, "within")
    _close(row.ss, aov.loc[0, "SS"])
    _close(error.ss, aov.loc[1, "SS"])
    assert (row.df, error.df) == (aov.loc[0, "DF"], aov.loc[1, "DF"])
    _close(row.statistic, aov.loc[0, "F"])
    _close(row.p, aov.loc[0, "p_unc"])
    _close(row.gg_p, aov.loc[0, "p_GG_corr"])
    _close(row.partial_eta_squared, aov.loc[0, "np2"])
    _close(fit.sphericity.greenhouse_geisser, aov.loc[0, "eps"])
    _close(fit.sphericity.mauchly_w, aov.loc[0, "W_spher"])
    _check_mauchly_p(fit.sphericity, aov.loc[0, "p_spher"], fit.n_units - 1)
    # pingouin drops every subject with a missing value (listwise), as complete_units does.
    missing = frame.loc[frame["DesireToKill"].isna(), "Subject"].astype(str).unique()
    assert sorted(unit for unit, _ in data.dropped) == sorted(missing)
    assert fit.n_units == frame["Subject"].nunique() - len(missing)


def test_insect_dataset_sphericity_and_epsilons():
    # pingouin.sphericity (W, chi-square, df) and pingouin.epsilon gg / hf / lb.
    frame = _insect_frame()
    _, fit = _fit(frame, "DesireToKill", "cell", "Subject")
    ref = pg.sphericity(frame, dv="DesireToKill", within="cell", subject="Subject")
    s = fit.sphericity
    _close(s.mauchly_w, ref.W)
    _close(s.chi_square, ref.chi2)
    assert s.df == ref.dof
    for correction, value in (("gg", s.greenhouse_geisser), ("hf", s.huynh_feldt),
                              ("lb", s.lower_bound)):
        _close(value, pg.epsilon(frame, dv="DesireToKill", within="cell", subject="Subject",
                                 correction=correction))
    row = _row(fit, "within")
    # Huynh–Feldt corrected p: scipy's F survival function at pingouin's HF epsilon.
    hf = pg.epsilon(frame, dv="DesireToKill", within="cell", subject="Subject", correction="hf")
    _close(row.hf_p, st.f.sf(row.statistic, hf * row.df, hf * _error(fit, "within").df))


def test_insect_dataset_mixed_by_gender_against_pingouin():
    # The same four cells with Gender between (4 subjects have no Gender and are dropped).
    data, fit, _ = _mixed_against_pingouin(_insect_frame(), "DesireToKill", "cell", "Subject",
                                           "Gender")
    assert any(reason.startswith("no group") for _, reason in data.dropped)


def test_insect_dataset_against_statsmodels_anova_rm():
    # statsmodels AnovaRM needs complete data: the complete units only.
    frame = _insect_frame()
    incomplete = frame.loc[frame["DesireToKill"].isna(), "Subject"].unique()
    complete = frame[~frame["Subject"].isin(incomplete)]
    _, fit = _fit(complete, "DesireToKill", "cell", "Subject")
    table = AnovaRM(complete, "DesireToKill", "Subject", within=["cell"]).fit().anova_table
    row = _row(fit, "within")
    _close(row.statistic, table.loc["cell", "F Value"])
    _close(row.p, table.loc["cell", "Pr > F"])
    assert (row.df, _error(fit, "within").df) == (table.loc["cell", "Num DF"],
                                                  table.loc["cell", "Den DF"])


def test_wide_dataset_value_in_pingouin_docstring():
    # pingouin dataset rm_anova_wide (4 time points, missing values); pingouin/parametric.py
    # rm_anova docstring: ddof1 3, ddof2 24, F 5.200652, p_unc 0.006557, eps 0.694329.
    wide = pg.read_dataset("rm_anova_wide")
    long = wide.reset_index(names="unit").melt(id_vars="unit", var_name="time", value_name="y")
    _, fit = _fit(long, "y", "time", "unit")
    row = _row(fit, "within")
    assert (row.df, _error(fit, "within").df) == (3, 24)
    assert round(row.statistic, 6) == 5.200652
    assert round(row.p, 6) == 0.006557
    assert round(fit.sphericity.greenhouse_geisser, 6) == 0.694329


def test_epsilon_values_in_pingouin_docstring():
    # pingouin/distribution.py epsilon docstring: columns A, B, C give lb 0.50, gg 0.56,
    # hf 0.62 (2 decimals); its sphericity docstring, same data: W 0.21, chi-square 4.677,
    # df 2, p 0.096 (3 decimals); the epsilon docstring's rm_anova2 example: Metric
    # epsilon 0.969 (pingouin first averages each subject's two Time values per Metric).
    wide = pd.DataFrame({"A": [2.2, 3.1, 4.3, 4.1, 7.2], "B": [1.1, 2.5, 4.1, 5.2, 6.4],
                         "C": [8.2, 4.5, 3.4, 6.2, 7.2]})
    long = wide.reset_index(names="unit").melt(id_vars="unit", var_name="c", value_name="y")
    _, fit = _fit(long, "y", "c", "unit")
    s = fit.sphericity
    assert [f"{v:.2f}" for v in (s.lower_bound, s.greenhouse_geisser, s.huynh_feldt)] == [
        "0.50", "0.56", "0.62"]
    assert (round(s.mauchly_w, 3), round(s.chi_square, 3), s.df, round(s.p, 3)) == (
        0.21, 4.677, 2, 0.096)
    perf = pg.read_dataset("rm_anova2").groupby(["Subject", "Metric"], as_index=False)[
        "Performance"].mean()
    _, fit = _fit(perf, "Performance", "Metric", "Subject")
    assert round(fit.sphericity.greenhouse_geisser, 3) == 0.969


def test_statsmodels_published_single_factor_value():
    # statsmodels/stats/tests/test_anova_rm.py, test_single_factor_repeated_measures_anova:
    # rows 0-15 of results/anova-rm-test-data.csv, within factor B: Num DF 1, Den DF 7,
    # F 22.4, p 0.002125452 ("reproduces R ezANOVA", per that test's docstring).
    path = Path(statsmodels.__file__).parent / "stats/tests/results/anova-rm-test-data.csv"
    frame = pd.read_csv(path).iloc[:16]
    _, fit = _fit(frame, "DV", "B", "id")
    row = _row(fit, "within")
    assert (row.df, _error(fit, "within").df) == (1, 7)
    assert row.statistic == pytest.approx(22.4, abs=5e-6)
    assert row.p == pytest.approx(0.002125452, abs=5e-10)
    # two levels: GG = HF = 1 by construction, W undefined, and no corrected test is given
    assert fit.sphericity.mauchly_w is None
    assert (fit.sphericity.greenhouse_geisser, fit.sphericity.huynh_feldt) == (1.0, 1.0)
    assert [w.code for w in fit.sphericity.warnings] == ["sphericity-two-levels"]
    assert row.gg_p is None and row.hf_p is None


# --- invented random designs ------------------------------------------------------------


@settings(max_examples=60, deadline=None)
@given(hs.integers(min_value=0, max_value=2**32 - 1))
def test_random_long_data_against_a_pandas_pivot(seed):
    # pandas pivot (one column per level) then dropna is the complete-units rule.
    rng = np.random.default_rng(seed)
    levels, n_units = int(rng.integers(2, 6)), int(rng.integers(1, 15))
    frame = pd.DataFrame({"unit": np.repeat([f"p{i:02d}" for i in rng.permutation(n_units)],
                                            levels),
                          "level": np.tile(np.arange(levels), n_units),
                          "y": rng.normal(size=n_units * levels)})
    frame.loc[rng.random(len(frame)) < 0.15, "y"] = np.nan
    frame = frame.drop(index=frame.index[rng.random(len(frame)) < 0.1])
    frame = frame.sample(frac=1.0, random_state=int(rng.integers(2**31)))
    data = complete_units(frame["unit"].tolist(), frame["level"].to_numpy(),
                          frame["y"].to_numpy(), levels)
    wide = frame.pivot(index="unit", columns="level", values="y").reindex(
        columns=range(levels))
    complete = wide.dropna()
    first_seen = list(dict.fromkeys(frame["unit"]))
    assert data.units == tuple(u for u in first_seen if u in complete.index)
    np.testing.assert_array_equal(data.y, complete.loc[list(data.units)].to_numpy())
    assert [u for u, _ in data.dropped] == [u for u in first_seen if u not in complete.index]
    for unit, reason in data.dropped:
        absent = [f"level {c + 1}" for c in range(levels) if pd.isna(wide.loc[unit, c])]
        assert reason == "no value at " + ", ".join(absent)


def _design(seed: int):
    """An invented design: 2-5 within levels, 1-3 groups of `levels` to 11 units, unit
    effects, level effects per group and unequal level variances (normal draws, numpy
    seeded). At least `levels` units per group keep Mauchly's test defined (pingouin's
    rm_anova divides by zero for 2 units at 3 levels)."""
    rng = np.random.default_rng(seed)
    levels = int(rng.integers(2, 6))
    n_groups = int(rng.integers(1, 4))
    sizes = rng.integers(levels, 12, size=n_groups)
    group = np.repeat(np.arange(n_groups), sizes)
    n_units = group.size
    y = (rng.normal(rng.uniform(-20, 20), 1.0, size=(n_units, 1))
         + rng.normal(0, rng.uniform(0.1, 2), size=(n_groups, levels))[group]
         + rng.normal(0, 1, size=(n_units, levels)) * rng.uniform(0.3, 3, size=levels))
    frame = pd.DataFrame({
        "unit": np.repeat([f"u{i}" for i in range(n_units)], levels),
        "level": np.tile([f"L{j}" for j in range(levels)], n_units),
        "group": np.repeat([f"G{g}" for g in group], levels),
        "y": y.ravel(),
    }).sample(frac=1.0, random_state=seed % 2**32)  # rows need not arrive in order
    return frame, levels, n_groups


def _lecoutre_reference(data) -> float:
    """pingouin.epsilon(hf) on N - g + 1 invented rows whose covariance is the pooled one.

    Lecoutre's (1991) epsilon is Huynh & Feldt's one-group formula with N - g + 1 units
    (appendix/stats/sphericity.py); a matrix Q B, with B'B the pooled residual
    cross-products and Q's N - g orthonormal columns orthogonal to 1, is such a sample.
    """
    y, groups = data.y, data.groups
    residual = y - pd.DataFrame(y).groupby(groups).transform("mean").to_numpy()
    df = y.shape[0] - np.unique(groups).size
    _, s, vt = np.linalg.svd(residual, full_matrices=False)
    rank = min(df, s.size)
    b = np.zeros((df, y.shape[1]))
    b[:rank] = (s[:, None] * vt)[:rank]
    q = sla.null_space(np.ones((1, df + 1)))
    return pg.epsilon(pd.DataFrame(q @ b), correction="hf")


@settings(max_examples=60, deadline=None)
@given(hs.integers(min_value=0, max_value=2**32 - 1))
def test_random_designs_against_pingouin_and_statsmodels(seed):
    frame, levels, n_groups = _design(seed)
    d = levels - 1
    if n_groups == 1:
        data, fit = _fit(frame, "y", "level", "unit")
        aov = pg.rm_anova(frame, dv="y", within="level", subject="unit", correction=True,
                          detailed=True, effsize="np2")
        row = _row(fit, "within")
        _close(row.ss, aov.loc[0, "SS"])
        _close(row.statistic, aov.loc[0, "F"])
        _close(row.p, aov.loc[0, "p_unc"])
        _close(row.partial_eta_squared, aov.loc[0, "np2"])
        table = AnovaRM(frame, "y", "unit", within=["level"]).fit().anova_table
        _close(row.statistic, table.loc["level", "F Value"])
        assert _error(fit, "within").df == table.loc["level", "Den DF"]
        eps = {c: pg.epsilon(frame, dv="y", within="level", subject="unit", correction=c)
               for c in ("gg", "hf", "lb")}
        if d > 1:
            _close(row.gg_p, aov.loc[0, "p_GG_corr"])
            ref = pg.sphericity(frame, dv="y", within="level", subject="unit")
            mauchly = (ref.W, ref.pval)
    else:
        data, fit, aov = _mixed_against_pingouin(frame, "y", "level", "unit", "group")
        eps = {"gg": aov.iloc[1]["eps"] if d > 1 else 1.0, "lb": 1 / d,
               "hf": _lecoutre_reference(data) if d > 1 else 1.0}
    s = fit.sphericity
    _close(s.greenhouse_geisser, eps["gg"])
    _close(s.lower_bound, eps["lb"])
    _close(s.huynh_feldt, eps["hf"])
    if n_groups == 1 and d > 1:
        _close(s.mauchly_w, mauchly[0])
        _check_mauchly_p(s, mauchly[1], fit.n_units - 1)
    between_error, within_error = _error(fit, "between").df, _error(fit, "within").df
    for row in fit.rows:
        if row.kind == "between" and row.statistic is not None:
            _check_interval(row, row.df, between_error)
        elif row.kind == "within" and row.statistic is not None:
            # within terms: the test in force is on the Greenhouse–Geisser corrected df,
            # the epsilon taken from pingouin (or 1 for two levels)
            _check_interval(row, eps["gg"] * row.df, eps["gg"] * within_error)


def _check_interval(row, df1: float, df2: float) -> None:
    """The partial eta squared interval's ends, turned back into noncentralities on
    (df1, df2), put alpha in the upper tail of scipy's noncentral F at the observed F
    (Steiger 2004)."""
    size = df1 + df2 + 1
    alpha = (1 - row.confidence_level) / 2
    low, high = row.partial_eta_ci
    assert row.partial_omega_ci == row.partial_eta_ci
    if low > 0:
        lam = low * size / (1 - low)
        assert st.ncf.sf(row.statistic, df1, df2, lam) == pytest.approx(alpha, abs=1e-7)
    lam = high * size / (1 - high)
    if lam > 0:
        assert st.ncf.sf(row.statistic, df1, df2, lam) == pytest.approx(1 - alpha, abs=1e-7)


def _pooled_mean_reference(scores: np.ndarray, groups: np.ndarray | None):
    """statsmodels OLS of the scores on an intercept and group dummies centred at their
    means: the intercept is the mean over all units and its SE uses the residual
    (pooled within-group) variance on N - g df."""
    design = np.ones((scores.size, 1))
    if groups is not None and np.unique(groups).size > 1:
        dummies = pd.get_dummies(groups, drop_first=True).to_numpy(dtype=float)
        design = np.column_stack([design, dummies - dummies.mean(axis=0)])
    return sm.OLS(scores, design).fit()


@settings(max_examples=40, deadline=None)
@given(hs.integers(min_value=0, max_value=2**32 - 1))
def test_random_within_contrasts_and_means(seed):
    frame, levels, n_groups = _design(seed)
    data, _ = _fit(frame, "y", "level", "unit", "group")
    rng = np.random.default_rng(seed)
    weights = rng.normal(size=levels)
    weights -= weights.mean()
    scores = data.y @ weights
    # all units: the pooled-variance mean (statsmodels OLS)
    ols = _pooled_mean_reference(scores, data.groups)
    c = within_contrast(data, weights, confidence=0.9)
    _close(c.estimate, ols.params[0])
    _close(c.se, ols.bse[0])
    _close(c.statistic, ols.tvalues[0])
    _close(c.p, ols.pvalues[0])
    assert c.df == ols.df_resid
    _close((c.ci_low, c.ci_high), tuple(ols.conf_int(alpha=0.1)[0]))
    # one group: scipy's one-sample t on that group's scores
    rows = data.groups == 0
    ref = st.ttest_1samp(scores[rows], 0.0, alternative="greater")
    c = within_contrast(data, weights, group=0, alternative="greater")
    _close(c.statistic, ref.statistic)
    _close(c.p, ref.pvalue)
    _close(c.ci_low, ref.confidence_interval(0.95).low)
    assert c.ci_high is None and c.df == rows.sum() - 1
    # level means: the same OLS per level
    means = within_means(data, 0.95)
    for level, m in enumerate(means.means):
        ols = _pooled_mean_reference(data.y[:, level], data.groups)
        _close(m.mean, ols.params[0])
        _close(m.se, ols.bse[0])
        _close((m.ci_low, m.ci_high), tuple(ols.conf_int(alpha=0.05)[0]))


def test_between_term_omega_matches_hays_on_unit_means():
    # The between term of a split-plot design is the one-way ANOVA of the unit means
    # (statsmodels OLS + anova_lm); partial omega squared there is Hays' (1963) omega
    # squared (SS_b - df_b MS_w) / (SS_t + MS_w).
    frame = pg.read_dataset("mixed_anova_unbalanced")
    data, fit = _fit(frame, "Scores", "Time", "Subject", "Group")
    means = pd.DataFrame({"m": data.y.mean(axis=1), "g": [f"G{g}" for g in data.groups]})
    table = sm.stats.anova_lm(sm.formula.ols("m ~ C(g)", data=means).fit())
    ss_b, ss_w = table["sum_sq"]
    df_b, df_w = table["df"]
    ms_w = ss_w / df_w
    row = _row(fit, "between")
    _close(row.partial_omega_squared, (ss_b - df_b * ms_w) / (ss_b + ss_w + ms_w))
    _close(row.statistic, table["F"].iloc[0])
    assert math.isclose(row.ss, data.y.shape[1] * ss_b, rel_tol=1e-12)


def _ncf_bound(f: float, df1: float, df2: float, tail: float) -> float:
    """The noncentrality at which scipy.stats.ncf.sf(f, df1, df2, lam) = tail, by
    scipy.optimize.brentq on a fixed wide bracket (0 when already reached at lam = 0)."""
    from scipy.optimize import brentq

    if st.f.sf(f, df1, df2) >= tail:
        return 0.0
    return brentq(lambda lam: st.ncf.sf(f, df1, df2, lam) - tail, 0.0, 1e4, xtol=1e-12)


def test_within_interval_is_scipy_ncf_inverted_on_the_greenhouse_geisser_df():
    """Invented data (numpy seeded): 4 within levels, the last one 13 times as variable,
    so epsilon is near its bound 1/3. The partial eta squared interval of the within
    factor is scipy.stats.ncf (scipy 1.17.1) inverted with scipy.optimize.brentq on
    (eps d, eps d (N - 1)), eps from pingouin.epsilon(correction="gg") (pingouin 0.7.0),
    each bound lambda turned into lambda / (lambda + df1 + df2 + 1) on those df (Steiger
    2004); the corrected p is scipy.stats.f.sf on the same df."""
    seen_positive_low = False
    for seed in range(6):
        rng = np.random.default_rng(100 + seed)
        y = (rng.normal(0.0, 1.0, size=(12, 4)) * [0.3, 0.3, 0.3, 4.0]
             + [0.0, 0.0, 0.0, 1.0 + seed] + rng.normal(0.0, 2.0, size=(12, 1)))
        frame = pd.DataFrame({"unit": np.repeat([f"u{i:02d}" for i in range(12)], 4),
                              "level": np.tile(["L0", "L1", "L2", "L3"], 12), "y": y.ravel()})
        _, fit = _fit(frame, "y", "level", "unit")
        eps = pg.epsilon(frame, dv="y", within="level", subject="unit", correction="gg")
        assert eps < 0.5
        row = _row(fit, "within")
        df1, df2 = eps * 3, eps * 3 * 11
        _close(row.gg_p, st.f.sf(row.statistic, df1, df2))
        size = df1 + df2 + 1
        alpha = (1 - row.confidence_level) / 2
        expected = tuple(lam / (lam + size) for lam in
                         (_ncf_bound(row.statistic, df1, df2, alpha), _ncf_bound(row.statistic, df1, df2, 1 - alpha)))
        assert row.partial_eta_ci == pytest.approx(expected, rel=1e-7, abs=1e-10)
        assert row.partial_omega_ci == row.partial_eta_ci
        assert row.effect_ci_df == pytest.approx((df1, df2), rel=1e-9)
        seen_positive_low |= expected[0] > 0
    assert seen_positive_low  # both ends of the interval were checked at least once
