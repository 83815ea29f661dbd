"""Plan + `Table` -> `Dataset`: the one builder, for every design (one factor or several,
blocks, covariates, within-unit factors with one row per unit and cell of their grid).

Checks, all collected into one `DataError` and worded by `appendix.data.problems`:

- every column the plan names exists;
- unit identifiers are present, each unit once, or, with within factors, each unit once
  per cell of their grid;
- every cell of a factor is one of its levels (its text, spaces trimmed, or for
  number-like levels its value: `appendix.data.levels`, each spelling read by value
  becoming a finding);
- a unit's between-unit factors (their levels) and covariates (their text) are the same
  on each of its rows;
- eligible outcome and covariate cells are numbers or missing.

Exclusions apply in plan order and set a whole unit aside when any of its rows matches
(`appendix.data.exclusions`); cells of excluded units are not checked as outcomes. A unit
without a value of a covariate is not analysed for the outcomes that covariate adjusts
(`Covariate.outcomes`; counted as missing); an outcome's `OutcomeData.covariates` hold
its own covariates, in plan order (`Plan.covariates_for`); with within factors, only
units with a value at every cell of the within grid are analysed (the registered rule
``complete-units``). Counts in the unit flow are of units, per cell of the crossed
treatment factors (per level when there is one).
"""

from __future__ import annotations

import itertools
from collections import defaultdict
from collections.abc import Sequence

import numpy as np

from appendix.data import problems as say
from appendix.data.dataset import Dataset, OutcomeData, frozen_array
from appendix.data.decimals import decimal_places
from appendix.data.exclusions import apply_exclusions
from appendix.data.flow import flow_findings, level_counts
from appendix.data.levels import LevelReading, reading_findings
from appendix.data.table import Table
from appendix.data.values import MISSING_TEXTS, is_missing, parse_number
from appendix.errors import DataError, Problem
from appendix.plan.load import LoadedPlan
from appendix.results import Finding, OutcomeFlow, UnitFlow

LISTED = say.LISTED

#: Joins the levels of crossed factors in a cell's name.
CROSS = " × "

#: The one cell of a design without treatment factors (repeated measures alone).
ALL_UNITS = "all units"


def cell_labels(plan) -> tuple[str, ...]:
    """The cells of the crossed treatment factors, first factor slowest."""
    if not plan.treatments:
        return (ALL_UNITS,)
    return tuple(CROSS.join(levels) for levels in itertools.product(*(f.levels for f in plan.treatments)))


def build_from_table(loaded: LoadedPlan, table: Table, inputs: tuple, delimited: bool) -> Dataset:
    """The analysed `Dataset` of `table`; `delimited` when its cells are decimal text
    (CSV/TSV), which the engine may then sum exactly."""
    plan = loaded.plan
    where = str(table.path)
    say.require_columns(loaded, table.path, table.columns, table.header_line)
    codes: dict[str, list[int]] = {}
    respelled: dict[str, dict[tuple[str, int], int]] = {}
    problems: list[Problem] = []
    for factor in plan.design.factors:
        codes[factor.name], found, respelled[factor.name] = _level_codes(table, factor.name,
                                                                         factor.levels, where)
        problems += found
    within = plan.within_factors
    rows_of = table.rows_of(plan.data.unit)
    problems += _unit_problems(table, rows_of, plan.data.unit, where, within,
                               within_codes(plan, codes) if within else None)
    if problems:
        raise DataError(problems)
    # A between-unit factor must name one level on all of a unit's rows (1 and 1.0 do).
    if within:
        problems += _varying(table, rows_of, [f.name for f in plan.between], where, codes)
        problems += _varying(table, rows_of, [c.data_column for c in plan.design.covariates], where)
    covariates, bad = _covariates(loaded, table, rows_of, where)
    problems += bad
    if problems:
        raise DataError(problems)
    labels = cell_labels(plan)
    cell = dict(zip(rows_of, _cells_of(plan, codes, [rows[0] for rows in rows_of.values()])))
    excluded_by, exclusions = apply_exclusions(table, plan.data.exclusions, rows_of, cell, labels)
    eligible = [u for u in rows_of if u not in excluded_by]
    outcomes, flows = [], []
    for outcome in plan.outcomes:
        data, flow, bad = _outcome(plan, table, outcome, eligible, rows_of, codes, covariates,
                                   cell, labels, where, delimited)
        problems += bad
        outcomes.append(data)
        flows.append(flow)
    if problems:
        raise DataError(problems)
    flow = UnitFlow(read=level_counts(cell.values(), labels), exclusions=exclusions,
                    eligible=level_counts((cell[u] for u in eligible), labels),
                    outcomes=tuple(flows))
    lacking = {c.name: sum(covariates[c.name][u] is None for u in eligible)
               for c in plan.design.covariates}
    return Dataset(levels=labels, inputs=inputs, unit_flow=flow, outcomes=tuple(outcomes),
                   findings=design_findings(loaded, flow, lacking, respelled))


