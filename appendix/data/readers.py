"""Readers: one data file in, one `Table` out. Files are only ever opened for reading.

Formats, by file name ending (case ignored): ``.csv`` and ``.tsv`` (UTF-8 text, RFC 4180
quoting; a quoted cell may span lines), ``.parquet`` (pyarrow), ``.xlsx`` (openpyxl; the
first worksheet unless `sheet` is given; formulas give their last computed value), and
``.xpt`` (SAS transport version 5, SAS TS-140, via pandas), ``.dta`` (Stata, via
pandas), and ``.sav`` (SPSS, via pyreadstat); value labels are read as the level text.

To add a format: write a function ``(path, sheet) -> Table`` that opens the file with
``open(path, "rb")`` and hands its header and rows to `_table`, register its ending in
`_READERS`, and add the ending to `appendix.plan.checks.DATA_FORMATS`.
"""

from __future__ import annotations

import csv
from collections.abc import Callable, Iterable, Sequence
from pathlib import Path
from types import MappingProxyType

from appendix.data.source import require_data_file
from appendix.data.table import Table
from appendix.errors import DataError, Problem, UserError
from appendix.plan.model import DATA_FORMATS
from appendix.plan.scalars import scalar_text
from appendix.plan.wording import capped, one_of, show

#: At most this many ragged rows are listed one by one.
LISTED = 20


def read_table(path: Path, sheet: str | None = None) -> Table:
    """Read a data file by its ending; `sheet` picks an Excel worksheet.

    Raises `UserError` for a missing file or an unknown ending, `DataError` for a file
    whose layout is broken (ragged rows, unnamed or repeated column names).
    """
    reader = _READERS.get(path.suffix.lower())
    if reader is None:
        raise UserError(f"cannot read {path}: unknown file type {show(path.suffix or path.name)}; "
                        f"allowed: {one_of(DATA_FORMATS)}")
    require_data_file(path)
    return reader(path, sheet)


def _table(path: Path, header: Sequence[object], rows: Iterable[tuple[int, Sequence[object]]],
           header_line: int) -> Table:
    """A `Table` from a header and (line, cells) rows, with every layout problem collected."""
    where = str(path)
    problems: list[Problem] = []
    columns = tuple(scalar_text(name) or "" for name in header)
    while columns and columns[-1] == "":  # trailing empty header cells (spreadsheets)
        columns = columns[:-1]
    seen: set[str] = set()
    for i, name in enumerate(columns):
        if name == "":
            problems.append(Problem(where, header_line, "", f"column {i + 1} has no name"))
        elif name in seen:
            problems.append(Problem(where, header_line, name, "column name given twice"))
        seen.add(name)
    width = len(columns)
    lines: list[int] = []
    body: list[list[str | None]] = [[] for _ in columns]
    ragged: list[str] = []
    for line, cells in rows:
        texts = [_cell_text(c) for c in cells]
        while len(texts) > width and texts[-1] in (None, ""):  # trailing empties are harmless
            texts.pop()
        if len(texts) > width:
            ragged.append(f"line {line} has {len(texts)} cells")
            continue
        texts += [None] * (width - len(texts))
        lines.append(line)
        for column, text in zip(body, texts):
            column.append(text)
    if ragged:
        problems.append(Problem(where, header_line, "",
                                f"the header names {width} columns but {capped(ragged, LISTED)}"))
    if problems:
        raise DataError(problems)
    cells = MappingProxyType({name: tuple(col) for name, col in zip(columns, body)})
    return Table(path=path, columns=columns, cells=cells, lines=tuple(lines),
                 header_line=header_line)


def _cell_text(value: object) -> str | None:
    text = scalar_text(value)
    return text.strip() if text is not None else None


def _delimited(delimiter: str) -> Callable[[Path, str | None], Table]:
    def read(path: Path, sheet: str | None) -> Table:
        try:
            with path.open("r", encoding="utf-8-sig", newline="") as handle:
                reader = csv.reader(handle, delimiter=delimiter, strict=True)
                numbered: list[tuple[int, list[str]]] = []
                start = 1
                for row in reader:
                    # line_num counts physical lines, so a quoted cell spanning lines
                    # still gives the row's first line.
                    if any(cell.strip() for cell in row):
                        numbered.append((start, row))
                    start = reader.line_num + 1
        except UnicodeDecodeError:
            raise UserError(f"cannot read {path}: not UTF-8 text "
                            f"(near line {start}); save it as UTF-8") from None
        except csv.Error as error:
            raise UserError(f"cannot read {path}: line {start}: {error}") from None
        if not numbered:
            raise UserError(f"cannot read {path}: the file has no header line")
        (header_line, header), rows = numbered[0], numbered[1:]
        return _table(path, header, rows, header_line)

    return read


def _numbered_rows(columns: Sequence[Sequence[object]], n: int) -> Iterable[tuple[int, list[object]]]:
    # Column-stored formats have no lines: row i (0-based) is "line" i + 2, header = 1.
    return ((i + 2, [column[i] for column in columns]) for i in range(n))


def _parquet(path: Path, sheet: str | None) -> Table:
    import pyarrow.parquet as pq

    with path.open("rb") as handle:
        data = pq.read_table(handle)
    columns = [data.column(i).to_pylist() for i in range(data.num_columns)]
    return _table(path, data.column_names, _numbered_rows(columns, data.num_rows), 1)


