"""One canonical text form for scalar values, shared by the plan and the data stages.

Level names and exclusion values are compared as text, but they can arrive typed: a
YAML number (`levels: [1, 2]`), a Parquet float, an Excel integer. Turning every such
value into text the same way keeps plan and data comparable.
"""

from __future__ import annotations

import datetime as _dt
import math
from decimal import Decimal


def scalar_text(value: object) -> str | None:
    """The canonical text of a scalar; None for an absent value (None or NaN).

    Booleans become ``true``/``false``; integral floats lose their ``.0`` (an Excel or
    Parquet float 3.0 and the text ``3`` name the same level); other floats use the
    shortest text that reads back to the same double (Python's ``repr``).

    >>> scalar_text(3.0), scalar_text(0.1), scalar_text(True), scalar_text(float("nan"))
    ('3', '0.1', 'true', None)
    """
    if value is None:
        return None
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, int):
        return str(value)
    if isinstance(value, float):
        if math.isnan(value):
            return None
        if value.is_integer() and abs(value) < 2**53:
            return str(int(value))
        return repr(value)
    if isinstance(value, Decimal):
        return str(value)
    if isinstance(value, _dt.datetime):
        return value.isoformat(sep=" ")
    if isinstance(value, _dt.date):
        return value.isoformat()
    if isinstance(value, bytes):
        return value.decode("utf-8", errors="replace")
    return str(value)
