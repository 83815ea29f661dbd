"""Hostile and careless data sources: a missing, odd or broken data file, a workbook
bomb, a flood of bad cells, values whose squares overflow and an exclusion rule that
matches nothing. Each case asserts the exit code, the first line of the message, that
no traceback is printed, and that every file of the study folder is byte for byte as
before."""

from __future__ import annotations

import os
import shutil
import zipfile
from pathlib import Path

import pandas as pd
import pytest

from tests.conftest import DEMO
from tests.hostile.helpers import hashes, run_cli


def study(tmp_path: Path, name: str) -> Path:
    """A copy of the demo study whose data.source is data/`name`; returns the data path."""
    shutil.copytree(DEMO, tmp_path / "study", ignore=shutil.ignore_patterns("__pycache__"))
    plan = tmp_path / "study" / "study.yaml"
    plan.write_text(plan.read_text().replace("source: data/units.csv", f"source: data/{name}"))
    return tmp_path / "study" / "data" / name


def demo_frame() -> pd.DataFrame:
    return pd.read_csv(DEMO / "data" / "units.csv", dtype={"unit_id": str})


def refused(tmp_path: Path, command: str, first_line: str) -> str:
    folder = tmp_path / "study"
    before = hashes(folder)
    argv = [command, "study/study.yaml"]
    if command == "run":
        argv += ["--out", "run", "--no-pdf"]
    code, out, err = run_cli(argv, tmp_path)
    assert code == 2, (out, err)
    assert "Traceback" not in err
    first = err.splitlines()[0]
    assert first.startswith("error: ") and first_line.format(d=folder / "data") in first, first
    assert hashes(folder) == before
    assert not (tmp_path / "run").exists()
    return err


# --- the source itself ----------------------------------------------------------------

def _missing(path: Path): pass
def _folder(path: Path): path.mkdir()
def _fifo(path: Path): os.mkfifo(path)
def _empty(path: Path): path.write_bytes(b"")
def _header_only(path: Path): path.write_text(",".join(demo_frame().columns) + "\n")


SOURCES = {
    "missing": (_missing, "data file not found: {d}/units.csv"),
    "folder": (_folder, "cannot read the data file {d}/units.csv: it is a folder, "
                        "not a regular file; data.source must name a file"),
    "fifo": (_fifo, "cannot read the data file {d}/units.csv: it is a named pipe (FIFO), "
                    "not a regular file; data.source must name a file"),
    "empty": (_empty, "cannot read the data file {d}/units.csv: it is empty (0 bytes); "
                      "no units were read"),
    "header-only": (_header_only, "cannot use the data file {d}/units.csv: it has a header "
                                  "but no rows; no units were read"),
}


@pytest.mark.parametrize("command", ["check", "run"])
@pytest.mark.parametrize("kind", SOURCES, ids=SOURCES)
def test_an_unusable_source_is_a_sentence(tmp_path, kind, command):
    make, words = SOURCES[kind]
    path = study(tmp_path, "units.csv")
    path.unlink()
    make(path)
    err = refused(tmp_path, command, words)
    assert len(err.splitlines()) == 1


# --- broken binary files --------------------------------------------------------------

def _write(ext: str, path: Path) -> None:
    import pyreadstat

    frame = demo_frame()
    if ext == ".parquet":
        frame.to_parquet(path)
    elif ext == ".xlsx":
        frame.to_excel(path, index=False)
    elif ext == ".dta":
        frame.to_stata(path, write_index=False)
    elif ext == ".sav":
        pyreadstat.write_sav(frame, str(path))
    else:
        pyreadstat.write_xport(frame, str(path))


BINARY = {
    ".parquet": "as a Parquet file (broken or cut short)",
    ".xlsx": "as an .xlsx workbook (broken or cut short)",
    ".dta": "as a Stata file",
    ".sav": "as an SPSS file",
    ".xpt": "as SAS transport (XPORT v5)",
}


