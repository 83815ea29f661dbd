"""Number-like levels: a cell equal in value to exactly one plan level is read as it, with
a finding per spelling; otherwise the message points to a level equal or close in value.
Invented data, written here."""

from __future__ import annotations

import doctest

import pyarrow as pa
import pyarrow.parquet as pq
import pytest

import appendix.data.columnar as columnar
import appendix.data.design_vectorised as design_vectorised
import appendix.data.levels as levels_module
import appendix.data.scan as scan
from appendix.data.build import build_dataset
from appendix.data.levels import LevelReading, level_hint, reading_findings
from appendix.data.outofcore import build_dataset_out_of_core
from appendix.errors import DataError, UserError
from appendix.plan.load import load_plan
from appendix.results import Finding
from tests.data.helpers import write_study


def test_docstring_examples_hold():
    result = doctest.testmod(levels_module)
    assert result.attempted > 0 and result.failed == 0


@pytest.mark.parametrize("levels, cell, code", [
    (["1", "2", "10"], "1", 0),             # the level's own text
    (["1", "2", "10"], "1.0", 0),
    (["1", "2", "10"], "01", 0),
    (["1", "2", "10"], "1.00", 0),
    (["1", "2", "10"], "+1", 0),
    (["1", "2", "10"], "1e1", 2),           # decimal notation with an exponent is a number too
    (["1", "2", "10"], "10.", 2),
    (["0", "0.5"], "-0", 0),
    (["0", "0.5"], ".50", 1),
    (["0.10", "0.25"], "0.1", 0),           # the level written with more digits
    (["1", "2", "10"], "1.0000001", -1),    # never rounded
    (["0.3", "1"], "0.30000000000000004", -1),
    (["1", "2", "10"], "1,0", -1),          # not decimal notation
    (["1", "2", "10"], "one", -1),
    (["1", "2", "10"], "", -1),
    (["1", "1.0", "2"], "1.00", -1),        # equal to two levels: neither
    (["1", "1.0", "2"], "1.0", 1),          # a level's own text wins
    (["1", "placebo"], "1.0", -1),          # a level that is not a number: text only
    (["1", "placebo"], "1", 0),
    (["1", "2"], "1e" + "9" * 20, -1),      # an exponent beyond decimal arithmetic
])
def test_cells_read_as_levels(levels, cell, code):
    assert LevelReading.of(levels).code(cell) == code


def test_reading_by_value_needs_every_level_a_number():
    assert LevelReading.of(["1", "2.5", "-3", "010"]).by_value is not None
    assert LevelReading.of(["1", "2", "high"]).by_value is None
    assert LevelReading.of(["1", "2", "1,5"]).by_value is None


def test_findings_per_spelling_in_plan_order_then_first_appearance():
    found = reading_findings("dose", ["1", "2"], {("2.0", 1): 3, ("1.0", 0): 12, ("01", 0): 1})
    assert found == (
        Finding("level-read-by-value",
                "dose: 12 cells written '1.0' were read as the plan's level '1' (equal in value)."),
        Finding("level-read-by-value",
                "dose: 1 cell written '01' was read as the plan's level '1' (equal in value)."),
        Finding("level-read-by-value",
                "dose: 3 cells written '2.0' were read as the plan's level '2' (equal in value)."),
    )


CLOSE_HINT = "(close in value but not equal; levels are never rounded)"


