"""Lints: plan choices the literature warns against, as exact notes (never refusals)."""

from __future__ import annotations

import pytest

from appendix.plan.lints import Note, lint
from appendix.plan.load import load_plan
from tests.plan.plans import BASE, variant

# The references are the ones the contract names (recalled, not read, here).
PRE_TEST_VARIANCE = Note(
    "pre-test-fallback", "assumptions.fallbacks[0]",
    "the switch to the welch analysis when brown-forsythe gives p < 0.05 is a two-stage rule: "
    "choosing the test by a pre-test distorts its type I error rate and power; consider "
    "registering analysis.method: welch outright",
    "Zimmerman 2004, Br J Math Stat Psychol 57:173-181; "
    "Delacre, Leys, Mora & Lakens 2019, Int Rev Soc Psychol 32(1):13")
PRE_TEST_NORMALITY = Note(
    "pre-test-fallback", "assumptions.fallbacks[1]",
    "the switch to the rank-based analysis when shapiro-wilk gives p < 0.01 is a two-stage "
    "rule: choosing the test by a pre-test distorts its type I error rate and power; consider "
    "registering analysis.method: welch outright",
    "Rochon, Gondan & Kieser 2012, BMC Med Res Methodol 12:81; "
    "Delacre, Leys, Mora & Lakens 2019, Int Rev Soc Psychol 32(1):13")

FALLBACKS = """\
assumptions:
  fallbacks:
    - {when: unequal-variance, test: brown-forsythe, use: welch}
    - {when: non-normal, test: shapiro-wilk, threshold: 0.01, use: rank-based}
"""


def _notes(write_study, text: str) -> tuple[Note, ...]:
    return lint(load_plan(write_study(BASE + text)).plan)


def test_plain_plan_has_no_notes(write_study):
    assert _notes(write_study, "") == ()


def test_every_fallback_is_a_two_stage_rule(write_study):
    assert _notes(write_study, FALLBACKS) == (PRE_TEST_VARIANCE, PRE_TEST_NORMALITY)


def test_no_multiplicity_control_on_a_primary_outcome(write_study):
    text = ("contrasts:\n  - {id: C1, kind: pairwise, label: all pairs}\n"
            "  - {id: C2, kind: custom, label: x, weights: {low: 1, high: -1}, outcomes: [sleep]}\n"
            "multiplicity: {method: none}\n")
    # 3 pairs of 3 levels on 'pain' (primary); 'sleep' is secondary, so no note for it.
    # 1 - (1 - 0.05)^3 = 0.142625 (arithmetic).
    assert _notes(write_study, text) == (Note(
        "no-multiplicity-control", "multiplicity.method",
        "method 'none' leaves the 3 hypotheses of primary outcome 'pain' unadjusted: the chance "
        "of at least one false rejection exceeds alpha 0.05 (0.143 if the 3 tests were independent)",
        "ICH E9 1998, section 5.6; EMA 2017, guideline on multiplicity issues in clinical trials, "
        "EMA/CHMP/44762/2017"),)


@pytest.mark.parametrize("text", [
    "contrasts:\n  - {id: C1, kind: custom, label: x, weights: {low: 1, high: -1}}\n"
    "multiplicity: {method: none}\n",                                    # one hypothesis
    "contrasts:\n  - {id: C1, kind: pairwise, label: x, outcomes: [sleep]}\n"
    "multiplicity: {method: none}\n",                                    # secondary outcome only
    "contrasts:\n  - {id: C1, kind: pairwise, label: x}\nmultiplicity: {method: bonferroni}\n",
    "exploratory:\n  - {id: E1, kind: pairwise, label: x, reason: r}\nmultiplicity: {method: none}\n",
])
def test_no_multiplicity_note_when_not_needed(write_study, text):
    assert _notes(write_study, text) == ()


def test_no_multiplicity_control_over_the_primary_family(write_study):
    # Two primary outcomes with one hypothesis each form one unadjusted family of 2;
    # 1 - 0.95^2 = 0.0975 (arithmetic).
    text = ("contrasts:\n  - {id: C1, kind: custom, label: x, weights: {low: 1, high: -1}}\n"
            "multiplicity: {method: none, scope: primary-family}\n")
    notes = lint(load_plan(write_study(BASE.replace("role: secondary", "role: primary") + text)).plan)
    assert [n.message for n in notes] == [
        "method 'none' leaves the 2 hypotheses of the primary family ('pain', 'sleep') "
        "unadjusted: the chance of at least one false rejection exceeds alpha 0.05 "
        "(0.098 if the 2 tests were independent)"]


