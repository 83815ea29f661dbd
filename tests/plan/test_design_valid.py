"""Valid designs beyond one factor: the frozen plan and the accessors other stages use."""

from __future__ import annotations

import json

import pytest
from pydantic import ValidationError

from appendix.plan.load import canonical_json, load_plan
from appendix.plan.model import Covariate, Plan, Repeated
from tests.plan.plans import BASE, BLOCKED, FACTORIAL, variant

CONTRASTS = """\
contrasts:
  - {id: C1, factor: coating, kind: versus-control, label: each coating versus none}
  - {id: C2, factor: coating, kind: pairwise, by: variety, label: coating pairs per variety}
  - {id: C3, factor: visit, kind: trend, label: linear trend over visits, outcomes: [height]}
  - {id: C4, factor: variety, kind: custom, by: visit, label: late minus early per visit,
     weights: {early: -1, late: 1}}
"""


def test_factorial_accessors(write_study):
    plan = load_plan(write_study(FACTORIAL)).plan
    assert [f.role for f in plan.design.factors] == ["treatment", "treatment", "block", "within"]
    assert [f.name for f in plan.treatments] == ["coating", "variety"]
    assert [f.name for f in plan.blocks] == ["field_block"]
    (visit,) = plan.within_factors
    assert visit.name == "visit" and visit.levels == ("day7", "day14", "day21")
    assert plan.within_cells == ("day7", "day14", "day21") and plan.within_strata == (("visit",),)
    assert [f.name for f in plan.between] == ["coating", "variety", "field_block"]
    assert plan.factor_named("field_block").levels == ("B1", "B2", "B3", "B4")
    assert plan.factor.name == "coating"  # the first treatment factor
    assert plan.is_one_way is False
    assert plan.design.interactions == (("coating", "variety"), ("coating", "visit"))
    assert plan.design.covariates == (Covariate(name="baseline", column="baseline_mass",
                                                label="Baseline dry mass", unit="g"),)
    assert plan.design.covariates[0].data_column == "baseline_mass"
    assert plan.design.sums_of_squares == 2
    # The interaction with the within factor is not a term of the between-unit model.
    assert plan.model_terms == (("baseline",), ("field_block",), ("coating",), ("variety",),
                                ("coating", "variety"))
    assert plan.within_terms == (("visit",), ("coating", "visit"))
    # No `repeated` written: a within factor means the complete-units rule.
    assert plan.repeated == Repeated(missing="complete-units")
    with pytest.raises(KeyError):
        plan.factor_named("colour")


def test_implied_and_written_repeated_rule_are_one_plan(write_study):
    implied = load_plan(write_study(FACTORIAL, "a.yaml"))
    written = load_plan(write_study(FACTORIAL + "repeated: {missing: complete-units}\n", "b.yaml"))
    assert implied.plan == written.plan
    assert implied.sha256 == written.sha256


def test_hypotheses_with_simple_effects(write_study):
    plan = load_plan(write_study(FACTORIAL + CONTRASTS)).plan
    c1, c2, c3, c4 = plan.contrasts
    assert (c2.factor, c2.by, c1.by) == ("coating", "variety", None)
    assert [plan.factor_of(c).name for c in plan.contrasts] == ["coating", "coating", "visit", "variety"]
    # Per level of `by`: 2 versus none; 3 pairs x 2 varieties; 1 trend; 1 custom x 3 visits.
    assert [plan.hypotheses_of(c) for c in plan.contrasts] == [2, 6, 1, 3]
    assert [c.hypothesis_count(len(plan.factor_of(c).levels)) for c in plan.contrasts] == [2, 3, 1, 1]
    assert plan.hypothesis_count("mass") == 2 + 6 + 3
    assert plan.hypothesis_count("height") == 2 + 6 + 1 + 3


def test_contrast_factor_defaults_to_the_only_treatment_factor(write_study):
    plan = load_plan(write_study(BLOCKED + "contrasts:\n  - {id: C1, kind: pairwise, label: x}\n")).plan
    assert plan.factor_of(plan.contrasts[0]).name == "arm"
    assert plan.hypothesis_count("pain") == 3
    assert [f.name for f in plan.blocks] == ["site"] and plan.within_factors == ()
    assert plan.model_terms == (("site",), ("arm",))
    assert plan.is_one_way is False and plan.repeated is None


