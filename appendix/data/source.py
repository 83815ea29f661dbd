"""The data source is checked before anything opens it: it must be a regular, non-empty
file. A named pipe or a device would block (or never end) when opened or read, so the
type is read with `os.stat` and anything that is not a regular file is refused unopened.
"""

from __future__ import annotations

import os
import stat
from pathlib import Path

from appendix.errors import UserError

_KINDS = ((stat.S_ISDIR, "a folder"), (stat.S_ISFIFO, "a named pipe (FIFO)"),
          (stat.S_ISCHR, "a character device"), (stat.S_ISBLK, "a block device"),
          (stat.S_ISSOCK, "a socket"))


def require_data_file(path: Path) -> None:
    """Raise `UserError` (one sentence) unless `path` is a regular file with content.

    Symbolic links are followed (a link to a data file is fine); the target's type
    decides.
    """
    try:
        info = os.stat(path)
    except FileNotFoundError:
        raise UserError(f"data file not found: {path.resolve()}") from None
    except OSError as error:
        raise UserError(f"cannot read the data file {path}: {error.strerror or error}") from None
    if not stat.S_ISREG(info.st_mode):
        kind = next((word for test, word in _KINDS if test(info.st_mode)), "not a regular file")
        raise UserError(f"cannot read the data file {path}: it is {kind}, not a regular file; "
                        "data.source must name a file")
    if info.st_size == 0:
        raise UserError(f"cannot read the data file {path}: it is empty (0 bytes); "
                        "no units were read")
