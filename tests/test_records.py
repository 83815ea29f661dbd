"""The run's data records (appendix.records), checked against the data files read
independently with Python's csv module."""

from __future__ import annotations

import csv
import json
from pathlib import Path

import pytest

from appendix import api
from appendix.errors import UserError
from appendix.names import RECORDS_FILE
from appendix.records import read_records, records_text, write_records

REPO = Path(__file__).resolve().parent.parent
GREENHOUSE = REPO / "studies" / "greenhouse-split" / "study.yaml"


def _csv_rows(path: Path) -> list[dict[str, str]]:
    with path.open(newline="", encoding="utf-8") as handle:
        return list(csv.DictReader(handle))


@pytest.fixture(scope="module")
def demo_computed():
    return api.compute(REPO / "studies" / "seed-coating" / "study.yaml")


def test_demo_records_hold_every_row_with_its_fate(demo_computed, tmp_path):
    assert write_records(tmp_path, demo_computed.loaded, demo_computed.dataset) == RECORDS_FILE
    records = read_records(tmp_path)
    source = _csv_rows(REPO / "studies" / "seed-coating" / "data" / "units.csv")
    assert records.skipped is None
    assert [r.unit for r in records.rows] == [row["unit_id"] for row in source]
    assert [r.line for r in records.rows] == list(range(2, len(source) + 2))
    assert records.plan_sha256 == demo_computed.loaded.sha256
    assert records.plan["outcomes"][0]["name"] == "dry_mass"
    for record, row in zip(records.rows, source):
        assert record.levels == {"coating": row["coating"]}
        assert record.excluded_by == ("X1" if row["damaged"] == "yes" else None)
        assert record.cells["damaged"] == row["damaged"]
        for outcome, column in (("dry_mass", "shoot_dry_mass_mg"), ("chlorophyll", "chlorophyll_index")):
            assert record.cells[column] == row[column]
            expected = ("excluded" if row["damaged"] == "yes" else
                        "missing" if row[column] == "" else "analysed")
            assert record.outcomes[outcome] == expected
            assert record.values[column] == (float(row[column]) if expected == "analysed" else None)


def test_demo_records_agree_with_the_dataset(demo_computed, tmp_path):
    write_records(tmp_path, demo_computed.loaded, demo_computed.dataset)
    records = read_records(tmp_path)
    for data in demo_computed.dataset.outcomes:
        analysed = [r.unit for r in records.rows if r.outcomes[data.name] == "analysed"]
        assert analysed == list(data.units)
    # 48 rows read, 2 excluded by X1 (the demo README), the rest analysed or missing
    assert sum(r.excluded_by == "X1" for r in records.rows) == 2


def test_records_are_byte_identical_for_the_same_inputs(demo_computed, tmp_path):
    first = records_text(demo_computed.loaded, demo_computed.dataset)
    again = api.compute(demo_computed.loaded.path)
    assert records_text(again.loaded, again.dataset) == first
    write_records(tmp_path, demo_computed.loaded, demo_computed.dataset)
    assert (tmp_path / RECORDS_FILE).read_bytes() == first.encode("utf-8")
    parsed = json.loads(first)
    assert list(parsed) == sorted(parsed)
    # one data row per line of the file, so the file reads well in a text diff
    row_lines = [line for line in first.splitlines() if line.startswith('{"cells":')]
    assert len(row_lines) == 48


def test_rows_above_the_limit_are_skipped_with_a_note(demo_computed, tmp_path):
    write_records(tmp_path, demo_computed.loaded, demo_computed.dataset, max_rows=47)
    records = read_records(tmp_path)
    assert records.rows is None
    assert records.skipped == ("about 48 rows, more than the 47 rows recorded row by row; "
                               "the data are identified by their checksum")
    assert records.plan_sha256 == demo_computed.loaded.sha256


def test_within_design_records_one_row_per_unit_and_level(tmp_path):
    computed = api.compute(GREENHOUSE)
    write_records(tmp_path, computed.loaded, computed.dataset)
    records = read_records(tmp_path)
    source = _csv_rows(GREENHOUSE.parent / computed.loaded.plan.data.source)
    plan = computed.loaded.plan
    (within_factor,) = plan.within_factors
    within = within_factor.name
    assert records.within_factor == within
    assert [r.key for r in records.rows] == [(row[plan.data.unit], row[within]) for row in source]
    data = computed.dataset.outcomes[0]
    levels = within_factor.levels
    position = [f.name for f in plan.design.factors].index(within)
    analysed = {(u, levels[int(c)]) for u, c in zip(data.units, data.factors[position])}
    column = plan.outcomes[0].data_column
    covariate = plan.design.covariates[0].data_column
    left_out = 0
    for record, row in zip(records.rows, source):
        status = record.outcomes[data.name]
        assert (status == "analysed") == (record.key in analysed)
        if status == "analysed":
            assert record.values[column] == float(row[column])
            assert record.values[covariate] == float(row[covariate])
        if status == "left-out":  # a value, but the unit lacks another level or its covariate
            left_out += 1
            assert record.excluded_by is None and row[column] != ""
            unit_rows = [r for r in source if r[plan.data.unit] == record.unit]
            assert any(r[column] == "" for r in unit_rows) or row[covariate] == ""
    missing_units = sum(c.n for c in computed.dataset.unit_flow.outcomes[0].missing)
    units_left_out = {r.unit for r in records.rows if r.outcomes[data.name] in ("left-out", "missing")}
    assert len(units_left_out) == missing_units
    assert left_out > 0


def test_read_records_absent_and_unreadable(tmp_path):
    assert read_records(tmp_path) is None
    (tmp_path / RECORDS_FILE).write_text('{"format_version": 9}', encoding="utf-8")
    with pytest.raises(UserError, match=r"records format 9; this version reads format 1"):
        read_records(tmp_path)