@pytest.mark.parametrize("ext", BINARY)
def test_a_file_cut_in_half_is_a_sentence(tmp_path, ext):
    path = study(tmp_path, f"units{ext}")
    _write(ext, path)
    data = path.read_bytes()
    path.write_bytes(data[: len(data) // 2])
    refused(tmp_path, "check", f"cannot read {{d}}/units{ext} {BINARY[ext]}: ")


@pytest.mark.parametrize("ext", BINARY)
def test_garbage_bytes_are_a_sentence(tmp_path, ext):
    path = study(tmp_path, f"units{ext}")
    path.write_bytes(bytes(range(256)) * 12)
    refused(tmp_path, "check", f"cannot read {{d}}/units{ext} {BINARY[ext]}: ")


# --- workbook bombs -------------------------------------------------------------------

LAUGHS = (b'<?xml version="1.0"?>\n<!DOCTYPE lolz [<!ENTITY lol "lol">'
          + b"".join(b'<!ENTITY lol%d "%s">' % (i, (b"&lol%d;" % (i - 1) if i > 1 else b"&lol;") * 10)
                     for i in range(1, 10))
          + b']>\n<worksheet><sheetData><row><c t="inlineStr"><is><t>&lol9;</t></is></c></row>'
            b"</sheetData></worksheet>")
EXTERNAL = (b'<?xml version="1.0"?>\n<!DOCTYPE w [<!ENTITY x SYSTEM "file:///etc/passwd">]>\n'
            b'<worksheet><sheetData><row><c t="inlineStr"><is><t>&x;</t></is></c></row>'
            b"</sheetData></worksheet>")


def _with_sheet(path: Path, sheet: bytes) -> None:
    """A valid workbook of the demo data whose first sheet's XML is replaced by `sheet`."""
    plain = path.with_name("plain.xlsx")
    demo_frame().to_excel(plain, index=False)
    with zipfile.ZipFile(plain) as source, zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as out:
        for member in source.infolist():
            data = source.read(member)
            out.writestr(member, sheet if member.filename == "xl/worksheets/sheet1.xml" else data)
    plain.unlink()


@pytest.mark.parametrize("sheet", [LAUGHS, EXTERNAL], ids=["entity-expansion", "external-entity"])
def test_a_workbook_declaring_entities_is_refused_unexpanded(tmp_path, sheet):
    path = study(tmp_path, "units.xlsx")
    _with_sheet(path, sheet)
    refused(tmp_path, "check", "cannot read {d}/units.xlsx: its part xl/worksheets/sheet1.xml "
                               "declares a document type or entities (<!DOCTYPE or <!ENTITY), "
                               "which a workbook never needs; refused without expanding them")


def test_a_workbook_that_expands_beyond_bounds_is_refused(tmp_path):
    path = study(tmp_path, "units.xlsx")
    plain = tmp_path / "plain.xlsx"
    demo_frame().to_excel(plain, index=False)
    with zipfile.ZipFile(plain) as source, zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as out:
        for member in source.infolist():
            out.writestr(member, source.read(member))
        out.writestr("xl/padding.bin", b"\0" * (64 << 20))  # 64 MiB of zeros: ratio ~1000
    refused(tmp_path, "check", "cannot read {d}/units.xlsx: its parts would expand to ")


# --- a flood of bad cells -------------------------------------------------------------

BAD_ROWS = 200_000


def _flood(path: Path, column: str) -> None:
    levels = ["uncoated", "chitosan", "seaweed", "humic"]
    rows = (f"P{i},1,{levels[i % 4]},no,{'heavy' if column == 'outcome' else 41.5},36.5"
            if column == "outcome" else f"P{i},1,coat{i},no,41.5,36.5" for i in range(BAD_ROWS))
    path.write_text("unit_id,tray,coating,damaged,shoot_dry_mass_mg,chlorophyll_index\n"
                    + "\n".join(rows) + "\n")


def test_a_million_bad_outcome_cells_print_a_bounded_message(tmp_path):
    _flood(study(tmp_path, "units.csv"), "outcome")
    err = refused(tmp_path, "check", "21 problems in the data:")
    lines = err.splitlines()
    assert len(lines) == 22
    assert lines[-1] == (f"  {tmp_path}/study/data/units.csv: shoot_dry_mass_mg: ... and "
                         f"{BAD_ROWS - 20} more cells that are not numbers (first on line 22)")


def test_a_million_unknown_levels_print_a_bounded_message(tmp_path):
    _flood(study(tmp_path, "units.csv"), "level")
    err = refused(tmp_path, "check", "21 problems in the data:")
    lines = err.splitlines()
    assert len(lines) == 22
    assert lines[-1] == (f"  {tmp_path}/study/data/units.csv: coating: ... and "
                         f"{BAD_ROWS - 20} more cell texts that are no level, on "
                         f"{BAD_ROWS - 20} rows (first on line 22)")


# --- values whose squares overflow ----------------------------------------------------

@pytest.mark.parametrize("command", ["check", "run"])
@pytest.mark.parametrize("ext", [".csv", ".parquet"])
def test_values_whose_squares_overflow_are_refused(tmp_path, command, ext):
    path = study(tmp_path, f"units{ext}")
    frame = demo_frame()
    frame.loc[0, "shoot_dry_mass_mg"] = 1e300  # P001, line 2, not excluded
    frame.to_csv(path, index=False) if ext == ".csv" else frame.to_parquet(path)
    err = refused(tmp_path, command, "1 problem in the data:")
    assert err.splitlines()[1] == (
        f"  {path}:2: shoot_dry_mass_mg: got 1e+300 on 1 row; allowed: values within "
        "+-1e+100 (beyond it sums of squares overflow double precision); rescale the "
        "column (another unit)")


# --- exclusion rules at check ---------------------------------------------------------

def _check(tmp_path: Path) -> list[str]:
    before = hashes(tmp_path / "study")
    code, out, err = run_cli(["check", "study/study.yaml"], tmp_path)
    assert code == 0, err
    assert hashes(tmp_path / "study") == before
    return out.splitlines()


def test_check_says_a_rule_matches_only_another_letter_case(tmp_path):
    study(tmp_path, "units.csv")
    plan = tmp_path / "study" / "study.yaml"
    plan.write_text(plan.read_text().replace('equals: "yes"', 'equals: "Yes"'))
    lines = _check(tmp_path)
    assert ("exclusion rule X1 (damaged equals 'Yes') matched no cell, but the column holds "
            "'yes' on 2 rows, which differ only in letter case or spaces; values match "
            "exactly, so these units are not excluded") in lines


def test_check_lists_the_units_each_rule_excluded(tmp_path):
    study(tmp_path, "units.csv")
    assert "units excluded by X1: P004, P043" in _check(tmp_path)  # the demo's two damaged


def test_check_caps_the_list_of_excluded_units(tmp_path):
    path = study(tmp_path, "units.csv")
    frame = demo_frame()
    frame.loc[:, "damaged"] = "yes"
    frame.loc[:3, "damaged"] = "no"   # 4 units stay, 44 go
    frame.to_csv(path, index=False)
    ids = frame.loc[4:, "unit_id"].tolist()
    assert f"units excluded by X1: {', '.join(ids[:10])} and 34 more" in _check(tmp_path)


def test_a_flood_in_a_design_beyond_one_factor_is_capped_with_its_first_unlisted_line(tmp_path):
    """The greenhouse demo (three visits per pot) with 30 non-numeric outcome cells: 20 are
    listed, then one line saying how many more and where the first of them is."""
    from tests.conftest import REPO

    shutil.copytree(REPO / "studies" / "greenhouse-split", tmp_path / "g",
                    ignore=shutil.ignore_patterns("__pycache__"))
    data = tmp_path / "g" / "data" / "pots.csv"
    lines = data.read_text().splitlines()
    header = lines[0].split(",")
    column = header.index("chlorophyll_index")
    for i in range(1, 31):
        cells = lines[i].split(",")
        cells[column] = "n/a?"
        lines[i] = ",".join(cells)
    data.write_text("\n".join(lines) + "\n")
    code, _, err = run_cli(["check", tmp_path / "g" / "study.yaml"], tmp_path / "g")
    assert code == 2 and "Traceback" not in err
    problems = err.splitlines()
    assert len(problems) == 22   # the head line, 20 cells, the cap
    assert problems[-1].endswith("chlorophyll_index: ... and 10 more cells that are not numbers "
                                 "(first on line 22)")
