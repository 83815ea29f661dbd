"""The data file as read: named columns of text cells, and where each row came from."""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path


@dataclass(frozen=True)
class Table:
    """Cells as text, column by column; None where the file format itself stores no value.

    Text from CSV/TSV is kept exactly as written apart from surrounding spaces, so that
    decimals can later be handled exactly; typed cells (Parquet, Excel, SAS) are turned
    into text by `appendix.plan.scalars.scalar_text`. `lines[i]` is the 1-based line of
    row i in the file with the header as line 1 (for Excel, the worksheet row number);
    `header_line` is where the column names are (1 unless blank lines come first).
    """

    path: Path
    columns: tuple[str, ...]
    cells: Mapping[str, tuple[str | None, ...]]
    lines: tuple[int, ...]
    header_line: int = 1

    @property
    def n_rows(self) -> int:
        return len(self.lines)

    def column(self, name: str) -> tuple[str | None, ...]:
        return self.cells[name]

    def lines_of(self, rows: Sequence[int]) -> list[int]:
        """The file lines of row indices `rows`."""
        return [self.lines[i] for i in rows]

    def rows_of(self, column: str) -> dict[str, list[int]]:
        """Row indices of each text of `column` (spaces trimmed; "" for a cell without a
        value), in order of first appearance: the rows of each unit when `column` holds
        the unit identifiers."""
        rows: dict[str, list[int]] = {}
        for i, cell in enumerate(self.cells[column]):
            rows.setdefault("" if cell is None else cell.strip(), []).append(i)
        return rows
