"""Defaults are resolved once, in the plan stage: every key with a default carries its
value and whether the study file states it. Checked on the three invented demos by
taking each stated key out of the file and putting each defaulted key in."""

from __future__ import annotations

import re
from pathlib import Path

import pytest
import yaml

from appendix.errors import PlanError
from appendix.plan.load import load_plan
from appendix.plan.settings import spell as plan_settings_value

STUDIES = Path(__file__).resolve().parents[2] / "studies"
DEMOS = ("seed-coating", "greenhouse-split", "wound-dose")


def _path(key: str) -> list[str | int]:
    return [int(p) if p.isdigit() else p for p in re.findall(r"[^.\[\]]+", key)]


def _edit(tree: dict, key: str, value: object = None, *, remove: bool = False) -> dict:
    *parents, last = _path(key)
    node = tree
    for part in parents:
        node = node.setdefault(part, {}) if isinstance(part, str) else node[part]
    if remove:
        del node[last]
    else:
        node[last] = value
    return tree


def _default(plan, key: str) -> str:
    """The model default of a key, spelled as the settings spell values."""
    *parents, last = _path(key)
    node = plan
    for part in parents:
        node = node[part] if isinstance(part, int) else getattr(node, part)
    default = type(node).model_fields[last].default
    return plan_settings_value(default)


def _written(folder: Path, tree: dict) -> Path:
    study = folder / "edited.yaml"  # beside study.yaml, so the data paths still resolve
    study.write_text(yaml.safe_dump(tree, sort_keys=False, allow_unicode=True), encoding="utf-8")
    return study


@pytest.fixture(scope="module", params=DEMOS)
def demo(request, tmp_path_factory):
    folder = tmp_path_factory.mktemp(request.param)
    for item in (STUDIES / request.param).iterdir():
        if item.is_file():
            (folder / item.name).write_bytes(item.read_bytes())
    (folder / "data").symlink_to(STUDIES / request.param / "data")
    tree = yaml.safe_load((folder / "study.yaml").read_text(encoding="utf-8"))
    return folder, tree, load_plan(folder / "study.yaml")


def test_each_stated_setting_taken_out_holds_by_default(demo):
    folder, tree, loaded = demo
    stated = [s for s in loaded.settings if s.stated]
    assert stated
    for setting in stated:
        edited = _edit(yaml.safe_load(yaml.safe_dump(tree)), setting.key, remove=True)
        try:
            again = load_plan(_written(folder, edited))
        except PlanError as error:
            # a key the design requires, or a stated value the rest of the plan relies on
            # (a within factor's role), may not be taken out; check says which
            if setting.key == "design.sums_of_squares":
                assert len(loaded.plan.model_terms) > 1 and "sums_of_squares" in str(error)
            else:
                assert setting.value != _default(loaded.plan, setting.key), setting.key
            continue
        after = {s.key: s for s in again.settings}
        assert setting.key in after and not after[setting.key].stated, setting.key
        assert setting.key in again.defaulted and setting.key not in loaded.defaulted
        if setting.key != "design.sums_of_squares":
            assert after[setting.key].value == _default(loaded.plan, setting.key), setting.key
            if setting.value == after[setting.key].value:
                assert again.sha256 == loaded.sha256, setting.key


def test_each_defaulted_setting_stated_with_its_value_keeps_the_plan_and_its_hash(demo):
    folder, tree, loaded = demo
    defaulted = [s for s in loaded.settings if not s.stated]
    assert defaulted
    for setting in defaulted:
        value = yaml.safe_load(setting.value) if "," not in setting.value else setting.value.split(", ")
        edited = _edit(yaml.safe_load(yaml.safe_dump(tree)), setting.key, value)
        again = load_plan(_written(folder, edited))
        after = {s.key: s for s in again.settings}
        assert after[setting.key].stated and after[setting.key].value == setting.value, setting.key
        if setting.key == "design.sums_of_squares":
            # resolved, not a model default: stating it adds the key to the canonical plan
            assert again.plan.design.sums_of_squares == loaded.plan.ss_type == 2
        else:
            assert again.sha256 == loaded.sha256, setting.key  # the canonical plan already held it


def test_values_are_spelled_as_a_study_file_writes_them():
    loaded = load_plan(STUDIES / "seed-coating" / "study.yaml")
    settings = {s.key: s for s in loaded.settings}
    assert settings["alpha"].value == "0.05"
    assert settings["assumptions.outliers.threshold"].value == "3"
    assert settings["assumptions.equal_variance"].value == "brown-forsythe, bartlett"
    assert settings["design.factors[0].ordered"].value == "false"
    # one between-unit term: the type is resolved (every type gives the same table)
    assert (settings["design.sums_of_squares"].value, settings["design.sums_of_squares"].stated) == ("2", False)


def test_declared_families_have_no_top_level_multiplicity_setting(tmp_path):
    from tests.test_families_end_to_end import write_study

    study, _ = write_study(tmp_path, 1.0)
    keys = [s.key for s in load_plan(study).settings]
    # each family states its method (required), so no multiplicity setting holds by default
    assert [k for k in keys if k.startswith("multiplicity")] == []
