"""Plan + data file -> `Dataset`: checked, exclusions applied, counted, arrays frozen.

Checks, all collected into one `DataError`: the columns the plan names exist; unit
identifiers are present and unique; every row's level is one of the plan's levels
(its text, spaces trimmed, or for number-like levels its value: `appendix.data.levels`,
each spelling read by value becoming a finding); every eligible outcome cell is a number
or missing.
Cells of units set aside by an exclusion rule are not checked as outcomes.

A CSV/TSV file is first tried on the vectorised path (`appendix.data.vectorised`),
which reads only the named columns and accepts the file when every check passes; any
problem sends it down the row-by-row path here, which words every problem found.
"""

from __future__ import annotations

from collections import defaultdict
from collections.abc import Sequence
from concurrent.futures import ThreadPoolExecutor
from dataclasses import replace

import numpy as np

from appendix.data.checksums import study_inputs
from appendix.data.dataset import Dataset, OutcomeData, frozen_array
from appendix.data.decimals import decimal_places
from appendix.data.exclusions import apply_exclusions
from appendix.data.flow import flow_findings, level_counts
from appendix.data.levels import LevelReading, level_hint, reading_findings
from appendix.data.readers import read_table
from appendix.data.source import require_data_file
from appendix.data.table import Table
from appendix.data.values import is_missing, parse_number
from appendix.errors import DataError, Problem, UserError
from appendix.plan.load import LoadedPlan
from appendix.plan.wording import capped, did_you_mean, more_of_kind, one_of, show
from appendix.results import OutcomeFlow, UnitFlow

#: Delimited text formats: their cells are decimal text, read exactly.
_DELIMITERS = {".csv": ",", ".tsv": "\t"}

#: At most this many offending cells are listed per column and kind of problem.
LISTED = 20


#: Largest magnitude accepted in an outcome: squares and sums of squared deviations of
#: values up to this size stay far inside double precision (about 1.8e308).
VALUE_LIMIT = 1e100


def build_dataset(loaded: LoadedPlan) -> Dataset:
    """Read the plan's data source and turn it into the analysed `Dataset`; a source with
    no rows, or an outcome value beyond `VALUE_LIMIT`, is a user error."""
    dataset = _build_dataset(loaded)
    require_units(loaded, dataset)
    require_finite_range(loaded, dataset)
    return dataset


def require_units(loaded: LoadedPlan, dataset: Dataset) -> None:
    """A header with no rows gives a sentence, not an empty appendix."""
    if sum(c.n for c in dataset.unit_flow.read) == 0:
        raise UserError(f"cannot use the data file {loaded.data_path}: it has a header but no "
                        "rows; no units were read")


def require_finite_range(loaded: LoadedPlan, dataset: Dataset) -> None:
    """Every analysed value within +-`VALUE_LIMIT`, so no sum of squares overflows."""
    problems = []
    for outcome, item in zip(loaded.plan.outcomes, dataset.outcomes):
        values = item.values
        big = np.flatnonzero(np.abs(values) > VALUE_LIMIT) if values.size else ()
        if len(big):
            first = int(big[0])
            problems.append(Problem(
                str(loaded.data_path), int(item.lines[first]), outcome.data_column,
                f"got {values[first]:g} on {len(big)} row{'s' if len(big) != 1 else ''}; "
                f"allowed: values within +-{VALUE_LIMIT:g} (beyond it sums of squares "
                "overflow double precision); rescale the column (another unit)"))
    if problems:
        raise DataError(problems)


