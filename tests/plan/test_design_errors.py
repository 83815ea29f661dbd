"""Broken designs beyond one factor: the exact messages, with file:line and key path.

FACTORIAL's appended sections start on line 23, BLOCKED's on 21, BASE's on 19.
"""

from __future__ import annotations

import pytest

from tests.plan.plans import (BASE, BLOCKED, FACTORIAL, FACTORIAL_EXTENT, assert_refused,
                              variant)

FACTORS = "'coating', 'variety', 'field_block' or 'visit'"
CONTRASTABLE = "'coating', 'variety' or 'visit'"
BY_COATING = "a treatment or within factor other than 'coating': 'variety' or 'visit'"
TYPES = "allowed: 1, 2 or 3 (the types differ once there is more than one term)"
ONE_WAY = "for one treatment factor and nothing else: no second factor, block, covariate or within factor"


def factorial(old: str, new: str) -> str:
    return variant(old, new, FACTORIAL)


def contrast(entry: str, base: str = FACTORIAL) -> str:
    return base + f"contrasts:\n  - {{{entry}}}\n"


CASES = [
    # Roles.
    ("unknown role", factorial("role: block", "role: nuisance"),
     ["12: design.factors[2].role: got 'nuisance'; allowed: 'treatment', 'block' or 'within'"]),
    ("block with a control and an order",
     factorial("levels: [B1, B2, B3, B4]}", "levels: [B1, B2, B3, B4], control: B1, ordered: true}"),
     ["12: design.factors[2].control: got 'B1' for the block 'field_block'; allowed: no control "
      "on a block (remove it)",
      "12: design.factors[2].ordered: got true for the block 'field_block'; allowed: false (a "
      "block's levels are not ordered; remove it)"]),
    ("no treatment factor", variant("      control: placebo\n", "      role: block\n"),
     ["12: design.factors: got only factors with role 'block'; allowed: at least one factor "
      "with role 'treatment' (the default) or 'within'"]),
    ("factor names repeated",
     factorial("{name: field_block,", "{name: variety,"),
     ["12: design.factors[2].name: got 'variety' again; factor names must be unique (first at "
      "factors[1])"]),
    ("block with too few levels", factorial("[B1, B2, B3, B4]", "[B1]"),
     ["12: design.factors[2].levels: got 1 item; allowed: at least 2 items"]),
    # Interactions.
    ("interaction of an unknown factor", factorial("[coating, variety]", "[coating, varity]"),
     [f"15: design.interactions[0][1]: got 'varity'; allowed: one of the factors {FACTORS}; "
      "did you mean 'variety'?"]),
    ("interaction of one factor", factorial("[coating, variety]", "[coating]"),
     ["15: design.interactions[0]: got 1 item; allowed: at least 2 items"]),
    ("interaction naming a factor twice", factorial("[coating, variety]", "[coating, coating]"),
     ["15: design.interactions[0][1]: got 'coating' again; each factor is named once in an "
      "interaction (first at interactions[0][0])"]),
    ("interaction listed twice", factorial("    - [coating, visit]\n",
                                           "    - [coating, visit]\n    - [visit, coating]\n"),
     ["17: design.interactions[2]: got [visit, coating] again; allowed: each interaction listed "
      "once, in any order (first at interactions[1])"]),
    ("interaction without a lower-order one",
     factorial("    - [coating, visit]\n", "    - [coating, visit]\n    - [visit, variety, coating]\n"),
     ["17: design.interactions[2]: got [coating, variety, visit] without [variety, visit]; "
      "allowed: an interaction only with every lower-order interaction it contains listed too "
      "(add them)"]),
    ("four-factor interaction without several lower-order ones",
     factorial("    - [coating, visit]\n",
               "    - [coating, visit]\n    - [coating, variety, field_block, visit]\n"),
     ["17: design.interactions[2]: got [coating, variety, field_block, visit] without "
      "[coating, field_block], [variety, field_block], [variety, visit], [field_block, visit], "
      "[coating, variety, field_block], [coating, variety, visit], [coating, field_block, visit] "
      "and [variety, field_block, visit]; allowed: an interaction only with every lower-order "
      "interaction it contains listed too (add them)"]),
    ("covariate in an interaction", factorial("[coating, variety]", "[coating, baseline]"),
     ["15: design.interactions[0][1]: got 'baseline', a covariate; allowed: factor names only "
      "(covariates interact with nothing; the homogeneity-of-slopes check is run on its own)"]),
    ("interactions not a list", factorial("    - [coating, variety]\n    - [coating, visit]\n",
                                          "    coating: variety\n"),
     ["14: design.interactions: got a mapping; allowed: a list, written [a, b] or as '- item' lines"]),
    # Covariates.
    ("covariate repeated and without a label",
     factorial("unit: g}\n", "unit: g}\n    - {name: baseline, column: mass0}\n"),
     ["19: design.covariates[1].label: required key is missing (Name of the measurement in prose.)",
      "19: design.covariates[1].name: got 'baseline' again; covariate names must be unique "
      "(first at covariates[0])"]),
    ("covariate name not an identifier", factorial("{name: baseline,", "{name: 2nd,"),
     ["18: design.covariates[0].name: got '2nd'; allowed: 1 to 63 letters, digits or '_', "
      "starting with a letter"]),
    ("covariate column is the unit column", factorial("column: baseline_mass", "column: plot"),
     ["18: design.covariates[0].column: got 'plot', which is the unit column; a covariate must "
      "be a column of its own"]),
    ("covariate column is a factor column", factorial("column: baseline_mass", "column: variety"),
     ["18: design.covariates[0].column: got 'variety', which is a factor column; a covariate "
      "must be a column of its own"]),
    ("covariate column is an outcome column",
     factorial("{name: baseline, column: baseline_mass,", "{name: mass,"),
     ["18: design.covariates[0].name: got 'mass', which is an outcome column; a covariate must "
      "be a column of its own"]),
    ("two covariates on one column",
     factorial("unit: g}\n", "unit: g}\n    - {name: start, column: baseline_mass, label: Start}\n"),
     ["19: design.covariates[1].column: got 'baseline_mass', which is a covariate column; a "
      "covariate must be a column of its own"]),
    ("covariate named as a factor", factorial("{name: baseline,", "{name: visit,"),
     ["18: design.covariates[0].name: got 'visit', which names a factor; allowed: a name of its "
      "own (terms are named by it)"]),
    ("covariate for an outcome the plan does not register",
     factorial("unit: g}\n", "unit: g, outcomes: [mas, mass, mass]}\n"),
     ["18: design.covariates[0].outcomes[0]: got 'mas'; allowed: one of the outcomes 'mass' or "
      "'height'; did you mean 'mass'?",
      "18: design.covariates[0].outcomes[2]: got 'mass' again; each outcome must be named once "
      "(first at outcomes[1])"]),
    ("covariate for no outcome", factorial("unit: g}\n", "unit: g, outcomes: []}\n"),
     ["18: design.covariates[0].outcomes: got 0 items; allowed: at least 1 item"]),
    # Sums of squares.
    ("sums of squares missing", factorial("  sums_of_squares: 2\n", ""),
     [f"8: design.sums_of_squares: required key is missing for a design with {FACTORIAL_EXTENT}; "
      f"{TYPES}"]),
    ("sums of squares missing with a covariate",
     variant("      control: placebo\n",
             "      control: placebo\n  covariates: [{name: age, label: Age at entry}]\n"),
     [f"11: design.sums_of_squares: required key is missing for a design with a treatment factor "
      f"and a covariate; {TYPES}"]),
    ("sums of squares type 4", factorial("sums_of_squares: 2", "sums_of_squares: 4"),
     ["19: design.sums_of_squares: got 4; allowed: 1, 2 or 3"]),
    ("sums of squares as a decimal", factorial("sums_of_squares: 2", "sums_of_squares: 2.0"),
     ["19: design.sums_of_squares: got 2.0; allowed: 1, 2 or 3"]),
    ("sums of squares as text", factorial("sums_of_squares: 2", "sums_of_squares: '2'"),
     ["19: design.sums_of_squares: got '2'; allowed: 1, 2 or 3"]),
    ("sums of squares as a flag", factorial("sums_of_squares: 2", "sums_of_squares: true"),
     ["19: design.sums_of_squares: got true; allowed: 1, 2 or 3"]),
    # Repeated measures.
    ("repeated without a within factor", BASE + "repeated: {missing: complete-units}\n",
     ["19: repeated: got a mapping, but the design has no within factor; allowed: 'repeated' "
      "only with a factor of role 'within' (remove it)"]),
    ("unknown rule for missing repeated observations",
     FACTORIAL + "repeated: {missing: last-observation}\n",
     ["23: repeated.missing: got 'last-observation'; allowed: 'complete-units'"]),
    # The factor of a contrast.
    ("contrast without its factor", contrast("id: C1, kind: pairwise, label: x"),
     ["24: contrasts[0].factor: required key is missing for a design with more than one "
      f"treatment or within factor; allowed: {CONTRASTABLE}"]),
    ("contrast on a block", contrast("id: C1, kind: pairwise, label: x, factor: field_block"),
     ["24: contrasts[0].factor: got 'field_block', a block; allowed: one of the treatment or "
      f"within factors {CONTRASTABLE} (blocks have no contrasts)"]),
    ("contrast on an unknown factor", contrast("id: C1, kind: pairwise, label: x, factor: coatings"),
     [f"24: contrasts[0].factor: got 'coatings'; allowed: one of the treatment or within factors "
      f"{CONTRASTABLE}; did you mean 'coating'?"]),
    ("contrast on the block of a blocked one-factor design",
     contrast("id: C1, kind: pairwise, label: x, factor: site", BLOCKED),
     ["22: contrasts[0].factor: got 'site', a block; allowed: 'arm', the design's only "
      "treatment or within factor (blocks have no contrasts)"]),
    ("weights checked against the named factor",
     contrast("id: C1, kind: custom, label: x, factor: variety, weights: {early: 1, lat: -1}"),
     ["24: contrasts[0].weights.lat: got 'lat'; allowed: one of the levels 'early' or 'late'; "
      "did you mean 'late'?"]),
    ("trend on an unordered named factor", contrast("id: C1, kind: trend, label: x, factor: coating"),
     ["24: contrasts[0].kind: got 'trend', but the factor 'coating' is not ordered; allowed: a "
      "trend only over a factor with 'ordered: true'"]),
    ("trend spacing checked against the named factor",
     contrast("id: C1, kind: trend, label: x, factor: visit, spacing: [7, 14]"),
     ["24: contrasts[0].spacing: got 2 numbers; allowed: 3 numbers, one per level in registered "
      "order"]),
    ("versus control on a factor without a control",
     contrast("id: C1, kind: versus-control, label: x, factor: variety"),
     ["24: contrasts[0].kind: got 'versus-control', but the factor 'variety' has no control level; "
      "allowed: 'versus-control' only when design.factors[1].control names one"]),
    # Simple effects.
    ("by an unknown factor", contrast("id: C1, kind: pairwise, label: x, factor: coating, by: varity"),
     [f"24: contrasts[0].by: got 'varity'; allowed: {BY_COATING}; did you mean 'variety'?"]),
    ("by the contrast's own factor",
     contrast("id: C1, kind: pairwise, label: x, factor: coating, by: coating"),
     [f"24: contrasts[0].by: got 'coating', the contrast's own factor; allowed: {BY_COATING}"]),
    ("by a block", contrast("id: C1, kind: pairwise, label: x, factor: coating, by: field_block"),
     ["24: contrasts[0].by: got 'field_block', a block (blocks have no simple effects); "
      f"allowed: {BY_COATING}"]),
    ("by in a one-factor design", contrast("id: C1, kind: pairwise, label: x, by: arm", BASE),
     ["20: contrasts[0].by: got 'arm', the contrast's own factor; allowed: no 'by' in a design "
      "without a second treatment or within factor (remove it)"]),
    ("by on an exploratory analysis",
     FACTORIAL + "exploratory:\n  - {id: E1, kind: pairwise, label: x, factor: visit, by: visit,\n"
                 "     reason: asked by the committee}\n",
     ["24: exploratory[0].by: got 'visit', the contrast's own factor; allowed: a treatment or "
      "within factor other than 'visit': 'coating' or 'variety'"]),
    # Analyses for one-way designs only.
    ("welch beyond one factor", FACTORIAL + "analysis: {method: welch}\n",
     [f"23: analysis.method: got 'welch' for a design with {FACTORIAL_EXTENT}; allowed: "
      f"'classical' (the welch analysis is {ONE_WAY})"]),
    ("rank-based with a block", BLOCKED + "analysis: {method: rank-based}\n",
     ["21: analysis.method: got 'rank-based' for a design with a treatment factor and a block "
      f"factor; allowed: 'classical' (the rank-based analysis is {ONE_WAY})"]),
    ("fallbacks with a block",
     BLOCKED + "assumptions:\n  fallbacks:\n    - {when: non-normal, test: shapiro-wilk, use: rank-based}\n",
     ["22: assumptions.fallbacks: got a list of 1 item for a design with a treatment factor and a "
      f"block factor; allowed: fallbacks only {ONE_WAY}"]),
]


@pytest.mark.parametrize("text, lines", [c[1:] for c in CASES], ids=[c[0] for c in CASES])
def test_broken_design_message(write_study, text, lines):
    assert_refused(write_study(text), lines)