def _xlsx(path: Path, sheet: str | None) -> Table:
    import zipfile

    import openpyxl

    _require_safe_workbook(path)
    with path.open("rb") as handle:
        try:
            book = openpyxl.load_workbook(handle, read_only=True, data_only=True)
        except (zipfile.BadZipFile, KeyError, ValueError, OSError, EOFError) as error:
            raise UserError(f"cannot read {path} as an .xlsx workbook (broken or cut short): "
                            f"{error}") from None
        try:
            if sheet is not None and sheet not in book.sheetnames:
                raise UserError(f"cannot read {path}: no worksheet {show(sheet)}; "
                                f"the workbook has {one_of(book.sheetnames, 'and')}")
            worksheet = book[sheet] if sheet is not None else book.worksheets[0]
            rows = [(number, row) for number, row in
                    enumerate(worksheet.iter_rows(values_only=True), start=1)
                    if any(_cell_text(c) not in (None, "") for c in row)]
        finally:
            book.close()
    if not rows:
        raise UserError(f"cannot read {path}: the worksheet is empty")
    (header_line, header), body = rows[0], rows[1:]
    return _table(path, header, body, header_line)


#: Bounds on an .xlsx (a zip of XML parts), checked before the XML is parsed: the
#: expanded size of all members, and the ratio of expanded to stored size.
XLSX_MAX_EXPANDED = 2 << 30
XLSX_MAX_RATIO = 200


def _require_safe_workbook(path: Path) -> None:
    """Refuse an .xlsx whose zip would expand beyond bounds, or whose XML declares a
    document type or entities (entity expansion, "billion laughs", or external
    entities), before any XML parser sees it. Workbooks written by spreadsheet programs
    declare neither."""
    import zipfile

    try:
        with zipfile.ZipFile(path) as archive:
            members = archive.infolist()
            expanded = sum(m.file_size for m in members)
            stored = sum(m.compress_size for m in members)
            if expanded > XLSX_MAX_EXPANDED or expanded > XLSX_MAX_RATIO * max(stored, 1 << 16):
                raise UserError(f"cannot read {path}: its parts would expand to {expanded} "
                                f"bytes from {stored}, beyond the bound for a workbook; "
                                "refused unread")
            for member in members:
                if member.filename.endswith((".xml", ".rels")) and _declares_entities(archive, member):
                    raise UserError(f"cannot read {path}: its part {member.filename} declares a "
                                    "document type or entities (<!DOCTYPE or <!ENTITY), which a "
                                    "workbook never needs; refused without expanding them")
    except (zipfile.BadZipFile, OSError, EOFError) as error:
        raise UserError(f"cannot read {path} as an .xlsx workbook (broken or cut short): "
                        f"{error}") from None


def _declares_entities(archive, member) -> bool:
    # A declaration comes before the root element: the start of each part suffices, and
    # reading it whole would expand what we mean to refuse.
    with archive.open(member) as part:
        head = part.read(1 << 16).upper()
    return b"<!DOCTYPE" in head or b"<!ENTITY" in head


def _xpt(path: Path, sheet: str | None) -> Table:
    import pandas as pd

    with path.open("rb") as handle:
        try:
            # encoding=None: character cells come as bytes and are decoded below.
            frame = pd.read_sas(handle, format="xport", encoding=None)
        except (ValueError, OSError) as error:
            raise UserError(f"cannot read {path} as SAS transport (XPORT v5): {error}") from None
    columns = [[_sas_text(v) for v in frame[name].tolist()] for name in frame.columns]
    return _table(path, list(frame.columns), _numbered_rows(columns, len(frame)), 1)


#: What pandas returns for an IBM zero (pandas issue #50670): 16**-65, the smallest
#: normalised IBM double. A true value this small is no plausible measurement, so it is
#: read back as the zero it almost certainly was.
_PANDAS_IBM_ZERO = 16.0**-65


def _sas_text(value: object) -> object:
    # Character variables arrive as bytes; SAS transport files carry no encoding, so
    # UTF-8 is tried first and Latin-1 (which decodes any byte) is the fallback.
    if isinstance(value, bytes):
        try:
            return value.decode("utf-8")
        except UnicodeDecodeError:
            return value.decode("latin-1")
    if isinstance(value, float) and abs(value) == _PANDAS_IBM_ZERO:
        return 0.0
    return value


def _dta(path: Path, sheet: str | None) -> Table:
    import pandas as pd

    with path.open("rb") as handle:
        try:
            frame = pd.read_stata(handle, convert_categoricals=True)
        except (ValueError, OSError) as error:
            raise UserError(f"cannot read {path} as a Stata file: {error}") from None
    columns = [frame[name].astype(object).tolist() for name in frame.columns]
    return _table(path, list(frame.columns), _numbered_rows(columns, len(frame)), 1)


def _sav(path: Path, sheet: str | None) -> Table:
    import pyreadstat

    try:
        # pyreadstat opens the file by name, read-only; user-defined missing values are
        # read as missing, value labels as the level text.
        frame, _ = pyreadstat.read_sav(str(path), apply_value_formats=True)
    except (pyreadstat.ReadstatError, ValueError, OSError) as error:
        raise UserError(f"cannot read {path} as an SPSS file: {error}") from None
    columns = [frame[name].astype(object).tolist() for name in frame.columns]
    return _table(path, list(frame.columns), _numbered_rows(columns, len(frame)), 1)


_READERS: dict[str, Callable[[Path, str | None], Table]] = {
    ".csv": _delimited(","),
    ".tsv": _delimited("\t"),
    ".parquet": _parquet,
    ".xlsx": _xlsx,
    ".xpt": _xpt,
    ".dta": _dta,
    ".sav": _sav,
}


def formats() -> tuple[str, ...]:
    """The file endings `read_table` reads."""
    return tuple(_READERS)


__all__ = ["Table", "formats", "read_table"]
