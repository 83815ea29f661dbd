"""The run's data records: which data went in, row by row, so that two runs can be compared.

`write_records` writes ``records.json`` into a run folder: for every row of the data file
(analysed, excluded by a registered rule, or missing), the unit identifier, its line, its
factor levels, and for each outcome, covariate and exclusion column the cell as text and
the value the analysis used, plus what became of the row in each outcome (``analysed``,
``excluded``, ``missing`` or ``left-out``: eligible with a value, yet not analysed, e.g. a
unit without a value at every cell of the within factors). It also holds the canonical plan,
so that `appendix.compare` can say key by key what changed in it.

Format (our own): canonical JSON (sorted keys, no NaN, UTF-8), one data row per line of
the file so that the file itself reads well in a line-based text diff; the same inputs
give a byte-identical file. Above `MAX_ROWS` rows (and for sources aggregated out of
core) the rows are not written: ``rows`` is null and ``skipped`` says why, so that a
ten-million-row run is not slowed by a file nobody could read; the diff then compares
the data by checksum only.

>>> write_records(staging, loaded, dataset)  # doctest: +SKIP
'records.json'
"""

from __future__ import annotations

import json
from collections.abc import Mapping
from dataclasses import dataclass
from functools import cache
from pathlib import Path
from typing import Any

from appendix.data.dataset import Dataset
from appendix.data.readers import read_table
from appendix.data.table import Table
from appendix.data.values import is_missing, match_key
from appendix.errors import UserError
from appendix.names import RECORDS_FILE
from appendix.plan.load import LoadedPlan
from appendix.results import first_errors

RECORDS_FORMAT = 1

#: Rows above which the records hold no rows, only a note. A row takes about 200 bytes
#: here, so the file stays under about 40 MB; the figure is a judgement (common practice,
#: no source): far more rows than a designed study of units has, far fewer than a
#: sensor log.
MAX_ROWS = 200_000

#: What became of a row in one outcome.
STATUSES = ("analysed", "excluded", "missing", "left-out")


@dataclass(frozen=True)
class ColumnInfo:
    """A data column the plan names: `role` ``outcome``, ``covariate`` or ``exclusion``;
    `name` is the outcome's or covariate's name, or the exclusion rule's id."""

    column: str
    role: str
    name: str


@dataclass(frozen=True)
class RowRecord:
    """One data row. `within` is its cell of the within factors, their cells' texts joined
    by ' × ' (a single within factor: its level; None without one);
    `cells` the text of each named column (None where the format stores no value);
    `values` the number the analysis used from each outcome or covariate column (None
    where the row was not analysed); `outcomes` the row's status per outcome name."""

    unit: str
    within: str | None
    line: int
    levels: Mapping[str, str | None]
    excluded_by: str | None
    cells: Mapping[str, str | None]
    values: Mapping[str, float | None]
    outcomes: Mapping[str, str]

    @property
    def key(self) -> tuple[str, str | None]:
        """What identifies the row across runs: the unit, and its within level if any."""
        return (self.unit, self.within)


@dataclass(frozen=True)
class Records:
    """A run's records as read back. `rows` is None when they were not written
    (`skipped` then says why); `plan` is the canonical plan as plain data."""

    format_version: int
    source: str
    unit_column: str
    within_factor: str | None
    columns: tuple[ColumnInfo, ...]
    plan: Mapping[str, Any]
    plan_sha256: str
    rows: tuple[RowRecord, ...] | None
    skipped: str | None


def write_records(folder: Path, loaded: LoadedPlan, dataset: Dataset, *,
                  max_rows: int = MAX_ROWS) -> str:
    """Write ``records.json`` into `folder` (a run folder being staged); return its
    path relative to the folder."""
    text = records_text(loaded, dataset, max_rows=max_rows)
    (Path(folder) / RECORDS_FILE).write_bytes(text.encode("utf-8"))
    return RECORDS_FILE


def records_text(loaded: LoadedPlan, dataset: Dataset, *, max_rows: int = MAX_ROWS) -> str:
    """The records file's text (see the module docstring)."""
    plan = loaded.plan
    header: dict[str, Any] = {
        "format_version": RECORDS_FORMAT,
        "source": plan.data.source,
        "unit_column": plan.data.unit,
        "within_factor": " \u00d7 ".join(f.name for f in plan.within_factors) or None,
        "columns": [_plain_column(c) for c in named_columns(loaded)],
        "plan": plan.model_dump(mode="json"),
        "plan_sha256": loaded.sha256,
    }
    skipped = _skip_reason(loaded, dataset, max_rows)
    rows = None if skipped else _rows(loaded, dataset, read_table(loaded.data_path, plan.data.sheet))
    header["skipped"] = skipped
    return _canonical(header, rows)


def named_columns(loaded: LoadedPlan) -> tuple[ColumnInfo, ...]:
    """The outcome, covariate and exclusion columns, in plan order, each column once."""
    plan = loaded.plan
    found = [ColumnInfo(o.data_column, "outcome", o.name) for o in plan.outcomes]
    found += [ColumnInfo(c.data_column, "covariate", c.name) for c in plan.design.covariates]
    found += [ColumnInfo(r.column, "exclusion", r.id) for r in plan.data.exclusions]
    seen: set[str] = set()
    unique = []
    for info in found:
        if info.column not in seen:
            seen.add(info.column)
            unique.append(info)
    return tuple(unique)


def _plain_column(info: ColumnInfo) -> dict[str, str]:
    return {"column": info.column, "role": info.role, "name": info.name}


