"""Declared families of hypotheses (`multiplicity.families`, `sequence`): the families a
plan resolves into, in either form of `multiplicity`, and the exact messages of broken
family plans. The plans are invented for these tests."""

from __future__ import annotations

import json

import pytest

from appendix.plan.family_plan import Node, gate_order
from appendix.plan.load import canonical_json, load_plan
from tests.plan.plans import BASE, assert_refused

#: BASE with a third outcome and four contrasts (lines 20 to 25); multiplicity from line 26.
THREE = BASE + "  - {name: mobility, label: Mobility, role: secondary}\n" + (
    "contrasts:\n"
    "  - {id: D1, kind: versus-control, label: doses versus placebo, outcomes: [pain]}\n"
    "  - {id: C1, kind: custom, label: high versus placebo, weights: {placebo: -1, high: 1}}\n"
    "  - {id: C2, kind: custom, label: low versus placebo, weights: {placebo: -1, low: 1},\n"
    "     outcomes: [sleep, mobility]}\n"
    "  - {id: C3, kind: pairwise, label: all pairs, outcomes: [mobility]}\n")

DECLARED = THREE + """\
multiplicity:
  families:
    - {id: P, contrasts: [D1], outcomes: [pain], method: dunnett}
    - {id: Q, contrasts: [C1], outcomes: [pain], method: holm}
    - {id: M, label: all pairs of mobility, contrasts: [C3], outcomes: [mobility], method: bonferroni}
    - id: S
      contrasts: [C1, C2]
      outcomes: [sleep, mobility]
      method: graphical
      weights: {C1@sleep: 0.5, C1@mobility: 0.5}
      transitions: {C1@sleep: {C2@sleep: 1}, C1@mobility: {C2@mobility: 1},
                    C2@sleep: {C1@mobility: 1}, C2@mobility: {C1@sleep: 1}}
  sequence: [P, S]
"""


def test_declared_families_resolve_with_their_gates(write_study):
    plan = load_plan(write_study(DECLARED)).plan
    families = {f.id: f for f in plan.families}
    assert [f.id for f in plan.families] == ["P", "Q", "M", "S"]
    # tested with the sequence first, in its order (a gate is decided before what it opens)
    assert [f.id for f in gate_order(plan.families)] == ["P", "S", "Q", "M"]
    assert families["P"].members == (Node("D1", "pain"),) and families["P"].gate is None
    assert families["S"].gate == "P" and families["S"].in_sequence
    assert families["Q"].gate is None and not families["Q"].in_sequence
    # members: outcomes in plan order, contrasts in plan order within each
    assert families["S"].members == (Node("C1", "sleep"), Node("C2", "sleep"),
                                     Node("C1", "mobility"), Node("C2", "mobility"))
    assert families["S"].weights == {Node("C1", "sleep"): 0.5, Node("C1", "mobility"): 0.5}
    assert families["S"].transitions[Node("C2", "sleep")] == {Node("C1", "mobility"): 1.0}
    assert families["M"].label == "all pairs of mobility"
    assert families["S"].node_name(Node("C1", "sleep")) == "C1@sleep"


def test_declared_families_leave_the_unused_top_level_keys_out_of_the_canonical_plan(write_study):
    canonical = json.loads(canonical_json(load_plan(write_study(DECLARED)).plan))
    assert set(canonical["multiplicity"]) == {"families", "sequence"}
    legacy = json.loads(canonical_json(load_plan(write_study(THREE.replace(
        "  - {id: C3, kind: pairwise, label: all pairs, outcomes: [mobility]}\n", ""))).plan))
    assert legacy["multiplicity"] == {"method": "holm", "scope": "per-outcome", "order": None}


def test_the_top_level_form_is_one_family_per_outcome(write_study):
    plan = load_plan(write_study(THREE.replace("kind: pairwise", "kind: helmert")
                                 + "multiplicity: {method: fixed-sequence, order: [C3, C2, C1, D1]}\n")).plan
    assert [(f.id, f.scope, f.method) for f in plan.families] == [
        ("pain", "per-outcome", "fixed-sequence"), ("sleep", "per-outcome", "fixed-sequence"),
        ("mobility", "per-outcome", "fixed-sequence")]
    # each outcome walks the registered order restricted to the contrasts that apply to it
    assert [f.order for f in plan.families] == [
        (Node("C1", "pain"), Node("D1", "pain")),
        (Node("C2", "sleep"), Node("C1", "sleep")),
        (Node("C3", "mobility"), Node("C2", "mobility"), Node("C1", "mobility"))]
    assert all(f.gate is None and not f.declared for f in plan.families)


