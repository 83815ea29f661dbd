"""Valid study files: the frozen plan, its lines, its hash."""

from __future__ import annotations

import datetime as dt
import hashlib
import json

import pytest
from pydantic import ValidationError

from appendix.errors import UserError
from appendix.plan.load import canonical_json, load_plan, plan_sha256
from appendix.plan.model import Plan
from tests.plan.plans import BASE, variant


def test_base_plan_values(write_study):
    loaded = load_plan(write_study(BASE))
    plan = loaded.plan
    assert plan.study.id == "trial-07"
    assert plan.factor.levels == ("placebo", "low", "high")
    assert plan.factor.control == "placebo"
    assert [o.data_column for o in plan.outcomes] == ["pain", "sleep"]
    assert plan.alpha == 0.05
    # YAML 1.2 core schema: `yes` is text, not a boolean.
    assert plan.data.exclusions[0].equals == "yes"
    assert loaded.data_path == loaded.path.parent / "units.csv"


def test_lines_of_keys_and_items(write_study):
    loaded = load_plan(write_study(BASE))
    assert loaded.line_of("alpha") == 10
    assert loaded.line_of("design.factors[0].levels") == 14
    assert loaded.line_of("outcomes[1]") == 18
    assert loaded.line_of("outcomes[1].role") == 18
    # An absent key falls back to its nearest enclosing key.
    assert loaded.line_of("outcomes[1].unit") == 18
    assert loaded.line_of("assumptions") == 1


def test_numbers_and_words_as_levels(write_study):
    text = variant("[placebo, low, high]", "[0, 2.5, 10]", variant("control: placebo", "control: 0"))
    assert load_plan(write_study(text)).plan.factor.levels == ("0", "2.5", "10")
    text = variant("[placebo, low, high]", "[no, yes]", variant("control: placebo", "control: no"))
    assert load_plan(write_study(text)).plan.factor.levels == ("no", "yes")


def test_typed_values(write_study):
    text = variant("  title: Invented study for tests\n",
                   "  title: Invented study for tests\n  registered: 2026-02-14\n")
    text = variant("equals: yes", "equals: true", text)
    plan = load_plan(write_study(text)).plan
    assert plan.study.registered == dt.date(2026, 2, 14)
    assert plan.data.exclusions[0].equals == "true"


def test_hash_is_of_canonical_plan_json(write_study):
    loaded = load_plan(write_study(BASE))
    dumped = json.dumps(loaded.plan.model_dump(mode="json"), sort_keys=True,
                        separators=(",", ":"), ensure_ascii=False)
    assert canonical_json(loaded.plan) == dumped
    assert loaded.sha256 == plan_sha256(loaded.plan) == hashlib.sha256(dumped.encode()).hexdigest()
    assert loaded.content == BASE.encode()


def test_hash_ignores_layout_but_not_values(write_study):
    reordered = "# comment only\n" + BASE.replace("alpha: 0.05\n", "") + "alpha: 5.0e-2\n"
    assert load_plan(write_study(reordered, "b.yaml")).sha256 == load_plan(write_study(BASE)).sha256
    changed = variant("alpha: 0.05", "alpha: 0.01")
    assert load_plan(write_study(changed, "c.yaml")).sha256 != load_plan(write_study(BASE)).sha256


def test_missing_study_file_names_resolved_path(tmp_path):
    with pytest.raises(UserError, match=f"study file not found: {tmp_path.resolve()}/none.yaml"):
        load_plan(tmp_path / "none.yaml")


def test_plan_built_in_code_is_checked_too(write_study):
    raw = load_plan(write_study(BASE)).plan.model_dump(mode="json")
    raw["design"]["factors"][0]["control"] = "sham"
    with pytest.raises(ValidationError, match="design.factors\\[0\\].control: got 'sham'"):
        Plan.model_validate(raw)


def test_plan_is_frozen(write_study):
    plan = load_plan(write_study(BASE)).plan
    with pytest.raises(ValidationError):
        plan.alpha = 0.1