def design_findings(loaded: LoadedPlan, flow: UnitFlow, lacking: dict[str, int],
                    respelled: dict[str, dict[tuple[str, int], int]]) -> tuple[Finding, ...]:
    """Cells read as a level by value (`respelled`: per factor name, cells per (spelling,
    code)), the flow's findings, eligible units without a covariate value (`lacking`, per
    covariate name), and, with within factors, units left out as incomplete."""
    plan = loaded.plan
    findings = tuple(f for factor in plan.design.factors
                     for f in reading_findings(factor.name, factor.levels, respelled.get(factor.name, {})))
    crossed = len(plan.treatments) != 1
    findings += flow_findings(plan, flow, grouping=(CROSS.join(f.label or f.name for f in plan.treatments)
                                                    or ALL_UNITS) if crossed else None)
    findings += _lacking_covariates(plan, lacking)
    if plan.within_factors:
        findings += _incomplete(plan, flow.outcomes, "repeated.missing" not in loaded.defaulted)
    return findings


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
    kinds = list(unknown.items())
    problems = [say.not_a_level(where, column, text, table.lines_of(rows), levels)
                for text, rows in kinds[:LISTED]]
    if len(kinds) > LISTED:
        rest = kinds[LISTED:]
        problems.append(say.more_not_levels(where, column, len(rest), sum(len(r) for _, r in rest),
                                            min(table.lines[rows[0]] for _, rows in rest)))
    return codes, problems, respelled


def within_codes(plan, codes: dict[str, Sequence[int]]) -> list[int]:
    """Each row's cell of the within grid (`Plan.within_cells`, first factor slowest);
    -1 where a within factor's cell is read as no level."""
    cells = [0] * len(codes[plan.within_factors[0].name])
    for factor in plan.within_factors:
        column, size = codes[factor.name], len(factor.levels)
        cells = [-1 if cell < 0 or column[i] < 0 else cell * size + column[i]
                 for i, cell in enumerate(cells)]
    return cells


def _unit_problems(table: Table, rows_of: dict[str, list[int]], column: str, where: str,
                   within=(), within_codes: Sequence[int] | None = None) -> list[Problem]:
    """Rows without a unit identifier, and units (with within factors: a unit at one cell
    of their grid) on more than one row; `rows_of` holds the rows of each unit text."""
    absent = MISSING_TEXTS.intersection(rows_of)  # the keys are trimmed texts
    empty = sorted(i for unit in absent for i in rows_of[unit])
    if not within:
        repeated = [(unit, rows) for unit, rows in rows_of.items() if len(rows) > 1 and unit not in absent]
    else:
        pairs: dict[tuple[str, int], list[int]] = defaultdict(list)
        for unit, rows in rows_of.items():
            for i in rows if unit not in absent else ():
                pairs[(unit, within_codes[i])].append(i)
        # a cell read as no level (code -1) is reported as such, not as a repeat
        repeated = sorted(((pair, rows) for pair, rows in pairs.items()
                           if len(rows) > 1 and pair[1] >= 0),
                          key=lambda item: item[1][0])
    problems = [say.no_unit(where, column, table.lines_of(empty))] if empty else []
    for key, rows in repeated[:LISTED]:
        if not within:
            problems.append(say.repeated_unit(where, column, key, table.lines_of(rows)))
        else:
            unit, code = key
            problems.append(say.repeated_unit(where, column, unit, table.lines_of(rows),
                                              within=within, levels=_cell_levels(within, code)))
    problems.sort(key=lambda p: p.line or 0)
    if len(repeated) > LISTED:
        kind = "repeated units" if not within else "repeated pairs"
        problems.append(say.more(where, column, len(repeated) - LISTED, kind,
                                 table.lines[repeated[LISTED][1][1]]))
    return problems