def test_the_primary_family_scope_is_one_family_over_the_primary_outcomes(write_study):
    text = THREE.replace("role: secondary}\n  - {name: mobility", "role: primary}\n  - {name: mobility")
    plan = load_plan(write_study(text + "multiplicity: {scope: primary-family, method: bonferroni}\n")).plan
    assert [(f.id, f.scope) for f in plan.families] == [("primary-family", "primary-family"),
                                                        ("mobility", "per-outcome")]
    assert plan.families[0].members == (Node("D1", "pain"), Node("C1", "pain"), Node("C1", "sleep"),
                                        Node("C2", "sleep"))


def test_the_top_level_graph_is_one_graph_per_outcome(write_study):
    text = BASE + ("contrasts:\n"
                   "  - {id: C1, kind: custom, label: x, weights: {placebo: -1, high: 1}}\n"
                   "  - {id: C2, kind: custom, label: y, weights: {placebo: -1, low: 1}}\n"
                   "multiplicity: {method: graphical, weights: {C1: 1}, transitions: {C1: {C2: 1}}}\n")
    pain, sleep = load_plan(write_study(text)).plan.families
    assert pain.weights == {Node("C1", "pain"): 1.0}
    assert sleep.transitions == {Node("C1", "sleep"): {Node("C2", "sleep"): 1.0}}


