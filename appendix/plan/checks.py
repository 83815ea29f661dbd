"""Checks that span several fields of a study file, run on the raw parsed file.

They work on plain mappings, not on the model, so that the loader can report them in
the same pass as field errors (a plan with a bad role and a bad control level gets both
messages). Anything of an unexpected shape is skipped here: field validation reports it.
"""

from __future__ import annotations

from collections.abc import Iterator, Mapping

from appendix.plan.scalars import scalar_text
from appendix.plan.wording import Loc, did_you_mean, one_of, show

#: Data file formats format 1 reads, by file name ending.
DATA_FORMATS: tuple[str, ...] = (".csv", ".tsv", ".parquet", ".xlsx", ".xpt", ".dta")

Found = tuple[Loc, str]


def consistency_problems(raw: object) -> list[Found]:
    """Every cross-field problem of a raw study file, as (location, message) pairs."""
    if not isinstance(raw, Mapping):
        return []
    data = _mapping(raw.get("data"))
    found: list[Found] = []
    found += _source_format(data)
    factors = _items(_mapping(raw.get("design")).get("factors"))
    for i, factor in factors:
        found += _factor_levels(("design", "factors", i), factor)
    found += _unique(("outcomes",), "name", raw.get("outcomes"), "outcome names")
    found += _unique(("data", "exclusions"), "id", data.get("exclusions"), "exclusion ids")
    found += _column_roles(raw, data, factors)
    return found


def _mapping(value: object) -> Mapping:
    return value if isinstance(value, Mapping) else {}


def _items(value: object) -> list[tuple[int, Mapping]]:
    if not isinstance(value, (list, tuple)):
        return []
    return [(i, item) for i, item in enumerate(value) if isinstance(item, Mapping)]


def _text(value: object) -> str | None:
    # Numbers count as their canonical text, as the model reads them; other types are
    # field errors reported elsewhere.
    if isinstance(value, str):
        return value
    if isinstance(value, (int, float)) and not isinstance(value, bool):
        return scalar_text(value)
    return None


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


def _factor_levels(loc: Loc, factor: Mapping) -> list[Found]:
    levels = factor.get("levels")
    if not isinstance(levels, (list, tuple)):
        return []
    texts = [_text(level) for level in levels]
    found: list[Found] = []
    first: dict[str, int] = {}
    for j, text in enumerate(texts):
        if text is None:
            continue
        if text in first:
            found.append(((*loc, "levels", j),
                          f"got {show(text)} again; each level must be named once "
                          f"(first at levels[{first[text]}])"))
        else:
            first[text] = j
    control = _text(factor.get("control"))
    if control is not None and first and control not in first:
        names = list(first)
        found.append(((*loc, "control"),
                      f"got {show(control)}; allowed: one of the levels {one_of(names)}"
                      f"{did_you_mean(control, names)}"))
    return found


def _unique(loc: Loc, key: str, items: object, what: str) -> list[Found]:
    found: list[Found] = []
    first: dict[str, int] = {}
    for i, item in _items(items):
        value = item.get(key)
        if not isinstance(value, str):
            continue
        if value in first:
            found.append(((*loc, i, key),
                          f"got {show(value)} again; {what} must be unique "
                          f"(first at {loc[-1]}[{first[value]}])"))
        else:
            first[value] = i
    return found


def _outcome_columns(raw: Mapping) -> Iterator[tuple[Loc, str]]:
    for i, outcome in _items(raw.get("outcomes")):
        key = "column" if outcome.get("column") is not None else "name"
        column = outcome.get(key)
        if isinstance(column, str):
            yield ("outcomes", i, key), column


def _column_roles(raw: Mapping, data: Mapping, factors: list[tuple[int, Mapping]]) -> list[Found]:
    """A column plays one role: the unit identifier, a factor or an outcome."""
    roles: dict[str, str] = {}
    unit = data.get("unit")
    if isinstance(unit, str):
        roles[unit] = "the unit column"
    found: list[Found] = []
    for i, factor in factors:
        name = factor.get("name")
        if not isinstance(name, str):
            continue
        if name in roles:
            found.append((("design", "factors", i, "name"),
                          f"got {show(name)}, which is {roles[name]}; "
                          "a factor must be a column of its own"))
        else:
            roles[name] = "a factor column"
    for loc, column in _outcome_columns(raw):
        if column in roles and roles[column] != "an outcome column":
            found.append((loc, f"got {show(column)}, which is {roles[column]}; "
                               "an outcome must be a column of its own"))
    return found
