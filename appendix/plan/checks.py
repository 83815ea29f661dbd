"""Checks that span several fields of a study file, run on the raw parsed file.

They work on plain mappings, not on the model, so that the loader can report them in
the same pass as field errors (a plan with a bad role and a bad control level gets both
messages). Anything of an unexpected shape is skipped here: field validation reports it.
"""

from __future__ import annotations

from collections.abc import Iterator, Mapping

from appendix.plan.contrast_checks import contrast_problems
from appendix.plan.design_checks import design_problems
from appendix.plan.raw import Found, items as _items, mapping as _mapping, repeats
from appendix.plan.raw import text as _text, texts, unique
from appendix.plan.wording import Loc, did_you_mean, one_of, show

#: Data file formats format 1 reads, by file name ending.
DATA_FORMATS: tuple[str, ...] = (".csv", ".tsv", ".parquet", ".xlsx", ".xpt", ".dta", ".sav")


def consistency_problems(raw: object) -> list[Found]:
    """Every cross-field problem of a raw study file, as (location, message) pairs."""
    if not isinstance(raw, Mapping):
        return []
    data = _mapping(raw.get("data"))
    found: list[Found] = []
    found += _source_format(data)
    found += _planned_minimum(_mapping(data.get("planned_n")))
    factors = _items(_mapping(raw.get("design")).get("factors"))
    found += _planned_minimum_total(_mapping(data.get("planned_n")), factors)
    for i, factor in factors:
        found += _factor_levels(("design", "factors", i), factor)
    found += unique([(("outcomes",), raw.get("outcomes"))], "name", "outcome names")
    found += unique([(("data", "exclusions"), data.get("exclusions"))], "id", "exclusion ids")
    found += design_problems(raw)
    found += _column_roles(raw, data, factors)
    found += contrast_problems(raw)
    return found


def _source_format(data: Mapping) -> list[Found]:
    source = data.get("source")
    if not isinstance(source, str) or not source:
        return []
    if not any(source.lower().endswith(ext) for ext in DATA_FORMATS):
        return [(("data", "source"),
                 f"got {show(source)}; allowed: a file ending {one_of(DATA_FORMATS)}")]
    if data.get("sheet") is not None and not source.lower().endswith(".xlsx"):
        return [(("data", "sheet"),
                 f"got {show(data['sheet'])}, but {show(source)} is not an Excel file; "
                 "allowed: a sheet only for a .xlsx source")]
    return []


def _planned_minimum(planned: Mapping) -> list[Found]:
    minimum, per_group = planned.get("minimum"), planned.get("per_group")
    if (isinstance(minimum, int) and isinstance(per_group, int)
            and not isinstance(minimum, bool) and minimum > per_group):
        return [(("data", "planned_n", "minimum"),
                 f"got {minimum}, more than the {per_group} planned per group; allowed: a "
                 "whole number from 1 to per_group")]
    return []


def _whole(value: object) -> bool:
    return isinstance(value, int) and not isinstance(value, bool)


def _planned_total(planned: Mapping, factors: list[tuple[int, Mapping]]) -> tuple[int, str] | None:
    """The planned total of analysed units with how the plan gives it: `total`, else
    `per_group` times the cells of the crossed treatment factors; None when neither is given
    (or the levels are not yet lists, which field validation reports)."""
    if _whole(planned.get("total")):
        return planned["total"], "planned in all"
    per_group = planned.get("per_group")
    treatment = [f.get("levels") for _, f in factors if f.get("role", "treatment") == "treatment"]
    if not _whole(per_group) or not treatment or not all(isinstance(levels, list) for levels in treatment):
        return None
    cells = 1
    for levels in treatment:
        cells *= len(levels)
    return per_group * cells, f"planned in all ({per_group} per group in {cells} groups)"


def _planned_minimum_total(planned: Mapping, factors: list[tuple[int, Mapping]]) -> list[Found]:
    minimum = planned.get("minimum_total")
    total = _planned_total(planned, factors)
    if _whole(minimum) and total is not None and minimum > total[0]:
        return [(("data", "planned_n", "minimum_total"),
                 f"got {minimum}, more than the {total[0]} {total[1]}; allowed: a whole "
                 "number from 1 to the planned total")]
    return []


def _factor_levels(loc: Loc, factor: Mapping) -> list[Found]:
    levels = factor.get("levels")
    if not isinstance(levels, (list, tuple)):
        return []
    found = repeats((*loc, "levels"), levels, "each level must be named once")
    names = list(dict.fromkeys(texts(levels)))
    control = _text(factor.get("control"))
    if factor.get("role") == "block":
        return found  # a control on a block is itself the problem (design_checks)
    if control is not None and names and control not in names:
        found.append(((*loc, "control"),
                      f"got {show(control)}; allowed: one of the levels {one_of(names)}"
                      f"{did_you_mean(control, names)}"))
    return found


def _measure_columns(loc: Loc, entries: object) -> Iterator[tuple[Loc, str]]:
    """The data column of each outcome or covariate: `column`, else `name`."""
    for i, entry in _items(entries):
        key = "column" if entry.get("column") is not None else "name"
        column = entry.get(key)
        if isinstance(column, str):
            yield (*loc, i, key), column


def _column_roles(raw: Mapping, data: Mapping, factors: list[tuple[int, Mapping]]) -> list[Found]:
    """A column plays one role: the unit identifier, a factor, an outcome or a covariate."""
    roles: dict[str, str] = {}
    unit = data.get("unit")
    if isinstance(unit, str):
        roles[unit] = "the unit column"
    found: list[Found] = []
    for i, factor in factors:
        name = factor.get("name")
        if not isinstance(name, str):
            continue
        if roles.get(name) == "a factor column":
            continue  # a repeated factor name is reported as such (design_checks)
        if name in roles:
            found.append((("design", "factors", i, "name"),
                          f"got {show(name)}, which is {roles[name]}; "
                          "a factor must be a column of its own"))
        else:
            roles[name] = "a factor column"
    for loc, column in _measure_columns(("outcomes",), raw.get("outcomes")):
        if column in roles and roles[column] != "an outcome column":
            found.append((loc, f"got {show(column)}, which is {roles[column]}; "
                               "an outcome must be a column of its own"))
        roles.setdefault(column, "an outcome column")
    covariates = _mapping(raw.get("design")).get("covariates")
    for loc, column in _measure_columns(("design", "covariates"), covariates):
        if column in roles:
            found.append((loc, f"got {show(column)}, which is {roles[column]}; "
                               "a covariate must be a column of its own"))
        else:
            roles[column] = "a covariate column"
    return found
