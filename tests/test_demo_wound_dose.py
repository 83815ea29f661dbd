"""The wound-dose demo: its seeded generator, its data and its study file.

The data are INVENTED by studies/wound-dose/generate.py; the checks below hold the
generator to what its README says (layout, exclusions, missing values, the effects built
in) and the study file to the design it describes.
"""

from __future__ import annotations

import shutil
from collections import Counter

import numpy as np
import pytest

from appendix.plan.load import load_plan
from tests.demos import (REPO, assert_invented_with_caution, assert_rewrites_byte_for_byte,
                         load_generator, read_rows, validate_study_file)
from tests.test_cli import run_cli

DEMO = REPO / "studies" / "wound-dose"
DOSES = ("vehicle", "1 mg/kg", "3 mg/kg", "10 mg/kg", "30 mg/kg")

gen = load_generator(DEMO)


@pytest.fixture(scope="module")
def rows() -> list[dict[str, str]]:
    return read_rows(DEMO / "data" / "animals.csv")


def test_generator_rewrites_the_committed_file_byte_for_byte(tmp_path):
    committed = assert_rewrites_byte_for_byte(DEMO, DEMO / "data" / "animals.csv", tmp_path, 60)
    assert committed.startswith(b"animal_id,cohort,dose,dressing_lost,wound_area_d0_mm2,"
                                b"wound_area_d7_mm2,reepithelialisation_pct,granulation_um\nM001,")


def test_sixty_mice_twelve_per_dose_three_per_dose_in_each_cohort(rows):
    assert [r["animal_id"] for r in rows] == [f"M{i:03d}" for i in range(1, 61)]
    assert Counter(r["dose"] for r in rows) == {d: 12 for d in DOSES}
    per_cohort = Counter((r["cohort"], r["dose"]) for r in rows)
    assert set(per_cohort.values()) == {3} and len(per_cohort) == 4 * 5
    assert Counter(r["cohort"] for r in rows) == {c: 15 for c in ("K1", "K2", "K3", "K4")}


def test_three_dressings_lost_and_the_missing_values_the_readme_names(rows):
    assert sorted(r["animal_id"] for r in rows if r["dressing_lost"] == "yes") == ["M014", "M029",
                                                                                   "M055"]
    assert {r["dressing_lost"] for r in rows} == {"yes", "no"}
    missing = {c: sum(1 for r in rows if r[c] == "") for c in gen.MISSING}
    assert missing == {"wound_area_d7_mm2": 2, "reepithelialisation_pct": 3, "granulation_um": 2}
    assert all(r["wound_area_d0_mm2"] for r in rows)  # the covariate is never missing
    areas = [float(r["wound_area_d0_mm2"]) for r in rows]
    assert 40 < min(areas) and max(areas) < 60  # a plausible punch-wound area (mm2)
    scores = [float(r["reepithelialisation_pct"]) for r in rows if r["reepithelialisation_pct"]]
    assert 0 <= min(scores) and max(scores) <= 100


def test_the_effects_the_readme_names_are_in_the_data(rows):
    data = [r for r in rows if r["wound_area_d7_mm2"]]
    y = np.array([float(r["wound_area_d7_mm2"]) for r in data])

    def dummies(column, levels):
        return [np.array([r[column] == level for r in data], float) for level in levels]

    baseline = np.array([float(r["wound_area_d0_mm2"]) for r in data])
    columns = [np.ones(len(y)), *dummies("dose", DOSES[1:]), *dummies("cohort", ("K2", "K3", "K4")),
               baseline - baseline.mean()]
    beta, *_ = np.linalg.lstsq(np.column_stack(columns), y, rcond=None)
    fit = dict(zip(["1", *DOSES[1:], "K2", "K3", "K4", "baseline"], beta))
    # true values from generate.py; tolerances about two to three standard errors for 58
    # mice (common practice, no source)
    assert fit["baseline"] == pytest.approx(gen.AREA_SLOPE, abs=0.35)
    assert fit["30 mg/kg"] == pytest.approx(gen.AREA_DOSE["30 mg/kg"], abs=3.0)
    assert fit["10 mg/kg"] < -2.0 and fit["30 mg/kg"] < -2.0
    assert fit["K2"] - fit["K3"] == pytest.approx(2.5, abs=3.0)


