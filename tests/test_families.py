"""Registered families across outcomes (`appendix.families.run_families`): one adjustment
over every member, the graphical procedure over nodes on different outcomes and its special
cases, and serial gatekeeping with the gate open and closed.

The hypotheses are real contrast results on invented data (seeded normal draws) with
chosen p-values put in, as in tests/stats/test_multiplicity.py; the source of every
reference value is named beside it.
"""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest
import scipy.stats as st
from statsmodels.stats.multitest import multipletests

from appendix.families import run_families
from appendix.plan.family_plan import FamilyPlan, Node
from appendix.stats.cells import cell_stats
from appendix.stats.contrasts import classical_contrast, hypotheses_for

LEVELS = ("placebo", "low", "high")


def _result(contrast: str, p: float, seed: int):
    """A custom contrast's result on invented data, with the p-value `p` put in."""
    rng = np.random.default_rng(seed)
    codes = np.repeat(np.arange(3), [5, 7, 6])
    cells = cell_stats(rng.normal(10, 1, size=codes.size), codes, 3, LEVELS)
    h = hypotheses_for("custom", LEVELS, weights={"placebo": -1, "high": 1}, contrast_id=contrast,
                       label=f"contrast {contrast}")[0]
    return dataclasses.replace(classical_contrast(h, cells, "two-sided", 0.95), p=p)


def _shares(p: dict[str, list[float]], contrasts=("C1", "C2")) -> dict:
    """One hypothesis per contrast on each outcome, with the p-values given by outcome."""
    return {o: tuple(_result(c, x, seed) for seed, (c, x) in enumerate(zip(contrasts, ps)))
            for o, ps in p.items()}


def _family(family_id: str, method: str, shares: dict, **keys) -> FamilyPlan:
    members = tuple(Node(r.contrast, o) for o, rs in shares.items() for r in rs)
    return FamilyPlan(id=family_id, method=method, members=members, scope="declared", **keys)


def _run(*families_and_shares, alpha=0.05):
    families = tuple(f for f, _ in families_and_shares)
    tested, records = run_families(families, {f.id: s for f, s in families_and_shares}, alpha)
    return tested, records


def _flat(shares) -> list:
    return [r for rs in shares.values() for r in rs]


def test_holm_across_outcomes_is_one_adjustment_of_every_member() -> None:
    shares = _shares({"pain": [0.011, 0.04], "sleep": [0.003, 0.2], "mobility": [0.02, 0.012]})
    tested, records = _run((_family("S", "holm", shares), shares))
    # Reference: statsmodels 0.15.0 multipletests(method="holm") on the six p-values at once.
    reject, expected, _, _ = multipletests([r.p for r in _flat(shares)], alpha=0.05, method="holm")
    assert [r.p_adjusted for r in _flat(tested["S"])] == pytest.approx(expected, rel=1e-12)
    assert [r.decision == "reject" for r in _flat(tested["S"])] == list(reject)
    record = records["S"]
    assert (record.hypotheses, record.rejected, record.tested) == (6, int(reject.sum()), True)
    assert [m.node for m in record.members][:2] == ["C1@pain", "C2@pain"]
    assert record.intervals == "unadjusted" and "Holm's step-down" in record.interval_note


def test_bonferroni_intervals_count_the_whole_family_on_each_test_df() -> None:
    shares = _shares({"pain": [0.01, 0.04], "sleep": [0.003, 0.2]})
    tested, records = _run((_family("S", "bonferroni", shares), shares))
    for r in _flat(tested["S"]):
        half = st.t.isf(0.05 / 4 / 2, r.df) * r.se  # m = 4 over both outcomes; scipy.stats.t 1.17
        assert (r.ci_low, r.ci_high) == pytest.approx((r.estimate - half, r.estimate + half), rel=1e-12)
        assert r.ci_simultaneous
    assert records["S"].intervals == "simultaneous" and "m = 4" in records["S"].interval_note