def _cell_levels(within, code: int) -> list[str]:
    """The level of each within factor at cell `code` of their grid (first slowest)."""
    levels = []
    for factor in reversed(within):
        code, at = divmod(code, len(factor.levels))
        levels.append(factor.levels[at])
    return levels[::-1]


def _varying(table: Table, rows_of: dict[str, list[int]], columns: list[str], where: str,
             codes: dict[str, list[int]] | None = None) -> list[Problem]:
    """A problem for each unit whose rows disagree on a between-unit column: on the level
    code where `codes` holds the column's (factors), else on the trimmed text."""
    problems = []
    for column in dict.fromkeys(columns):
        cells = table.column(column)
        key = (codes[column].__getitem__ if codes is not None
               else lambda i: (cells[i] or "").strip())
        varying = [(unit, rows) for unit, rows in rows_of.items()
                   if len({key(i) for i in rows}) > 1]
        for unit, rows in varying[:LISTED]:
            values = list(dict.fromkeys((cells[i] or "").strip() for i in rows))
            problems.append(say.varying(where, column, unit, values, table.lines_of(rows)))
        if len(varying) > LISTED:
            problems.append(say.more(where, column, len(varying) - LISTED, "units whose rows differ",
                                     table.lines[varying[LISTED][1][1]]))
    return problems


def _number_problems(table: Table, column: str, rows: Sequence[int], where: str,
                     covariate: str | None = None) -> list[Problem]:
    """The first `LISTED` of the non-numeric cells at `rows`, then a count of the rest."""
    cells = table.column(column)
    problems = [say.not_a_number(where, column, cells[i], table.lines[i], covariate)
                for i in rows[:LISTED]]
    if len(rows) > LISTED:
        problems.append(say.more(where, column, len(rows) - LISTED, "cells that are not numbers",
                                 table.lines[rows[LISTED]]))
    return problems


def _covariates(loaded: LoadedPlan, table: Table, rows_of: dict[str, list[int]], where: str):
    """Per covariate, each unit's value (None where missing), and non-numeric cells."""
    values: dict[str, dict[str, float | None]] = {}
    problems = []
    for covariate in loaded.plan.design.covariates:
        cells = table.column(covariate.data_column)
        per_unit, bad = {}, []
        for unit, rows in rows_of.items():
            cell = cells[rows[0]]
            number = None if is_missing(cell) else parse_number(cell)
            if number is None and not is_missing(cell):
                bad.append(rows[0])
            per_unit[unit] = number
        problems += _number_problems(table, covariate.data_column, bad, where, covariate.name)
        values[covariate.name] = per_unit
    return values, problems


def _cells_of(plan, codes: dict[str, list[int]], rows: list[int]) -> list[int]:
    """The index of each row's cell among the crossed treatment factors (first slowest)."""
    cells = [0] * len(rows)
    for factor in plan.treatments:
        column, size = codes[factor.name], len(factor.levels)
        cells = [cell * size + column[i] for cell, i in zip(cells, rows)]
    return cells