def _build_dataset(loaded: LoadedPlan) -> Dataset:
    plan = loaded.plan
    require_data_file(loaded.data_path)  # before hashing or reading opens it
    # Hashing reads the whole file once more; it runs beside the reading (hashlib and
    # pyarrow release the interpreter lock for large buffers).
    with ThreadPoolExecutor(max_workers=1) as pool:
        hashing = pool.submit(study_inputs, loaded.path, loaded.data_path)
        delimiter = _DELIMITERS.get(loaded.data_path.suffix.lower())
        if not plan.is_one_way:  # several factors, covariates or a within factor
            from appendix.data.design_build import build_design_dataset

            if delimiter is not None and loaded.data_path.is_file():
                from appendix.data.columnar import read_columns
                from appendix.data.design_vectorised import build_design_vectorised, design_columns

                columns = read_columns(loaded.data_path, delimiter, design_columns(loaded))
                built = build_design_vectorised(loaded, columns) if columns is not None else None
                if built is not None:
                    return replace(built, inputs=hashing.result())
            table = read_table(loaded.data_path, plan.data.sheet)
            return build_design_dataset(loaded, table, hashing.result(), delimiter is not None)
        if delimiter is not None and loaded.data_path.is_file():
            from appendix.data.columnar import read_columns
            from appendix.data.scan import SCAN_MIN_BYTES
            from appendix.data.vectorised import build_scanned, build_vectorised, needed_columns

            built = None
            if loaded.data_path.stat().st_size >= SCAN_MIN_BYTES:
                built = build_scanned(loaded, loaded.data_path, delimiter)
            if built is None:
                columns = read_columns(loaded.data_path, delimiter, needed_columns(loaded))
                built = build_vectorised(loaded, columns) if columns is not None else None
            if built is not None:
                return replace(built, inputs=hashing.result())
        table = read_table(loaded.data_path, plan.data.sheet)
        inputs = hashing.result()
    where = str(loaded.data_path)
    _require_columns(loaded, table)
    levels = plan.factor.levels
    problems = _unit_problems(table, plan.data.unit, where)
    codes, level_problems, respelled = _level_codes(table, plan.factor.name, levels, where)
    problems += level_problems
    if problems:
        raise DataError(problems)
    eligible, excluded = apply_exclusions(table, plan.data.exclusions, codes, levels)
    outcomes: list[OutcomeData] = []
    flows: list[OutcomeFlow] = []
    units = table.column(plan.data.unit)
    for outcome in plan.outcomes:
        column = outcome.data_column
        rows, missing, bad = _outcome_rows(table, column, eligible, where)
        problems += bad
        values = frozen_array([value for _, value in rows], dtype=np.float64)
        cells = table.column(column)
        outcomes.append(OutcomeData(
            name=outcome.name,
            values=values,
            codes=frozen_array([codes[i] for i, _ in rows], dtype=np.int64),
            units=tuple(str(units[i]) for i, _ in rows),
            lines=tuple(table.lines[i] for i, _ in rows),
            decimals=(decimal_places([cells[i] for i, _ in rows], values)
                      if delimiter is not None and not bad else None),
        ))
        flows.append(OutcomeFlow(outcome=outcome.name,
                                 missing=level_counts((codes[i] for i in missing), levels),
                                 analysed=level_counts((codes[i] for i, _ in rows), levels)))
    if problems:
        raise DataError(problems)
    flow = UnitFlow(
        read=level_counts(codes, levels),
        exclusions=excluded,
        eligible=level_counts((c for c, keep in zip(codes, eligible) if keep), levels),
        outcomes=tuple(flows),
    )
    return Dataset(levels=levels, inputs=inputs, unit_flow=flow, outcomes=tuple(outcomes),
                   findings=reading_findings(plan.factor.name, levels, respelled)
                   + flow_findings(plan, flow))


def _require_columns(loaded: LoadedPlan, table: Table) -> None:
    """Every column the plan names is in the data, or one problem per missing column."""
    plan = loaded.plan
    named = [("data.unit", plan.data.unit), ("design.factors[0].name", plan.factor.name)]
    named += [(f"data.exclusions[{i}].column", rule.column)
              for i, rule in enumerate(plan.data.exclusions)]
    named += [(f"outcomes[{i}].{'column' if o.column else 'name'}", o.data_column)
              for i, o in enumerate(plan.outcomes)]
    shown = table.columns
    listing = (one_of(shown, "and") if len(shown) <= LISTED
               else capped([show(c) for c in shown], LISTED))
    problems = [
        Problem(str(table.path), table.header_line, column,
                f"no such column (named by {key} at {loaded.path}:{loaded.line_of(key)}); "
                f"the columns are {listing}{did_you_mean(column, table.columns)}")
        for key, column in named if column not in table.cells
    ]
    if problems:
        raise DataError(list(dict.fromkeys(problems)))


