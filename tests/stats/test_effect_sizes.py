"""Noncentral-F intervals: the defining tail probabilities hold at the bounds; the effect
sizes of a one-factor outcome (the engine's one-term model, `tests/one_term.py`) carry them."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats as st

from appendix.stats.effect_sizes import noncentrality_interval
from tests.one_term import one_term_table


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
        row = one_term_table(values, codes, 3, alpha=0.05).rows[0]
        assert row.confidence_level == 0.90
        low, high = row.partial_eta_ci_low, row.partial_eta_ci_high
        assert (low > 0) == (row.p < 0.05)
        assert low <= high


@pytest.mark.filterwarnings("error")
def test_enormous_f_gives_no_interval_but_keeps_the_estimates() -> None:
    # Invented data: two clusters 1e6 apart with unit spread: SS between 1.5e12, SS within
    # 4, F = 1.5e12 on (1, 4), whose noncentrality bound lies far beyond lambda = 1e10.
    values = np.array([0.0, 1.0, 2.0, 1e6, 1e6 + 1.0, 1e6 + 2.0])
    table = one_term_table(values, np.repeat([0, 1], 3), 2, alpha=0.05)
    (row,) = table.rows
    assert row.statistic == pytest.approx(1.5e12, rel=1e-12)
    assert noncentrality_interval(row.statistic, 1, 4, 0.90) is None
    assert row.partial_eta_squared == pytest.approx(1.5e12 / (1.5e12 + 4.0), rel=1e-13)
    assert row.partial_omega_squared == pytest.approx((1.5e12 - 1.0) / (1.5e12 + 5.0), rel=1e-13)
    # Cohen's f = sqrt(SS / SS within) = sqrt(3.75e11); taken from eta squared, whose
    # distance from 1 (2.7e-12) carries float64 rounding, so to 1e-4 only.
    assert row.cohens_f == pytest.approx(np.sqrt(3.75e11), rel=1e-4)
    assert (row.partial_eta_ci_low, row.partial_eta_ci_high, row.partial_omega_ci_low,
            row.partial_omega_ci_high, row.cohens_f_ci_low, row.cohens_f_ci_high) == (None,) * 6
    assert row.effect_ci_df is None
    assert [w.code for w in row.warnings] == ["effect-size-ci-unavailable"]
    assert "F = 1.5e+12 for group is too large" in row.warnings[0].message
