"""Plan + data -> Dataset: exclusions, missing values, unit flow, and data errors."""

from __future__ import annotations

import hashlib

import numpy as np
import pandas as pd
import pytest

from appendix.data.build import build_dataset
from appendix.errors import DataError
from appendix.plan.load import load_plan
from appendix.results import Finding, LevelCount
from tests.data.helpers import (invented_units, write_delimited, write_dta, write_parquet,
                                write_study, write_sav, write_xlsx, write_xpt)

LEVELS = ["placebo", "low", "high"]
HEADER = "unit_id,arm,violated,dose,pain,sleep\n"


def _build(tmp_path, csv_text: str, planned: int = 1):
    (tmp_path / "units.csv").write_text(HEADER + csv_text, encoding="utf-8")
    return build_dataset(load_plan(write_study(tmp_path, "units.csv", planned)))


def _error(tmp_path, csv_text: str) -> str:
    with pytest.raises(DataError) as caught:
        _build(tmp_path, csv_text)
    return str(caught.value)


def _counts(series: pd.Series) -> tuple[LevelCount, ...]:
    counted = series.value_counts()
    return tuple(LevelCount(level, int(counted.get(level, 0))) for level in LEVELS)


def test_unit_flow_matches_pandas(tmp_path):
    frame = invented_units(per_level=30)
    write_delimited(frame, tmp_path / "units.csv")
    dataset = build_dataset(load_plan(write_study(tmp_path, "units.csv", planned=30)))
    flow = dataset.unit_flow
    # Independent reference: the same rules as pandas filters (pandas 3.1.1).
    x1 = frame["violated"] == "yes"
    x2 = ~x1 & (frame["dose"] == "0")
    eligible = frame[~x1 & ~x2]
    assert flow.read == _counts(frame["arm"])
    assert [e.rule for e in flow.exclusions] == ["X1", "X2"]
    assert flow.exclusions[0].by_level == _counts(frame.loc[x1, "arm"])
    assert flow.exclusions[1].by_level == _counts(frame.loc[x2, "arm"])
    assert flow.exclusions[1].total == int(x2.sum()) > 0
    assert flow.eligible == _counts(eligible["arm"])
    for outcome, column in zip(flow.outcomes, ("pain", "sleep")):
        gone = eligible[column].isin(["", "NA"])
        assert outcome.missing == _counts(eligible.loc[gone, "arm"])
        assert outcome.analysed == _counts(eligible.loc[~gone, "arm"])
        assert sum(c.n for c in outcome.missing) > 0
        data = dataset.outcome(column)
        kept = eligible[~gone]
        np.testing.assert_array_equal(data.values, kept[column].astype(float).to_numpy())
        assert data.units == tuple(kept["unit_id"])
        assert [dataset.levels[c] for c in data.codes] == list(kept["arm"])
        assert data.lines == tuple(int(i) + 2 for i in kept.index)


def test_arrays_are_read_only(tmp_path):
    dataset = _build(tmp_path, "u1,placebo,no,5,1.5,7\nu2,low,no,5,2,8\nu3,high,no,5,3,9\n")
    data = dataset.outcome("pain")
    assert data.values.dtype == np.float64
    with pytest.raises(ValueError):
        data.values[0] = 0.0
    with pytest.raises(ValueError):
        data.codes[0] = 1


def test_inputs_are_hashed(tmp_path):
    dataset = _build(tmp_path, "u1,placebo,no,5,1.5,7\nu2,low,no,5,2,8\nu3,high,no,5,3,9\n")
    study, data = dataset.inputs
    assert (study.role, study.path, data.role, data.path) == ("study", "study.yaml", "data", "units.csv")
    content = (tmp_path / "units.csv").read_bytes()
    assert (data.sha256, data.bytes) == (hashlib.sha256(content).hexdigest(), len(content))


@pytest.mark.parametrize("writer, ext", [(write_parquet, "parquet"), (write_xlsx, "xlsx"),
                                         (write_xpt, "xpt"), (write_dta, "dta"),
                                         (write_sav, "sav")])
def test_typed_formats_give_the_same_dataset(tmp_path, writer, ext):
    frame = invented_units()
    write_delimited(frame, tmp_path / "units.csv")
    expected = build_dataset(load_plan(write_study(tmp_path, "units.csv")))
    writer(frame, tmp_path / f"units.{ext}")
    got = build_dataset(load_plan(write_study(tmp_path, f"units.{ext}")))
    assert got.unit_flow == expected.unit_flow
    for a, b in zip(got.outcomes, expected.outcomes):
        np.testing.assert_array_equal(a.values, b.values)
        assert (a.units, a.lines) == (b.units, b.lines)


def test_findings(tmp_path):
    dataset = _build(tmp_path, "u1,placebo,no,5,1.5,7\nu2,placebo,no,5,2.5,8\n"
                               "u3,low,yes,5,3,9\nu4,high,no,5,,9\nu5,high,no,5,NA,9\n", planned=2)
    assert dataset.findings == (
        Finding("level-without-units", "No eligible units at level 'low' of arm (all 1 excluded)."),
        # planned numbers count analysed units, as the deviations' minimum does
        Finding("below-planned-n", "Level 'high' of arm: units analysed: 0 for Pain score, 2 for "
                                   "Sleep hours; "
                                   "2 planned per group."),
        Finding("level-without-values",
                "Outcome Pain score: no analysed values at level 'high' (2 eligible units, all "
                "missing)."),
    )
    dataset = _build(tmp_path, "u1,placebo,no,5,1.5,7\nu2,high,no,5,2,9\nu3,high,no,5,3,9\n", planned=2)
    assert dataset.findings == (
        Finding("level-without-units", "No eligible units at level 'low' of arm (none in the data)."),
        Finding("below-planned-n", "Level 'placebo' of arm: 1 unit analysed; 2 planned per group."),
    )


