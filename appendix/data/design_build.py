"""Plan + table -> `Dataset` for designs beyond one factor: several factors, blocks,
covariates, and a within-unit factor (one row per unit and within level).

The rules of the one-factor data stage hold (`appendix.data.build`): every named column
exists, every cell of a factor is one of its levels, outcome cells are numbers or
missing, exclusions apply in plan order; all problems are collected into one
`DataError`. Beyond them:

- units: each unit once, or, with a within factor, each (unit, within level) once;
- a unit's between-unit factors (their levels) and covariates (their text) are the same
  on each of its rows;
- exclusions set a whole unit aside when any of its rows matches;
- a unit without a covariate value is not analysed (counted as missing);
- with a within factor, only units with a value at every within level are analysed
  (the registered rule ``complete-units``).

Counts in the unit flow are of units, per cell of the crossed treatment factors.
"""

from __future__ import annotations

import itertools
from collections import defaultdict

import numpy as np

from appendix.data.build import LISTED, _level_codes, _lines, _unit_problems
from appendix.data.dataset import Dataset, OutcomeData, frozen_array
from appendix.data.decimals import decimal_places
from appendix.data.flow import flow_findings, level_counts
from appendix.data.levels import reading_findings
from appendix.data.table import Table
from appendix.data.values import is_missing, match_key, parse_number
from appendix.errors import DataError, Problem
from appendix.plan.load import LoadedPlan
from appendix.plan.wording import capped, did_you_mean, more_of_kind, one_of, show
from appendix.results import ExclusionCount, Finding, OutcomeFlow, UnitFlow

#: Joins the levels of crossed factors in a cell's name.
CROSS = " × "


#: The one cell of a design without treatment factors (repeated measures alone).
ALL_UNITS = "all units"


def cell_labels(plan) -> tuple[str, ...]:
    """The cells of the crossed treatment factors, first factor slowest."""
    if not plan.treatments:
        return (ALL_UNITS,)
    return tuple(CROSS.join(levels) for levels in itertools.product(*(f.levels for f in plan.treatments)))


def build_design_dataset(loaded: LoadedPlan, table: Table, inputs: tuple, delimited: bool) -> Dataset:
    """The `Dataset` of a design with more than one factor, a covariate or a within factor."""
    plan = loaded.plan
    where = str(table.path)
    _require(loaded, table)
    codes: dict[str, list[int]] = {}
    respelled: dict[str, dict[tuple[str, int], int]] = {}
    problems: list[Problem] = []
    for factor in plan.design.factors:
        codes[factor.name], found, respelled[factor.name] = _level_codes(table, factor.name,
                                                                         factor.levels, where)
        problems += found
    within = plan.within
    if within is None:
        problems += _unit_problems(table, plan.data.unit, where)
    else:
        problems += _pair_problems(table, plan.data.unit, within, codes[within.name], where)
    if problems:
        raise DataError(problems)
    rows_of = _rows_of_units(table.column(plan.data.unit))
    # A between-unit factor must name one level on all of a unit's rows (1 and 1.0 do).
    problems += _varying(table, rows_of, [f.name for f in plan.between], where, codes)
    problems += _varying(table, rows_of, [c.data_column for c in plan.design.covariates], where)
    covariates, bad = _covariates(loaded, table, rows_of, where)
    problems += bad
    if problems:
        raise DataError(problems)
    labels = cell_labels(plan)
    cell = {unit: _cell_of(plan, codes, rows[0]) for unit, rows in rows_of.items()}
    excluded_by, exclusions = _exclusions(plan, table, rows_of, cell, labels)
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
                   findings=design_findings(plan, flow, lacking, respelled))


def design_findings(plan, flow: UnitFlow, lacking: dict[str, int],
                    respelled: dict[str, dict[tuple[str, int], int]]) -> tuple[Finding, ...]:
    """Cells read as a level by value (`respelled`: per factor name, cells per (spelling,
    code)), the flow's findings, eligible units without a covariate value (`lacking`, per
    covariate name), and, with a within factor, units left out as incomplete."""
    findings = tuple(f for factor in plan.design.factors
                     for f in reading_findings(factor.name, factor.levels, respelled[factor.name]))
    findings += flow_findings(plan, flow, grouping=CROSS.join(f.label or f.name for f in plan.treatments)
                              or ALL_UNITS)
    findings += _lacking_covariates(plan, lacking)
    if plan.within is not None:
        findings += _incomplete(plan, flow.outcomes)
    return findings