def test_one_way_plan_keeps_its_meaning_and_canonical_json(write_study):
    plan = load_plan(write_study(BASE)).plan
    assert plan.is_one_way and plan.factor.role == "treatment"
    assert (plan.treatments, plan.blocks, plan.within_factors, plan.between) == (
        (plan.factor,), (), (), (plan.factor,))
    assert plan.model_terms == (("arm",),) and plan.within_terms == ()
    assert (plan.design.interactions, plan.design.covariates, plan.design.sums_of_squares,
            plan.repeated) == ((), (), None, None)
    # Keys added for larger designs stay out of the dump at their defaults, so the hash of a
    # one-way plan is what it was before they existed.
    dumped = json.loads(canonical_json(plan))
    assert sorted(dumped) == ["alpha", "analysis", "assumptions", "contrasts", "data", "design",
                              "exploratory", "format", "multiplicity", "outcomes", "study"]
    assert list(dumped["design"]) == ["factors"]
    assert sorted(dumped["design"]["factors"][0]) == ["control", "label", "levels", "name", "ordered"]


def test_one_way_plan_may_register_a_type(write_study):
    plan = load_plan(write_study(variant("      control: placebo\n",
                                         "      control: placebo\n  sums_of_squares: 3\n"))).plan
    assert plan.design.sums_of_squares == 3 and plan.is_one_way


def test_model_terms_put_lower_orders_first_and_names_in_plan_order(write_study):
    text = variant("    - [coating, variety]\n    - [coating, visit]\n",
                   "    - [coating, variety, field_block]\n    - [variety, coating]\n"
                   "    - [field_block, coating]\n    - [field_block, variety]\n"
                   "    - [visit, variety]\n", FACTORIAL)
    plan = load_plan(write_study(text)).plan
    assert plan.model_terms == (
        ("baseline",), ("field_block",), ("coating",), ("variety",),
        ("coating", "variety"), ("coating", "field_block"), ("variety", "field_block"),
        ("coating", "variety", "field_block"))
    assert plan.within_terms == (("visit",), ("variety", "visit"))


def test_two_within_factors_and_their_strata(write_study):
    # hour crossed with visit, both within units; [coating, visit, hour] needs every
    # lower-order interaction it contains
    text = variant("    - {name: visit, role: within, levels: [day7, day14, day21], ordered: true}\n",
                   "    - {name: visit, role: within, levels: [day7, day14, day21], ordered: true}\n"
                   "    - {name: hour, role: within, levels: [am, pm]}\n", FACTORIAL)
    text = variant("    - [coating, visit]\n", "    - [coating, visit]\n    - [hour, visit]\n"
                   "    - [coating, hour]\n    - [hour, coating, visit]\n", text)
    plan = load_plan(write_study(text)).plan
    assert [f.name for f in plan.within_factors] == ["visit", "hour"]
    assert plan.within_cells == ("day7 \u00d7 am", "day7 \u00d7 pm", "day14 \u00d7 am",
                                 "day14 \u00d7 pm", "day21 \u00d7 am", "day21 \u00d7 pm")
    assert plan.within_strata == (("visit",), ("hour",), ("visit", "hour"))
    assert plan.stratum_terms(("visit",)) == (("visit",), ("coating", "visit"))
    assert plan.stratum_terms(("hour",)) == (("hour",), ("coating", "hour"))
    assert plan.stratum_terms(("visit", "hour")) == (("visit", "hour"), ("coating", "visit", "hour"))
    assert plan.within_terms == (("visit",), ("coating", "visit"), ("hour",), ("coating", "hour"),
                                 ("visit", "hour"), ("coating", "visit", "hour"))
    assert plan.model_terms[-1] == ("coating", "variety")  # within terms stay out of it
    assert plan.factor.name == "coating" and plan.is_within("hour") and not plan.is_within("coating")


def test_covariate_column_defaults_to_its_name(write_study):
    text = variant("{name: baseline, column: baseline_mass, label: Baseline dry mass, unit: g}",
                   "{name: baseline, label: Baseline dry mass}", FACTORIAL)
    covariate = load_plan(write_study(text)).plan.design.covariates[0]
    assert (covariate.data_column, covariate.unit) == ("baseline", None)


def test_plan_built_in_code_checks_by_too(write_study):
    raw = load_plan(write_study(FACTORIAL + CONTRASTS)).plan.model_dump(mode="json")
    assert Plan.model_validate(raw).contrasts[1].by == "variety"
    raw["contrasts"][1]["by"] = "field_block"
    with pytest.raises(ValidationError, match=r"contrasts\[1\]\.by: got 'field_block', a block"):
        Plan.model_validate(raw)


@pytest.mark.parametrize(("text", "route"), [(BASE, "one-factor"), (BLOCKED, "design"),
                                             (FACTORIAL, "design")])
def test_the_plan_names_the_data_route(write_study, text, route):
    plan = load_plan(write_study(text)).plan
    assert plan.data_route == route
    # the route is the one-factor layout that also decides whether Welch and Kruskal–Wallis apply
    assert (plan.robust_absent is None) == (route == "one-factor")
