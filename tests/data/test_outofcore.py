"""Out-of-core data stage: the same Dataset as the in-memory stage, from DuckDB counts.

All data here are invented (seeded `tests.data.helpers.invented_units` and small literal
files). The in-memory stage `appendix.data.build.build_dataset` is the reference for the
unit flow, findings, inputs and messages; per-level n, mean and sum of squared deviations
are checked against numpy two-pass sums of the in-memory arrays.
"""

from __future__ import annotations

import numpy as np
import pyarrow as pa
import pyarrow.parquet as pq
import pytest

from appendix.data.build import build_dataset
from appendix.data.outofcore import build_dataset_out_of_core, quotas, should_go_out_of_core
from appendix.errors import DataError, UserError
from appendix.plan.load import load_plan
from tests.data.helpers import invented_units, write_delimited, write_parquet, write_study

HEADER = "unit_id,arm,violated,dose,pain,sleep\n"
WRITERS = {"units.csv": write_delimited, "units.parquet": write_parquet}


def _loaded(tmp_path, source: str, seed: int = 20260214, per_level: int = 30):
    WRITERS[source](invented_units(seed=seed, per_level=per_level), tmp_path / source)
    return load_plan(write_study(tmp_path, source, planned=per_level - 3))


@pytest.mark.parametrize("seed", [20260214, 7, 99])
@pytest.mark.parametrize("source", sorted(WRITERS))
def test_same_flow_findings_and_cells_as_in_memory(tmp_path, source, seed):
    loaded = _loaded(tmp_path, source, seed)
    memory = build_dataset(loaded)
    outside = build_dataset_out_of_core(loaded)
    assert outside.levels == memory.levels
    assert outside.inputs == memory.inputs
    assert outside.unit_flow == memory.unit_flow
    assert outside.findings == memory.findings
    assert sum(e.total for e in outside.unit_flow.exclusions) > 0
    assert all(sum(c.n for c in o.missing) > 0 for o in outside.unit_flow.outcomes)
    for data, reference in zip(outside.outcomes, memory.outcomes):
        k = len(memory.levels)
        n = np.bincount(reference.codes, minlength=k)
        mean = np.array([reference.values[reference.codes == i].mean() for i in range(k)])
        ssd = np.array([((reference.values[reference.codes == i] - mean[i]) ** 2).sum()
                        for i in range(k)])
        np.testing.assert_array_equal(data.summary.n, n)
        np.testing.assert_allclose(data.summary.mean, mean, rtol=1e-12, atol=0)
        np.testing.assert_allclose(data.summary.ssd, ssd, rtol=1e-12, atol=0)
        assert data.sample_of == reference.values.size
        # The sample holds everyone when it may: then it is the in-memory arrays exactly.
        np.testing.assert_array_equal(data.values, reference.values)
        np.testing.assert_array_equal(data.codes, reference.codes)
        assert (data.units, data.lines) == (reference.units, reference.lines)


def test_flow_counts_match_pandas(tmp_path):
    frame = invented_units(per_level=8)
    outside = build_dataset_out_of_core(_loaded(tmp_path, "units.csv", per_level=8))
    # Independent reference: the study's rules as pandas filters (pandas 3).
    eligible = frame[(frame["violated"] != "yes") & (frame["dose"] != "0")]
    for flow, column in zip(outside.unit_flow.outcomes, ("pain", "sleep")):
        gone = eligible[column].isin(["", "NA"])
        assert [c.n for c in flow.missing] == [
            int((eligible.loc[gone, "arm"] == level).sum()) for level in outside.levels]
    # below the planned 5 per group: some outcome has fewer analysed units at the level
    analysed = {column: eligible.loc[~eligible[column].isin(["", "NA"]), "arm"]
                for column in ("pain", "sleep")}
    short = [level for level in outside.levels if (eligible["arm"] == level).any()
             and min(int((arm == level).sum()) for arm in analysed.values()) < 5]
    assert short  # the invented data fall short somewhere
    assert [f.message.split(":")[0] for f in outside.findings if f.code == "below-planned-n"] == [
        f"Level '{level}' of arm" for level in short]


