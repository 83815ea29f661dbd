"""Broken study files: the exact message a user sees, with file:line and key path."""

from __future__ import annotations

import pytest

from appendix.errors import PlanError
from appendix.plan.load import MAX_BYTES, load_plan
from tests.plan.plans import BASE, assert_refused, expected_message as _expected, variant

TOP_KEYS = ("'format', 'study', 'data', 'alpha', 'design', 'outcomes', 'assumptions', "
            "'analysis', 'contrasts', 'multiplicity', 'exploratory', 'repeated' or 'deviations'")

# (case id, study file text, expected problem lines as "line: path: message").
CASES = [
    ("unknown top-level key", BASE + "colour: red\n",
     [f"19: colour: unknown key; allowed: {TOP_KEYS}"]),
    ("near-miss key", variant("      levels:", "      levls:"),
     ["13: design.factors[0].levels: required key is missing (Levels in registered order.)",
      "14: design.factors[0].levls: unknown key; did you mean 'levels'?"]),
    ("wrong role", variant("role: primary", "role: main"),
     ["17: outcomes[0].role: got 'main'; allowed: 'primary' or 'secondary'"]),
    ("control not in levels", variant("control: placebo", "control: Placebo"),
     ["15: design.factors[0].control: got 'Placebo'; allowed: one of the levels "
      "'placebo', 'low' or 'high'; did you mean 'placebo'?"]),
    ("control far from every level", variant("control: placebo", "control: sham"),
     ["15: design.factors[0].control: got 'sham'; allowed: one of the levels "
      "'placebo', 'low' or 'high'"]),
    ("duplicate level", variant("[placebo, low, high]", "[placebo, low, low, high]"),
     ["14: design.factors[0].levels[2]: got 'low' again; each level must be named once "
      "(first at levels[1])"]),
    ("missing outcomes", BASE.split("outcomes:")[0],
     ["1: outcomes: required key is missing (The registered outcomes.)"]),
    ("empty outcomes", BASE.split("outcomes:")[0] + "outcomes: []\n",
     ["16: outcomes: got 0 items; allowed: at least 1 item"]),
    ("alpha out of range", variant("alpha: 0.05", "alpha: 0.5"),
     ["10: alpha: got 0.5; allowed: a number greater than 0 and less than 0.5"]),
    ("alpha not a number", variant("alpha: 0.05", "alpha: five percent"),
     ["10: alpha: got 'five percent'; allowed: a number greater than 0 and less than 0.5"]),
    ("wrong format", variant("format: 1", "format: 2"),
     ["1: format: got 2; allowed: 1"]),
    ("format as a flag", variant("format: 1", "format: true"),
     ["1: format: got true; allowed: 1"]),
    ("ordered as a number", variant("control: placebo", "control: placebo\n      ordered: 1"),
     ["16: design.factors[0].ordered: got 1; allowed: true or false"]),
    ("levels not a list", variant("[placebo, low, high]", "placebo, low, high"),
     ["14: design.factors[0].levels: got 'placebo, low, high'; allowed: a list, "
      "written [a, b] or as '- item' lines"]),
    ("boolean levels", variant("[placebo, low, high]", "[true, false]"),
     ["14: design.factors[0].levels[0]: got true; allowed: text or a number "
      "(put it in quotes to mean the text)",
      "14: design.factors[0].levels[1]: got false; allowed: text or a number "
      "(put it in quotes to mean the text)"]),
    ("bad study id", variant("id: trial-07", "id: trial 07"),
     ["3: study.id: got 'trial 07'; allowed: 1 to 80 letters, digits, '.', '_' or '-', "
      "starting with a letter or digit"]),
    ("duplicate key", variant("alpha: 0.05", "alpha: 0.05\nalpha: 0.01"),
     ["11: alpha: duplicate key; first given on line 10"]),
    ("custom tag", variant("alpha: 0.05", "alpha: !!python/name:os.system 0.05"),
     ["10: alpha: tag '!!python/name:os.system' is not allowed; remove it "
      "(only plain YAML values are read)"]),
    ("local tag", variant("title: Invented", "title: !secret Invented"),
     ["4: study.title: tag '!secret' is not allowed; remove it (only plain YAML values are read)"]),
    ("anchor and alias",
     variant("      control: placebo", "      control: &c placebo\n"
                                        "    - {name: dose, levels: [a, b], control: *c}"),
     ["11: design.sums_of_squares: required key is missing for a design with 2 treatment "
      "factors; allowed: 1, 2 or 3 (the types differ once there is more than one term)",
      "15: design.factors[0].control: anchor '&c' is not allowed; write the value out in full",
      "16: design.factors[1].control: alias '*c' is not allowed; write the value out in full"]),
    ("not a mapping at top", "- format\n- 1\n",
     ["1: got a list of 2 items; allowed: a mapping of keys (format, study, data, ...)"]),
    ("empty file", "# nothing here\n",
     ["1: the file is empty; allowed: a mapping of keys (format, study, data, ...)"]),
    ("bad indentation", variant("  unit: unit_id", " unit: unit_id"),
     ["7: not valid YAML: while parsing a block mapping expected <block end>, "
      "but found '<block mapping start>'"]),
    ("study not a mapping",
     variant("study:\n  id: trial-07\n  title: Invented study for tests\n", "study: trial-07\n"),
     ["2: study: got 'trial-07'; allowed: a mapping with keys 'id', 'title', 'registered' "
      "and 'population'"]),
    ("empty title", variant("  title: Invented study for tests\n", "  title:\n"),
     ["4: study.title: got null (empty); allowed: text"]),
    ("impossible date",
     variant("  title: Invented study for tests\n",
             "  title: Invented study for tests\n  registered: 2026-02-30\n"),
     ["5: study.registered: got '2026-02-30'; allowed: a date written YYYY-MM-DD"]),
    ("factor column as outcome", variant("{name: pain, label", "{name: pain, column: arm, label"),
     ["17: outcomes[0].column: got 'arm', which is a factor column; "
      "an outcome must be a column of its own"]),
    ("unit column as factor", variant("unit: unit_id", "unit: arm"),
     ["13: design.factors[0].name: got 'arm', which is the unit column; "
      "a factor must be a column of its own"]),
    ("duplicate outcome names", variant("{name: sleep,", "{name: pain,"),
     ["18: outcomes[1].name: got 'pain' again; outcome names must be unique "
      "(first at outcomes[0])"]),
    ("duplicate exclusion ids",
     variant("reason: Protocol violated}",
             "reason: Protocol violated}\n    - {id: X1, column: consent, equals: no, reason: No consent}"),
     ["10: data.exclusions[1].id: got 'X1' again; exclusion ids must be unique "
      "(first at exclusions[0])"]),
    ("exclusion value a list", variant("equals: yes", "equals: [yes]"),
     ["9: data.exclusions[0].equals: got a list of 1 item; allowed: text, a number or true/false"]),
    ("unsupported data format", variant("units.csv", "units.sas7bdat"),
     ["6: data.source: got 'units.sas7bdat'; allowed: a file ending '.csv', '.tsv', '.parquet', "
      "'.xlsx', '.xpt', '.dta' or '.sav'"]),
    ("fractional planned n",
     variant("  unit: unit_id\n", "  unit: unit_id\n  planned_n: {per_group: 2.5}\n"),
     ["8: data.planned_n.per_group: got 2.5; allowed: a whole number at least 1"]),
    ("planned n below one",
     variant("  unit: unit_id\n", "  unit: unit_id\n  planned_n: {per_group: 0, total: -3}\n"),
     ["8: data.planned_n.per_group: got 0; allowed: a whole number at least 1",
      "8: data.planned_n.total: got -3; allowed: a whole number at least 1"]),
    ("assumption options",
     BASE + "assumptions:\n  outliers: {threshold: -1}\n  equal_variance: [levene]\n",
     ["20: assumptions.outliers.threshold: got -1; allowed: a number greater than 0",
      "21: assumptions.equal_variance[0]: got 'levene'; allowed: 'brown-forsythe' or 'bartlett'"]),
    ("several problems at once",
     variant("role: primary", "role: main",
             variant("control: placebo", "control: plcebo",
                     variant("alpha: 0.05", "alpah: 0.05"))),
     ["10: alpah: unknown key; did you mean 'alpha'?",
      "15: design.factors[0].control: got 'plcebo'; allowed: one of the levels "
      "'placebo', 'low' or 'high'; did you mean 'placebo'?",
      "17: outcomes[0].role: got 'main'; allowed: 'primary' or 'secondary'"]),
]


