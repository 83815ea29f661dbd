"""The graphical procedure (Bretz et al. 2009) against the procedures it contains and a
published graph; the source of every expected value is named beside it.

Invented p-values are seeded uniform draws (said where used).
"""

from __future__ import annotations

import numpy as np
import pingouin
import pytest
from statsmodels.stats.multitest import multipletests

from appendix.stats.graphical import graphical_test


def _holm_graph(m: int) -> tuple[list[float], np.ndarray]:
    """Equal weights 1/m, each hypothesis passing its weight to the others in equal parts."""
    return [1.0 / m] * m, (np.ones((m, m)) - np.eye(m)) / (m - 1)


def _invented_p(rng: np.random.Generator, m: int) -> np.ndarray:
    """Invented p-values: uniform draws raised to a random power, so that many are small."""
    return rng.uniform(0.0, 1.0, size=m) ** rng.uniform(1.0, 6.0)


@pytest.mark.parametrize("m", [2, 3, 5, 8])
def test_equal_weights_passed_to_the_others_is_holm(m) -> None:
    # Bretz et al. (2009, section 2; their first graph is Holm's for m = 2, from memory):
    # w = 1/m and g_ij = 1/(m - 1) is Holm's (1979) step-down procedure. References:
    # statsmodels 0.15.0 multipletests(method="holm") on 20 invented p-vectors per m (each
    # of its calls collects garbage, so more would be slow), pingouin 0.7.0
    # multicomp(method="holm") on 400 more (seeded uniform draws).
    rng = np.random.default_rng(20090 + m)
    weights, transitions = _holm_graph(m)
    for draw in range(420):
        p = _invented_p(rng, m)
        result = graphical_test(p, weights, transitions, 0.05)
        if draw < 20:
            reject, expected, _, _ = multipletests(p, alpha=0.05, method="holm")
        else:
            reject, expected = pingouin.multicomp(p, alpha=0.05, method="holm")
        assert result.p_adjusted == pytest.approx(expected, rel=1e-12, abs=1e-15)
        # The references reject at p_adj <= alpha, this package below it: equal only off
        # ties, which continuous draws do not produce.
        assert result.rejected == tuple(bool(x) for x in reject)
        assert [p[i] for i in result.order] == sorted(p[list(result.order)])  # smallest p first


@pytest.mark.parametrize("m", [1, 3, 6])
def test_everything_passed_to_the_next_is_the_fixed_sequence(m) -> None:
    # w = (1, 0, ..., 0), g_i,i+1 = 1 is fixed-sequence testing (Bretz et al. 2009,
    # section 2, from memory). Its adjusted p is the running maximum of the p-values in the
    # order (Westfall & Krishen 2001, J Stat Plan Inference 99:25-40); it rejects every
    # hypothesis before the first p >= alpha. Invented p-vectors (seeded uniform draws).
    rng = np.random.default_rng(1995 + m)
    weights = [1.0] + [0.0] * (m - 1)
    transitions = np.eye(m, k=1)
    for _ in range(200):
        p = _invented_p(rng, m)
        result = graphical_test(p, weights, transitions, 0.05)
        assert result.p_adjusted == pytest.approx(np.maximum.accumulate(p), rel=1e-15)
        stop = next((i for i, x in enumerate(p) if x >= 0.05), m)
        assert result.order == tuple(range(stop))


def test_no_transitions_is_bonferroni_and_weighted_bonferroni() -> None:
    # G = 0 leaves the weights as they are: the (weighted) Bonferroni test, p_adj =
    # min(1, p / w) (Dunn 1961; Bretz et al. 2009, section 2, from memory). Reference for
    # equal weights: statsmodels 0.15.0 multipletests(method="bonferroni"). Invented
    # p-vectors (seeded uniform draws).
    rng = np.random.default_rng(1961)
    for m in (2, 4, 7):
        zero = np.zeros((m, m))
        for _ in range(100):
            p = _invented_p(rng, m)
            result = graphical_test(p, [1.0 / m] * m, zero, 0.05)
            reject, expected, _, _ = multipletests(p, alpha=0.05, method="bonferroni")
            assert result.p_adjusted == pytest.approx(expected, rel=1e-12)
            assert result.rejected == tuple(bool(x) for x in reject)
            w = rng.dirichlet(np.ones(m)) * rng.uniform(0.5, 1.0)
            weighted = graphical_test(p, w, zero, 0.05)
            assert weighted.p_adjusted == pytest.approx(np.minimum(1.0, p / w), rel=1e-12)
            assert weighted.weights == pytest.approx(np.where(weighted.rejected, 0.0, w))


