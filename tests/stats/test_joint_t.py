"""The joint law of a family of t statistics (`appendix.stats.joint_t`) against
independent references: scipy's studentized range (Tukey 1953) and scipy's multivariate
t CDF (Genz's quasi-Monte Carlo, scipy 1.17), with the error bound the law states."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats

from appendix.stats.joint_t import echelon_factor, max_t_law


def _pairs_correlation(k: int, variances=None) -> np.ndarray:
    v = np.ones(k) if variances is None else np.asarray(variances, float)
    rows = []
    for i in range(k):
        for j in range(i + 1, k):
            row = np.zeros(k)
            row[i], row[j] = 1.0, -1.0
            rows.append(row)
    L = np.array(rows)
    cov = L @ np.diag(v) @ L.T
    se = np.sqrt(np.diag(cov))
    return cov / np.outer(se, se)


@pytest.mark.parametrize("k, df", [(3, 10), (4, 20), (5, 60), (4, math.inf)])
def test_all_pairs_of_equal_means_follow_the_studentized_range(k, df):
    law = max_t_law(_pairs_correlation(k), df, ["two-sided"] * (k * (k - 1) // 2))
    for c in (1.8, 2.6, 3.4):
        p, error = law.tail(c)
        expected = stats.studentized_range.sf(c * math.sqrt(2), k, df)   # scipy 1.17
        assert 0 < error < 1e-4
        assert p == pytest.approx(expected, abs=error + 1e-7)
    q = stats.studentized_range.isf(0.05, k, df) / math.sqrt(2)
    assert law.critical(0.05) == pytest.approx(q, abs=2e-3)


def test_a_general_correlation_and_mixed_alternatives_match_scipy_multivariate_t():
    rng = np.random.default_rng(3)
    a = rng.normal(size=(5, 5))
    cov = a @ a.T
    corr = cov / np.outer(np.sqrt(np.diag(cov)), np.sqrt(np.diag(cov)))
    alternatives = ["greater", "less", "two-sided", "greater", "two-sided"]
    law = max_t_law(corr, 12, alternatives)
    signs = np.array([1, -1, 1, 1, 1])
    c = 2.4
    lower = np.where([a == "two-sided" for a in alternatives], -c, -np.inf)
    expected = 1 - stats.multivariate_t(shape=corr * np.outer(signs, signs), df=12).cdf(
        np.full(5, c), lower_limit=lower, maxpts=1_000_000, random_state=1)
    p, error = law.tail(c)
    assert p == pytest.approx(expected, abs=error + 1e-4)


def test_a_repeated_statistic_adds_nothing_to_the_law():
    """Correlation 1 (the same estimate listed twice) gives the law of the distinct ones."""
    corr = _pairs_correlation(3)
    doubled = np.kron(np.ones((2, 2)), corr)
    once = max_t_law(corr, 15, ["two-sided"] * 3)
    twice = max_t_law(doubled, 15, ["two-sided"] * 6)
    assert twice.echelon.rank == once.echelon.rank == 2
    for c in (2.0, 3.0):
        assert twice.tail(c)[0] == pytest.approx(once.tail(c)[0], abs=twice.tail(c)[1] + once.tail(c)[1])


def test_the_tail_is_monotone_and_the_critical_value_solves_it():
    law = max_t_law(_pairs_correlation(4, [1, 2, 0.5, 1.5]), 18, ["two-sided"] * 6)
    tails = [law.tail(c)[0] for c in np.linspace(0.5, 5, 30)]
    assert all(b <= a for a, b in zip(tails, tails[1:]))
    c = law.critical(0.05)
    assert law.tail(c)[0] == pytest.approx(0.05, abs=1e-9)
    assert law.tail(c + 1e-6)[0] < 0.05 < law.tail(c - 1e-6)[0]


def test_the_law_repeats_byte_for_byte():
    corr = _pairs_correlation(4, [1, 2, 0.5, 1.5])
    first = max_t_law(corr, 18, ["two-sided"] * 6).tail(2.7)
    second = max_t_law(corr, 18, ["two-sided"] * 6).tail(2.7)
    assert first == second


def test_the_echelon_factor_reproduces_the_correlation_at_its_rank():
    corr = _pairs_correlation(5)
    e = echelon_factor(corr, -np.full(10, 2.5), np.full(10, 2.5))
    assert e.rank == 4
    np.testing.assert_allclose(e.factor @ e.factor.T, corr, atol=1e-12)
    # Each row's last nonzero column is recorded, and every column is some row's last.
    for j, row in enumerate(e.factor):
        assert np.flatnonzero(row).max() == e.last[j]
    assert set(e.last.tolist()) == set(range(4))