def _lines(table: Table, rows: Sequence[int]) -> str:
    label = "line" if len(rows) == 1 else "lines"
    return f"{label} {capped([str(table.lines[i]) for i in rows], LISTED)}"


def _unit_problems(table: Table, column: str, where: str) -> list[Problem]:
    empty: list[int] = []
    seen: dict[str, list[int]] = defaultdict(list)
    for i, cell in enumerate(table.column(column)):
        if is_missing(cell):
            empty.append(i)
        else:
            seen[str(cell)].append(i)
    problems = []
    if empty:
        problems.append(Problem(where, table.lines[empty[0]], column,
                                f"no unit identifier on {_lines(table, empty)}; every row needs one"))
    repeated = [(unit, rows) for unit, rows in seen.items() if len(rows) > 1]
    for unit, rows in repeated[:LISTED]:
        problems.append(Problem(where, table.lines[rows[1]], column,
                                f"unit {show(unit)} appears on {_lines(table, rows)}; "
                                "each unit must appear once"))
    problems.sort(key=lambda p: p.line or 0)
    if len(repeated) > LISTED:
        problems.append(Problem(where, None, column, more_of_kind(
            len(repeated) - LISTED, "repeated units", table.lines[repeated[LISTED][1][1]])))
    return problems


def _level_codes(table: Table, column: str, levels: Sequence[str], where: str
                 ) -> tuple[list[int], list[Problem], dict[tuple[str, int], int]]:
    """The index into `levels` of every row (-1 where the cell is read as no level), the
    problems of cells read as no level, and how many cells each (spelling, code) read by
    value counts (`appendix.data.levels`), in order of first appearance."""
    reading = LevelReading.of(levels)
    known: dict[str, int] = {}  # each distinct text is read once
    codes: list[int] = []
    unknown: dict[str, list[int]] = defaultdict(list)
    respelled: dict[tuple[str, int], int] = {}
    for i, cell in enumerate(table.column(column)):
        text = "" if cell is None else cell
        code = known.get(text)
        if code is None:
            code = known[text] = reading.code(text)
        codes.append(code)
        if code < 0:
            unknown[text].append(i)
        elif text not in reading.index:
            respelled[(text, code)] = respelled.get((text, code), 0) + 1
    allowed = f"allowed: one of the plan's levels {one_of(levels)}"
    problems = []
    kinds = list(unknown.items())
    for text, rows in kinds[:LISTED]:
        got = "an empty cell" if text == "" else f"got {show(text)}"
        problems.append(Problem(where, table.lines[rows[0]], column,
                                f"{got} on {_lines(table, rows)}; {allowed}"
                                f"{level_hint(text, levels)}"))
    if len(kinds) > LISTED:
        rest = kinds[LISTED:]
        problems.append(Problem(where, None, column,
                                f"... and {len(rest)} more cell texts that are no level, on "
                                f"{sum(len(rows) for _, rows in rest)} rows (first on line "
                                f"{min(table.lines[rows[0]] for _, rows in rest)})"))
    return codes, problems, respelled


def _outcome_rows(table: Table, column: str, eligible: Sequence[bool], where: str
                  ) -> tuple[list[tuple[int, float]], list[int], list[Problem]]:
    """(row, value) of analysed cells, rows of missing cells, and non-numeric cells."""
    rows: list[tuple[int, float]] = []
    missing: list[int] = []
    bad: list[Problem] = []
    count_bad = 0
    for i, cell in enumerate(table.column(column)):
        if not eligible[i]:
            continue
        if is_missing(cell):
            missing.append(i)
            continue
        value = parse_number(cell)
        if value is not None:
            rows.append((i, value))
            continue
        count_bad += 1
        if count_bad <= LISTED:
            bad.append(Problem(where, table.lines[i], column,
                               f"got {show(cell)}; allowed: a number, or an empty cell or NA "
                               "for a missing value"))
        elif count_bad == LISTED + 1:
            first_unlisted = table.lines[i]
    if count_bad > LISTED:
        bad.append(Problem(where, None, column,
                           f"... and {count_bad - LISTED} more cells that are not numbers "
                           f"(first on line {first_unlisted})"))
    return rows, missing, bad
