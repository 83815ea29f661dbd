"""The graphical procedure (Bretz, Maurer, Brannath & Posch 2009): a hand-worked example,
its defining properties on invented graphs, unavailable p-values and input checks.

Invented graphs and p-values are seeded random draws (said where used). Checks against
published and reference values are in tests/reference/test_graphical_reference.py.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from appendix.errors import InternalError
from appendix.stats.graphical import graph_problems, graphical_test

#: Two primary hypotheses H1, H2 sharing alpha, each passing half to the other and half to
#: a secondary H3, which passes half back to each (invented for this test).
WEIGHTS = (0.5, 0.5, 0.0)
GRAPH = ((0.0, 0.5, 0.5), (0.5, 0.0, 0.5), (0.5, 0.5, 0.0))


def test_hand_worked_three_hypotheses() -> None:
    """p = (.01, .03, .02), w = (1/2, 1/2, 0), the graph `GRAPH`; Algorithm 1 of Bretz et
    al. (2009) and its update rule, by hand:

    Step 1. p / w = (.02, .06, inf): H1 goes first, adjusted p .02.
      w2 = .5 + .5 x .5 = .75, w3 = 0 + .5 x .5 = .25;
      g23 = (g23 + g21 g13) / (1 - g21 g12) = (.5 + .25) / .75 = 1,
      g32 = (g32 + g31 g12) / (1 - g31 g13) = (.5 + .25) / .75 = 1.
    Step 2. p / w = (., .03 / .75 = .04, .02 / .25 = .08): H2, adjusted max(.04, .02) = .04.
      w3 = .25 + .75 x 1 = 1.
    Step 3. p / w of H3 = .02: adjusted max(.02, .04) = .04.

    At alpha .05 all three are rejected, in the order H1, H2, H3. At alpha .03 only H1
    (.04 >= .03 at step 2), and testing stops on the graph after step 1:
    w = (0, .75, .25), H2 -> H3 and H3 -> H2 with weight 1.
    """
    p = (0.01, 0.03, 0.02)
    at_05 = graphical_test(p, WEIGHTS, GRAPH, 0.05)
    assert at_05.p_adjusted == pytest.approx((0.02, 0.04, 0.04), rel=1e-12)
    assert at_05.rejected == (True, True, True) and at_05.order == (0, 1, 2)
    assert at_05.weights == (0.0, 0.0, 0.0)
    at_03 = graphical_test(p, WEIGHTS, GRAPH, 0.03)
    assert at_03.p_adjusted == at_05.p_adjusted  # adjusted p do not depend on alpha
    assert at_03.rejected == (True, False, False) and at_03.order == (0,)
    assert at_03.weights == pytest.approx((0.0, 0.75, 0.25), rel=1e-12)
    assert np.array(at_03.transitions) == pytest.approx(np.array([[0, 0, 0], [0, 0, 1], [0, 1, 0]]))
    assert at_03.alpha == 0.03


def _literal_algorithm_1(p, w, g, alpha, rng) -> set[int]:
    """Bretz et al. (2009), Algorithm 1 as printed, taking any rejectable hypothesis at
    random (the paper shows that the set rejected does not depend on the choice)."""
    active = set(range(len(p)))
    w, g = list(w), [list(row) for row in g]
    rejected: set[int] = set()
    while active:
        candidates = [i for i in sorted(active) if p[i] < w[i] * alpha]
        if not candidates:
            break
        j = int(rng.choice(candidates))
        rejected.add(j)
        active.remove(j)
        new_g = [row[:] for row in g]
        for l in active:
            w[l] += w[j] * g[j][l]
            for k in active:
                if k == l:
                    continue
                denominator = 1 - g[l][j] * g[j][l]
                new_g[l][k] = (g[l][k] + g[l][j] * g[j][k]) / denominator if denominator > 0 else 0.0
        w[j] = 0.0
        g = new_g
    return rejected


def _invented_graph(rng: np.random.Generator, m: int):
    """Invented: weights summing to at most 1, rows summing to at most 1, some zeros."""
    w = rng.dirichlet(np.ones(m)) * rng.choice([1.0, rng.uniform(0.5, 1.0)])
    w[rng.uniform(size=m) < 0.3] = 0.0
    g = rng.dirichlet(np.ones(m), size=m) * rng.choice([1.0, 0.8], size=(m, 1))
    g[rng.uniform(size=(m, m)) < 0.3] = 0.0
    np.fill_diagonal(g, 0.0)
    return w, g


def test_properties_on_invented_graphs() -> None:
    # 600 invented graphs and p-vectors (seeded draws). What must hold by Bretz et al.
    # (2009): the literal Algorithm 1 in any order rejects the same set; rejected iff the
    # adjusted p is below alpha; never less than weighted Bonferroni rejects (p < w alpha);
    # the adjusted p lies in [p, 1]; a rejected hypothesis leaves no weight behind.
    rng = np.random.default_rng(586)
    for _ in range(600):
        m = int(rng.integers(1, 7))
        w, g = _invented_graph(rng, m)
        p = rng.uniform(size=m) ** 3
        alpha = float(rng.choice([0.025, 0.05, 0.2]))
        result = graphical_test(p, w, g, alpha)
        rejected = {i for i in range(m) if result.rejected[i]}
        assert rejected == _literal_algorithm_1(p, w, g, alpha, rng)
        assert set(result.order) == rejected and len(result.order) == len(rejected)
        adjusted = np.array(result.p_adjusted)
        assert rejected == set(np.flatnonzero(adjusted < alpha).tolist())
        assert rejected >= set(np.flatnonzero(p < w * alpha).tolist())
        assert np.all(adjusted >= p - 1e-15) and np.all(adjusted <= 1.0)
        assert [adjusted[i] for i in result.order] == sorted(adjusted[list(result.order)])
        final_w, final_g = np.array(result.weights), np.array(result.transitions)
        assert np.all(final_w[list(rejected)] == 0) and math.fsum(final_w) <= 1 + 1e-12
        assert np.all(final_g.sum(axis=1) <= 1 + 1e-12) and np.all(np.diag(final_g) == 0)
        assert np.all(final_g[list(rejected)] == 0) and np.all(final_g[:, list(rejected)] == 0)


def test_unavailable_p_values_are_never_rejected_and_pass_nothing_on() -> None:
    # With H2's p missing, H2 keeps its weight: H1 is tested at its own .5 alpha, and on
    # rejection passes its .5 to H2 (which cannot use it). The walk treats H2 as p = 1.
    result = graphical_test([0.01, None], [0.5, 0.5], [[0, 1], [1, 0]], 0.05)
    assert result.rejected == (True, False) and result.order == (0,)
    assert result.p_adjusted[0] == pytest.approx(0.02) and math.isnan(result.p_adjusted[1])
    assert result.weights == (0.0, 1.0)
    nan = graphical_test([math.nan, 0.001, 0.001], [1.0, 0.0, 0.0], np.eye(3, k=1), 0.05)
    assert nan.order == () and math.isnan(nan.p_adjusted[0])
    assert nan.p_adjusted[1:] == (1.0, 1.0)  # the gate never opens: no weight reaches them


def test_zero_weight_cannot_be_rejected_whatever_its_p() -> None:
    result = graphical_test([0.0, 0.0], [1.0, 0.0], [[0, 0], [0, 0]], 0.05)
    assert result.rejected == (True, False) and result.p_adjusted == (0.0, 1.0)
    assert graphical_test([], [], np.zeros((0, 0)), 0.05).order == ()


def test_sums_a_rounding_above_one_are_taken_as_one() -> None:
    # Thirds written as decimals: 0.3333333334 x 3 = 1.0000000002.
    third = 0.3333333334
    result = graphical_test([0.01, 0.02, 0.03], [third] * 3,
                            [[0, 0.5, 0.5000000001], [0.5, 0, 0.5], [0.5, 0.5, 0]], 0.05)
    # Scaled to sum 1, the first weight is 1/3 and p / w = .03; unscaled it would be
    # .01 / .3333333334 = .029999999991, 3e-10 below (never anticonservative).
    assert result.p_adjusted[0] == pytest.approx(0.03, rel=1e-12)


@pytest.mark.parametrize(("weights", "transitions", "message"), [
    ([0.5, 0.6], [[0, 1], [1, 0]], "the weights sum to 1.1; allowed: a sum of at most 1"),
    ([0.5, -0.1], [[0, 1], [1, 0]], "the weights must be numbers from 0 to 1, got [0.5, -0.1]"),
    ([0.5, math.nan], [[0, 1], [1, 0]], "the weights must be numbers from 0 to 1, got [0.5, nan]"),
    ([1e308, 1e308], [[0, 1], [1, 0]], "the weights must be numbers from 0 to 1, got [1e+308, 1e+308]"),
    ([0.5, 0.5], [[0, 1e308], [1, 0]], "the transition weights must be numbers from 0 to 1"),
    ([0.5, 0.5], [[0, 0.7], [0.6, 0.5]], "row 2 passes 0.5 to its own hypothesis; allowed: 0 (the "
                                          "diagonal is zero); row 2 passes on 1.1 in all; allowed: at most 1"),
    ([0.5, 0.5], [[0, 1, 0], [1, 0, 0]], "the transition matrix must be 2 x 2 for 2 hypotheses, "
                                         "got shape (2, 3)"),
    ([0.5, 0.5], [[0, -1], [1, 0]], "the transition weights must be numbers from 0 to 1"),
    ([[0.5, 0.5]], [[0]], "the weights must be one list of numbers, got shape (1, 2)"),
])
def test_graph_problems_say_what_is_wrong(weights, transitions, message) -> None:
    assert "; ".join(graph_problems(weights, transitions)) == message
    with pytest.raises(InternalError, match="the graph cannot be tested: "):
        graphical_test([0.01] * len(np.atleast_2d(weights)[0]), weights, transitions, 0.05)


def test_other_inputs_are_checked() -> None:
    with pytest.raises(InternalError, match="3 p-values given for a graph of 2 hypotheses"):
        graphical_test([0.1, 0.2, 0.3], [0.5, 0.5], [[0, 1], [1, 0]], 0.05)
    with pytest.raises(InternalError, match=r"p-values must lie in \[0, 1\]"):
        graphical_test([0.1, 1.2], [0.5, 0.5], [[0, 1], [1, 0]], 0.05)
    for alpha in (0.0, 1.0, -0.1):
        with pytest.raises(InternalError, match="alpha must lie strictly between 0 and 1"):
            graphical_test([0.1, 0.2], [0.5, 0.5], [[0, 1], [1, 0]], alpha)