def test_fixed_sequence_across_outcomes_walks_the_registered_nodes() -> None:
    # Maurer, Hothorn & Lehmacher (1995): at the full alpha in order, stop at the first
    # p >= alpha. Order C2@sleep (.01), C1@pain (.03), C1@sleep (.30, stop), C2@pain (.001).
    shares = _shares({"pain": [0.03, 0.001], "sleep": [0.30, 0.01]})
    order = (Node("C2", "sleep"), Node("C1", "pain"), Node("C1", "sleep"), Node("C2", "pain"))
    tested, _ = _run((_family("S", "fixed-sequence", shares, order=order), shares))
    pain, sleep = tested["S"]["pain"], tested["S"]["sleep"]
    assert [(r.decision, r.p_adjusted) for r in pain] == [("reject", pytest.approx(0.03)),
                                                          ("not-tested", None)]
    assert [(r.decision, r.p_adjusted) for r in sleep] == [("retain", pytest.approx(0.30)),
                                                           ("reject", pytest.approx(0.01))]


def test_graphical_across_outcomes_hand_worked_on_the_two_primary_two_secondary_graph() -> None:
    # The graph of Bretz et al. (2009, Statistics in Medicine 28:586-604) for two primary
    # hypotheses of weight 1/2 each, each passing everything to its secondary, which passes
    # everything on to the other primary (from memory), with the primaries on one outcome
    # and the secondaries on another: H1 = C1@pain, H2 = C1@sleep, H3 = C2@pain,
    # H4 = C2@sleep. p = (.01, .005, .015, .022), by hand with Algorithm 1 of the paper:
    # p/w = (.02, .01, inf, inf): H2 (adjusted .01), H4 gets 1/2 and H3 now passes to H4;
    # p/w = (.02, ., inf, .044): H1 (.02), H3 gets 1/2; H3 .03, then H4 max(.022, .03) = .03.
    # At one-sided alpha .025 H2 and H1 are rejected, H3 and H4 not.
    shares = _shares({"pain": [0.01, 0.015], "sleep": [0.005, 0.022]})
    h1, h2, h3, h4 = Node("C1", "pain"), Node("C1", "sleep"), Node("C2", "pain"), Node("C2", "sleep")
    family = _family("G", "graphical", shares, weights={h1: 0.5, h2: 0.5},
                     transitions={h1: {h3: 1.0}, h2: {h4: 1.0}, h3: {h2: 1.0}, h4: {h1: 1.0}})
    tested, records = _run((family, shares), alpha=0.025)
    pain, sleep = tested["G"]["pain"], tested["G"]["sleep"]
    assert [r.p_adjusted for r in (*pain, *sleep)] == pytest.approx([0.02, 0.03, 0.01, 0.03], rel=1e-12)
    assert [r.decision for r in (*pain, *sleep)] == ["reject", "retain", "reject", "retain"]
    edges = {(e.source, e.target): e.share for e in records["G"].transitions}
    assert edges[("C2@pain", "C1@sleep")] == 1.0
    assert {m.node: m.weight for m in records["G"].members} == {
        "C1@pain": 0.5, "C2@pain": 0.0, "C1@sleep": 0.5, "C2@sleep": 0.0}


@pytest.mark.parametrize("seed", range(6))
def test_graphical_special_cases_across_outcomes_are_holm_and_the_fixed_sequence(seed) -> None:
    # Bretz et al. (2009, section 2, from memory): equal weights 1/m with each node passing
    # 1/(m - 1) to every other is Holm's procedure; weight 1 on the first node with each
    # node passing everything to the next is the fixed sequence. Invented p-values (seeded
    # uniform draws raised to a power, so that many are small).
    rng = np.random.default_rng(2009 + seed)
    p = (rng.uniform(size=4) ** 3).tolist()
    shares = _shares({"pain": p[:2], "sleep": p[2:]})
    nodes = [Node(r.contrast, o) for o, rs in shares.items() for r in rs]
    holm_graph = _family("G", "graphical", shares, weights={n: 0.25 for n in nodes},
                         transitions={n: {k: 1 / 3 for k in nodes if k != n} for n in nodes})
    holm = _family("H", "holm", shares)
    chain = _family("G", "graphical", shares, weights={nodes[0]: 1.0},
                    transitions={a: {b: 1.0} for a, b in zip(nodes, nodes[1:])})
    sequence = _family("F", "fixed-sequence", shares, order=tuple(nodes))
    for graph, reference in ((holm_graph, holm), (chain, sequence)):
        by_graph, _ = _run((graph, shares))
        by_reference, _ = _run((reference, shares))
        got = [(r.decision, r.p_adjusted) for r in _flat(by_graph["G"])]
        expected = [(r.decision, r.p_adjusted) for r in _flat(by_reference[reference.id])]
        # the fixed sequence leaves hypotheses after its stop untested; the graph walks on
        # and retains them (their adjusted p at least the stop's)
        for (decision, adjusted), (want, want_adjusted) in zip(got, expected):
            if want == "not-tested":
                assert decision == "retain"
            else:
                assert decision == want and adjusted == pytest.approx(want_adjusted, rel=1e-12)