@pytest.mark.parametrize("cell, levels, hint", [
    ("1.0000001", ["1", "2", "10"], f"; did you mean '1'? {CLOSE_HINT}"),
    ("0.999", ["1", "2", "10"], f"; did you mean '1'? {CLOSE_HINT}"),
    ("9.995", ["1", "2", "10"], f"; did you mean '10'? {CLOSE_HINT}"),
    ("9.95", ["1", "2", "10"], ""),
    # Close means within 1% of the smaller of the level's size and the smallest gap.
    ("1.02", ["1", "2", "10"], ""),                      # and no level spelled alike ('10')
    ("0.001", ["0", "5"], f"; did you mean '0'? {CLOSE_HINT}"),
    ("1", ["0.001", "100"], ""),
    ("1.5", ["1", "2"], ""),
    ("1.00", ["1", "1.0", "2"], "; equal in value to the levels '1' and '1.0', so read as neither"),
    ("1.0", ["1", "placebo"],
     "; did you mean '1'? (equal in value, but cells are read by value only when every level is a number)"),
    ("1.0000001", ["1", "placebo"], f"; did you mean '1'? {CLOSE_HINT}"),
    ("10", ["1", "2", "5"], ""),
    ("10", ["1", "2", "ten"], ""),
    ("1O", ["1", "2", "5"], "; did you mean '1'?"),        # not a number: a near spelling
    ("placebo1", ["placebo", "1"], "; did you mean 'placebo'?"),
    ("Placebo", ["placebo", "1"], "; did you mean 'placebo'?"),
    ("1e" + "9" * 20, ["1", "2"], ""),
    ("1,0", ["1", "2", "10"], "; did you mean '1'? (numbers are written with a decimal point)"),
    ("2,5", ["1", "2.5", "high"], "; did you mean '2.5'? (numbers are written with a decimal point)"),
    ("1,5", ["1", "2", "10"], ""),
])
def test_hints_for_cells_read_as_no_level(cell, levels, hint):
    assert LevelReading.of(levels).code(cell) == -1
    assert level_hint(cell, levels) == hint


# --- the data stage, every path --------------------------------------------------------

HEADER = "unit_id,arm,violated,dose,pain,sleep\n"
NUMERIC = "[1, 2, 10], control: 1"
ALLOWED = "allowed: one of the plan's levels '1', '2' or '10'"


def _read(finding_level: str, n: int, spelling: str, column: str = "arm") -> Finding:
    cells = f"{n} cells written '{spelling}' were" if n != 1 else f"1 cell written '{spelling}' was"
    return Finding("level-read-by-value",
                   f"{column}: {cells} read as the plan's level '{finding_level}' (equal in value).")


def _every_path(monkeypatch, loaded, out_of_core: bool = False) -> list:
    """The Dataset (or the error) of each path that can read the plan's file: the compiled
    pass (files of any size), the pyarrow path, the row-by-row path, and out of core."""
    def built(build=build_dataset):
        try:
            return build(loaded)
        except (DataError, UserError) as error:
            return error

    found = []
    with monkeypatch.context() as patch:
        patch.setattr(scan, "SCAN_MIN_BYTES", 0)
        found.append(built())
        patch.setattr(scan, "SCAN_MIN_BYTES", 1 << 62)
        found.append(built())
        patch.setattr(columnar, "read_columns", lambda *args: None)
        found.append(built())
    if out_of_core:
        found.append(built(build_dataset_out_of_core))
    return found


def _one_factor(tmp_path, body: str, arm: str = NUMERIC, name: str = "units.csv"):
    (tmp_path / name).write_text(HEADER + body, encoding="utf-8")
    return load_plan(write_study(tmp_path, name, 1, arm=arm))


def test_csv_cells_equal_in_value_are_read_as_the_level_with_a_finding(tmp_path, monkeypatch):
    loaded = _one_factor(tmp_path, "u1,1,no,5,1.5,7\nu2,1.0,no,5,2.5,8\nu3,01,no,5,3,9\n"
                                   "u4,2,no,5,4,7\nu5,2.00,yes,5,1,7\nu6,10,no,5,2,7\n"
                                   "u7,1.0,no,5,2,7\nu8,1e1,no,5,3,7\nu9, 1 ,no,5,3,7\n")
    for dataset in _every_path(monkeypatch, loaded, out_of_core=True):
        assert dataset.findings == (_read("1", 2, "1.0"), _read("1", 1, "01"),
                                    _read("2", 1, "2.00"), _read("10", 1, "1e1"))
        assert [(c.level, c.n) for c in dataset.unit_flow.read] == [("1", 5), ("2", 2), ("10", 2)]
        pain = dataset.outcome("pain")
        assert pain.units == ("u1", "u2", "u3", "u4", "u6", "u7", "u8", "u9")  # u5 excluded
        assert pain.codes.tolist() == [0, 0, 0, 1, 2, 0, 2, 0]