@pytest.mark.parametrize("source", sorted(WRITERS))
def test_sample_is_deterministic_stratified_and_from_the_data(tmp_path, source):
    loaded = _loaded(tmp_path, source)
    first = build_dataset_out_of_core(loaded, sample_size=12)
    second = build_dataset_out_of_core(loaded, sample_size=12)
    memory = build_dataset(loaded)
    for a, b, reference in zip(first.outcomes, second.outcomes, memory.outcomes):
        np.testing.assert_array_equal(a.values, b.values)
        assert (a.units, a.lines, a.codes.tolist()) == (b.units, b.lines, b.codes.tolist())
        assert a.values.size == 12 and a.sample_of == reference.values.size
        assert np.bincount(a.codes, minlength=3).tolist() == quotas(a.summary.n.tolist(), 12)
        rows = {unit: (value, code, line) for unit, value, code, line in
                zip(reference.units, reference.values, reference.codes, reference.lines)}
        assert [rows[u] for u in a.units] == list(zip(a.values, a.codes, a.lines))
        assert list(a.lines) == sorted(a.lines)


def test_same_units_drawn_from_csv_and_parquet(tmp_path):
    (tmp_path / "p").mkdir()
    (tmp_path / "c").mkdir()
    csv = build_dataset_out_of_core(_loaded(tmp_path / "c", "units.csv"), sample_size=10)
    parquet = build_dataset_out_of_core(_loaded(tmp_path / "p", "units.parquet"), sample_size=10)
    assert csv.outcome("pain").units == parquet.outcome("pain").units


def test_quotas_largest_remainder():
    # Hand-computed: 10 * (50, 30, 20) / 100 is whole; 2 * (1, 1, 1) / 3 = 0.67 each.
    assert quotas([50, 30, 20], 10) == [5, 3, 2]
    assert quotas([1, 1, 1], 2) == [1, 1, 0]
    assert quotas([7, 0, 3], 4) == [3, 0, 1]
    assert quotas([2, 3], 10) == [2, 3]


def _both(tmp_path, body: str, planned: int = 1):
    (tmp_path / "units.csv").write_text(HEADER + body, encoding="utf-8")
    loaded = load_plan(write_study(tmp_path, "units.csv", planned))
    return loaded


def _errors(loaded, kind: type[Exception] = DataError) -> tuple[str, str]:
    """The message of each stage for a source both must refuse with `kind`."""
    with pytest.raises(kind) as outside:
        build_dataset_out_of_core(loaded)
    with pytest.raises(kind) as memory:
        build_dataset(loaded)
    return str(outside.value), str(memory.value)


LEVELS_ALLOWED = "allowed: one of the plan's levels 'placebo', 'low' or 'high'"
NUMBER_ALLOWED = "allowed: a number, or an empty cell or NA for a missing value"
ONCE = "each unit must appear once"
ERROR_CASES = {
    "unknown level": (
        "u1,placebo,no,5,1,7\nu2,hihg,no,5,2,8\nu3,high,no,5,3,9\nu4,hihg,no,5,2,8\nu5,,no,5,2,8\n",
        [f":3: arm: got 'hihg' on lines 3, 5; {LEVELS_ALLOWED}; did you mean 'high'?",
         f":6: arm: an empty cell on line 6; {LEVELS_ALLOWED}"]),
    "non-numeric (excluded unit not checked)": (
        "u1,placebo,no,5,1.5,7\nu2,low,no,5,12 mg,8\nu3,high,no,5,1e999,9\n"
        "u4,high,yes,5,skipped,9\n",
        [f":3: pain: got '12 mg'; {NUMBER_ALLOWED}", f":4: pain: got '1e999'; {NUMBER_ALLOWED}"]),
    "repeated and missing unit ids": (
        "u1,placebo,no,5,1,7\nu2,low,no,5,2,8\nu1,high,no,5,3,9\n"
        ",low,no,5,2,8\nu2,low,no,5,2,8\nu1,low,no,5,2,8\n",
        [f":4: unit_id: unit 'u1' appears on lines 2, 4, 7; {ONCE}",
         ":5: unit_id: no unit identifier on line 5; every row needs one",
         f":6: unit_id: unit 'u2' appears on lines 3, 6; {ONCE}"]),
}


@pytest.mark.parametrize("body, expected", ERROR_CASES.values(), ids=ERROR_CASES.keys())
def test_data_errors_worded_as_in_memory(tmp_path, body, expected):
    outside, memory = _errors(_both(tmp_path, body))
    where = tmp_path / "units.csv"
    assert outside == "\n".join([f"{len(expected)} problems in the data:",
                                 *(f"  {where}{line}" for line in expected)])
    assert outside == memory