def _gated(primary_p: list[float]):
    """Family P (Bonferroni, pain) gating family S (Holm, sleep and mobility)."""
    primary = _shares({"pain": primary_p})
    secondary = _shares({"sleep": [0.004, 0.03], "mobility": [0.01, 0.6]})
    first = _family("P", "bonferroni", primary, in_sequence=True)
    second = _family("S", "holm", secondary, gate="P", in_sequence=True)
    # listed with the gated family first: the sequence decides the testing order
    return _run((second, secondary), (first, primary)), secondary


def test_serial_gatekeeping_with_the_gate_open() -> None:
    # Serial gatekeeping (Maurer, Hothorn & Lehmacher 1995; Westfall & Krishen 2001;
    # Dmitrienko & Tamhane 2007, Pharmaceutical Statistics 6:171-180, from memory): S is
    # tested at the full alpha because both hypotheses of P are rejected (Bonferroni .012
    # and .03); each adjusted p of S is the larger of its Holm p and P's largest, .03:
    # Holm on (.004, .03, .01, .6) by hand gives (.016, .06, .03, .6), so (.03, .06, .03, .6).
    (tested, records), secondary = _gated([0.006, 0.015])
    assert records["S"].gate.status == "open" and records["S"].tested
    assert records["S"].gate.p == pytest.approx(0.03)
    holm = multipletests([r.p for r in _flat(secondary)], method="holm")[1]  # statsmodels 0.15.0
    assert [r.p_adjusted for r in _flat(tested["S"])] == pytest.approx(np.maximum(holm, 0.03), rel=1e-12)
    assert [r.p_adjusted for r in _flat(tested["S"])] == pytest.approx([0.03, 0.06, 0.03, 0.6], rel=1e-12)
    assert [r.decision for r in _flat(tested["S"])] == ["reject", "retain", "reject", "retain"]


def test_serial_gatekeeping_with_the_gate_closed() -> None:
    # P's second hypothesis is retained (Bonferroni .12): S is not tested at all, whatever
    # its p-values; its intervals are the unadjusted ones, for information.
    (tested, records), secondary = _gated([0.006, 0.06])
    gate = records["S"].gate
    assert (gate.status, gate.after, [(r.outcome, r.id) for r in gate.not_rejected]) == (
        "closed", "P", [("pain", "C2")])
    assert not records["S"].tested and records["S"].rejected == 0 and records["S"].p is None
    assert records["S"].intervals == "not-tested"
    for r, raw in zip(_flat(tested["S"]), _flat(secondary)):
        assert (r.decision, r.p_adjusted, r.p) == ("not-tested", None, raw.p)
        half = st.t.isf(0.025, r.df) * r.se  # unadjusted 95% interval; scipy.stats.t 1.17
        assert (r.ci_low, r.ci_high) == pytest.approx((r.estimate - half, r.estimate + half), rel=1e-12)
        assert not r.ci_simultaneous
    # a third family behind S: its gate is closed too, because S was not tested itself
    third_shares = _shares({"mobility": [0.001]}, contrasts=("C3",))
    _, again = run_families((_family("P", "bonferroni", _shares({"pain": [0.006, 0.06]}), in_sequence=True),
                             _family("S", "holm", secondary, gate="P", in_sequence=True),
                             _family("T", "holm", third_shares, gate="S", in_sequence=True)),
                            {"P": _shares({"pain": [0.006, 0.06]}), "S": secondary, "T": third_shares},
                            0.05)
    assert (again["T"].gate.status, again["T"].gate.after_tested) == ("closed", False)