def _require(loaded: LoadedPlan, table: Table) -> None:
    """Every column the plan names exists, or one problem per missing column."""
    plan = loaded.plan
    named = [("data.unit", plan.data.unit)]
    named += [(f"design.factors[{i}].name", f.name) for i, f in enumerate(plan.design.factors)]
    named += [(f"design.covariates[{i}].{'column' if c.column else 'name'}", c.data_column)
              for i, c in enumerate(plan.design.covariates)]
    named += [(f"data.exclusions[{i}].column", r.column) for i, r in enumerate(plan.data.exclusions)]
    named += [(f"outcomes[{i}].{'column' if o.column else 'name'}", o.data_column)
              for i, o in enumerate(plan.outcomes)]
    shown = table.columns
    listing = one_of(shown, "and") if len(shown) <= LISTED else capped([show(c) for c in shown], LISTED)
    problems = [Problem(str(table.path), table.header_line, column,
                        f"no such column (named by {key} at {loaded.path}:{loaded.line_of(key)}); "
                        f"the columns are {listing}{did_you_mean(column, table.columns)}")
                for key, column in named if column not in table.cells]
    if problems:
        raise DataError(list(dict.fromkeys(problems)))


def _pair_problems(table: Table, column: str, within, codes: list[int], where: str) -> list[Problem]:
    """Missing unit identifiers, and (unit, within level) pairs that occur twice."""
    empty = [i for i, cell in enumerate(table.column(column)) if is_missing(cell)]
    seen: dict[tuple[str, int], list[int]] = defaultdict(list)
    for i, cell in enumerate(table.column(column)):
        if not is_missing(cell):
            seen[(str(cell).strip(), codes[i])].append(i)
    problems = []
    if empty:
        problems.append(Problem(where, table.lines[empty[0]], column,
                                f"no unit identifier on {_lines(table, empty)}; every row needs one"))
    repeated = [(pair, rows) for pair, rows in seen.items() if len(rows) > 1]
    for (unit, code), rows in repeated[:LISTED]:
        problems.append(Problem(where, table.lines[rows[1]], column,
                                f"unit {show(unit)} at {within.name} {show(within.levels[code])} appears "
                                f"on {_lines(table, rows)}; each unit must appear once per level of "
                                f"{within.name}"))
    if len(repeated) > LISTED:
        problems.append(Problem(where, None, column, more_of_kind(
            len(repeated) - LISTED, "repeated pairs", table.lines[repeated[LISTED][1][1]])))
    return problems


def _rows_of_units(cells) -> dict[str, list[int]]:
    """Row indices of each unit, units in order of first appearance."""
    rows: dict[str, list[int]] = {}
    for i, cell in enumerate(cells):
        rows.setdefault(str(cell).strip(), []).append(i)
    return rows


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
            values = one_of(list(dict.fromkeys((cells[i] or "").strip() for i in rows)), "and")
            problems.append(Problem(where, table.lines[rows[1]], column,
                                    f"unit {show(unit)} has {values} on {_lines(table, rows)}; a unit's "
                                    "between-unit factors and covariates must be the same on all its rows"))
        if len(varying) > LISTED:
            problems.append(Problem(where, None, column, more_of_kind(
                len(varying) - LISTED, "units whose rows differ", table.lines[varying[LISTED][1][1]])))
    return problems


def _covariates(loaded: LoadedPlan, table: Table, rows_of: dict[str, list[int]], where: str):
    """Per covariate, each unit's value (None where missing), and non-numeric cells."""
    values: dict[str, dict[str, float | None]] = {}
    problems = []
    for covariate in loaded.plan.design.covariates:
        column = covariate.data_column
        cells = table.column(column)
        per_unit, bad = {}, []
        for unit, rows in rows_of.items():
            cell = cells[rows[0]]
            number = None if is_missing(cell) else parse_number(cell)
            if number is None and not is_missing(cell):
                bad.append(rows[0])
            per_unit[unit] = number
        for i in bad[:LISTED]:
            problems.append(Problem(where, table.lines[i], column,
                                    f"got {show(cells[i])}; allowed: a number, or an empty cell or NA "
                                    "for a missing value (covariate "
                                    f"{covariate.name})"))
        if len(bad) > LISTED:
            problems.append(Problem(where, None, column, more_of_kind(
                len(bad) - LISTED, "cells that are not numbers", table.lines[bad[LISTED]])))
        values[covariate.name] = per_unit
    return values, problems