CAPPED = {
    "non-numeric cells": ("".join(f"u{i},low,no,5,x{i},8\n" for i in range(25)),
                          "pain: ... and 5 more cells that are not numbers (first on line 22)"),
    # 25 units on two rows each; u20 is first seen on line 22 and again on line 47.
    "repeated units": ("".join(f"u{i},low,no,5,1,8\n" for i in range(25)) * 2,
                       "unit_id: ... and 5 more repeated units (first on line 47)"),
    "unknown levels": ("".join(f"u{i},arm{i},no,5,1,8\n" for i in range(25)),
                       "arm: ... and 5 more cell texts that are no level, on 5 rows "
                       "(first on line 22)"),
}


@pytest.mark.parametrize("body, last", CAPPED.values(), ids=CAPPED.keys())
def test_a_flood_of_one_kind_is_capped_as_in_memory(tmp_path, body, last):
    """20 problems listed, then one line for the rest with the first unlisted line."""
    outside, memory = _errors(_both(tmp_path, body))
    assert outside.splitlines()[0] == "21 problems in the data:"
    assert outside.splitlines()[-1] == f"  {tmp_path / 'units.csv'}: {last}"
    assert outside == memory


def test_missing_column_worded_as_in_memory(tmp_path):
    (tmp_path / "units.csv").write_text("unit_id,arm,violated,dose,pain\nu1,low,no,5,1\n",
                                        encoding="utf-8")
    outside, memory = _errors(load_plan(write_study(tmp_path, "units.csv", 1)))
    assert outside.startswith("1 problem in the data:\n")
    assert "sleep: no such column (named by outcomes[1].name at" in outside
    assert outside == memory


def test_exclusion_values_match_by_value_and_trimmed(tmp_path):
    # dose 0.0, 0e0 and ' 0 ' match `equals: 0`; 'YES' does not match `equals: yes`.
    loaded = _both(tmp_path, "u1,placebo,no,0.0,1,7\nu2,low,YES,5,2,8\nu3,high,no,0e0,3,9\n"
                             "u4,high,no, 0 ,4,9\nu5,low,yes,0,5,9\nu6,low,no,00,1,1\n")
    memory = build_dataset(loaded)
    outside = build_dataset_out_of_core(loaded)
    assert [e.total for e in outside.unit_flow.exclusions] == [1, 4]
    assert outside.unit_flow == memory.unit_flow


def test_typed_parquet_columns(tmp_path):
    # Boolean and float exclusion columns, an int64 unit id, levels spelled as numbers.
    table = pa.table({"unit_id": pa.array([10, 11, 12, 13, 14, 15], pa.int64()),
                      "arm": pa.array([1.0, 2.0, 3.0, 1.0, 2.0, 3.0]),
                      "violated": pa.array([False, True, False, False, None, False]),
                      "dose": pa.array([5.0, 5.0, 0.0, 5.0, float("nan"), 2.5]),
                      "pain": pa.array([1.5, 2.0, float("nan"), None, 4.0, 3.25]),
                      "sleep": pa.array([7, 8, 9, 6, 5, 4], pa.int32())})
    pq.write_table(table, tmp_path / "units.parquet")
    study = write_study(tmp_path, "units.parquet", 1)
    study.write_text(study.read_text().replace("equals: yes", "equals: TRUE")
                     .replace("[placebo, low, high], control: placebo", "[1, 2, 3]"))
    loaded = load_plan(study)
    memory = build_dataset(loaded)
    outside = build_dataset_out_of_core(loaded)
    assert [e.total for e in outside.unit_flow.exclusions] == [1, 1]
    assert outside.unit_flow == memory.unit_flow
    assert outside.findings == memory.findings
    pain = outside.outcome("pain")
    assert pain.units == ("10", "14", "15") and pain.lines == (2, 6, 7)
    assert pain.values.tolist() == [1.5, 4.0, 3.25]


def test_should_go_out_of_core(tmp_path):
    write_parquet(invented_units(per_level=10), tmp_path / "units.parquet")
    assert should_go_out_of_core(tmp_path / "units.parquet", row_limit=29)
    assert not should_go_out_of_core(tmp_path / "units.parquet", row_limit=30)
    # 1 header + 1000 rows of equal length: estimated 1001 lines.
    (tmp_path / "units.csv").write_text("a,b\n" + "1,2\n" * 1000, encoding="utf-8")
    assert should_go_out_of_core(tmp_path / "units.csv", row_limit=999)
    assert not should_go_out_of_core(tmp_path / "units.csv", row_limit=1000)
    assert not should_go_out_of_core(tmp_path / "units.xlsx", row_limit=0)


