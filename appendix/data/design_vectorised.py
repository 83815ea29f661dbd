"""The fast CSV/TSV path for designs beyond one factor: the same rules as
`appendix.data.build_rows`, decided with array operations on the columns pyarrow
reads (`appendix.data.columnar.read_columns`).

It only answers "is this file clean?". At the first problem (an unknown level, a
missing or repeated unit, a between-unit column that varies within a unit, a cell that
is not a number) it returns None and the row-by-row path reads the file again and words
every problem with its line. So the messages come from one implementation only, and
tests assert that both paths give the same Dataset.
"""

from __future__ import annotations

import numpy as np

from appendix.data.columnar import (Columns, all_distinct, arrow_indices, chunks_of, missing_mask,
                                    numpy_of)
from appendix.data.dataset import Dataset, OutcomeData
from appendix.data.decimals import decimal_places
from appendix.data.build_rows import cell_labels, design_findings
from appendix.data.flow import count_levels
from appendix.data.rows import LineRows, TextRows
from appendix.data.values import DECIMAL_PATTERN, match_key
from appendix.data.levels import LevelReading, merge_counts
from appendix.data.vectorised import _floats, _level_table, _matches, read_codes_into
from appendix.plan.load import LoadedPlan
from appendix.results import ExclusionCount, OutcomeFlow, UnitFlow


def design_columns(loaded: LoadedPlan) -> list[str]:
    """The data columns a design names, each once, in a fixed order."""
    plan = loaded.plan
    names = [plan.data.unit, *(f.name for f in plan.design.factors),
             *(c.data_column for c in plan.design.covariates),
             *(r.column for r in plan.data.exclusions), *(o.data_column for o in plan.outcomes)]
    return list(dict.fromkeys(names))


def build_design_vectorised(loaded: LoadedPlan, columns: Columns) -> Dataset | None:
    """The `Dataset` of a clean file of a design beyond one factor (its `inputs` left
    empty for the caller to fill), or None if any row breaks a data rule."""
    plan = loaded.plan
    cells = columns.cells
    n = columns.n_rows
    units = cells[plan.data.unit]
    if n == 0 or missing_mask(units).any():
        return None
    codes, respelled = {}, {}
    for factor in plan.design.factors:
        found = _factor_codes(cells[factor.name], factor.levels)
        if found is None:
            return None
        codes[factor.name], respelled[factor.name] = found
    unit = _dictionary_codes(units)  # unit index of every row, in order of first appearance
    n_units = int(unit.max()) + 1
    within = _within_codes(plan, codes)
    if within is None:
        if not all_distinct(units):
            return None
    else:
        pair = unit * len(plan.within_cells) + within
        if np.unique(pair).size != n:
            return None
    first = _first_rows(unit, n_units)
    constant = [codes[f.name] for f in plan.between]
    constant += [_dictionary_codes(cells[c.data_column]) for c in plan.design.covariates]
    if any(not np.array_equal(column, column[first][unit]) for column in constant):
        return None
    covariates = {}
    for covariate in plan.design.covariates:
        found = _unit_numbers(cells[covariate.data_column], first)
        if found is None:
            return None
        covariates[covariate.name] = found
    labels = cell_labels(plan)
    cell = np.zeros(n_units, dtype=np.int64)
    for factor in plan.treatments:
        cell = cell * len(factor.levels) + codes[factor.name][first]
    excluded = np.zeros(n_units, dtype=bool)
    exclusions = []
    for rule in plan.data.exclusions:
        hit_rows = _matches(cells[rule.column], match_key(rule.equals))
        hit = np.zeros(n_units, dtype=bool)
        hit[unit[hit_rows]] = True
        hit &= ~excluded
        excluded |= hit
        exclusions.append(ExclusionCount(rule=rule.id, column=rule.column, equals=rule.equals,
                                         reason=rule.reason, by_level=count_levels(cell[hit], labels),
                                         total=int(hit.sum())))
    eligible = ~excluded
    needed = len(plan.within_cells) or 1
    outcomes, flows = [], []
    for outcome in plan.outcomes:
        own = {c.name: covariates[c.name] for c in plan.covariates_for(outcome.name)}
        built = _outcome(plan, outcome, columns, unit, first, codes, within, own, cell, labels,
                         eligible, needed)
        if built is None:
            return None
        outcomes.append(built[0])
        flows.append(built[1])
    flow = UnitFlow(read=count_levels(cell, labels), exclusions=tuple(exclusions),
                    eligible=count_levels(cell[eligible], labels), outcomes=tuple(flows))
    lacking = {name: int(np.count_nonzero(eligible & np.isnan(values)))
               for name, values in covariates.items()}
    return Dataset(levels=labels, inputs=(), unit_flow=flow, outcomes=tuple(outcomes),
                   findings=design_findings(loaded, flow, lacking, respelled))


