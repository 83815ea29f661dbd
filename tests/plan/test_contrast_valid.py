"""Valid contrasts, multiplicity, exploratory analyses and fallbacks: the frozen plan."""

from __future__ import annotations

import math

import jsonschema
import pytest
from pydantic import ValidationError

from appendix.plan.load import load_plan
from appendix.plan.model import Contrast, ExploratoryContrast, Plan
from appendix.plan.schema import study_schema
from appendix.plan.yamltree import read_tree
from tests.plan.plans import EVERY_KIND, ORDERED, variant



def test_every_contrast_kind(write_study):
    plan = load_plan(write_study(EVERY_KIND)).plan
    assert [c.kind for c in plan.contrasts] == ["custom", "versus-control", "pairwise", "trend", "helmert"]
    custom, versus, pairwise, trend, helmert = plan.contrasts
    assert custom.weights == {"placebo": -2.0, "low": 1.0, "high": 1.0}
    assert (versus.alternative, versus.outcomes) == ("less", ("pain",))
    assert versus.justification == "only a reduction in pain matters clinically"
    assert (pairwise.factor, pairwise.alternative, pairwise.weights) == ("arm", "two-sided", None)
    assert (trend.degree, trend.trend_degree, trend.spacing) == (2, 2, (0.0, 1.0, 4.0))
    assert [c.hypothesis_count(3) for c in plan.contrasts] == [1, 2, 3, 2, 2]
    assert plan.multiplicity.order == ("C4", "C1", "C2", "C3", "C5")
    assert plan.multiplicity.scope == "primary-family"
    assert [(f.when, f.test, f.threshold, f.use) for f in plan.assumptions.fallbacks] == [
        ("unequal-variance", "bartlett", 0.01, "welch"),
        ("non-normal", "shapiro-wilk", 0.05, "rank-based")]


def test_contrasts_for_each_outcome(write_study):
    plan = load_plan(write_study(EVERY_KIND)).plan
    assert [c.id for c in plan.contrasts_for("pain")] == ["C1", "C2", "C3", "C4"]
    assert [c.id for c in plan.contrasts_for("sleep")] == ["C1", "C3", "C4", "C5"]
    assert [c.id for c in plan.exploratory_for("sleep")] == ["E1"]
    assert plan.contrasts_for("absent") == (plan.contrasts[0], plan.contrasts[2], plan.contrasts[3])


def test_exploratory_is_a_contrast_with_a_reason(write_study):
    entry = load_plan(write_study(EVERY_KIND)).plan.exploratory[0]
    assert isinstance(entry, ExploratoryContrast) and isinstance(entry, Contrast)
    assert (entry.reason, entry.trend_degree, entry.hypothesis_count(3)) == (
        "asked by the data monitoring committee", 1, 1)


def test_defaults_without_new_keys(write_study):
    plan = load_plan(write_study(ORDERED)).plan
    assert plan.analysis.method == "classical"
    assert (plan.contrasts, plan.exploratory, plan.assumptions.fallbacks) == ((), (), ())
    assert (plan.multiplicity.method, plan.multiplicity.scope, plan.multiplicity.order) == (
        "holm", "per-outcome", None)


@pytest.mark.parametrize("method, contrasts", [
    ("none", "[{id: C1, kind: pairwise, label: x}, {id: C2, kind: helmert, label: y}]"),
    ("bonferroni", "[{id: C1, kind: pairwise, label: x}, {id: C2, kind: helmert, label: y}]"),
    ("holm", "[{id: C1, kind: trend, label: x, degree: 2}]"),
    ("hochberg", "[{id: C1, kind: versus-control, label: x}]"),
    ("sidak", "[{id: C1, kind: custom, label: x, weights: {low: 0.5, high: 0.5, placebo: -1}}]"),
    ("benjamini-hochberg", "[{id: C1, kind: pairwise, label: x}]"),
    ("tukey", "[{id: C1, kind: pairwise, label: x, outcomes: [pain]},"
              " {id: C2, kind: pairwise, label: y, outcomes: [sleep]}]"),
    ("dunnett", "[{id: C1, kind: versus-control, label: x, alternative: greater, justification: j}]"),
    ("fixed-sequence", "[{id: C1, kind: versus-control, label: x}, {id: C2, kind: trend, label: y}]"),
    ("graphical", "[{id: C1, kind: custom, label: x, weights: {low: 1, placebo: -1}},"
                  " {id: C2, kind: trend, label: y}]"),
])
def test_every_multiplicity_method(write_study, method, contrasts):
    order = {"fixed-sequence": ", order: [C2, C1]",
             "graphical": ", weights: {C1: 1}, transitions: {C1: {C2: 1}}"}.get(method, "")
    text = ORDERED + f"contrasts: {contrasts}\nmultiplicity: {{method: {method}{order}}}\n"
    plan = load_plan(write_study(text)).plan
    assert plan.multiplicity.method == method
    assert plan.multiplicity.order == (("C2", "C1") if method == "fixed-sequence" else None)
    jsonschema.validate(read_tree(text).value, study_schema())