def test_unknown_level_names_lines_and_suggests(tmp_path):
    path = tmp_path / "units.csv"
    message = _error(tmp_path, "u1,placebo,no,5,1,7\nu2,Placebo,no,5,2,7\nu3,medium,no,5,3,7\n"
                               "u4,Placebo,no,5,2,7\nu5,,no,5,2,7\n")
    levels = "allowed: one of the plan's levels 'placebo', 'low' or 'high'"
    assert message == "\n".join([
        "3 problems in the data:",
        f"  {path}:3: arm: got 'Placebo' on lines 3, 5; {levels}; did you mean 'placebo'?",
        f"  {path}:4: arm: got 'medium' on line 4; {levels}",
        f"  {path}:6: arm: an empty cell on line 6; {levels}",
    ])


def test_non_numeric_cells_exact_message(tmp_path):
    path = tmp_path / "units.csv"
    message = _error(tmp_path, "u1,placebo,no,5,1.5,7\nu2,low,no,5,1,5,7\nu3,high,no,5,12 mg,x\n"
                               "u4,high,yes,5,garbage,7\n")
    allowed = "allowed: a number, or an empty cell or NA for a missing value"
    # u2 has one cell too many: a layout problem, reported before any value is read.
    assert message == (f"1 problem in the data:\n  {path}:1: the header names 6 columns "
                       "but line 3 has 7 cells")
    message = _error(tmp_path, "u1,placebo,no,5,1.5,7\nu2,low,no,5,\"1,5\",7\n"
                               "u3,high,no,5,12 mg,x\nu4,high,yes,5,garbage,7\n")
    # u4 is excluded by rule X1, so its cell is not an outcome value and is not checked.
    assert message == "\n".join([
        "3 problems in the data:",
        f"  {path}:3: pain: got '1,5'; {allowed}",
        f"  {path}:4: pain: got '12 mg'; {allowed}",
        f"  {path}:4: sleep: got 'x'; {allowed}",
    ])


def test_non_numeric_listing_is_capped(tmp_path):
    path = tmp_path / "units.csv"
    rows = "".join(f"u{i},placebo,no,5,bad{i},7\n" for i in range(25))
    problems = _error(tmp_path, rows).splitlines()
    assert problems[0] == "21 problems in the data:"
    assert problems[1] == (f"  {path}:2: pain: got 'bad0'; allowed: a number, or an empty cell "
                           "or NA for a missing value")
    assert problems[-1] == (f"  {path}: pain: ... and 5 more cells that are not numbers "
                            "(first on line 22)")


def test_unit_identifiers_present_and_unique(tmp_path):
    path = tmp_path / "units.csv"
    message = _error(tmp_path, "u1,placebo,no,5,1,7\nu1,low,no,5,2,7\n,high,no,5,3,7\nu1,high,no,5,3,7\n")
    assert message == "\n".join([
        "2 problems in the data:",
        f"  {path}:3: unit_id: unit 'u1' appears on lines 2, 3, 5; each unit must appear once",
        f"  {path}:4: unit_id: no unit identifier on line 4; every row needs one",
    ])


def test_missing_columns_point_back_to_the_plan(tmp_path):
    (tmp_path / "units.csv").write_text("unit,arm,violated,pain\nu1,placebo,no,1\n", encoding="utf-8")
    study = write_study(tmp_path, "units.csv")
    with pytest.raises(DataError) as caught:
        build_dataset(load_plan(study))
    data = tmp_path / "units.csv"
    columns = "the columns are 'unit', 'arm', 'violated' and 'pain'"
    assert str(caught.value) == "\n".join([
        "3 problems in the data:",
        f"  {data}:1: unit_id: no such column (named by data.unit at {study}:5); {columns}; "
        "did you mean 'unit'?",
        f"  {data}:1: dose: no such column (named by data.exclusions[1].column at {study}:8); "
        f"{columns}",
        f"  {data}:1: sleep: no such column (named by outcomes[1].name at {study}:15); {columns}",
    ])


def test_planned_total(tmp_path):
    (tmp_path / "units.csv").write_text(
        HEADER + "u1,placebo,no,5,1.5,7\nu2,low,no,5,2,8\nu3,high,yes,5,3,9\nu4,high,no,5,3,9\n",
        encoding="utf-8")
    study = write_study(tmp_path, "units.csv")
    text = study.read_text(encoding="utf-8").replace("{per_group: 8}", "{total: 4}")
    study.write_text(text, encoding="utf-8")
    assert build_dataset(load_plan(study)).findings == (
        Finding("below-planned-n", "In all: 3 units analysed; 4 planned."),)


def test_boolean_cells_match_true(tmp_path):
    import pyarrow as pa
    import pyarrow.parquet as pq

    pq.write_table(pa.table({
        "unit_id": ["u1", "u2", "u3", "u4"], "arm": ["placebo", "low", "high", "high"],
        "violated": [False, True, None, False], "dose": [5, 5, 5, 0],
        "pain": [1.5, 2.0, 3.0, 4.0], "sleep": [7.0, None, 8.0, 9.0],
    }), tmp_path / "units.parquet")
    study = write_study(tmp_path, "units.parquet", planned=1)
    study.write_text(study.read_text(encoding="utf-8").replace("equals: yes", "equals: true"),
                     encoding="utf-8")
    flow = build_dataset(load_plan(study)).unit_flow
    assert [(e.rule, e.equals, e.total) for e in flow.exclusions] == [("X1", "true", 1), ("X2", "0", 1)]
    assert flow.eligible == (LevelCount("placebo", 1), LevelCount("low", 0), LevelCount("high", 1))
