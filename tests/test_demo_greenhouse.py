"""The greenhouse-split demo: its seeded generator, its data and its study file.

The data are INVENTED by studies/greenhouse-split/generate.py; the checks below hold the
generator to what its README says (layout, missed visits, the effects built in).
"""

from __future__ import annotations

from collections import Counter

import numpy as np
import pytest

from appendix.plan.load import load_plan
from tests.demos import (REPO, assert_invented_with_caution, assert_rewrites_byte_for_byte,
                         load_generator, read_rows, validate_study_file)

DEMO = REPO / "studies" / "greenhouse-split"

gen = load_generator(DEMO)


@pytest.fixture(scope="module")
def rows() -> list[dict[str, str]]:
    return read_rows(DEMO / "data" / "pots.csv")


def test_generator_rewrites_the_committed_file_byte_for_byte(tmp_path):
    committed = assert_rewrites_byte_for_byte(DEMO, DEMO / "data" / "pots.csv", tmp_path, 216)
    assert committed.startswith(b"pot_id,bench,coating,irrigation,visit,baseline_height_mm,"
                                b"chlorophyll_index,dry_mass_g\nG001,")


def test_long_format_one_row_per_pot_and_visit(rows):
    assert len(rows) == 72 * 3
    by_pot: dict[str, list[dict[str, str]]] = {}
    for row in rows:
        by_pot.setdefault(row["pot_id"], []).append(row)
    assert list(by_pot) == [f"G{i:03d}" for i in range(1, 73)]
    for pot_rows in by_pot.values():
        assert [r["visit"] for r in pot_rows] == ["day7", "day14", "day21"]
        # between-unit columns repeat on each of a pot's rows
        for column in ("bench", "coating", "irrigation", "baseline_height_mm", "dry_mass_g"):
            assert len({r[column] for r in pot_rows}) == 1, column
    assert {r["bench"] for r in rows} == {"B1", "B2", "B3", "B4"}


def test_twelve_pots_per_cell_three_per_cell_on_each_bench(rows):
    first_rows = [r for r in rows if r["visit"] == "day7"]
    cells = Counter((r["coating"], r["irrigation"]) for r in first_rows)
    assert cells == {(c, w): 12 for c in ("none", "thin", "thick") for w in ("steady", "pulsed")}
    per_bench = Counter((r["bench"], r["coating"], r["irrigation"]) for r in first_rows)
    assert set(per_bench.values()) == {3} and len(per_bench) == 4 * 6
    assert Counter(r["bench"] for r in first_rows) == {b: 18 for b in ("B1", "B2", "B3", "B4")}


def test_five_missed_visits_on_five_pots_and_nothing_else_missing(rows):
    missed = [r for r in rows if r["chlorophyll_index"] == ""]
    assert len(missed) == 5
    assert len({r["pot_id"] for r in missed}) == 5  # complete units keeps 67 of 72 pots
    assert all(r["visit"] != "day7" for r in missed)
    for column in ("baseline_height_mm", "dry_mass_g"):
        assert all(r[column] for r in rows)
    values = [float(r["chlorophyll_index"]) for r in rows if r["chlorophyll_index"]]
    assert 15 < min(values) and max(values) < 55  # a plausible index range


def _pot_table(rows):
    incomplete = {r["pot_id"] for r in rows if not r["chlorophyll_index"]}
    complete = {r["pot_id"] for r in rows} - incomplete
    return [r for r in rows if r["pot_id"] in complete]


def test_the_effects_the_readme_names_are_in_the_data(rows):
    data = _pot_table(rows)
    y = np.array([float(r["chlorophyll_index"]) for r in data])

    def dummies(column, levels):
        return [np.array([r[column] == level for r in data], float) for level in levels]

    visit = dummies("visit", ("day14", "day21"))
    coating = dummies("coating", ("thin", "thick"))
    pulsed = dummies("irrigation", ("pulsed",))
    bench = dummies("bench", ("B2", "B3", "B4"))
    baseline = np.array([float(r["baseline_height_mm"]) for r in data])
    columns = [np.ones(len(y)), *visit, *coating, *pulsed, *bench, baseline - baseline.mean(),
               *(c * v for c in coating for v in visit), *(c * pulsed[0] for c in coating)]
    beta, *_ = np.linalg.lstsq(np.column_stack(columns), y, rcond=None)
    names = ["1", "day14", "day21", "thin", "thick", "pulsed", "B2", "B3", "B4", "baseline",
             "thin:day14", "thin:day21", "thick:day14", "thick:day21",
             "thin:pulsed", "thick:pulsed"]
    fit = dict(zip(names, beta))
    # true values from generate.py; tolerances two to three standard errors for 67 pots
    # (common practice, no source)
    assert fit["baseline"] == pytest.approx(gen.CHLOROPHYLL_SLOPE, abs=0.08)
    assert fit["day21"] == pytest.approx(7.0, abs=0.8)
    assert fit["thick:day21"] == pytest.approx(4.6 - 1.2, abs=1.2)  # coating x visit
    assert fit["thick:day21"] > 1.5
    assert fit["B2"] - fit["B3"] == pytest.approx(2.1, abs=1.2)  # block effect
    assert fit["thick"] == pytest.approx(1.2, abs=1.2)


def test_readme_says_the_data_are_invented_and_carries_the_caution():
    assert_invented_with_caution(DEMO)


def test_study_file_registers_the_design_and_matches_the_data(rows):
    plan = load_plan(DEMO / "study.yaml").plan
    assert [f.name for f in plan.treatments] == ["coating", "irrigation"]
    assert [f.name for f in plan.blocks] == ["bench"]
    assert [f.name for f in plan.within_factors] == ["visit"] and plan.repeated.missing == "complete-units"
    assert plan.design.interactions == (("coating", "irrigation"), ("coating", "visit"))
    assert [c.data_column for c in plan.design.covariates] == ["baseline_height_mm"]
    assert plan.design.sums_of_squares == 3
    assert plan.model_terms == (("baseline",), ("bench",), ("coating",), ("irrigation",),
                                ("coating", "irrigation"))
    c1, c2 = plan.contrasts
    assert (c1.id, c1.factor, c1.kind, c1.by) == ("C1", "coating", "versus-control", None)
    assert (c2.id, c2.factor, c2.kind, c2.by) == ("C2", "coating", "pairwise", "irrigation")
    assert plan.multiplicity.method == "holm"
    # 2 comparisons with the control; 3 pairs in each of the 2 irrigation regimes
    assert [plan.hypotheses_of(c) for c in plan.contrasts] == [2, 6]
    for factor in plan.design.factors:
        in_data = {r[factor.name] for r in rows}
        assert in_data == set(factor.levels), factor.name
    assert plan.data.planned_n.per_group == 12


def test_study_file_passes_the_published_json_schema():
    plan, validator = validate_study_file(DEMO / "study.yaml")
    wrong = {**plan, "design": {**plan["design"], "sums_of_squares": 4}}
    assert not validator.is_valid(wrong)