@pytest.mark.parametrize("analysis", ["welch", "rank-based"])
def test_robust_primary_analysis(write_study, analysis):
    plan = load_plan(write_study(ORDERED + f"analysis: {{method: {analysis}}}\n")).plan
    assert plan.analysis.method == analysis


def test_numbers_as_level_names_in_weights(write_study):
    text = variant("[placebo, low, high]", "[0, 2.5, 10]", variant("control: placebo", "control: 0"))
    text += "contrasts:\n  - {id: C1, kind: custom, label: x, weights: {0: -1, 2.5: 0.5, 10: 0.5}}\n"
    plan = load_plan(write_study(text)).plan
    assert plan.contrasts[0].weights == {"0": -1.0, "2.5": 0.5, "10": 0.5}


def test_weights_sum_within_tolerance(write_study):
    # -0.3, 0.1 and 0.2 as doubles do not sum to 0 exactly; |sum| <= 1e-9 max|w| passes.
    assert math.fsum([-0.3, 0.1, 0.2]) != 0
    text = ORDERED + ("contrasts:\n  - {id: C1, kind: custom, label: x,"
                      " weights: {placebo: -0.3, low: 0.1, high: 0.2}}\n")
    assert load_plan(write_study(text)).plan.contrasts[0].weights == {
        "placebo": -0.3, "low": 0.1, "high": 0.2}


def test_trend_degree_defaults_to_one():
    contrast = Contrast(id="T", kind="trend", label="dose trend")
    assert (contrast.degree, contrast.trend_degree, contrast.hypothesis_count(5)) == (None, 1, 1)


def test_hypothesis_counts_for_four_levels():
    counts = {kind: Contrast(id="X", kind=kind, label="x").hypothesis_count(4)
              for kind in ("custom", "pairwise", "versus-control", "trend", "helmert")}
    assert counts == {"custom": 1, "pairwise": 6, "versus-control": 3, "trend": 1, "helmert": 3}


def test_dumped_plan_validates_again(write_study):
    plan = load_plan(write_study(EVERY_KIND)).plan
    assert Plan.model_validate(plan.model_dump(mode="json")) == plan


def test_plan_built_in_code_checks_contrasts(write_study):
    raw = load_plan(write_study(EVERY_KIND)).plan.model_dump(mode="json")
    raw["contrasts"][0]["weights"]["low"] = 2
    with pytest.raises(ValidationError, match=r"contrasts\[0\]\.weights: got weights summing to 1;"):
        Plan.model_validate(raw)


def test_contrasts_are_frozen(write_study):
    plan = load_plan(write_study(EVERY_KIND)).plan
    with pytest.raises(ValidationError):
        plan.contrasts[0].label = "changed"


def test_lines_of_contrast_keys(write_study):
    loaded = load_plan(write_study(EVERY_KIND))
    assert loaded.line_of("contrasts[3].spacing") == 26
    assert loaded.line_of("contrasts[0].weights.low") == 22
    assert loaded.line_of("assumptions.fallbacks[1].use") == 34


def test_fixed_sequence_without_contrasts_needs_no_order(write_study):
    plan = load_plan(write_study(ORDERED + "multiplicity: {method: fixed-sequence}\n")).plan
    assert (plan.multiplicity.method, plan.multiplicity.order, plan.contrasts) == (
        "fixed-sequence", None, ())