def _skip_reason(loaded: LoadedPlan, dataset: Dataset, max_rows: int) -> str | None:
    if any(o.sample_of is not None for o in dataset.outcomes):
        return ("the source was aggregated out of core; rows are not recorded, the data "
                "are identified by their checksum")
    units = sum(count.n for count in dataset.unit_flow.read)
    rows = units * (len(loaded.plan.within_cells) or 1)
    if rows > max_rows:
        return (f"about {rows} rows, more than the {max_rows} rows recorded row by row; "
                "the data are identified by their checksum")
    return None


def _unit_exclusions(loaded: LoadedPlan, table: Table, units: list[str]) -> dict[str, str]:
    """The rule that set each unit aside: the first in plan order that any of its rows
    matches (as `appendix.data.exclusions` and `appendix.data.build_rows` apply them)."""
    excluded: dict[str, str] = {}
    for rule in loaded.plan.data.exclusions:
        target = match_key(rule.equals)
        for unit, cell in zip(units, table.column(rule.column)):
            if unit not in excluded and match_key(cell) == target:
                excluded[unit] = rule.id
    return excluded


def _analysed_by_line(dataset: Dataset) -> dict[str, dict[int, int]]:
    """Per outcome, each analysed row's file line -> its index in the outcome's arrays."""
    return {o.name: {int(line): i for i, line in enumerate(o.lines)} for o in dataset.outcomes}


def _rows(loaded: LoadedPlan, dataset: Dataset, table: Table) -> list[dict[str, Any]]:
    plan = loaded.plan
    units = [str(cell) for cell in table.column(plan.data.unit)]
    excluded = _unit_exclusions(loaded, table, units)
    analysed = _analysed_by_line(dataset)
    data = {o.name: o for o in dataset.outcomes}
    columns = named_columns(loaded)
    # each outcome's covariates are its own (`Plan.covariates_for`), in plan order
    covariate_index = {o.name: {c.name: j for j, c in enumerate(plan.covariates_for(o.name))}
                       for o in plan.outcomes}
    within = [table.column(f.name) for f in plan.within_factors]
    rows = []
    for i, line in enumerate(table.lines):
        unit = units[i]
        statuses: dict[str, str] = {}
        values: dict[str, float | None] = {}
        used_in = []  # the outcomes that analysed the row (covariate values from them)
        for outcome in plan.outcomes:
            index = analysed[outcome.name].get(line)
            cell = table.column(outcome.data_column)[i]
            if index is not None:
                statuses[outcome.name] = "analysed"
                values[outcome.data_column] = float(data[outcome.name].values[index])
                used_in.append((outcome.name, index))
            else:
                statuses[outcome.name] = ("excluded" if unit in excluded else
                                          "missing" if is_missing(cell) else "left-out")
                values.setdefault(outcome.data_column, None)
        for info in columns:
            if info.role == "covariate":
                # from the first outcome that analysed the row with this covariate
                value = next((float(data[name].covariates[covariate_index[name][info.name]][index])
                              for name, index in used_in if info.name in covariate_index[name]), None)
                values.setdefault(info.column, value)
        rows.append({
            "unit": unit,
            "within": (None if not within else within[0][i] if len(within) == 1
                       else " \u00d7 ".join(str(column[i] or "") for column in within)),
            "line": line,
            "levels": {f.name: table.column(f.name)[i] for f in plan.design.factors},
            "excluded_by": excluded.get(unit),
            "cells": {info.column: table.column(info.column)[i] for info in columns},
            "values": values,
            "outcomes": statuses,
        })
    return rows


def _dumps(value: Any) -> str:
    return json.dumps(value, sort_keys=True, separators=(",", ":"), ensure_ascii=False,
                      allow_nan=False)


def _canonical(header: Mapping[str, Any], rows: list[dict[str, Any]] | None) -> str:
    """Sorted keys throughout; the rows one per line."""
    parts = dict(header)
    parts["rows"] = None
    lines = []
    for key in sorted(parts):
        if key == "rows" and rows is not None:
            body = ",\n".join(_dumps(row) for row in rows)
            lines.append(f'"rows": [\n{body}\n]' if rows else '"rows": []')
        else:
            lines.append(f"{_dumps(key)}: {_dumps(parts[key])}")
    return "{\n" + ",\n".join(lines) + "\n}\n"


def read_records(folder: Path) -> Records | None:
    """The records of a run folder, or None when it has none (a run made before records
    were written), read once and checked against the declared types of `Records`. Raises
    `UserError` for a file that is not a records file of this version."""
    from pydantic import ValidationError

    path = Path(folder) / RECORDS_FILE
    if not path.is_file():
        return None
    try:
        raw = json.loads(path.read_text(encoding="utf-8"))
        version = raw.get("format_version") if isinstance(raw, dict) else None
        if version != RECORDS_FORMAT:
            raise UserError(f"{path}: records format {version!r}; this version reads "
                            f"format {RECORDS_FORMAT}")
        return _records_reader().validate_python(raw)
    except ValidationError as error:
        raise UserError(f"{path} is not a records file this version can read "
                        f"({first_errors(error)})") from None
    except (ValueError, RecursionError) as error:
        raise UserError(f"{path} is not a records file this version can read ({error!r})") from None


@cache
def _records_reader():
    from pydantic import TypeAdapter

    return TypeAdapter(Records)


# A key that no field declares is an error when records are read back.
for _type in (ColumnInfo, RowRecord, Records):
    _type.__pydantic_config__ = {"extra": "forbid"}
