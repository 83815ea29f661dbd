"""The graphical sequentially rejective procedure of Bretz, Maurer, Brannath & Posch (2009).

Each hypothesis H_i starts with a weight w_i (its share of alpha, sum w <= 1) and the
transition matrix G says where that share goes when H_i is rejected: g_ij is the part of
H_i's weight passed to H_j (rows sum to at most 1, zero diagonal). Bretz et al. (2009,
Statistics in Medicine 28:586-604), Algorithm 1:

1. reject some H_j with p_j < w_j alpha; if there is none, stop;
2. remove H_j and update, for the hypotheses l, k still in the graph (l != k):
   w_l <- w_l + w_j g_jl;
   g_lk <- (g_lk + g_lj g_jk) / (1 - g_lj g_jl), and 0 where g_lj g_jl = 1;
3. go back to 1 while hypotheses remain.

The set rejected does not depend on which rejectable hypothesis is taken first (the
paper proves it); here it is always the one of smallest p_j / w_j, the lowest index on a tie,
which gives the order of rejection reported. The procedure is the shortcut of a closed
test of weighted Bonferroni tests and controls the family-wise error rate at alpha under
any dependence.

Adjusted p-values (Bretz et al. 2009; Bretz, Posch, Glimm, Klinglmueller, Maurer &
Rohmeyer 2011, Biometrical Journal 53:894-913): walk the graph to the end regardless of
alpha, at each step removing the hypothesis j of smallest p_j / w_j in the current graph;
its adjusted p is max(p_j / w_j, the adjusted p of the step before), capped at 1. H_j is
rejected iff its adjusted p is below alpha.

Rejection is strict (p < w alpha, p_adjusted < alpha), as everywhere in this package;
the paper writes p <= w alpha, which differs only at equality. A hypothesis of weight 0
cannot be rejected until weight reaches it. A hypothesis without a p-value (None or NaN)
is never rejected and passes nothing on (it is walked as p = 1, which is valid for any
null distribution); its adjusted p is NaN.

Sums of weights or of a row that exceed 1 by no more than `TOLERANCE` (decimals written
for thirds) are scaled down to sum to 1 before testing.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np

from appendix.errors import InternalError

#: How far a sum of weights (or of a row of G) may exceed 1 and still be taken as 1.
TOLERANCE = 1e-9

#: 1 - g_lj g_jl at or below this counts as 0: H_l and H_j pass everything to each other.
_LOOP = 1e-12


@dataclass(frozen=True)
class GraphicalTest:
    """The outcome of the graphical procedure on m hypotheses, indexed as given.

    `p_adjusted` holds the adjusted p-values (NaN where no p-value was given);
    `rejected` whether each was rejected at `alpha`; `order` the indices of the
    rejected hypotheses in the order the algorithm rejected them; `weights` and
    `transitions` the graph left when testing stopped, indexed as the input, with 0
    for every rejected hypothesis and its row and column.
    """

    p_adjusted: tuple[float, ...]
    rejected: tuple[bool, ...]
    order: tuple[int, ...]
    weights: tuple[float, ...]
    transitions: tuple[tuple[float, ...], ...]
    alpha: float


@dataclass(frozen=True, eq=False)
class Graph:
    """A registered graph by node id (a contrast id, standing for its one hypothesis).

    `weights` holds the initial share of alpha of each node (a node left out weighs 0);
    `transitions` for a source node the share passed to each other node (left out: 0).
    """

    weights: Mapping[str, float]
    transitions: Mapping[str, Mapping[str, float]]

    def matrices(self, nodes: Sequence[str]) -> tuple[list[float], list[list[float]]]:
        """The weight vector and transition matrix over `nodes`, in that order.

        >>> Graph({"C1": 1.0}, {"C1": {"C2": 1.0}}).matrices(["C2", "C1"])
        ([0.0, 1.0], [[0.0, 0.0], [1.0, 0.0]])
        """
        unknown = (set(self.weights) | set(self.transitions)
                   | {k for row in self.transitions.values() for k in row}) - set(nodes)
        if unknown:
            raise InternalError(f"the graph names {sorted(unknown)}, which are not among {list(nodes)}")
        weights = [float(self.weights.get(n, 0.0)) for n in nodes]
        rows = [self.transitions.get(n, {}) for n in nodes]
        return weights, [[float(row.get(k, 0.0)) for k in nodes] for row in rows]


def graph_problems(weights: Sequence[float], transitions: Sequence[Sequence[float]]) -> list[str]:
    """What is wrong with a graph, one sentence each; empty when it may be tested.

    >>> graph_problems([0.5, 0.6], [[0, 1], [1, 0]])
    ['the weights sum to 1.1; allowed: a sum of at most 1']
    """
    w = np.asarray(weights, dtype=np.float64)
    g = np.asarray(transitions, dtype=np.float64)
    m = w.size
    if w.ndim != 1:
        return [f"the weights must be one list of numbers, got shape {w.shape}"]
    if g.shape != (m, m):
        return [f"the transition matrix must be {m} x {m} for {m} hypotheses, got shape {g.shape}"]
    problems = []
    top = 1 + TOLERANCE  # NaN fails both tests; sums of numbers this small cannot overflow
    if not np.all((w >= 0) & (w <= top)):
        problems.append(f"the weights must be numbers from 0 to 1, got {w.tolist()}")
    elif math.fsum(w) > 1 + TOLERANCE:
        problems.append(f"the weights sum to {math.fsum(w):.10g}; allowed: a sum of at most 1")
    if not np.all((g >= 0) & (g <= top)):
        problems.append("the transition weights must be numbers from 0 to 1")
        return problems
    for i in range(m):
        if g[i, i] != 0:
            problems.append(f"row {i + 1} passes {g[i, i]:.10g} to its own hypothesis; allowed: 0 "
                            "(the diagonal is zero)")
        total = math.fsum(g[i])
        if total > 1 + TOLERANCE:
            problems.append(f"row {i + 1} passes on {total:.10g} in all; allowed: at most 1")
    return problems


def _scaled(values: np.ndarray) -> np.ndarray:
    """`values` divided by their sum when it exceeds 1 (by no more than TOLERANCE)."""
    total = math.fsum(values)
    return values / total if total > 1 else values


def _remove(j: int, w: np.ndarray, g: np.ndarray, active: np.ndarray) -> None:
    """Bretz et al. (2009), Algorithm 1, step 2: take H_j out and pass its weight on."""
    active[j] = False
    rest = np.flatnonzero(active)
    w[rest] += w[j] * g[j, rest]
    w[j] = 0.0
    inner = np.ix_(rest, rest)
    through = g[inner] + np.outer(g[rest, j], g[j, rest])
    keep = 1.0 - g[rest, j] * g[j, rest]  # 1 - g_lj g_jl, per row l
    closed = keep <= _LOOP
    updated = np.divide(through, keep[:, None], out=np.zeros_like(through),
                        where=~closed[:, None])
    np.fill_diagonal(updated, 0.0)
    g[j, :] = 0.0
    g[:, j] = 0.0
    g[inner] = updated


def _ratio(p: float, weight: float) -> float:
    """p / w, infinite for a weight of 0 (such a hypothesis cannot be rejected yet)."""
    return p / weight if weight > 0 else math.inf


def graphical_test(p: Sequence[float | None], weights: Sequence[float],
                   transitions: Sequence[Sequence[float]], alpha: float) -> GraphicalTest:
    """Test m hypotheses with the graph (`weights`, `transitions`) at level `alpha`.

    >>> result = graphical_test([0.01, 0.04], [0.5, 0.5], [[0, 1], [1, 0]], 0.05)
    >>> result.p_adjusted, result.order
    ((0.02, 0.04), (0, 1))
    """
    if not 0.0 < alpha < 1.0:
        raise InternalError(f"alpha must lie strictly between 0 and 1, got {alpha!r}")
    problems = graph_problems(weights, transitions)
    if problems:
        raise InternalError("the graph cannot be tested: " + "; ".join(problems))
    raw = np.array([math.nan if x is None else float(x) for x in p], dtype=np.float64)
    m = len(weights)
    if raw.shape != (m,):
        raise InternalError(f"{raw.size} p-values given for a graph of {m} hypotheses")
    given = np.isfinite(raw)
    if np.any((raw[given] < 0) | (raw[given] > 1)):
        raise InternalError(f"p-values must lie in [0, 1], got {raw[given].tolist()}")
    walked = np.where(given, raw, 1.0)
    w = _scaled(np.asarray(weights, dtype=np.float64).copy())
    g = np.array([_scaled(np.asarray(row, dtype=np.float64)) for row in transitions],
                 dtype=np.float64).reshape(m, m)
    active = np.ones(m, dtype=bool)
    adjusted = np.full(m, math.nan)
    order: list[int] = []
    final: tuple[np.ndarray, np.ndarray] | None = None
    running = 0.0
    for _ in range(m):
        rest = np.flatnonzero(active)
        ratios = [_ratio(walked[i], w[i]) for i in rest]
        j = int(rest[int(np.argmin(ratios))])
        ratio = min(ratios)
        if final is None and ratio < alpha:
            order.append(j)
        elif final is None:
            final = (w.copy(), g.copy())
        running = max(running, ratio)
        adjusted[j] = min(1.0, running)
        _remove(j, w, g, active)
    if final is None:
        final = (w, g)
    adjusted[~given] = math.nan
    rejected = np.zeros(m, dtype=bool)
    rejected[order] = True
    return GraphicalTest(
        p_adjusted=tuple(float(x) for x in adjusted), rejected=tuple(bool(x) for x in rejected),
        order=tuple(order), weights=tuple(float(x) for x in final[0]),
        transitions=tuple(tuple(float(x) for x in row) for row in final[1]), alpha=float(alpha))
