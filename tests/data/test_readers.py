"""Readers: every format gives the same text table; files are never modified."""

from __future__ import annotations

import pytest

from appendix.hashing import sha256_and_size
from appendix.data.readers import formats, read_table
from appendix.errors import DataError, UserError
from appendix.plan.model import DATA_FORMATS
from tests.data.helpers import (invented_units, write_delimited, write_dta, write_parquet,
                                write_sav, write_xlsx, write_xpt)

WRITERS = {
    "csv": lambda f, p: write_delimited(f, p),
    "tsv": lambda f, p: write_delimited(f, p, "\t"),
    "parquet": write_parquet,
    "xlsx": write_xlsx,
    "xpt": write_xpt,
    "dta": write_dta,
    "sav": write_sav,
}


def _as_read(frame, typed: bool):
    """The cells a reader should give. Typed formats store no value where the text had
    '' or NA, and a double whose canonical text may drop trailing zeros ('5.10' -> '5.1'),
    so numeric columns are compared by value there."""
    cells = {}
    for column in frame.columns:
        values = list(frame[column])
        if typed and column in ("dose", "pain", "sleep"):
            values = [None if v in ("", "NA") else float(v) for v in values]
        cells[column] = tuple(values)
    return cells


def test_registry_matches_plan_formats():
    assert formats() == DATA_FORMATS


@pytest.mark.parametrize("ext", sorted(WRITERS))
def test_every_format_reads_the_same_cells(tmp_path, ext):
    frame = invented_units()
    path = WRITERS[ext](frame, tmp_path / f"units.{ext}")
    table = read_table(path)
    assert table.columns == tuple(frame.columns)
    assert table.lines == tuple(range(2, len(frame) + 2))
    typed = ext not in ("csv", "tsv")
    got = {c: tuple(float(v) if typed and v is not None and c in ("dose", "pain", "sleep") else v
                    for v in table.column(c)) for c in table.columns}
    assert got == _as_read(frame, typed)
    # A decimal such as 6.35 reads back as the text written (shortest round-trip text).
    assert table.column("pain")[0] == frame.loc[0, "pain"] == "6.35"


@pytest.mark.parametrize("ext", sorted(WRITERS))
def test_input_unchanged_after_reading(tmp_path, ext):
    path = WRITERS[ext](invented_units(), tmp_path / f"units.{ext}")
    before, mtime = sha256_and_size(path), path.stat().st_mtime_ns
    read_table(path)
    assert sha256_and_size(path) == before
    assert path.stat().st_mtime_ns == mtime


def test_xpt_zero_is_zero(tmp_path):
    # pandas.read_sas returns 16**-65 for an IBM zero (pandas issue #50670); we read 0.
    frame = invented_units()
    frame.loc[0, "dose"] = "0"
    table = read_table(write_xpt(frame, tmp_path / "units.xpt"))
    assert table.column("dose")[0] == "0"


def test_csv_quoted_cell_spanning_lines_keeps_true_line_numbers(tmp_path):
    path = tmp_path / "u.csv"
    path.write_text('id,note,y\n\n"a","two\nlines",1.50\n b , plain ,2\n', encoding="utf-8")
    table = read_table(path)
    assert table.lines == (3, 5)
    assert table.column("note") == ("two\nlines", "plain")
    assert table.column("y") == ("1.50", "2")
    assert table.column("id") == ("a", "b")


def test_csv_with_byte_order_mark(tmp_path):
    path = tmp_path / "u.csv"
    path.write_bytes("\ufeffid,y\nu1,3\n".encode("utf-8"))
    assert read_table(path).columns == ("id", "y")


def test_xlsx_named_sheet_and_header_row(tmp_path):
    frame = invented_units()
    path = write_xlsx(frame, tmp_path / "u.xlsx", sheet="units", first="cover")
    table = read_table(path, sheet="units")
    assert table.column("unit_id") == tuple(frame["unit_id"])
    with pytest.raises(UserError) as caught:
        read_table(path, sheet="unit")
    assert str(caught.value) == (f"cannot read {path}: no worksheet 'unit'; "
                                 "the workbook has 'cover' and 'units'")


def test_unknown_extension(tmp_path):
    path = tmp_path / "units.sas7bdat"
    path.write_bytes(b"")
    with pytest.raises(UserError) as caught:
        read_table(path)
    assert str(caught.value) == (f"cannot read {path}: unknown file type '.sas7bdat'; allowed: "
                                 "'.csv', '.tsv', '.parquet', '.xlsx', '.xpt', '.dta' or '.sav'")


def test_missing_file_names_resolved_path(tmp_path):
    with pytest.raises(UserError) as caught:
        read_table(tmp_path / "sub" / ".." / "none.csv")
    assert str(caught.value) == f"data file not found: {(tmp_path / 'none.csv').resolve()}"


def test_ragged_rows_and_bad_header(tmp_path):
    path = tmp_path / "u.csv"
    # A trailing empty header cell is dropped (spreadsheet exports add them); one inside is not.
    path.write_text("id,,y,y,\nu1,a,1,2\nu2,a,1,2,3,4\nu3,a,1,2,,\n", encoding="utf-8")
    with pytest.raises(DataError) as caught:
        read_table(path)
    assert str(caught.value) == "\n".join([
        "3 problems in the data:",
        f"  {path}:1: column 2 has no name",
        f"  {path}:1: y: column name given twice",
        f"  {path}:1: the header names 4 columns but line 3 has 6 cells",
    ])


def test_not_utf8(tmp_path):
    path = tmp_path / "u.csv"
    path.write_bytes(b"id,y\nu1,caf\xe9\n")
    with pytest.raises(UserError, match="not UTF-8 text"):
        read_table(path)


def test_xlsx_rows_are_worksheet_row_numbers(tmp_path):
    import openpyxl

    book = openpyxl.Workbook()
    sheet = book.active
    sheet["A3"], sheet["B3"] = "unit_id", "pain"  # header on row 3, rows 1-2 empty
    sheet.append(["u1", 1.5])
    sheet.append([None, None])  # an empty row is skipped, its number is not reused
    sheet.append(["u2", 2])
    path = tmp_path / "u.xlsx"
    book.save(path)
    table = read_table(path)
    assert (table.header_line, table.lines) == (3, (4, 6))
    assert table.column("pain") == ("1.5", "2")