CASES = [
    ("top-level keys beside families, ids, members, single-step and sequence entries",
     THREE + "multiplicity:\n  method: holm\n  scope: primary-family\n  families:\n"
             "    - {id: P, contrasts: [D1, C1, C9, E1], outcomes: [pain, sleep], method: dunnett}\n"
             "    - {id: P, contrasts: [C1, C2, C2], outcomes: [pain, sleep, sleeep], method: holm}\n"
             "    - {id: G, contrasts: [C3], outcomes: [pain], method: holm, order: [C3]}\n"
             "  sequence: [P, X, P]\n"
             "exploratory:\n  - {id: E1, kind: pairwise, label: e, reason: asked by the committee}\n",
     ["27: multiplicity.method: got 'holm' beside 'families'; allowed: no top-level 'method' when "
      "the plan declares families (each family states its own)",
      "28: multiplicity.scope: got 'primary-family' beside 'families'; allowed: no top-level "
      "'scope' when the plan declares families (each family states its own)",
      "29: multiplicity.families: got no family for 'C1' on 'mobility', 'C2' on 'mobility', 'C3' "
      "on 'mobility'; allowed: every registered contrast on every outcome it applies to in "
      "exactly one family",
      "30: multiplicity.families[0].contrasts[1]: got 'C1', a 'custom' contrast, in a family with "
      "method 'dunnett'; allowed: 'versus-control' contrasts only (give the others a family of "
      "their own)",
      "30: multiplicity.families[0].contrasts[2]: got 'C9'; allowed: one of the contrast ids 'D1', "
      "'C1', 'C2' or 'C3'",
      "30: multiplicity.families[0].contrasts[3]: got 'E1', an exploratory analysis; allowed: "
      "registered contrast ids only (exploratory analyses are never adjusted with the plan)",
      "30: multiplicity.families[0].outcomes: got 2 outcomes with method 'dunnett'; allowed: one "
      "outcome (its simultaneous tests compare the levels of one outcome; declare a family per "
      "outcome)",
      "31: multiplicity.families[1].contrasts[0]: got 'C1', whose hypotheses on 'pain' and 'sleep' "
      "already belong to family 'P'; allowed: each contrast on each outcome in one family only",
      "31: multiplicity.families[1].contrasts[2]: got 'C2' again; each contrast id must be listed "
      "once (first at contrasts[1])",
      "31: multiplicity.families[1].id: got 'P' again; family ids must be unique (first at "
      "families[0])",
      "31: multiplicity.families[1].outcomes[2]: got 'sleeep'; allowed: one of the outcomes 'pain', "
      "'sleep' or 'mobility'; did you mean 'sleep'?",
      "32: multiplicity.families[2].contrasts[0]: got 'C3', which applies to 'mobility' only; "
      "allowed: a contrast that applies to at least one of the family's outcomes ('pain')",
      "32: multiplicity.families[2].order: got a list of 1 item with method 'holm'; allowed: "
      "'order' only with method 'fixed-sequence' (remove it, or choose that method)",
      "33: multiplicity.sequence[1]: got 'X'; allowed: one of the family ids 'P' or 'G'",
      "33: multiplicity.sequence[2]: got 'P' again; each family must be listed once (first at "
      "sequence[0])"]),
    ("nodes of an order and a graph; a gate on a family that does not control the FWER",
     THREE + "multiplicity:\n  families:\n"
             "    - {id: P, contrasts: [D1], outcomes: [pain], method: benjamini-hochberg}\n"
             "    - id: Q\n      contrasts: [C1, C3]\n      outcomes: [pain, mobility]\n"
             "      method: fixed-sequence\n      order: [C1, C3@mobility, C3@mobility, C1@sleep]\n"
             "    - id: S\n      contrasts: [C1, C2]\n      outcomes: [sleep]\n      method: graphical\n"
             "      weights: {C1: 0.7, C1@sleep: 0.1, C2@sleep: 0.5}\n"
             "      transitions: {C1: {C1@sleep: 1, C2: 0.5, C9: 0.6}, C2@mobility: {C1: 1}}\n"
             "    - id: T\n      contrasts: [C2, C3]\n      outcomes: [mobility]\n      method: graphical\n"
             "      weights: {C2: 1}\n"
             "  sequence: [P, Q]\n",
     ["33: multiplicity.families[1].order: got a list without 'C1@pain' and 'C1@mobility'; "
      "allowed: every node of the family exactly once",
      "33: multiplicity.families[1].order[0]: got 'C1', a contrast id in a family of several "
      "outcomes; allowed: 'C1@pain' or 'C1@mobility' ('contrast@outcome' names one node)",
      "33: multiplicity.families[1].order[2]: got 'C3@mobility' again; each node must be listed "
      "once (first at order[1])",
      "33: multiplicity.families[1].order[3]: got 'C1@sleep'; allowed: one of the family's nodes "
      "'C1@pain', 'C1@mobility' or 'C3@mobility'",
      "38: multiplicity.families[2].weights: got weights summing to 1.3; allowed: a sum of more "
      "than 0 and at most 1",
      "38: multiplicity.families[2].weights.C1@sleep: got 'C1@sleep', the node 'C1' names already; "
      "allowed: each node once",
      "39: multiplicity.families[2].transitions.C1: got shares summing to 2.1; allowed: at most 1 "
      "in all (a rejected node passes on at most its own level)",
      "39: multiplicity.families[2].transitions.C1.C1@sleep: got 'C1@sleep', the node itself; "
      "allowed: another node (a rejected node passes its level on to others)",
      "39: multiplicity.families[2].transitions.C1.C9: got 'C9'; allowed: one of the family's "
      "nodes 'C1' or 'C2'",
      "39: multiplicity.families[2].transitions.C2@mobility: got 'C2@mobility'; allowed: one of "
      "the family's nodes 'C1' or 'C2'",
      "41: multiplicity.families[3].contrasts[1]: got 'C3', a contrast of 3 hypotheses, in a "
      "family with method 'graphical'; allowed: contrasts of one hypothesis (custom, a trend of "
      "degree 1, or a comparison of two levels, without 'by'): each node of the graph is one "
      "hypothesis",
      "41: multiplicity.families[3].contrasts[1]: got 'C3', whose hypotheses on 'mobility' already "
      "belong to family 'Q'; allowed: each contrast on each outcome in one family only",
      "45: multiplicity.sequence[0]: got 'P', a family with method 'benjamini-hochberg'; allowed: "
      "families whose method controls the family-wise error rate (a gate passes on only that "
      "control), not 'none' or 'benjamini-hochberg'"]),
    ("a sequence without families",
     THREE + "multiplicity: {method: holm, sequence: [A, B]}\n",
     ["26: multiplicity.sequence: got a list of 2 items without 'families'; allowed: 'sequence' "
      "only with declared families (multiplicity.families), whose ids it lists"]),
    ("a node name of the wrong form, a sequence of one family, a family without contrasts",
     THREE + "multiplicity:\n  families:\n    - {id: P, contrasts: [], outcomes: [pain], method: holm,"
             " order: [C1@pain@x]}\n  sequence: [P]\n",
     ["27: multiplicity.families: got no family for 'D1' on 'pain', 'C1' on 'pain', 'C1' on "
      "'sleep', 'C1' on 'mobility', 'C2' on 'sleep', 'C2' on 'mobility', 'C3' on 'mobility'; "
      "allowed: every registered contrast on every outcome it applies to in exactly one family",
      "28: multiplicity.families[0].contrasts: got 0 items; allowed: at least 1 item",
      "28: multiplicity.families[0].order: got a list of 1 item with method 'holm'; allowed: "
      "'order' only with method 'fixed-sequence' (remove it, or choose that method)",
      "28: multiplicity.families[0].order[0]: got 'C1@pain@x'; allowed: a contrast id, or "
      "'contrast@outcome' (e.g. 'C1@pain')",
      "29: multiplicity.sequence: got 1 item; allowed: at least 2 items"]),
]


