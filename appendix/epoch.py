"""SOURCE_DATE_EPOCH, read before anything else is imported: some libraries read it while
they load, so a value beyond what the system can represent must be refused first."""

from __future__ import annotations

import datetime as _dt
from collections.abc import Mapping

from appendix.errors import UserError


def source_date(environ: Mapping[str, str]) -> _dt.datetime | None:
    """The time SOURCE_DATE_EPOCH names (reproducible-builds.org convention: whole seconds
    since 1970-01-01 UTC), or None when it is unset or empty."""
    text = environ.get("SOURCE_DATE_EPOCH", "").strip()
    if not text:
        return None
    if not text.isdigit():
        raise UserError(f"SOURCE_DATE_EPOCH must be a whole number of seconds since "
                        f"1970-01-01 UTC, got {text!r}")
    try:
        return _dt.datetime.fromtimestamp(int(text), _dt.timezone.utc)
    except (OverflowError, OSError, ValueError):
        raise UserError(f"SOURCE_DATE_EPOCH {text} lies beyond the dates this system can "
                        "represent (allowed: whole seconds up to 253402300799, the end of the "
                        "year 9999)") from None
