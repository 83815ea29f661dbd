"""Reading back a JSON file of ours (results, manifest, records, lock): every way it can be
broken is a sentence (`UserError`), never a traceback."""

from __future__ import annotations

import json
import os
import stat
from pathlib import Path
from typing import Any

from appendix.errors import UserError

#: Larger files are not ours (a results.json of a 200-outcome study is a few MB).
MAX_BYTES = 2 * 2**30


def read_json(path: Path, what: str) -> Any:
    """The parsed JSON of `path`; `what` says what the file should be, for the message.

    Refused with a sentence: a missing file, a folder or other non-file, a file above
    `MAX_BYTES`, text that is not UTF-8 or not JSON, and nesting too deep to parse.
    """
    path = Path(path)
    try:
        mode = os.stat(path).st_mode
    except FileNotFoundError:
        raise UserError(f"{path} not found: {what}") from None
    except OSError as error:
        raise UserError(f"{path} cannot be read ({error.strerror or error}): {what}") from None
    if not stat.S_ISREG(mode):
        raise UserError(f"{path} is not a regular file: {what}")
    if os.stat(path).st_size > MAX_BYTES:
        raise UserError(f"{path} is larger than {MAX_BYTES} bytes: {what}")
    try:
        return json.loads(path.read_text(encoding="utf-8"))
    except OSError as error:
        raise UserError(f"{path} cannot be read ({error.strerror or error}): {what}") from None
    except UnicodeDecodeError as error:
        raise UserError(f"{path} is not UTF-8 text (byte {error.start}): {what}") from None
    except json.JSONDecodeError as error:
        raise UserError(f"{path} is not valid JSON (line {error.lineno}, column {error.colno}): "
                        f"{what}") from None
    except RecursionError:
        raise UserError(f"{path} is nested too deeply to be read: {what}") from None


def _first_errors(error, limit: int = 3) -> str:
    shown = [f"{'.'.join(str(p) for p in e['loc']) or '(top)'}: {e['msg']}"
             for e in error.errors()[:limit]]
    more = error.error_count() - len(shown)
    return "; ".join(shown) + (f"; and {more} more" if more > 0 else "")


def checked(data: Any, kind: Any, path: Path, what: str) -> Any:
    """`data` validated against the type `kind` (a results dataclass or a manifest shape);
    a `UserError` naming the first wrong keys when it does not fit, so nothing downstream
    meets a missing key or a value of the wrong type."""
    from pydantic import TypeAdapter, ValidationError

    try:
        TypeAdapter(kind).validate_python(data)
    except ValidationError as error:
        raise UserError(f"{path} is not {what} ({_first_errors(error)})") from None
    except RecursionError:
        raise UserError(f"{path} is nested too deeply to be read: {what}") from None
    return data
