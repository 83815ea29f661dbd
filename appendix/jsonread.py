"""Reading back a JSON file of ours (results, manifest, records, lock): every way it can be
broken is a sentence (`UserError`), never a traceback."""

from __future__ import annotations

import json
import os
import stat
from pathlib import Path
from typing import Any

from appendix.errors import UserError
from appendix.results import FORMAT_VERSION, ResultsFormatError, StudyResults, first_errors, from_plain

#: Larger files are not ours (a results.json of a 200-outcome study is a few MB).
MAX_BYTES = 2 * 2**30


def read_json(path: Path, what: str, *, shown: str | Path | None = None) -> Any:
    """The parsed JSON of `path`; `what` says what the file should be, for the message,
    which names the file as `shown` (default `path`: a file extracted into a scratch
    folder is named as it stands in its package).

    Refused with a sentence: a missing file, a folder or other non-file, a file above
    `MAX_BYTES`, text that is not UTF-8 or not JSON, and nesting too deep to parse.
    """
    path = Path(path)
    name = path if shown is None else shown
    try:
        mode = os.stat(path).st_mode
    except FileNotFoundError:
        raise UserError(f"{name} not found: {what}") from None
    except OSError as error:
        raise UserError(f"{name} cannot be read ({error.strerror or error}): {what}") from None
    if not stat.S_ISREG(mode):
        raise UserError(f"{name} is not a regular file: {what}")
    if os.stat(path).st_size > MAX_BYTES:
        raise UserError(f"{name} is larger than {MAX_BYTES} bytes: {what}")
    try:
        return json.loads(path.read_text(encoding="utf-8"))
    except OSError as error:
        raise UserError(f"{name} cannot be read ({error.strerror or error}): {what}") from None
    except UnicodeDecodeError as error:
        raise UserError(f"{name} is not UTF-8 text (byte {error.start}): {what}") from None
    except json.JSONDecodeError as error:
        raise UserError(f"{name} is not valid JSON (line {error.lineno}, column {error.colno}): "
                        f"{what}") from None
    except RecursionError:
        raise UserError(f"{name} is nested too deeply to be read: {what}") from None


def checked(data: Any, kind: Any, path: Path, what: str) -> Any:
    """`data` validated against the type `kind` (a results dataclass or a manifest shape);
    a `UserError` naming the first wrong keys when it does not fit, so nothing downstream
    meets a missing key or a value of the wrong type."""
    from pydantic import TypeAdapter, ValidationError

    try:
        TypeAdapter(kind).validate_python(data)
    except ValidationError as error:
        raise UserError(f"{path} is not {what} ({first_errors(error)})") from None
    except RecursionError:
        raise UserError(f"{path} is nested too deeply to be read: {what}") from None
    return data


def read_results(path: Path, what: str, *, other_format: str,
                 shown: str | Path | None = None) -> StudyResults:
    """The typed results of a results.json (`appendix.results.from_plain`), read once.

    Besides what `read_json` refuses, a sentence names the file (as `shown`, default
    `path`) when it states no results format, states another one (`other_format` ends
    that sentence: what this version does instead, and what to do), or does not match
    the declared types (the first keys that do not fit).
    """
    name = path if shown is None else shown
    data = read_json(path, what, shown=shown)
    version = data.get("format_version") if isinstance(data, dict) else None
    if type(version) is not int:
        stated = ("it states no format_version" if version is None
                  else f"its format_version is {version!r}, not a whole number")
        raise UserError(f"{name}: not a results file of format {FORMAT_VERSION} ({stated}): {what}")
    if version != FORMAT_VERSION:
        raise UserError(f"{name} is a results file of format {version}, and this version of "
                        f"appendix {other_format}")
    try:
        return from_plain(data)
    except ResultsFormatError as error:
        raise UserError(f"{name} is not a results file of this version ({error})") from None
    except RecursionError:
        raise UserError(f"{name} is nested too deeply to be read: {what}") from None
