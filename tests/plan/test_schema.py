"""The published JSON Schema equals the model's, and checks study files like the loader."""

from __future__ import annotations

import jsonschema
import pytest

from appendix.plan.schema import SCHEMA_FILE, main, schema_text, study_schema
from appendix.plan.yamltree import read_tree
from tests.plan.plans import BASE, FACTORIAL, variant


def test_committed_schema_is_current():
    assert SCHEMA_FILE.read_text(encoding="utf-8") == schema_text()


def test_schema_header():
    schema = study_schema()
    assert schema["$schema"] == "https://json-schema.org/draft/2020-12/schema"
    assert schema["$id"] == "urn:appendix:schema:study:format-1"
    jsonschema.Draft202012Validator.check_schema(schema)


def test_main_writes_file(tmp_path, capsys):
    target = tmp_path / "s.json"
    assert main([str(target)]) == 0
    assert target.read_text(encoding="utf-8") == schema_text()


def test_valid_plan_passes():
    jsonschema.validate(read_tree(BASE).value, study_schema())


@pytest.mark.parametrize("base, old, new", [
    (BASE, "role: primary", "role: main"),
    (BASE, "      levels:", "      levls:"),
    (BASE, "format: 1", "format: 2"),
    (BASE, "alpha: 0.05", "alpha: 0.5"),
    (BASE, "id: trial-07", "id: trial 07"),
    (FACTORIAL, "role: block", "role: nuisance"),
    (FACTORIAL, "[coating, variety]", "[coating]"),
    (FACTORIAL, "sums_of_squares: 2", "sums_of_squares: 4"),
    (FACTORIAL, "sums_of_squares: 2", "sums_of_squares: '2'"),
    (FACTORIAL, "label: Baseline dry mass, ", ""),
    (FACTORIAL, "{name: baseline,", "{name: 2nd,"),
    (FACTORIAL, "  sums_of_squares: 2\n", "  sums_of_squares: 2\nrepeated: {missing: carried-forward}\n"),
])
def test_bad_plan_fails(base, old, new):
    with pytest.raises(jsonschema.ValidationError):
        jsonschema.validate(read_tree(variant(old, new, base)).value, study_schema())


def test_plan_with_every_contrast_kind_passes():
    from tests.plan.plans import EVERY_KIND

    jsonschema.validate(read_tree(EVERY_KIND).value, study_schema())


@pytest.mark.parametrize("addition", [
    "contrasts: [{id: C1, kind: pairwize, label: x}]\n",
    "contrasts: [{id: 'C1:a', kind: pairwise, label: x}]\n",
    "contrasts: [{id: C1, kind: custom, label: x, weights: {low: one}}]\n",
    "contrasts: [{id: C1, kind: trend, label: x, degree: 0}]\n",
    "multiplicity: {method: holms}\n",
    "exploratory: [{id: E1, kind: pairwise, label: x}]\n",
    "assumptions: {fallbacks: [{when: non-normal, test: shapiro-wilk, use: welch, threshold: 1}]}\n",
    "analysis: {method: robust}\n",
])
def test_bad_contrast_keys_fail(addition):
    with pytest.raises(jsonschema.ValidationError):
        jsonschema.validate(read_tree(BASE + addition).value, study_schema())


def test_factorial_plan_passes():
    jsonschema.validate(read_tree(FACTORIAL + "repeated: {missing: complete-units}\n"
                                  "contrasts: [{id: C1, kind: pairwise, label: x, factor: coating, "
                                  "by: variety}]\n").value, study_schema())