def _cell_of(plan, codes: dict[str, list[int]], row: int) -> int:
    """The index of a row's cell among the crossed treatment factors (first slowest)."""
    index = 0
    for factor in plan.treatments:
        index = index * len(factor.levels) + codes[factor.name][row]
    return index


def _exclusions(plan, table: Table, rows_of, cell, labels):
    """Units set aside by each rule (plan order; a unit counts under the first rule any
    of its rows matches), and the rule that set each unit aside."""
    excluded_by: dict[str, str] = {}
    counts = []
    for rule in plan.data.exclusions:
        target = match_key(rule.equals)
        cells = table.column(rule.column)
        hit = [u for u, rows in rows_of.items()
               if u not in excluded_by and any(match_key(cells[i]) == target for i in rows)]
        for unit in hit:
            excluded_by[unit] = rule.id
        counts.append(ExclusionCount(rule=rule.id, column=rule.column, equals=rule.equals,
                                     reason=rule.reason, by_level=level_counts((cell[u] for u in hit), labels),
                                     total=len(hit)))
    return excluded_by, tuple(counts)


def _outcome(plan, table, outcome, eligible, rows_of, codes, covariates, cell, labels, where, delimited):
    """(OutcomeData, OutcomeFlow, problems) of one outcome."""
    column = outcome.data_column
    cells = table.column(column)
    within = plan.within
    values: dict[int, float | None] = {}
    bad = []
    for unit in eligible:
        for i in rows_of[unit]:
            if is_missing(cells[i]):
                values[i] = None
                continue
            values[i] = parse_number(cells[i])
            if values[i] is None:
                bad.append(i)
    problems = [Problem(where, table.lines[i], column,
                        f"got {show(cells[i])}; allowed: a number, or an empty cell or NA for a "
                        "missing value") for i in bad[:LISTED]]
    if len(bad) > LISTED:
        problems.append(Problem(where, None, column, more_of_kind(
            len(bad) - LISTED, "cells that are not numbers", table.lines[bad[LISTED]])))
    levels_needed = len(within.levels) if within is not None else 1
    analysed = [u for u in eligible
                if all(covariates[c.name][u] is not None for c in plan.design.covariates)
                and sum(values[i] is not None for i in rows_of[u]) == levels_needed]
    kept = set(analysed)
    # Rows unit by unit (units in order of first appearance), a unit's rows by within level.
    if within is None:
        rows = [rows_of[u][0] for u in analysed]
    else:
        rows = [i for u in analysed for i in sorted(rows_of[u], key=lambda i: codes[within.name][i])]
    unit_cells = table.column(plan.data.unit)
    data = OutcomeData(
        name=outcome.name,
        values=frozen_array([values[i] for i in rows], dtype=np.float64),
        codes=frozen_array([codes[plan.factor.name][i] for i in rows], dtype=np.int64),
        units=tuple(str(unit_cells[i]).strip() for i in rows),
        lines=tuple(table.lines[i] for i in rows),
        decimals=(decimal_places([cells[i] for i in rows], np.array([values[i] for i in rows]))
                  if delimited and not bad else None),
        factors=tuple(frozen_array([codes[f.name][i] for i in rows], dtype=np.int64)
                      for f in plan.design.factors),
        covariates=tuple(frozen_array([covariates[c.name][str(unit_cells[i]).strip()] for i in rows],
                                      dtype=np.float64) for c in plan.design.covariates),
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
            found.append(Finding("covariate-missing",
                                 f"{lacking} eligible unit{'s' if lacking != 1 else ''} without a value of "
                                 f"the covariate {covariate.label}: not analysed."))
    return tuple(found)


def _incomplete(plan, flows) -> tuple[Finding, ...]:
    within = plan.within
    found = []
    for flow in flows:
        left = sum(c.n for c in flow.missing)
        if left:
            found.append(Finding("incomplete-units",
                                 f"Outcome {flow.outcome}: {left} eligible unit{'s' if left != 1 else ''} "
                                 f"without a value at every level of {within.label or within.name} (or "
                                 "without a covariate value) left out: complete units only, as registered."))
    return tuple(found)