def test_weights_passed_in_proportion_are_the_weighted_holm_procedure() -> None:
    # g_ij = w_j / (1 - w_i) is the weighted version of Holm's (1979, Scand J Stat 6:65-70)
    # step-down test (Bretz et al. 2009, section 2, from memory). Holm's rule, from memory:
    # order by p_i / w_i and reject the s-th while p_(s) / w_(s) < alpha / W_s, W_s the
    # total weight of the hypotheses not yet rejected. The smallest alpha that reaches the
    # s-th is the running maximum of p_(s) W_s / w_(s), its adjusted p (capped at 1).
    # Invented weights and p-values (seeded draws).
    rng = np.random.default_rng(1979)
    for m in (2, 3, 5):
        for _ in range(100):
            w = rng.dirichlet(np.ones(m))
            transitions = np.array([[0.0 if i == j else w[j] / (1.0 - w[i]) for j in range(m)]
                                    for i in range(m)])
            p = _invented_p(rng, m)
            order = np.argsort(p / w, kind="stable")
            remaining = np.cumsum(w[order][::-1])[::-1]
            expected = np.empty(m)
            expected[order] = np.minimum(1.0, np.maximum.accumulate(p[order] / w[order] * remaining))
            assert graphical_test(p, w, transitions, 0.05).p_adjusted == pytest.approx(expected, rel=1e-10)


def test_two_primary_and_two_secondary_hypotheses() -> None:
    # The graph of Bretz et al. (2009) for two primary hypotheses H1, H2 (weight 1/2 each)
    # and two secondary ones H3, H4 (weight 0): H1 -> H3, H2 -> H4, H3 -> H2 and H4 -> H1,
    # each with weight 1, so that a secondary hypothesis is tested only after its primary
    # one and passes its level on to the other primary (the paper's worked example of two
    # primary and two secondary hypotheses, from memory; its figure number is not checked).
    # The p-values are invented for this test and the expected adjusted p-values worked by
    # hand with the paper's update rule (Algorithm 1), as written out below.
    weights = [0.5, 0.5, 0.0, 0.0]
    transitions = [[0, 0, 1, 0], [0, 0, 0, 1], [0, 1, 0, 0], [1, 0, 0, 0]]
    # Row 1 by hand: p/w = (.02, .01, inf, inf): H2 first (.01), H4 gets 1/2 and H3 now
    # passes to H4; p/w = (.02, ., inf, .044): H1 (.02), H3 gets 1/2; p/w of H3 .03, of H4
    # .044: H3 (.03), H4 gets all; H4: max(.022, .03) = .03.
    first = graphical_test([0.01, 0.005, 0.015, 0.022], weights, transitions, 0.025)
    assert first.p_adjusted == pytest.approx((0.02, 0.01, 0.03, 0.03), rel=1e-12)
    assert first.order == (1, 0)  # at one-sided alpha 0.025 both primaries, no secondary
    assert first.weights == pytest.approx((0.0, 0.0, 0.5, 0.5))
    assert np.array(first.transitions) == pytest.approx(
        np.array([[0, 0, 0, 0], [0, 0, 0, 0], [0, 0, 0, 1], [0, 0, 1, 0]]))
    second = graphical_test([0.02, 0.015, 0.010, 0.023], weights, transitions, 0.025)
    assert second.p_adjusted == pytest.approx((0.04, 0.03, 0.04, 0.04), rel=1e-12)
    assert second.order == () and not any(second.rejected)
    assert second.weights == tuple(weights)
    # At alpha 0.05 every hypothesis of row 1 is rejected, in the order of the walk.
    assert graphical_test([0.01, 0.005, 0.015, 0.022], weights, transitions, 0.05).order == (1, 0, 2, 3)
