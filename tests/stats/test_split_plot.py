"""The split-plot analysis with a general between-unit model, against independent code:
pingouin's mixed_anova (balanced, one grouping), the project's classical repeated-measures
engine (unbalanced; a different algorithm: centred strata, not per-score model fits) and,
for blocks and covariates, statsmodels' OLS variance tables of each score column and of
the unit means. Invented, seeded data."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from appendix.stats.design import Grid
from appendix.stats.repeated import CompleteUnits, repeated_measures
from appendix.stats.sphericity import helmert_contrasts
from appendix.stats.split_plot import split_plot, strata_of

GRID = Grid(names=("arm",), levels=(("a", "b", "c"),))


def _time(m: int, interacting=(("arm",),)):
    """The one stratum of a within factor `time` of `m` levels."""
    return strata_of([("time", m)], {("time",): interacting})


def _units(n_per=6, m=4, seed=1):
    rng = np.random.default_rng(seed)
    groups = np.repeat([0, 1, 2], n_per)
    time = np.arange(m)[None, :]
    y = (10 + groups[:, None] * 0.5 + time * 0.7 + 0.3 * groups[:, None] * time
         + rng.normal(0, 1, (groups.size, 1)) + rng.normal(0, 1, (groups.size, m)))
    return groups, y


def test_balanced_mixed_design_equals_pingouin():
    pingouin = pytest.importorskip("pingouin")
    groups, y = _units()
    fit = split_plot(GRID, [groups], y, None, [("arm",)], _time(4), 3, 0.05)
    long = pd.DataFrame([(f"u{i}", "abc"[groups[i]], j, y[i, j]) for i in range(y.shape[0])
                         for j in range(y.shape[1])], columns=["u", "arm", "t", "y"])
    reference = pingouin.mixed_anova(data=long, dv="y", within="t", subject="u", between="arm",
                                     correction=True).set_index("Source")
    (stratum,) = fit.strata
    within, interaction, error = stratum.rows
    assert within.ss == pytest.approx(reference.loc["t", "SS"], rel=1e-9)
    assert interaction.ss == pytest.approx(reference.loc["Interaction", "SS"], rel=1e-9)
    assert within.statistic == pytest.approx(reference.loc["t", "F"], rel=1e-9)
    assert error.df == reference.loc["t", "DF2"]
    assert fit.between.terms[0].ss * 4 == pytest.approx(reference.loc["arm", "SS"], rel=1e-9)
    assert fit.strata[0].sphericity.greenhouse_geisser == pytest.approx(reference.loc["t", "eps"], rel=1e-9)
    assert fit.strata[0].sphericity.mauchly_w == pytest.approx(reference.loc["t", "W_spher"], rel=1e-9)


@pytest.mark.parametrize("ss_type", [1, 2])
def test_unbalanced_groups_equal_the_classical_engine(ss_type):
    groups, y = _units()
    keep = np.r_[0:5, 6:18]  # groups of 5, 6 and 6 units
    fit = split_plot(GRID, [groups[keep]], y[keep], None, [("arm",)], _time(4), ss_type, 0.05)
    data = CompleteUnits(y=y[keep], units=tuple(f"u{i}" for i in keep), groups=groups[keep], dropped=())
    reference = repeated_measures(data, "time", ["t0", "t1", "t2", "t3"], "arm", ["a", "b", "c"], 0.05)
    within_rows = [r for r in reference.rows if r.kind != "between" and r.term != ("units",)]
    for ours, theirs in zip(fit.strata[0].rows, within_rows, strict=True):
        assert ours.ss == pytest.approx(theirs.ss, rel=1e-12)
        assert ours.df == theirs.df
        assert (ours.gg_p is None) == (theirs.gg_p is None)
        if theirs.gg_p is not None:
            assert ours.gg_p == pytest.approx(theirs.gg_p, rel=1e-9)
    assert fit.strata[0].sphericity.huynh_feldt == pytest.approx(reference.sphericity.huynh_feldt, rel=1e-12)


def test_blocks_and_a_covariate_equal_statsmodels_per_stratum():
    import statsmodels.formula.api as smf
    from statsmodels.stats.anova import anova_lm

    rng = np.random.default_rng(5)
    arm = np.tile(np.repeat([0, 1, 2], 2), 5)[:28]
    block = np.repeat(np.arange(4), 7)[:28]
    base = rng.normal(10, 2, arm.size)
    m = 3
    y = (5 + arm[:, None] * np.arange(m) * 0.4 + block[:, None] * 0.3 + 0.5 * base[:, None]
         + rng.normal(0, 1, (arm.size, m)))
    grid = Grid(names=("block", "arm"), levels=(("B1", "B2", "B3", "B4"), ("a", "b", "c")))
    fit = split_plot(grid, [block, arm], y, {"base": base}, [("base",), ("block",), ("arm",)],
                     _time(m), 3, 0.05)
    frame = pd.DataFrame({"arm": arm, "block": block, "base": base, "mean": y.mean(axis=1)})
    between = anova_lm(smf.ols("mean ~ base + C(block, Sum) + C(arm, Sum)", frame).fit(), typ=3)
    for row, name in zip(fit.between.terms, ["base", "C(block, Sum)", "C(arm, Sum)"]):
        assert row.ss == pytest.approx(between.loc[name, "sum_sq"], rel=1e-9)
        assert row.statistic == pytest.approx(between.loc[name, "F"], rel=1e-9)
    # Within units: each orthonormal score column's type 3 table; the stratum sums them.
    scores = y @ helmert_contrasts(m)
    tables = [anova_lm(smf.ols("s ~ C(arm, Sum)", frame.assign(s=scores[:, j])).fit(), typ=3)
              for j in range(m - 1)]
    (stratum,) = fit.strata
    within, interaction, error = stratum.rows
    assert within.ss == pytest.approx(sum(t.loc["Intercept", "sum_sq"] for t in tables), rel=1e-9)
    assert interaction.ss == pytest.approx(sum(t.loc["C(arm, Sum)", "sum_sq"] for t in tables), rel=1e-9)
    assert error.ss == pytest.approx(sum(t.loc["Residual", "sum_sq"] for t in tables), rel=1e-9)
    assert error.df == sum(t.loc["Residual", "df"] for t in tables)