def _outcome(plan, outcome, columns, unit, first, codes, within, covariates, cell, labels,
             eligible, needed):
    """(OutcomeData, OutcomeFlow) of one outcome, or None when a cell is not a number;
    `covariates` are the outcome's own (each unit's value, NaN where missing)."""
    import pyarrow.compute as pc

    texts = columns.cells[outcome.data_column]
    missing = missing_mask(texts)
    checked = eligible[unit] & ~missing  # cells of units set aside are not checked
    rows = np.flatnonzero(checked)
    kept_texts = texts.take(arrow_indices(rows))
    if not bool(numpy_of(pc.match_substring_regex(kept_texts, DECIMAL_PATTERN)).all()):
        return None
    values = np.full(unit.size, np.nan)
    parsed = _floats(kept_texts)
    if parsed is None:
        return None
    values[rows] = parsed
    present = np.bincount(unit[rows], minlength=first.size)
    has_covariates = np.ones(first.size, dtype=bool)
    for known in covariates.values():
        has_covariates &= ~np.isnan(known)
    analysed = eligible & has_covariates & (present == needed)
    rows = np.flatnonzero(analysed[unit])
    if within is not None:  # unit by unit (first appearance), a unit's rows by within cell
        rows = rows[np.lexsort((within[rows], unit[rows]))]
    kept = values[rows]
    data = OutcomeData(
        name=outcome.name, values=_read_only(kept),
        codes=_read_only(codes[plan.factor.name][rows]),
        units=TextRows(columns.cells[plan.data.unit], rows),
        lines=LineRows(rows, 2, columns.line_of),
        decimals=decimal_places(texts.take(arrow_indices(rows)), kept),
        factors=tuple(_read_only(codes[f.name][rows]) for f in plan.design.factors),
        covariates=tuple(_read_only(known[unit[rows]]) for known in covariates.values()))
    flow = OutcomeFlow(outcome=outcome.name, missing=count_levels(cell[eligible & ~analysed], labels),
                       analysed=count_levels(cell[analysed], labels))
    return data, flow


def _within_codes(plan, codes) -> np.ndarray | None:
    """Each row's cell of the within grid (first within factor slowest); None without one."""
    if not plan.within_factors:
        return None
    cell = np.zeros(len(codes[plan.within_factors[0].name]), dtype=np.int64)
    for factor in plan.within_factors:
        cell = cell * len(factor.levels) + codes[factor.name]
    return cell


def _factor_codes(column, levels) -> tuple[np.ndarray, dict] | None:
    """(the level code of every row, cells read by value per (spelling, code)), or None
    when a cell is read as none of `levels` (`appendix.data.levels`)."""
    reading = LevelReading.of(levels)
    table = _level_table(levels)
    out = np.empty(len(column), dtype=np.int64)
    at = 0
    parts = []
    for chunk in chunks_of(column):
        respelled = read_codes_into(out[at:at + len(chunk)], chunk, reading, table)
        if respelled is None:
            return None
        parts.append(respelled)
        at += len(chunk)
    return out, merge_counts(parts)


def _dictionary_codes(column) -> np.ndarray:
    """An integer per row, equal for equal texts, numbered in order of first appearance."""
    import pyarrow.compute as pc

    encoded = pc.dictionary_encode(column.combine_chunks() if hasattr(column, "combine_chunks") else column)
    return numpy_of(encoded.indices).astype(np.int64)


def _first_rows(unit: np.ndarray, n_units: int) -> np.ndarray:
    """The first row of each unit."""
    first = np.full(n_units, unit.size, dtype=np.int64)
    np.minimum.at(first, unit, np.arange(unit.size))
    return first


def _unit_numbers(column, first: np.ndarray) -> np.ndarray | None:
    """Each unit's number from its first row (NaN where missing), or None when a cell is
    not a number."""
    texts = column.take(arrow_indices(first))
    missing = missing_mask(texts)
    values = np.full(first.size, np.nan)
    rows = np.flatnonzero(~missing)
    if rows.size:
        import pyarrow.compute as pc

        present = texts.take(arrow_indices(rows))
        if not bool(numpy_of(pc.match_substring_regex(present, DECIMAL_PATTERN)).all()):
            return None
        parsed = _floats(present)
        if parsed is None:
            return None
        values[rows] = parsed
    return values


def _read_only(array: np.ndarray) -> np.ndarray:
    array = np.ascontiguousarray(array)
    array.flags.writeable = False
    return array