def test_csv_cells_read_as_no_level_name_a_level_close_or_equal_in_value(tmp_path, monkeypatch):
    loaded = _one_factor(tmp_path, 'u1,1,no,5,1.5,7\nu2,1.0000001,no,5,2,7\nu3,"1,0",no,5,2,7\n'
                                   "u4,0.5,no,5,2,7\nu5,9.9999,no,5,2,7\nu6,1.0000001,no,5,2,7\n")
    path = tmp_path / "units.csv"
    close = "(close in value but not equal; levels are never rounded)"
    expected = "\n".join([
        "4 problems in the data:",
        f"  {path}:3: arm: got '1.0000001' on lines 3, 7; {ALLOWED}; did you mean '1'? {close}",
        f"  {path}:4: arm: got '1,0' on line 4; {ALLOWED}; did you mean '1'? (numbers are "
        "written with a decimal point)",
        f"  {path}:5: arm: got '0.5' on line 5; {ALLOWED}",
        f"  {path}:6: arm: got '9.9999' on line 6; {ALLOWED}; did you mean '10'? {close}",
    ])
    for error in _every_path(monkeypatch, loaded, out_of_core=True):
        assert isinstance(error, DataError) and str(error) == expected


def test_levels_that_are_not_all_numbers_are_read_by_text_only(tmp_path, monkeypatch):
    loaded = _one_factor(tmp_path, "u1,1,no,5,1.5,7\nu2,1.0,no,5,2,7\nu3,high,no,5,2,7\n",
                         arm="[1, 2, high], control: 1")
    expected = "\n".join([
        "1 problem in the data:",
        f"  {tmp_path / 'units.csv'}:3: arm: got '1.0' on line 3; allowed: one of the plan's "
        "levels '1', '2' or 'high'; did you mean '1'? (equal in value, but cells are read by "
        "value only when every level is a number)"])
    for error in _every_path(monkeypatch, loaded, out_of_core=True):
        assert str(error) == expected


def test_a_cell_equal_to_two_levels_is_read_as_neither(tmp_path, monkeypatch):
    loaded = _one_factor(tmp_path, "u1,1,no,5,1.5,7\nu2,1.0,no,5,2,7\nu3,1.00,no,5,2,7\n",
                         arm="['1', '1.0', '2'], control: '1'")
    expected = "\n".join([
        "1 problem in the data:",
        f"  {tmp_path / 'units.csv'}:4: arm: got '1.00' on line 4; allowed: one of the plan's "
        "levels '1', '1.0' or '2'; equal in value to the levels '1' and '1.0', so read as neither"])
    for error in _every_path(monkeypatch, loaded, out_of_core=True):
        assert str(error) == expected


