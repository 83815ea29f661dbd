"""How data cells are read: missing values, numbers, and matching an exclusion value.

Every cell reaches the data stage as text (or None where the file format itself says
"no value"), so these rules are the same for every file format.
"""

from __future__ import annotations

import math
import re
from decimal import Decimal

#: Cell texts that mean "no value" (after trimming spaces). Case matters: ``na`` is text.
MISSING_TEXTS = frozenset({"", "NA", "N/A", "NaN", "nan", "."})

#: Plain decimal notation, as a regular expression (Python and RE2 read it alike).
DECIMAL_PATTERN = r"^[+-]?(?:[0-9]+(?:\.[0-9]*)?|\.[0-9]+)(?:[eE][+-]?[0-9]+)?$"
_DECIMAL = re.compile(DECIMAL_PATTERN)


def is_missing(cell: str | None) -> bool:
    """True for an absent cell, an empty one, or one of `MISSING_TEXTS`."""
    return cell is None or cell.strip() in MISSING_TEXTS


def parse_number(cell: str) -> float | None:
    """The value of a decimal number written as text, or None if it is not one.

    Only plain decimal notation is accepted (``12``, ``-0.5``, ``1.2e3``); ``inf``,
    ``1,5``, ``12 mg`` or ``1e999`` (beyond double range) are not numbers here, so they are reported, not guessed.

    >>> parse_number(" 2.50 "), parse_number("1,5")
    (2.5, None)
    """
    text = cell.strip()
    if not _DECIMAL.match(text):
        return None
    value = float(text)
    return value if math.isfinite(value) else None  # 1e999 overflows: not a usable value


def match_key(cell: str | None) -> str:
    """The form in which a cell and an exclusion value are compared.

    Surrounding spaces are ignored; decimal numbers compare by value (``3``, ``3.0`` and
    ``3e0`` match); ``true``/``false`` in any case match each other's spelling (so an
    Excel or Parquet boolean matches ``equals: true``); other text must match exactly,
    case included (``yes`` matches ``yes``, not ``Yes``). A missing cell is ``""``.

    >>> match_key("3.0") == match_key("3"), match_key("TRUE"), match_key(" yes ")
    (True, 'true', 'yes')
    """
    text = (cell or "").strip()
    if _DECIMAL.match(text):
        value = Decimal(text)
        # normalize() gives one spelling per value (10000 and 1e4 -> 1E+4); -0 is 0.
        return "number:" + ("0" if value.is_zero() else str(value.normalize()))
    if text.lower() in ("true", "false"):
        return text.lower()
    return text