@pytest.mark.parametrize("ids", [pa.array([5, 6, 5, 7], pa.int64()),
                                 pa.array(["a", "b", "a", None])])
def test_repeated_unit_ids_in_parquet(tmp_path, ids):
    table = pa.table({"unit_id": ids, "arm": ["low", "low", "high", "high"],
                      "violated": ["no"] * 4, "dose": [5.0] * 4, "pain": [1.0, 2.0, 3.0, 4.0],
                      "sleep": [1.0, 2.0, 3.0, 4.0]})
    pq.write_table(table, tmp_path / "units.parquet")
    outside, memory = _errors(load_plan(write_study(tmp_path, "units.parquet", 1)))
    first = str(ids[0].as_py())
    assert f"unit_id: unit {first!r} appears on lines 2, 4; each unit must appear once" in outside
    assert outside == memory


def test_short_rows_are_padded_and_bom_skipped(tmp_path):
    # A row with fewer cells than the header ends in empty cells, as in memory.
    (tmp_path / "units.csv").write_bytes(b"\xef\xbb\xbf" + (
        HEADER + "u1,placebo,no,5,1\nu2,low,no,5,2,8\nu3,high,no,5,3,9\n").encode())
    loaded = load_plan(write_study(tmp_path, "units.csv", 1))
    outside = build_dataset_out_of_core(loaded)
    assert [c.n for c in outside.unit_flow.outcomes[1].missing] == [1, 0, 0]
    assert outside.unit_flow == build_dataset(loaded).unit_flow


def test_two_pass_keeps_digits_under_a_large_offset(tmp_path):
    # Invented: 3 levels x 2000 units at 1e8 + N(0, 0.01): the one-pass formula would lose
    # about 20 digits here. Reference: math.fsum (Shewchuk's exactly rounded sum), two-pass.
    import math

    rng = np.random.default_rng(11)
    codes = np.repeat([0, 1, 2], 2000)
    y = 1e8 + 0.001 * codes + rng.normal(0.0, 0.01, codes.size)
    pq.write_table(pa.table({"unit_id": np.arange(codes.size), "arm": np.array(
        ["placebo", "low", "high"])[codes], "violated": ["no"] * codes.size,
        "dose": [5.0] * codes.size, "pain": y, "sleep": y}), tmp_path / "units.parquet")
    summary = build_dataset_out_of_core(
        load_plan(write_study(tmp_path, "units.parquet", 1))).outcome("pain").summary
    for i in range(3):
        values = y[codes == i].tolist()
        mean = math.fsum(values) / len(values)
        ssd = math.fsum((v - mean) ** 2 for v in values)
        assert summary.n[i] == 2000
        assert summary.mean[i] == pytest.approx(mean, rel=1e-15)
        assert summary.ssd[i] == pytest.approx(ssd, rel=1e-12)


@pytest.mark.parametrize("threads", [1, 2])
def test_csv_lines_follow_the_file_over_many_scan_chunks(tmp_path, threads):
    # Invented 3 x 10,000 rows: many DuckDB vectors (2,048 rows each) per scan.
    loaded = _loaded(tmp_path, "units.csv", seed=5, per_level=10_000)
    memory = build_dataset(loaded).outcome("pain")
    outside = build_dataset_out_of_core(loaded, sample_size=10**6, threads=threads).outcome("pain")
    assert outside.sample_of == memory.values.size > 15_000
    assert (outside.units, outside.lines) == (memory.units, memory.lines)
    np.testing.assert_array_equal(outside.values, memory.values)


def test_a_header_without_rows_is_refused_as_in_memory(tmp_path):
    outside, memory = _errors(_both(tmp_path, ""), UserError)
    assert outside == (f"cannot use the data file {tmp_path / 'units.csv'}: it has a header but "
                       "no rows; no units were read")
    assert outside == memory


def test_values_beyond_the_limit_are_refused_as_in_memory(tmp_path):
    # 1e200 squared overflows double precision (max about 1.8e308, IEEE 754).
    body = "u1,placebo,no,5,1,7\nu2,low,no,5,1e200,8\nu3,high,no,5,-2e150,9\n"
    outside, memory = _errors(_both(tmp_path, body), UserError)
    assert outside.splitlines()[1] == (f"  {tmp_path / 'units.csv'}:3: pain: got 1e+200 on 2 rows; "
                                       "allowed: values within +-1e+100 (beyond it sums of squares "
                                       "overflow double precision); rescale the column (another unit)")
    assert outside == memory
