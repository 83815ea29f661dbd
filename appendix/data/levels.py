"""Reading a factor's cells as its plan levels: by text, and by value for number-like levels.

A cell (surrounding spaces trimmed, as every reader gives it, so `` 1`` is simply ``1``)
is the level whose text it is. When every level of a factor is a number written in
decimal notation (`appendix.data.values.DECIMAL_PATTERN`: ``1``, ``2.5``, ``-3``,
``010``), a cell that is no level's text but is a decimal number equal in value to
exactly one level is read as that level: ``1.0``, ``01``, ``+1``, ``1.000`` and ``1e0``
are all the level ``1``. The data stage reports every spelling so read as a finding.

Values are compared exactly, as decimals, and never rounded: ``1.0000001`` is not the
level ``1``, nor is ``0.30000000000000004`` (a float's spelling) the level ``0.3``. A
cell equal in value to two levels (a plan naming both ``1`` and ``1.0``) is read as
neither, and a factor with a level that is not a number is read by text only. Where a
cell is read as no level, `level_hint` points to a level equal or close in value.
"""

from __future__ import annotations

import re
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass
from decimal import Decimal

from appendix.data.values import DECIMAL_PATTERN
from appendix.plan.wording import did_you_mean, one_of, show
from appendix.results import Finding

_DECIMAL = re.compile(DECIMAL_PATTERN)

#: A cell is close in value to a level when it lies within this share of the smaller of
#: the level's magnitude and the smallest gap between two levels (the hint only).
CLOSE = Decimal("0.01")


def decimal_value(text: str) -> Decimal | None:
    """The exact value of a number written in decimal notation, else None.

    >>> decimal_value("1.50") == decimal_value("1.5"), decimal_value("one"), decimal_value("1e" + "9" * 20)
    (True, None, None)
    """
    if not _DECIMAL.match(text):
        return None
    try:
        return Decimal(text)
    except ArithmeticError:  # an exponent beyond what decimal arithmetic holds
        return None


@dataclass(frozen=True)
class LevelReading:
    """How the cells of one factor are read: `index` maps each level's text to its code;
    `by_value` maps each level's value to the codes of the levels of that value, or is
    None when some level is not a number (then cells are read by text only)."""

    levels: tuple[str, ...]
    index: Mapping[str, int]
    by_value: Mapping[Decimal, tuple[int, ...]] | None

    @classmethod
    def of(cls, levels: Sequence[str]) -> LevelReading:
        """The reading of a factor with these plan levels."""
        values = [decimal_value(level) for level in levels]
        by_value: dict[Decimal, tuple[int, ...]] | None = None
        if all(v is not None for v in values):
            by_value = {}
            for code, value in enumerate(values):
                by_value[value] = (*by_value.get(value, ()), code)
        return cls(levels=tuple(levels), index={level: i for i, level in enumerate(levels)},
                   by_value=by_value)

    def code(self, text: str) -> int:
        """The code of the level a (trimmed) cell is read as, or -1 for none.

        >>> reading = LevelReading.of(["1", "2.5"])
        >>> reading.code("2.5"), reading.code("1.0"), reading.code("2.50"), reading.code("1.0000001")
        (1, 0, 1, -1)
        >>> LevelReading.of(["1", "placebo"]).code("1.0")
        -1
        """
        code = self.index.get(text)
        if code is not None:
            return code
        if self.by_value is None:
            return -1
        value = decimal_value(text)
        codes = self.by_value.get(value, ()) if value is not None else ()
        return codes[0] if len(codes) == 1 else -1


def merge_counts(parts: Iterable[Mapping[tuple[str, int], int]]) -> dict[tuple[str, int], int]:
    """Counts per (spelling, code) added up over parts, keys in order of first appearance."""
    total: dict[tuple[str, int], int] = {}
    for part in parts:
        for key, n in part.items():
            total[key] = total.get(key, 0) + n
    return total


def reading_findings(column: str, levels: Sequence[str],
                     respelled: Mapping[tuple[str, int], int]) -> tuple[Finding, ...]:
    """One ``level-read-by-value`` finding per spelling of a level read by its value
    (`respelled`: cells per (spelling, level code), in order of first appearance), the
    levels in plan order.

    >>> reading_findings("dose", ["1", "2"], {("2.0", 1): 1, ("1.0", 0): 12})[0].message
    "dose: 12 cells written '1.0' were read as the plan's level '1' (equal in value)."
    """
    found = []
    for (text, code), n in sorted(respelled.items(), key=lambda item: item[0][1]):
        cells = f"{n} cells written {show(text)} were" if n != 1 else f"1 cell written {show(text)} was"
        found.append(Finding("level-read-by-value",
                             f"{column}: {cells} read as the plan's level {show(levels[code])} "
                             "(equal in value)."))
    return tuple(found)


def level_hint(text: str, levels: Sequence[str]) -> str:
    """What to add to the message about a cell read as no level: the levels equal in
    value to it (read as neither, or not read by value as some level is not a number,
    or equal once a decimal comma is read as a point),
    else the level closest in value if it is close (see `CLOSE`), else a near spelling.

    >>> level_hint("1.0000001", ["1", "2"])
    "; did you mean '1'? (close in value but not equal; levels are never rounded)"
    >>> level_hint("1.0", ["1", "placebo"])
    "; did you mean '1'? (equal in value, but cells are read by value only when every level is a number)"
    """
    value = decimal_value(text)
    numbers = [(code, decimal_value(level)) for code, level in enumerate(levels)]
    numbers = [(code, v) for code, v in numbers if v is not None]
    if value is None and text.count(",") == 1:  # a decimal comma: '1,0' means 1, not '10'
        comma = decimal_value(text.replace(",", "."))
        equal = [levels[code] for code, v in numbers if comma is not None and v == comma]
        if equal:
            return f"; did you mean {one_of(equal)}? (numbers are written with a decimal point)"
    if value is None or not numbers:
        return did_you_mean(text, levels)
    equal = [levels[code] for code, v in numbers if v == value]
    if len(equal) > 1 and len(numbers) == len(levels):
        return f"; equal in value to the levels {one_of(equal, 'and')}, so read as neither"
    if equal:
        return (f"; did you mean {one_of(equal)}? (equal in value, but cells are read by value "
                "only when every level is a number)")
    close = _closest(value, numbers)
    if close is not None:
        return (f"; did you mean {show(levels[close])}? (close in value but not equal; "
                "levels are never rounded)")
    # A number is not suggested a level whose digits merely look alike ('1.02' -> '10').
    words = [level for level in levels if decimal_value(level) is None]
    return did_you_mean(text, words)


def _closest(value: Decimal, numbers: list[tuple[int, Decimal]]) -> int | None:
    """The code of the level nearest `value` if it is within `CLOSE` of the smaller of
    that level's magnitude and the smallest gap between levels (ties: the first level)."""
    try:
        distinct = sorted(set(v for _, v in numbers))
        gaps = [b - a for a, b in zip(distinct, distinct[1:])]
        gap = min(gaps) if gaps else None
        best = None
        for code, level in numbers:
            scales = [s for s in (abs(level) or None, gap) if s is not None]
            if not scales:
                continue
            distance = abs(value - level)
            if distance <= CLOSE * min(scales) and (best is None or distance < best[1]):
                best = (code, distance)
    except ArithmeticError:  # values beyond decimal arithmetic: no hint
        return None
    return best[0] if best is not None else None