def test_one_sided_tests_in_contrasts_and_exploratory(write_study):
    text = ("contrasts:\n  - {id: C1, kind: versus-control, label: x, alternative: greater,"
            " justification: only an increase matters}\n"
            "exploratory:\n  - {id: E1, kind: helmert, label: y, alternative: less, justification: j,"
            " reason: r}\n")
    notes = _notes(write_study, text)
    assert [(n.code, n.path) for n in notes] == [("one-sided", "contrasts[0].alternative"),
                                                ("one-sided", "exploratory[0].alternative")]
    assert notes[0].message == (
        "C1 is tested one-sided (greater) at the registered alpha 0.05; the regulatory convention "
        "is a one-sided level of half the two-sided alpha (0.025); the appendix states the level used")
    assert notes[1].message.startswith("E1 is tested one-sided (less) at the registered alpha 0.05;")
    assert {n.reference for n in notes} == {"ICH E9 1998, section 5.5"}


def test_notes_in_file_order_and_as_text(write_study):
    text = FALLBACKS + ("contrasts:\n  - {id: C1, kind: pairwise, label: x, alternative: less,"
                        " justification: j}\nmultiplicity: {method: none}\n")
    notes = _notes(write_study, text)
    assert [n.code for n in notes] == ["pre-test-fallback", "pre-test-fallback",
                                       "no-multiplicity-control", "one-sided"]
    assert str(notes[3]) == (
        "contrasts[0].alternative: C1 is tested one-sided (less) at the registered alpha 0.05; "
        "the regulatory convention is a one-sided level of half the two-sided alpha (0.025); "
        "the appendix states the level used (see ICH E9 1998, section 5.5)")


# Larger designs. The references are recalled from memory, not read here.
SEQUENTIAL = Note(
    "sequential-sums-of-squares", "design.sums_of_squares",
    "type 1 sums of squares depend on the order of the terms: each term is adjusted for the "
    "terms before it only; the order used is baseline, field_block, coating, variety, "
    "coating x variety (covariates, blocks, treatment factors, then interactions); register "
    "type 2 or 3 unless this order is itself part of the hypotheses",
    "Langsrud 2003, Stat Comput 13:163-167; Fox 2016, Applied Regression Analysis and "
    "Generalized Linear Models, 3rd ed., Sage")
COMMON_SLOPE = Note(
    "covariate-common-slope", "design.covariates[0]",
    "baseline is adjusted for with one slope common to every treatment cell (the model has no "
    "covariate x treatment term); the homogeneity-of-slopes check (the covariate x treatment "
    "interaction, as a diagnostic) is always run and reported, and clearly different slopes "
    "make the adjusted differences depend on the covariate value",
    "Huitema 2011, The Analysis of Covariance and Alternatives, 2nd ed., Wiley")


def test_type_1_and_a_covariate_are_noted(write_study):
    from tests.plan.plans import FACTORIAL

    text = FACTORIAL.replace("sums_of_squares: 2", "sums_of_squares: 1")
    assert lint(load_plan(write_study(text)).plan) == (SEQUENTIAL, COMMON_SLOPE)
    assert lint(load_plan(write_study(FACTORIAL, "b.yaml")).plan) == (COMMON_SLOPE,)


def test_a_covariate_without_treatment_cells_is_noted_as_not_checked(write_study):
    """A within factor and a covariate: no treatment cells, so no homogeneity-of-slopes check
    (the note must not claim one is run)."""
    text = """\
format: 1
study: {id: within-only, title: Invented within-only study}
data: {source: units.csv, unit: unit_id}
design:
  factors:
    - {name: visit, levels: [v1, v2, v3], role: within}
  covariates:
    - {name: base, label: Baseline}
  sums_of_squares: 2
outcomes:
  - {name: y, label: Score, role: primary}
"""
    assert lint(load_plan(write_study(text)).plan) == (Note(
        "covariate-common-slope", "design.covariates[0]",
        "base is adjusted for with one common slope; the design has no treatment factor, so "
        "there are no treatment cells whose slopes could differ and the homogeneity-of-slopes "
        "check is not defined (the appendix says so)",
        "Huitema 2011, The Analysis of Covariance and Alternatives, 2nd ed., Wiley"),)


def _design_texts() -> list[str]:
    from tests.plan.plans import BLOCKED

    within = ("      control: placebo\n"
              "    - {name: week, role: within, levels: [w1, w2, w3]}\n  sums_of_squares: 1\n")
    return [
        # Type 1 in a one-way design: one term, nothing is order dependent.
        variant("      control: placebo\n", "      control: placebo\n  sums_of_squares: 1\n"),
        # Type 1 with one between-unit term and a within factor: still one between term.
        variant("      control: placebo\n", within),
        # A treatment factor crossed with a block, even without replication, needs no note.
        BLOCKED.replace("sums_of_squares: 2", "sums_of_squares: 3"),
    ]


@pytest.mark.parametrize("text", _design_texts(), ids=["one-way type 1", "within type 1", "blocked"])
def test_no_design_note_when_not_needed(write_study, text):
    assert lint(load_plan(write_study(text)).plan) == ()