def test_readme_says_the_data_are_invented_and_carries_the_caution():
    text = assert_invented_with_caution(DEMO)
    assert "describe no real compound, product or experiment" in text
    assert "animal welfare rules and ethics review" in text


def test_study_file_registers_the_design_and_matches_the_data(rows):
    plan = load_plan(DEMO / "study.yaml").plan
    assert [f.name for f in plan.treatments] == ["dose"]
    assert [f.name for f in plan.blocks] == ["cohort"]
    assert plan.within_factors == () and plan.design.interactions == ()
    assert [c.data_column for c in plan.design.covariates] == ["wound_area_d0_mm2"]
    assert plan.design.sums_of_squares == 2
    assert plan.model_terms == (("baseline_area",), ("cohort",), ("dose",))
    (dose,) = plan.treatments
    assert dose.levels == DOSES and dose.control == "vehicle" and dose.ordered
    assert [(o.name, o.role) for o in plan.outcomes] == [
        ("wound_area", "primary"), ("reepithelialisation", "secondary"), ("granulation", "secondary")]
    (c1,) = plan.contrasts
    assert (c1.id, c1.factor, c1.kind, c1.alternative) == ("C1", "dose", "versus-control", "two-sided")
    assert plan.multiplicity.method == "dunnett" and plan.multiplicity.scope == "per-outcome"
    assert plan.hypotheses_of(c1) == 4
    (e1,) = plan.exploratory
    assert (e1.id, e1.kind, e1.outcomes) == ("E1", "trend", ("wound_area",))
    (x1,) = plan.data.exclusions
    assert (x1.id, x1.column, x1.equals) == ("X1", "dressing_lost", "yes")
    for factor in plan.design.factors:
        assert {r[factor.name] for r in rows} == set(factor.levels), factor.name
    assert plan.data.planned_n.per_group == 12


def test_study_file_passes_the_published_json_schema():
    plan, validator = validate_study_file(DEMO / "study.yaml")
    wrong = {**plan, "multiplicity": {**plan["multiplicity"], "method": "dunnet"}}
    assert not validator.is_valid(wrong)


def test_check_lists_the_run_and_writes_nothing(tmp_path):
    shutil.copytree(DEMO, tmp_path / "study", ignore=shutil.ignore_patterns("__pycache__"))
    before = sorted(p.relative_to(tmp_path) for p in tmp_path.rglob("*"))
    code, out, err = run_cli(["check", "study/study.yaml"], tmp_path)
    assert (code, err) == (0, "")
    assert sorted(p.relative_to(tmp_path) for p in tmp_path.rglob("*")) == before
    lines = out.splitlines()
    # counts from generate.py: 12 per dose; M014 (vehicle), M029 and M055 (3 mg/kg) excluded
    assert "units read: vehicle 12, 1 mg/kg 12, 3 mg/kg 12, 10 mg/kg 12, 30 mg/kg 12" in lines
    assert "units excluded by X1: M014, M029, M055" in lines
    assert "eligible: vehicle 11, 1 mg/kg 12, 3 mg/kg 10, 10 mg/kg 12, 30 mg/kg 12" in lines
    assert ("outcome wound_area (primary): analysed vehicle 10, 1 mg/kg 11, 3 mg/kg 10, "
            "10 mg/kg 12, 30 mg/kg 12; missing 2") in lines
    # every registered check of the study file is announced for this design too
    design = next(line for line in lines if line.startswith("per outcome, at alpha 0.05:"))
    assert design.endswith("partial eta and omega squared and Cohen's f with CIs; estimated "
                           "marginal means; homogeneity of slopes; diagnostics: shapiro-wilk, "
                           "brown-forsythe, studentized residuals beyond 3")
    assert lines[-1] == "nothing was written"
