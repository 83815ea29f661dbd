"""Multiplicity control for a family of contrast hypotheses, and the runner's entry point.

`test_family` computes one outcome's registered family: every hypothesis under the
registered method (classical, welch, rank-based), then the registered multiplicity
control. A family across outcomes is pooled and adjusted by `appendix.families`, with
`apply_multiplicity` over all its hypotheses.

Adjusted p-values (Wright 1992, Biometrics 48:1005-1013, for the adjusted-p forms) are
monotone in the raw p, never below it and capped at 1:

- bonferroni: min(1, m p) (Dunn 1961, JASA 56:52-64);
- sidak: 1 - (1 - p)^m, computed as -expm1(m log1p(-p)) (Sidak 1967, JASA 62:626-633);
- holm: step-down, max over j <= i of (m - j + 1) p_(j) (Holm 1979, Scand J Stat 6:65-70);
- hochberg: step-up, min over j >= i of (m - j + 1) p_(j) (Hochberg 1988, Biometrika
  75:800-802);
- benjamini-hochberg: step-up, min over j >= i of m p_(j) / j; controls the false
  discovery rate, not the family-wise error rate (Benjamini & Hochberg 1995, JRSS B
  57:289-300);
- fixed-sequence: in the registered order, p_adj = max of the p-values so far; testing
  stops at the first p >= alpha, later hypotheses are not tested (Maurer, Hothorn &
  Lehmacher 1995; Westfall & Krishen 2001, J Stat Plan Inference 99:25-40);
- graphical: the registered weights and transition weights of one node per contrast,
  tested sequentially rejective (Bretz, Maurer, Brannath & Posch 2009), see `graphical`;
- tukey and dunnett: single-step simultaneous tests, see `simultaneous`.

Intervals: bonferroni and sidak report intervals at the per-hypothesis level their
adjustment implies (1 - alpha/m, (1 - alpha)^(1/m)), which hold simultaneously; tukey and
dunnett report their simultaneous intervals; every other method the unadjusted
1 - alpha interval (`ci_simultaneous` False). `confidence_level` is always 1 - alpha.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Sequence

import numpy as np

from appendix.errors import InternalError
from appendix.results import HypothesisResult
from appendix.stats.cells import CellStats
from appendix.stats.contrasts import Hypothesis, contrast_result, critical_value, interval, level_model
from appendix.stats.graphical import Graph, graphical_test
from appendix.stats.simultaneous import dunnett_results, tukey_results

P_METHODS = ("none", "bonferroni", "holm", "hochberg", "sidak", "benjamini-hochberg")
METHODS = (*P_METHODS, "tukey", "dunnett", "fixed-sequence", "graphical")


def adjust(p: Sequence[float | None], method: str) -> np.ndarray:
    """Adjusted p-values for `method`; None and NaN pass through as NaN and do not count in m.

    >>> adjust([0.01, 0.04, 0.03], "holm").round(6).tolist()
    [0.03, 0.06, 0.06]
    """
    if method not in P_METHODS:
        raise InternalError(f"adjust() knows {P_METHODS}, got {method!r}")
    raw = np.array([math.nan if x is None else float(x) for x in p], dtype=np.float64)
    ready = np.flatnonzero(np.isfinite(raw))
    if np.any((raw[ready] < 0) | (raw[ready] > 1)):
        raise InternalError(f"p-values must lie in [0, 1], got {raw[ready].tolist()}")
    out = np.full(raw.shape, math.nan)
    values = raw[ready]
    m = values.size
    if m == 0:
        return out
    if method == "none":
        adjusted = values.copy()
    elif method == "bonferroni":
        adjusted = values * m
    elif method == "sidak":
        # p = 1 stays 1; log1p(-1) would be -inf (and a floating-point warning).
        below = values < 1.0
        adjusted = np.ones(m)
        adjusted[below] = -np.expm1(m * np.log1p(-values[below]))
    else:
        order = np.argsort(values, kind="stable")
        ranked = values[order]
        rank = np.arange(1, m + 1, dtype=np.float64)
        if method == "holm":
            stepped = np.maximum.accumulate(ranked * (m - rank + 1))
        elif method == "hochberg":
            stepped = np.minimum.accumulate((ranked * (m - rank + 1))[::-1])[::-1]
        else:  # benjamini-hochberg
            stepped = np.minimum.accumulate((ranked * m / rank)[::-1])[::-1]
        adjusted = np.empty(m)
        adjusted[order] = stepped
    out[ready] = np.minimum(1.0, np.maximum(adjusted, values))
    return out


def _decide(r: HypothesisResult, p_adjusted: float, alpha: float, per_level: float,
            simultaneous: bool) -> HypothesisResult:
    """`r` with p_adjusted, the decision and the interval at `per_level`."""
    multiplier = critical_value(r.df, r.alternative, per_level)
    low, high = interval(r.estimate, r.se, multiplier, r.alternative)
    return dataclasses.replace(
        r, p_adjusted=float(p_adjusted), decision="reject" if p_adjusted < alpha else "retain",
        ci_low=low, ci_high=high, confidence_level=1.0 - alpha, ci_simultaneous=simultaneous)


def not_tested(r: HypothesisResult, alpha: float) -> HypothesisResult:
    """`r` not tested under the plan (a closed gate): no adjusted p, no decision, the
    unadjusted 1 - alpha interval for information. A result without a p stays unavailable."""
    if r.p is None:
        return r
    decided = _decide(r, r.p, alpha, 1.0 - alpha, False)
    return dataclasses.replace(decided, p_adjusted=None, decision="not-tested")


def behind_gate(r: HypothesisResult, gate_p: float, alpha: float) -> HypothesisResult:
    """`r` of a family tested after an open gate: its adjusted p is the larger of its
    adjusted p within the family and `gate_p`, the largest adjusted p of the families
    before it (serial gatekeeping; Dmitrienko & Tamhane 2007, Pharmaceutical Statistics
    6:171-180, from memory), so that it is the smallest alpha at which the whole
    sequence rejects it. The decision and the interval are the family's own (an open gate
    has `gate_p` < alpha, so the decision cannot change)."""
    if r.p_adjusted is None:
        return r
    return dataclasses.replace(r, p_adjusted=max(r.p_adjusted, gate_p))


def fixed_sequence(results_in_order: Sequence[HypothesisResult],
                   alpha: float) -> tuple[HypothesisResult, ...]:
    """Test in the given order at full alpha while every earlier hypothesis was rejected.

    p_adj(i) = max(p_1, ..., p_i). At the first hypothesis not rejected (or not
    computable) the walk stops: that one is ``retain`` (``unavailable``), every later one
    ``not-tested`` with p_adjusted None. Intervals are the unadjusted 1 - alpha ones.
    """
    out: list[HypothesisResult] = []
    running = 0.0
    stopped = False
    for r in results_in_order:
        if stopped:
            out.append(dataclasses.replace(r, p_adjusted=None, decision="not-tested"))
            continue
        if r.p is None:
            out.append(r)
            stopped = True
            continue
        running = max(running, r.p)
        decided = _decide(r, running, alpha, 1.0 - alpha, False)
        out.append(decided)
        stopped = decided.decision != "reject"
    return tuple(out)


def _sequence_positions(results: Sequence[HypothesisResult], order: Sequence[str]) -> list[int]:
    """Positions of `results` in the registered order; entries are hypothesis or contrast ids."""
    positions: list[int] = []
    for entry in order:
        found = [i for i, r in enumerate(results) if r.id == entry] or \
                [i for i, r in enumerate(results) if r.contrast == entry]
        if not found:
            raise InternalError(f"fixed-sequence order names {entry!r}, which is not in the family")
        positions.extend(found)
    if sorted(positions) != list(range(len(results))):
        raise InternalError("fixed-sequence order must list every hypothesis of the family exactly once")
    return positions


def graphical(results: Sequence[HypothesisResult], graph: Graph, alpha: float,
              nodes: Sequence[str] | None = None) -> tuple[HypothesisResult, ...]:
    """The graphical procedure over one node per result: `nodes[i]` names the node of
    `results[i]` in `graph` (by default its contrast id; ``contrast@outcome`` for a family
    across outcomes).

    Each node must have exactly one hypothesis. A result without a p passes through
    unchanged (it is never rejected and passes nothing on); intervals are the unadjusted
    1 - alpha ones.
    """
    nodes = [r.contrast for r in results] if nodes is None else list(nodes)
    if len(set(nodes)) != len(nodes) or len(nodes) != len(results):
        raise InternalError(f"a graphical family needs one hypothesis per node, got {nodes}")
    weights, transitions = graph.matrices(nodes)
    tested = graphical_test([r.p for r in results], weights, transitions, alpha)
    return tuple(r if r.p is None else _decide(r, p_adj, alpha, 1.0 - alpha, False)
                 for r, p_adj in zip(results, tested.p_adjusted))


def apply_multiplicity(results: Sequence[HypothesisResult], method: str, alpha: float, *,
                       order: Sequence[str] | None = None,
                       graph: Graph | None = None) -> tuple[HypothesisResult, ...]:
    """Set p_adjusted, decision and interval of each result under a p-value `method`.

    `method` is one of `P_METHODS`, ``fixed-sequence`` (which needs `order`: hypothesis
    ids, or contrast ids standing for their hypotheses in expansion order) or
    ``graphical`` (which needs `graph`). Results keep their order; unavailable ones pass
    through unchanged. Tukey and Dunnett need the level model and are reached through
    `test_family`.
    """
    if not 0.0 < alpha < 1.0:
        raise InternalError(f"alpha must lie strictly between 0 and 1, got {alpha!r}")
    results = tuple(results)
    if (graph is not None) != (method == "graphical"):
        raise InternalError(f"a graph belongs to method graphical only (got method {method!r})")
    if method == "graphical":
        return graphical(results, graph, alpha)  # type: ignore[arg-type]
    if method == "fixed-sequence":
        if order is None:
            raise InternalError("fixed-sequence needs the registered order")
        positions = _sequence_positions(results, order)
        walked = fixed_sequence([results[i] for i in positions], alpha)
        out: list[HypothesisResult | None] = [None] * len(results)
        for i, r in zip(positions, walked):
            out[i] = r
        return tuple(out)  # type: ignore[arg-type]
    if method in ("tukey", "dunnett"):
        raise InternalError(f"{method} is a single-step simultaneous test; call test_family")
    if order is not None:
        raise InternalError(f"an order is meaningful only for fixed-sequence, not {method}")
    adjusted = adjust([r.p for r in results], method)
    m = int(np.count_nonzero(np.isfinite(adjusted)))
    per_level, simultaneous = 1.0 - alpha, False
    if method == "bonferroni" and m > 0:
        per_level, simultaneous = 1.0 - alpha / m, True
    elif method == "sidak" and m > 0:
        per_level, simultaneous = math.exp(math.log1p(-alpha) / m), True
    return tuple(r if r.p is None else _decide(r, float(p_adj), alpha, per_level, simultaneous)
                 for r, p_adj in zip(results, adjusted))


def _alternatives(alternative: str | Sequence[str], count: int) -> tuple[str, ...]:
    chosen = (alternative,) * count if isinstance(alternative, str) else tuple(alternative)
    if len(chosen) != count:
        raise InternalError(f"{len(chosen)} alternatives given for {count} hypotheses")
    return chosen


def test_family(hypotheses: Sequence[Hypothesis], alternatives: Sequence[str], *, method: str,
                multiplicity: str, cells: CellStats, values: np.ndarray | None = None,
                codes: np.ndarray | None = None, alpha: float,
                order: Sequence[str] | None = None,
                graph: Graph | None = None) -> tuple[HypothesisResult, ...]:
    """Every hypothesis of one outcome under `method` and the registered `multiplicity`.

    `alternatives` is aligned with `hypotheses`; `values`/`codes` are needed for
    rank-based; `order` (hypothesis or contrast ids) for fixed-sequence; `graph` for
    graphical. Each result has p_adjusted and decision set (reject iff p_adjusted <
    alpha), in the input order.
    """
    if multiplicity not in METHODS:
        raise InternalError(f"multiplicity must be one of {METHODS}, got {multiplicity!r}")
    if not 0.0 < alpha < 1.0:
        raise InternalError(f"alpha must lie strictly between 0 and 1, got {alpha!r}")
    model = level_model(method, cells=cells, values=values, codes=codes)
    chosen = _alternatives(alternatives, len(hypotheses))
    raw = tuple(contrast_result(h, model, a, 1.0 - alpha) for h, a in zip(hypotheses, chosen))
    if multiplicity == "tukey":
        return tukey_results(raw, alpha)
    if multiplicity == "dunnett":
        return dunnett_results(raw, model.var_mean, alpha)
    return apply_multiplicity(raw, multiplicity, alpha, order=order, graph=graph)


test_family.__test__ = False  # a library function whose name pytest would otherwise collect


def tukey_family(hs: Sequence[Hypothesis], cells: CellStats, alternative: str | Sequence[str],
                 alpha: float, welch: bool = False) -> tuple[HypothesisResult, ...]:
    """Tukey–Kramer (classical) or Games–Howell (`welch`) single-step family of pairs."""
    return test_family(hs, _alternatives(alternative, len(hs)),
                       method="welch" if welch else "classical", multiplicity="tukey",
                       cells=cells, alpha=alpha)


def dunnett_family(hs: Sequence[Hypothesis], cells: CellStats, alternative: str | Sequence[str],
                   alpha: float, welch: bool = False) -> tuple[HypothesisResult, ...]:
    """Dunnett's single-step many-to-one family (Welch variances when `welch`)."""
    return test_family(hs, _alternatives(alternative, len(hs)),
                       method="welch" if welch else "classical", multiplicity="dunnett",
                       cells=cells, alpha=alpha)