@pytest.mark.parametrize("text, lines", [c[1:] for c in CASES], ids=[c[0] for c in CASES])
def test_broken_study_file_message(write_study, text, lines):
    assert_refused(write_study(text), lines)


def test_file_too_big_is_refused_before_parsing(write_study):
    path = write_study(BASE + "#" * MAX_BYTES + "\n")
    with pytest.raises(PlanError) as caught:
        load_plan(path)
    assert str(caught.value) == (
        f"1 problem in the study file:\n  {path}: the file is larger than 1048576 bytes; "
        "a study file is a short text, is this the right file?")


def test_not_utf8_names_the_line(write_study):
    path = write_study(BASE.encode() + b"# caf\xe9\n")
    with pytest.raises(PlanError) as caught:
        load_plan(path)
    assert str(caught.value) == f"1 problem in the study file:\n  {path}:19: the file is not UTF-8 text"


def test_sheet_only_for_excel(write_study):
    path = write_study(variant("  unit: unit_id\n", "  unit: unit_id\n  sheet: units\n"))
    with pytest.raises(PlanError) as caught:
        load_plan(path)
    assert str(caught.value) == _expected(path, [
        "8: data.sheet: got 'units', but 'units.csv' is not an Excel file; "
        "allowed: a sheet only for a .xlsx source"])
