"""Noncentral-F intervals: the defining tail probabilities hold at the bounds."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats as st

from appendix.stats.cells import cell_stats
from appendix.stats.effect_sizes import effect_sizes, noncentrality_interval
from appendix.stats.oneway import variance_table


@pytest.mark.parametrize(("f", "df1", "df2"), [(5.0, 3, 76), (2.1, 2, 12), (45.8, 3, 35), (1.3, 5, 200)])
@pytest.mark.parametrize("confidence", [0.90, 0.95])
def test_bounds_have_the_defining_tail_probabilities(f, df1, df2, confidence) -> None:
    # Independent check with scipy 1.17 stats.ncf.cdf: at the bounds the observed F sits at
    # the (1 + c)/2 and (1 - c)/2 quantiles of the noncentral F (Steiger 2004, eq. 7).
    low, high = noncentrality_interval(f, df1, df2, confidence)
    tail = (1 - confidence) / 2
    assert high > 0
    assert st.ncf.cdf(f, df1, df2, high) == pytest.approx(tail, abs=1e-10)
    if low > 0:
        assert st.ncf.cdf(f, df1, df2, low) == pytest.approx(1 - tail, abs=1e-10)
    else:
        assert st.f.cdf(f, df1, df2) <= 1 - tail


def test_lower_bound_is_zero_when_f_is_small() -> None:
    # At F = 1 on (3, 76) P(F > 1 | lambda = 0) = 0.397 > 0.05, so no lambda > 0 is excluded.
    low, high = noncentrality_interval(1.0, 3, 76, 0.90)
    assert low == 0.0 and high > 0.0
    assert noncentrality_interval(0.01, 3, 76, 0.90) == (0.0, 0.0)


def test_ninety_percent_interval_excludes_zero_iff_the_test_rejects_at_five_percent() -> None:
    # Steiger (2004): with confidence 1 - 2 alpha the CI excludes 0 exactly when p < alpha.
    # Invented data: seeded normal draws with a growing shift in level 2.
    rng = np.random.default_rng(5)
    for shift in np.linspace(0.0, 1.5, 16):
        codes = np.repeat([0, 1, 2], 12)
        values = rng.normal(size=36) + shift * (codes == 2)
        table = variance_table(cell_stats(values, codes, 3), 0.05)
        eta = effect_sizes(table, 0.90)[0]
        assert (eta.ci_low > 0) == (table.p < 0.05)
        assert eta.ci_low <= eta.ci_high


@pytest.mark.filterwarnings("error")
def test_enormous_f_gives_no_interval_but_keeps_the_estimates() -> None:
    # Invented data: two tight clusters 1e9 apart, F ~ 1e20, far beyond lambda = 1e10
    # where scipy's noncentral F series stops converging.
    values = np.array([0.0, 0.001, 0.002, 1e9, 1e9 + 0.001, 1e9 + 0.002])
    table = variance_table(cell_stats(values, np.repeat([0, 1], 3), 2), 0.05)
    assert table.f > 1e18
    assert noncentrality_interval(table.f, 1, 4, 0.90) is None
    eta, omega, cohen = effect_sizes(table, 0.90)
    assert eta.estimate == pytest.approx(1.0, abs=1e-15) and cohen.estimate > 1e9
    for effect in (eta, omega, cohen):
        assert effect.ci_low is None and effect.ci_high is None
        assert [w.code for w in effect.warnings] == ["effect-size-ci-unavailable"]
