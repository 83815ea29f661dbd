"""Every problem the data stage finds in a data file, worded once.

The in-memory builder (`appendix.data.build_rows`) and the out-of-core aggregation
(`appendix.data.outofcore`) find problems in different ways (loops over rows, SQL
queries) and hand what they found here: the kind, the column, the value and the lines.
So a problem reads the same whichever path found it, and each kind of problem is capped
at `LISTED` messages, then one line ``... and N more <kind> (first on line L)``.
"""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path

from appendix.errors import DataError, Problem, UserError
from appendix.plan.load import LoadedPlan
from appendix.plan.wording import capped, did_you_mean, more_of_kind, one_of, show

#: At most this many problems are listed per column and kind, and lines per problem.
LISTED = 20

#: Largest magnitude accepted in an outcome: squares and sums of squared deviations of
#: values up to this size stay far inside double precision (about 1.8e308).
VALUE_LIMIT = 1e100

_MISSING_ALLOWED = "allowed: a number, or an empty cell or NA for a missing value"


def on_lines(lines: Sequence[int], total: int | None = None) -> str:
    """``line 4`` or ``lines 4, 9 and 3 more``: the first `LISTED` of `lines`, where
    `total` (default: all of them) rows share the problem."""
    total = len(lines) if total is None else total
    label = "line" if total == 1 else "lines"
    shown = ", ".join(str(n) for n in lines[:LISTED])
    rest = total - min(len(lines), LISTED)
    return f"{label} {shown}" + (f" and {rest} more" if rest > 0 else "")


def named_columns(plan) -> list[tuple[str, str]]:
    """(plan key, column) of every data column the plan names, in plan order."""
    named = [("data.unit", plan.data.unit)]
    named += [(f"design.factors[{i}].name", f.name) for i, f in enumerate(plan.design.factors)]
    named += [(f"design.covariates[{i}].{'column' if c.column else 'name'}", c.data_column)
              for i, c in enumerate(plan.design.covariates)]
    named += [(f"data.exclusions[{i}].column", r.column) for i, r in enumerate(plan.data.exclusions)]
    named += [(f"outcomes[{i}].{'column' if o.column else 'name'}", o.data_column)
              for i, o in enumerate(plan.outcomes)]
    return named


def require_columns(loaded: LoadedPlan, path: Path, columns: Sequence[str],
                    header_line: int = 1) -> None:
    """Every column the plan names is among `columns`, or one problem per missing column."""
    listing = (one_of(columns, "and") if len(columns) <= LISTED
               else capped([show(c) for c in columns], LISTED))
    present = set(columns)
    problems = [Problem(str(path), header_line, column,
                        f"no such column (named by {key} at {loaded.path}:{loaded.line_of(key)}); "
                        f"the columns are {listing}{did_you_mean(column, list(columns))}")
                for key, column in named_columns(loaded.plan) if column not in present]
    if problems:
        raise DataError(list(dict.fromkeys(problems)))


def no_unit(where: str, column: str, lines: Sequence[int], total: int | None = None) -> Problem:
    return Problem(where, lines[0], column, f"no unit identifier on {on_lines(lines, total)}; "
                   "every row needs one")


def repeated_unit(where: str, column: str, unit: str, lines: Sequence[int],
                  total: int | None = None, within: Sequence = (),
                  levels: Sequence[str] = ()) -> Problem:
    """A unit on several rows; with within factors (`within`), a unit at one cell of their
    grid (`levels`, one per within factor)."""
    if not within:
        return Problem(where, lines[1], column, f"unit {show(unit)} appears on "
                       f"{on_lines(lines, total)}; each unit must appear once")
    at = ", ".join(f"{factor.name} {show(level)}" for factor, level in zip(within, levels))
    per = (f"level of {within[0].name}" if len(within) == 1
           else "cell of " + " \u00d7 ".join(f.name for f in within))
    return Problem(where, lines[1], column,
                   f"unit {show(unit)} at {at} appears on {on_lines(lines, total)}; each unit must "
                   f"appear once per {per}")


def not_a_level(where: str, column: str, text: str, lines: Sequence[int], levels: Sequence[str],
                total: int | None = None) -> Problem:
    from appendix.data.levels import level_hint

    got = "an empty cell" if text == "" else f"got {show(text)}"
    return Problem(where, lines[0], column, f"{got} on {on_lines(lines, total)}; allowed: one of "
                   f"the plan's levels {one_of(levels)}{level_hint(text, levels)}")


def more_not_levels(where: str, column: str, texts: int, rows: int, first_line: int) -> Problem:
    """The line after the first `LISTED` texts read as no level."""
    return Problem(where, None, column, f"... and {texts} more cell texts that are no level, on "
                   f"{rows} rows (first on line {first_line})")


def varying(where: str, column: str, unit: str, values: Sequence[str], lines: Sequence[int]
            ) -> Problem:
    return Problem(where, lines[1], column,
                   f"unit {show(unit)} has {one_of(values, 'and')} on {on_lines(lines)}; a unit's "
                   "between-unit factors and covariates must be the same on all its rows")


def not_a_number(where: str, column: str, cell: str | None, line: int, covariate: str | None = None
                 ) -> Problem:
    role = f" (covariate {covariate})" if covariate is not None else ""
    return Problem(where, line, column, f"got {show(cell)}; {_MISSING_ALLOWED}{role}")


def more(where: str, column: str, count: int, kind: str, first_line: int | None) -> Problem:
    """``... and N more <kind> (first on line L)`` after the first `LISTED` of a kind."""
    return Problem(where, None, column, more_of_kind(count, kind, first_line))


def too_large(where: str, column: str, value: float, line: int, count: int) -> Problem:
    """An outcome value beyond `VALUE_LIMIT` (`count` of them, the first at `line`)."""
    return Problem(where, line, column,
                   f"got {value:g} on {count} row{'s' if count != 1 else ''}; allowed: values "
                   f"within +-{VALUE_LIMIT:g} (beyond it sums of squares overflow double "
                   "precision); rescale the column (another unit)")


def no_rows(path: Path) -> UserError:
    return UserError(f"cannot use the data file {path}: it has a header but no rows; "
                     "no units were read")