def test_parquet_numbers_and_texts_for_number_like_levels(tmp_path, monkeypatch):
    # A float 1.0 is the level 1 itself (its text is '1'); a text '1.0' is read by value.
    table = pa.table({"unit_id": ["u1", "u2", "u3", "u4", "u5"],
                      "arm": pa.array([1.0, 2.0, 10.0, 1.0, 2.0]),
                      "violated": ["no"] * 5, "dose": [5.0] * 5,
                      "pain": [1.5, 2.0, 3.0, 4.0, 5.0], "sleep": [7.0] * 5})
    pq.write_table(table, tmp_path / "units.parquet")
    loaded = load_plan(write_study(tmp_path, "units.parquet", 1, arm=NUMERIC))
    for dataset in (build_dataset(loaded), build_dataset_out_of_core(loaded)):
        assert dataset.findings == ()
        assert dataset.outcome("pain").codes.tolist() == [0, 1, 2, 0, 1]
    pq.write_table(table.set_column(1, "arm", pa.array(["1.0", "2", "10.00", "1.0", "2"])),
                   tmp_path / "units.parquet")
    for dataset in (build_dataset(loaded), build_dataset_out_of_core(loaded)):
        assert dataset.findings == (_read("1", 2, "1.0"), _read("10", 1, "10.00"))
        assert dataset.outcome("pain").codes.tolist() == [0, 1, 2, 0, 1]
    pq.write_table(table.set_column(1, "arm", pa.array([1.0, 2.0, 10.0, 1.0000001, 0.1 + 0.2])),
                   tmp_path / "units.parquet")
    expected = "\n".join([
        "2 problems in the data:",
        f"  {tmp_path / 'units.parquet'}:5: arm: got '1.0000001' on line 5; {ALLOWED}; did you "
        "mean '1'? (close in value but not equal; levels are never rounded)",
        f"  {tmp_path / 'units.parquet'}:6: arm: got '0.30000000000000004' on line 6; {ALLOWED}"])
    for build in (build_dataset, build_dataset_out_of_core):
        with pytest.raises(DataError) as caught:
            build(loaded)
        assert str(caught.value) == expected


def test_parquet_float_for_a_level_written_with_more_digits(tmp_path):
    table = pa.table({"unit_id": ["u1", "u2", "u3"], "arm": pa.array([0.5, 0.25, 0.5]),
                      "violated": ["no"] * 3, "dose": [5.0] * 3, "pain": [1.5, 2.0, 3.0],
                      "sleep": [7.0] * 3})
    pq.write_table(table, tmp_path / "units.parquet")
    loaded = load_plan(write_study(tmp_path, "units.parquet", 1, arm="['0.50', '0.25']"))
    for dataset in (build_dataset(loaded), build_dataset_out_of_core(loaded)):
        assert dataset.findings == (_read("0.50", 2, "0.5"),)
        assert dataset.outcome("pain").codes.tolist() == [0, 1, 0]


def test_xlsx_text_and_number_cells(tmp_path):
    import openpyxl

    book = openpyxl.Workbook()
    sheet = book.active
    sheet.append(["unit_id", "arm", "violated", "dose", "pain", "sleep"])
    for row in (["u1", 1, "no", 5, 1.5, 7], ["u2", "1.0", "no", 5, 2.5, 8], ["u3", 10.0, "no", 5, 3, 9],
                ["u4", "02", "no", 5, 4, 7], ["u5", "1.0", "no", 5, 4, 7]):
        sheet.append(row)
    book.save(tmp_path / "units.xlsx")
    dataset = build_dataset(load_plan(write_study(tmp_path, "units.xlsx", 1, arm=NUMERIC)))
    assert dataset.findings == (_read("1", 2, "1.0"), _read("2", 1, "02"))
    assert dataset.outcome("pain").codes.tolist() == [0, 0, 2, 1, 0]


DESIGN = """\
format: 1
study: {{id: invented-levels, title: Invented data for tests}}
data:
  source: rows.csv
  unit: unit_id
design:
  factors:
    - {{name: dose, label: dose level, levels: [0, 1.5]}}
    - {{name: bench, role: block, levels: [B1, B2]}}
{within}  covariates: [{{name: base, label: Baseline}}]
  sums_of_squares: 2
outcomes:
  - {{name: y, label: Response, role: primary}}
"""


def _design(tmp_path, rows: str, within: bool):
    (tmp_path / "rows.csv").write_text("unit_id,dose,bench,week,base,y\n" + rows, encoding="utf-8")
    extra = "    - {name: week, role: within, levels: [1, 2]}\n" if within else ""
    (tmp_path / "study.yaml").write_text(DESIGN.format(within=extra), encoding="utf-8")
    return load_plan(tmp_path / "study.yaml")