def _outcome(plan, table, outcome, eligible, rows_of, codes, covariates, cell, labels, where, delimited):
    """(OutcomeData, OutcomeFlow, problems) of one outcome."""
    column = outcome.data_column
    cells = table.column(column)
    values: list[float | None] = [None] * table.n_rows
    bad = []
    for unit in eligible:
        for i in rows_of[unit]:
            text = cells[i]
            if not is_missing(text):
                values[i] = parse_number(text)
                if values[i] is None:
                    bad.append(i)
    bad.sort()
    problems = _number_problems(table, column, bad, where)
    levels_needed = len(plan.within_cells) or 1
    of_units = [covariates[c.name] for c in plan.covariates_for(outcome.name)]
    analysed = [u for u in eligible
                if len(rows_of[u]) == levels_needed and None not in [values[i] for i in rows_of[u]]
                and all(values_of[u] is not None for values_of in of_units)]
    kept = set(analysed)
    # Rows unit by unit (units in order of first appearance), a unit's rows by within cell.
    if not plan.within_factors:
        rows = [rows_of[u][0] for u in analysed]
    else:
        occasion = within_codes(plan, codes)
        rows = [i for u in analysed for i in sorted(rows_of[u], key=occasion.__getitem__)]
    unit_cells = table.column(plan.data.unit)
    units = tuple(str(unit_cells[i]).strip() for i in rows)
    kept_values = [values[i] for i in rows]
    factors = tuple(frozen_array([codes[f.name][i] for i in rows], dtype=np.int64)
                    for f in plan.design.factors)
    data = OutcomeData(
        name=outcome.name,
        values=frozen_array(kept_values, dtype=np.float64),
        codes=factors[[f.name for f in plan.design.factors].index(plan.factor.name)],
        units=units,
        lines=tuple(table.lines[i] for i in rows),
        decimals=(decimal_places([cells[i] for i in rows], np.array(kept_values))
                  if delimited and not bad else None),
        factors=factors,
        covariates=tuple(frozen_array([values_of[u] for u in units], dtype=np.float64)
                         for values_of in of_units),
    )
    flow = OutcomeFlow(outcome=outcome.name,
                       missing=level_counts((cell[u] for u in eligible if u not in kept), labels),
                       analysed=level_counts((cell[u] for u in analysed), labels))
    return data, flow, problems


def _lacking_covariates(plan, counts: dict[str, int]) -> tuple[Finding, ...]:
    found = []
    for covariate in plan.design.covariates:
        lacking = counts[covariate.name]
        if lacking:
            named = covariate.outcomes
            labels = {o.name: o.label or o.name for o in plan.outcomes}
            where = ("" if named is None or set(named) == {o.name for o in plan.outcomes}
                     else f" for {'outcome' if len(named) == 1 else 'outcomes'} "
                          f"{', '.join(labels.get(n, n) for n in named)}"
                          " (the outcomes it adjusts)")
            found.append(Finding("covariate-missing",
                                 f"{lacking} eligible unit{'s' if lacking != 1 else ''} without a value of "
                                 f"the covariate {covariate.label}: not analysed{where}."))
    return tuple(found)


def _incomplete(plan, flows, stated: bool) -> tuple[Finding, ...]:
    within = plan.within_factors
    grid = (f"level of {within[0].label or within[0].name}" if len(within) == 1 else
            "cell of " + CROSS.join(f.label or f.name for f in within))
    labels = {o.name: o.label or o.name for o in plan.outcomes}
    found = []
    for flow in flows:
        left = sum(c.n for c in flow.missing)
        if left:
            found.append(Finding("incomplete-units",
                                 f"Outcome {labels.get(flow.outcome, flow.outcome)}: {left} eligible unit{'s' if left != 1 else ''} "
                                 f"without a value at every {grid} (or "
                                 "without a covariate value) left out: complete units only, "
                                 + ("as registered." if stated else "by default (the plan states no "
                                    "rule for missing occasions).")))
    return tuple(found)