@pytest.mark.parametrize("text, lines", [c[1:] for c in CASES], ids=[c[0] for c in CASES])
def test_broken_family_plan_message(write_study, text, lines):
    assert_refused(write_study(text), lines)


def test_check_lists_each_family_its_graph_and_the_sequence(write_study):
    from appendix.preview import describe_contrasts

    lines = describe_contrasts(load_plan(write_study(DECLARED)).plan)
    assert lines[-6:] == [
        "family P: dunnett over D1@pain; 2 hypotheses",
        "family Q: holm over C1@pain; 1 hypothesis",
        "family M: bonferroni over C3@mobility; 3 hypotheses",
        "family S: graphical over C1@sleep, C2@sleep, C1@mobility, C2@mobility; 4 hypotheses; "
        "tested only if every hypothesis of family P is rejected",
        "graph of family S: weights C1@sleep 0.5, C1@mobility 0.5; transitions C1@sleep -> "
        "C2@sleep 1, C1@mobility -> C2@mobility 1, C2@sleep -> C1@mobility 1, C2@mobility -> "
        "C1@sleep 1",
        "serial gatekeeping: P -> S"]


def test_notes_on_families_tested_apart_and_families_without_control(write_study):
    from appendix.plan.lints import lint

    text = DECLARED.replace("outcomes: [pain], method: holm}", "outcomes: [pain], method: none}")
    text = text.replace("role: secondary}\n  - {name: mobility", "role: primary}\n  - {name: mobility")
    notes = {n.code: n for n in lint(load_plan(write_study(text)).plan)}
    assert notes["families-apart"].message == (
        "families 'Q' and 'M' are tested at the full alpha 0.05 apart from the other families: "
        "the family-wise error rate is controlled within each family, not across them; adding "
        "them to the gatekeeping sequence (multiplicity.sequence), or one graphical family over "
        "the hypotheses, controls it across families")
    assert "no-multiplicity-control" not in notes  # Q holds one primary hypothesis only
    unadjusted = THREE.replace("role: secondary}\n  - {name: mobility",
                               "role: primary}\n  - {name: mobility") + (
        "multiplicity:\n  families:\n"
        "    - {id: P, contrasts: [D1], outcomes: [pain], method: dunnett}\n"
        "    - {id: Q, contrasts: [C1], outcomes: [pain, sleep], method: none}\n"
        "    - {id: S, contrasts: [C1, C2, C3], outcomes: [mobility], method: holm}\n"
        "    - {id: T, contrasts: [C2], outcomes: [sleep], method: holm}\n")
    note = next(n for n in lint(load_plan(write_study(unadjusted)).plan)
                if n.code == "no-multiplicity-control")
    # 1 - 0.95^2 = 0.0975, the chance of a false rejection of two independent tests
    assert (note.path, note.message) == (
        "multiplicity.families[1].method",
        "method 'none' leaves the 2 hypotheses of family 'Q' unadjusted: the chance of at least "
        "one false rejection exceeds alpha 0.05 (0.098 if the 2 tests were independent)")