def _design_paths(monkeypatch, loaded) -> list:
    def built():
        try:
            return build_dataset(loaded)
        except DataError as error:
            return error

    first = built()
    with monkeypatch.context() as patch:
        patch.setattr(design_vectorised, "build_design_vectorised", lambda *args: None)
        return [first, built()]


def test_designs_read_every_factor_by_value(tmp_path, monkeypatch):
    rows = ("u1,0,B1,1,1.5,10\nu1,0.0,B1,2.0,1.5,11\n"        # the dose spelled two ways
            "u2,1.50,B2,1,2.0,12\nu2,1.50,B2,02,2.0,13\n"
            "u3,0,B1,2,1.0,8\nu3,0,B1,1.0,1.0,9\n")
    for dataset in _design_paths(monkeypatch, _design(tmp_path, rows, within=True)):
        assert dataset.findings == (_read("0", 1, "0.0", "dose"), _read("1.5", 2, "1.50", "dose"),
                                    _read("1", 1, "1.0", "week"), _read("2", 1, "2.0", "week"),
                                    _read("2", 1, "02", "week"))
        (y,) = dataset.outcomes
        assert y.units == ("u1", "u1", "u2", "u2", "u3", "u3")
        assert y.values.tolist() == [10, 11, 12, 13, 9, 8]            # by week within a unit
        assert [f.tolist() for f in y.factors] == [[0, 0, 1, 1, 0, 0], [0, 0, 1, 1, 0, 0],
                                                   [0, 1, 0, 1, 0, 1]]


def test_designs_word_cells_read_as_no_level(tmp_path, monkeypatch):
    rows = "u1,0,B1,1,1.5,10\nu2,1.5000001,B2,1,2.0,12\nu3,0,B1,1,1.0,8\n"
    expected = "\n".join([
        "1 problem in the data:",
        f"  {tmp_path / 'rows.csv'}:3: dose: got '1.5000001' on line 3; allowed: one of the plan's "
        "levels '0' or '1.5'; did you mean '1.5'? (close in value but not equal; levels are never "
        "rounded)"])
    for error in _design_paths(monkeypatch, _design(tmp_path, rows, within=False)):
        assert isinstance(error, DataError) and str(error) == expected


def test_check_reports_the_finding(demo_study):
    import io

    from appendix.cli import main

    data = demo_study.parent / "data" / "units.csv"
    numbers = {"uncoated": "0", "chitosan": "1.0", "seaweed": "2", "humic": "3"}
    lines = data.read_text(encoding="utf-8").splitlines()
    header = lines[0].split(",")
    at = header.index("coating")
    rows = [cells[:at] + [numbers[cells[at]]] + cells[at + 1:]
            for cells in (line.split(",") for line in lines[1:])]
    data.write_text("\n".join([lines[0], *(",".join(r) for r in rows)]) + "\n", encoding="utf-8")
    study = demo_study.read_text(encoding="utf-8")
    study = (study.replace("levels: [uncoated, chitosan, seaweed, humic]", "levels: [0, 1, 2, 3]")
             .replace("control: uncoated", "control: 0")
             .replace("{uncoated: -3, chitosan: 1, seaweed: 1, humic: 1}", "{0: -3, 1: 1, 2: 1, 3: 1}"))
    demo_study.write_text(study, encoding="utf-8")
    out, err = io.StringIO(), io.StringIO()
    code = main(["check", str(demo_study)], stdout=out, stderr=err, cwd=demo_study.parent)
    assert (code, err.getvalue()) == (0, "")
    # 12 seedlings per coating (see the demo's generate.py): all chitosan cells read '1.0'.
    assert ("finding: coating: 12 cells written '1.0' were read as the plan's level '1' "
            "(equal in value).") in out.getvalue().splitlines()
    assert "units read: 0 12, 1 12, 2 12, 3 12" in out.getvalue().splitlines()
