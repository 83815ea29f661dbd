"""Broken contrasts, multiplicity, exploratory analyses and fallbacks: the exact messages.

Appended sections start on line 19 of BASE (20 of ORDERED, 18 of NO_CONTROL).
"""

from __future__ import annotations

import pytest

from tests.plan.plans import BASE, NO_CONTROL, ORDERED, assert_refused

LEVELS = "'placebo', 'low' or 'high'"
#: Three contrasts of one hypothesis each, lines 19 to 22 once appended to BASE.
GRAPH_CONTRASTS = ("contrasts:\n  - {id: C1, kind: custom, label: x, weights: {placebo: -1, high: 1}}\n"
                   "  - {id: C2, kind: custom, label: y, weights: {placebo: -1, low: 1}}\n"
                   "  - {id: C3, kind: custom, label: z, weights: {low: -1, high: 1}}\n")
FALLBACK = "assumptions:\n  fallbacks:\n    - {when: unequal-variance, test: %s, use: welch}\n"

CASES = [
    ("weight for an unknown level",
     BASE + "contrasts:\n  - {id: C1, kind: custom, label: x, weights: {placebo: -1, hihg: 1}}\n",
     [f"20: contrasts[0].weights.hihg: got 'hihg'; allowed: one of the levels {LEVELS}; "
      "did you mean 'high'?"]),
    ("weights not summing to zero",
     BASE + "contrasts:\n  - {id: C1, kind: custom, label: x, weights: {placebo: -2, low: 1, high: 1.5}}\n",
     ["20: contrasts[0].weights: got weights summing to 0.5; allowed: weights summing to 0 "
      "(levels not listed weigh 0)"]),
    ("weights all zero",
     BASE + "contrasts:\n  - {id: C1, kind: custom, label: x, weights: {placebo: 0, low: 0.0}}\n",
     ["20: contrasts[0].weights: got no weight other than 0; allowed: weights that are not "
      "all 0, summing to 0"]),
    ("weight not a number",
     BASE + "contrasts:\n  - {id: C1, kind: custom, label: x, weights: {placebo: -1, low: one}}\n",
     ["20: contrasts[0].weights.low: got 'one'; allowed: a number"]),
    ("weight infinite or a flag",
     BASE + "contrasts:\n  - {id: C1, kind: custom, label: x, weights: {placebo: .inf, low: true}}\n",
     ["20: contrasts[0].weights.low: got true; allowed: a number",
      "20: contrasts[0].weights.placebo: got inf; allowed: a number"]),
    ("weights near the float limit",
     BASE + "contrasts:\n  - {id: C1, kind: custom, label: x, weights: {placebo: 1e308, low: 1e308, high: 1e308}}\n",
     ["20: contrasts[0].weights: got weights summing to inf; allowed: weights summing to 0 "
      "(levels not listed weigh 0)"]),
    ("custom without weights",
     BASE + "contrasts:\n  - {id: C1, kind: custom, label: x}\n",
     ["20: contrasts[0].weights: required key is missing for kind 'custom' "
      "(a weight per level name, summing to 0)"]),
    ("weights on a pairwise contrast",
     BASE + "contrasts:\n  - {id: C1, kind: pairwise, label: x, weights: {placebo: 1, low: -1}}\n",
     ["20: contrasts[0].weights: got a mapping for kind 'pairwise'; allowed: 'weights' only "
      "with kind 'custom' (remove it)"]),
    ("spacing on a custom contrast",
     BASE + "contrasts:\n  - {id: C1, kind: custom, label: x, weights: {low: 1, high: -1},\n"
            "     spacing: [0, 1, 2]}\n",
     ["21: contrasts[0].spacing: got a list of 3 items for kind 'custom'; allowed: 'spacing' "
      "only with kind 'trend' (remove it)"]),
    ("degree on a helmert contrast",
     BASE + "contrasts:\n  - id: C1\n    kind: helmert\n    label: x\n    degree: 2\n",
     ["23: contrasts[0].degree: got 2 for kind 'helmert'; allowed: 'degree' only with kind "
      "'trend' (remove it)"]),
    ("trend over unordered levels",
     BASE + "contrasts:\n  - {id: C1, kind: trend, label: x}\n",
     ["20: contrasts[0].kind: got 'trend', but the factor 'arm' is not ordered; allowed: a "
      "trend only over a factor with 'ordered: true'"]),
    ("trend degree beyond k - 1",
     ORDERED + "contrasts:\n  - id: C1\n    kind: trend\n    label: x\n    degree: 3\n",
     ["24: contrasts[0].degree: got 3; allowed: a whole number from 1 to 2 (k - 1 for the "
      "3 levels)"]),
    ("trend degree zero",
     ORDERED + "contrasts:\n  - {id: C1, kind: trend, label: x, degree: 0}\n",
     ["21: contrasts[0].degree: got 0; allowed: a whole number at least 1"]),
    ("trend degree fractional",
     ORDERED + "contrasts:\n  - {id: C1, kind: trend, label: x, degree: 1.5}\n",
     ["21: contrasts[0].degree: got 1.5; allowed: a whole number at least 1"]),
    ("spacing of the wrong length",
     ORDERED + "contrasts:\n  - {id: C1, kind: trend, label: x, spacing: [0, 10]}\n",
     ["21: contrasts[0].spacing: got 2 numbers; allowed: 3 numbers, one per level in "
      "registered order"]),
    ("spacing not increasing",
     ORDERED + "contrasts:\n  - id: C1\n    kind: trend\n    label: x\n"
               "    spacing:\n      - 0\n      - 5\n      - 5\n",
     ["27: contrasts[0].spacing[2]: got 5 after 5; allowed: numbers strictly increasing in "
      "level order"]),
    ("spacing text",
     ORDERED + "contrasts:\n  - {id: C1, kind: trend, label: x, spacing: [0, low, 2]}\n",
     ["21: contrasts[0].spacing[1]: got 'low'; allowed: a number"]),
    ("versus control without a control level",
     NO_CONTROL + "contrasts:\n  - {id: C1, kind: versus-control, label: x}\n",
     ["19: contrasts[0].kind: got 'versus-control', but the factor 'arm' has no control "
      "level; allowed: 'versus-control' only when design.factors[0].control names one"]),
    ("one-sided without justification",
     BASE + "contrasts:\n  - {id: C1, kind: pairwise, label: x, alternative: less}\n",
     ["20: contrasts[0].alternative: got 'less' without a justification; allowed: a one-sided "
      "alternative only with 'justification' saying why, or 'two-sided'"]),
    ("unknown alternative",
     BASE + "contrasts:\n  - {id: C1, kind: pairwise, label: x, alternative: two-sdied}\n",
     ["20: contrasts[0].alternative: got 'two-sdied'; allowed: 'two-sided', 'greater' or "
      "'less'; did you mean 'two-sided'?"]),
    ("unknown kind",
     BASE + "contrasts:\n  - {id: C1, kind: pairwize, label: x}\n",
     ["20: contrasts[0].kind: got 'pairwize'; allowed: 'custom', 'pairwise', 'versus-control', "
      "'trend' or 'helmert'; did you mean 'pairwise'?"]),
    ("unknown contrast key",
     BASE + "contrasts:\n  - {id: C1, kind: pairwise, label: x, outcome: [pain]}\n",
     ["20: contrasts[0].outcome: unknown key; did you mean 'outcomes'?"]),
    ("missing label",
     BASE + "contrasts:\n  - {id: C1, kind: pairwise}\n",
     ["20: contrasts[0].label: required key is missing (The contrast in prose.)"]),
    ("contrast id with a colon",
     BASE + "contrasts:\n  - {id: 'C1:a', kind: pairwise, label: x}\n",
     ["20: contrasts[0].id: got 'C1:a'; allowed: 1 to 32 letters, digits, '.', '_' or '-', "
      "starting with a letter"]),
    ("id repeated across contrasts and exploratory",
     BASE + "contrasts:\n  - {id: C1, kind: pairwise, label: x}\n"
            "exploratory:\n  - {id: C1, kind: helmert, label: y, reason: asked after unblinding}\n",
     ["22: exploratory[0].id: got 'C1' again; ids of contrasts and exploratory analyses must be "
      "unique (first at contrasts[0])"]),
    ("outcome not in the plan",
     BASE + "contrasts:\n  - {id: C1, kind: pairwise, label: x, outcomes: [pain, slep]}\n",
     ["20: contrasts[0].outcomes[1]: got 'slep'; allowed: one of the outcomes 'pain' or "
      "'sleep'; did you mean 'sleep'?"]),
    ("outcome named twice",
     BASE + "contrasts:\n  - {id: C1, kind: pairwise, label: x, outcomes: [pain, pain]}\n",
     ["20: contrasts[0].outcomes[1]: got 'pain' again; each outcome must be named once "
      "(first at outcomes[0])"]),
    ("factor not the design's",
     BASE + "contrasts:\n  - {id: C1, kind: pairwise, label: x, factor: dose}\n",
     ["20: contrasts[0].factor: got 'dose'; allowed: 'arm', the factor of the design"]),
    ("tukey with a custom contrast",
     BASE + "contrasts:\n  - {id: C1, kind: pairwise, label: x}\n"
            "  - {id: C2, kind: custom, label: y, weights: {low: 1, high: -1}}\n"
            "multiplicity: {method: tukey}\n",
     ["21: contrasts[1].kind: got 'custom' under multiplicity method 'tukey'; allowed: only "
      "'pairwise' contrasts, one per outcome (or declare multiplicity.families: a 'tukey' family "
      "beside families of other methods for the other contrasts)"]),
    ("tukey with two pairwise contrasts on one outcome",
     BASE + "contrasts:\n  - {id: C1, kind: pairwise, label: x, outcomes: [pain]}\n"
            "  - {id: C2, kind: pairwise, label: y, outcomes: [sleep]}\n"
            "  - {id: C3, kind: pairwise, label: z, outcomes: [sleep, pain]}\n"
            "multiplicity: {method: tukey}\n",
     ["22: contrasts[2].kind: got a second 'pairwise' contrast for outcome 'pain' (first at "
      "contrasts[0]) under multiplicity method 'tukey'; allowed: one 'pairwise' contrast per outcome"]),
    ("dunnett with a pairwise contrast",
     BASE + "contrasts:\n  - {id: C1, kind: pairwise, label: x}\n"
            "multiplicity: {method: dunnett}\n",
     ["20: contrasts[0].kind: got 'pairwise' under multiplicity method 'dunnett'; allowed: only "
      "'versus-control' contrasts, one per outcome (or declare multiplicity.families: a 'dunnett' family "
      "beside families of other methods for the other contrasts)"]),
    ("dunnett across the primary family",
     BASE + "contrasts:\n  - {id: C1, kind: versus-control, label: x}\n"
            "multiplicity: {method: dunnett, scope: primary-family}\n",
     ["21: multiplicity.scope: got 'primary-family' with method 'dunnett'; allowed: "
      "'per-outcome' (its simultaneous tests compare the levels of one outcome)"]),
    ("unknown multiplicity method",
     BASE + "multiplicity: {method: holms}\n",
     ["19: multiplicity.method: got 'holms'; allowed: 'none', 'bonferroni', 'holm', 'hochberg', "
      "'sidak', 'benjamini-hochberg', 'tukey', 'dunnett', 'fixed-sequence' or 'graphical'; did you "
      "mean 'holm'?"]),
    ("fixed sequence without order",
     BASE + "contrasts:\n  - {id: C1, kind: helmert, label: x}\n"
            "multiplicity: {method: fixed-sequence}\n",
     ["21: multiplicity.order: required key is missing for method 'fixed-sequence' (every "
      "contrast id exactly once, in testing order)"]),
    ("fixed sequence order: unknown, repeated, exploratory and missing ids",
     BASE + "contrasts:\n  - {id: C1, kind: helmert, label: x}\n"
            "  - {id: C2, kind: pairwise, label: y}\n  - {id: C3, kind: versus-control, label: z}\n"
            "exploratory:\n  - {id: E1, kind: pairwise, label: e, reason: asked by the committee}\n"
            "multiplicity:\n  method: fixed-sequence\n  order: [C1, C1, C4, E1]\n",
     ["27: multiplicity.order: got a list without 'C2' and 'C3'; allowed: every contrast id "
      "exactly once",
      "27: multiplicity.order[1]: got 'C1' again; each contrast id must be listed once (first "
      "at order[0])",
      "27: multiplicity.order[2]: got 'C4'; allowed: one of the contrast ids 'C1', 'C2' or 'C3'",
      "27: multiplicity.order[3]: got 'E1', an exploratory analysis; allowed: registered "
      "contrast ids only (exploratory analyses are never adjusted with the plan)"]),
    ("order with another method",
     BASE + "contrasts:\n  - {id: C1, kind: helmert, label: x}\n"
            "multiplicity: {method: holm, order: [C1]}\n",
     ["21: multiplicity.order: got a list of 1 item with method 'holm'; allowed: 'order' only "
      "with method 'fixed-sequence' (remove it, or choose that method)"]),
    ("order with an unknown method is not reported twice",
     BASE + "contrasts:\n  - {id: C1, kind: helmert, label: x}\n"
            "multiplicity: {method: sequence, order: [C1]}\n",
     ["21: multiplicity.method: got 'sequence'; allowed: 'none', 'bonferroni', 'holm', "
      "'hochberg', 'sidak', 'benjamini-hochberg', 'tukey', 'dunnett', 'fixed-sequence' or "
      "'graphical'; did you mean 'fixed-sequence'?"]),
    ("graphical without weights",
     BASE + "contrasts:\n  - {id: C1, kind: custom, label: x, weights: {placebo: -1, low: 1}}\n"
            "multiplicity: {method: graphical}\n",
     ["21: multiplicity.weights: required key is missing for method 'graphical' (each "
      "contrast's initial share of alpha, summing to at most 1)"]),
    ("graphical weights and transitions: unknown, exploratory, negative, self and sums",
     BASE + GRAPH_CONTRASTS +
     "exploratory:\n  - {id: E1, kind: pairwise, label: e, reason: asked by the committee}\n"
     "multiplicity:\n  method: graphical\n  weights: {C1: 0.7, C2: 0.5}\n"
     "  transitions:\n    C1: {C1: 0.5, C3: 0.6}\n    C2: {C1: -1, E1: 0.5}\n    C4: {C1: 1}\n"
     "    C3: 5\n",
     ["27: multiplicity.weights: got weights summing to 1.2; allowed: a sum of more than 0 and "
      "at most 1",
      "29: multiplicity.transitions.C1: got shares summing to 1.1; allowed: at most 1 in all (a "
      "rejected contrast passes on at most its own level)",
      "29: multiplicity.transitions.C1.C1: got 'C1', the contrast itself; allowed: another "
      "contrast (a rejected contrast passes its level on to others)",
      "30: multiplicity.transitions.C2.C1: got -1; allowed: a number from 0 to 1",
      "30: multiplicity.transitions.C2.E1: got 'E1', an exploratory analysis; allowed: "
      "registered contrast ids only (exploratory analyses are never adjusted with the plan)",
      "31: multiplicity.transitions.C4: got 'C4'; allowed: one of the contrast ids 'C1', 'C2' "
      "or 'C3'",
      "32: multiplicity.transitions.C3: got 5; allowed: a mapping"]),
    ("graphical weights all zero, or for an unknown id",
     BASE + GRAPH_CONTRASTS + "multiplicity: {method: graphical, weights: {C1: 0, C9: 0.0}}\n",
     ["23: multiplicity.weights: got no weight other than 0; allowed: a sum of more than 0 and "
      "at most 1 (with none, no hypothesis could ever be rejected)",
      "23: multiplicity.weights.C9: got 'C9'; allowed: one of the contrast ids 'C1', 'C2' or "
      "'C3'"]),
    ("graphical over contrasts of several hypotheses, some outcomes, the primary family",
     BASE + "contrasts:\n  - {id: C1, kind: pairwise, label: x}\n"
            "  - {id: C2, kind: custom, label: y, weights: {placebo: -1, low: 1}, outcomes: [pain]}\n"
            "multiplicity: {method: graphical, scope: primary-family, weights: {C1: 1}}\n",
     ["20: contrasts[0].kind: got 'pairwise', a contrast of 3 hypotheses, under multiplicity "
      "method 'graphical'; allowed: a contrast of one hypothesis (custom, a trend of degree 1, "
      "or a comparison of two levels, without 'by'): each contrast is one node of the graph",
      "21: contrasts[1].outcomes: got a list without 'sleep' under multiplicity method "
      "'graphical'; allowed: every outcome (or no 'outcomes'): each outcome is tested with the "
      "whole graph",
      "22: multiplicity.scope: got 'primary-family' with method 'graphical'; allowed: "
      "'per-outcome' (each contrast id is one node of the graph, tested on each outcome apart)"]),
    ("weights and transitions with another method",
     BASE + "contrasts:\n  - {id: C1, kind: helmert, label: x}\n"
            "multiplicity: {method: holm, weights: {C1: 1}, transitions: {}}\n",
     ["21: multiplicity.transitions: got a mapping with method 'holm'; allowed: 'transitions' "
      "only with method 'graphical' (remove it, or choose that method)",
      "21: multiplicity.weights: got a mapping with method 'holm'; allowed: 'weights' only with "
      "method 'graphical' (remove it, or choose that method)"]),
    ("unknown scope",
     BASE + "multiplicity: {scope: all}\n",
     ["19: multiplicity.scope: got 'all'; allowed: 'per-outcome' or 'primary-family'"]),
    ("exploratory without a reason",
     BASE + "exploratory:\n  - {id: E1, kind: pairwise, label: e}\n",
     ["20: exploratory[0].reason: required key is missing (Why it is run although not "
      "pre-registered.)"]),
    ("exploratory checked as a contrast",
     BASE + "exploratory:\n  - {id: E1, kind: pairwise, label: e, reason: r, alternative: greater,\n"
            "     outcomes: [pains]}\n",
     ["20: exploratory[0].alternative: got 'greater' without a justification; allowed: a "
      "one-sided alternative only with 'justification' saying why, or 'two-sided'",
      "21: exploratory[0].outcomes[0]: got 'pains'; allowed: one of the outcomes 'pain' or "
      "'sleep'; did you mean 'pain'?"]),
    ("fallback on a test the plan does not compute",
     BASE + "assumptions:\n  equal_variance: [bartlett]\n  fallbacks:\n"
            "    - {when: unequal-variance, test: brown-forsythe, use: welch}\n",
     ["22: assumptions.fallbacks[0].test: got 'brown-forsythe', but assumptions.equal_variance "
      "does not register it; allowed: a test the plan computes (add it to "
      "assumptions.equal_variance)"]),
    ("fallback on normality when none is computed",
     BASE + "assumptions:\n  normality: none\n  fallbacks:\n"
            "    - {when: non-normal, test: shapiro-wilk, use: rank-based}\n",
     ["22: assumptions.fallbacks[0].test: got 'shapiro-wilk', but assumptions.normality does "
      "not register it; allowed: a test the plan computes (add it to assumptions.normality)"]),
    ("fallback test of the other assumption",
     BASE + FALLBACK % "shapiro-wilk",
     ["21: assumptions.fallbacks[0].test: got 'shapiro-wilk' for when 'unequal-variance'; "
      "allowed: 'brown-forsythe' or 'bartlett'"]),
    ("fallback with a robust primary analysis",
     BASE + FALLBACK % "bartlett" + "analysis: {method: rank-based}\n",
     ["20: assumptions.fallbacks: got a list of 1 item with analysis method 'rank-based'; "
      "allowed: fallbacks only with analysis method 'classical' (the robust analysis is "
      "already registered)"]),
    ("fallback threshold out of range",
     BASE + "assumptions:\n  fallbacks:\n"
            "    - {when: non-normal, test: shapiro-wilk, use: rank-based, threshold: 5}\n",
     ["21: assumptions.fallbacks[0].threshold: got 5; allowed: a number greater than 0 and "
      "less than 1"]),
    ("fallback to an unknown analysis",
     BASE + FALLBACK.replace("welch", "welsh") % "bartlett",
     ["21: assumptions.fallbacks[0].use: got 'welsh'; allowed: 'welch' or 'rank-based'; "
      "did you mean 'welch'?"]),
    ("unknown analysis method",
     BASE + "analysis: {method: parametric}\n",
     ["19: analysis.method: got 'parametric'; allowed: 'classical', 'welch' or 'rank-based'"]),
]


@pytest.mark.parametrize("text, lines", [c[1:] for c in CASES], ids=[c[0] for c in CASES])
def test_broken_contrast_message(write_study, text, lines):
    assert_refused(write_study(text), lines)
