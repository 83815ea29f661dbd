"""What a command is given besides its arguments, and the exit codes it answers with."""

from __future__ import annotations

import datetime as _dt
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path
from typing import TextIO

#: Done.
OK = 0
#: Done, but something the user must see: an unacknowledged deviation under ``--strict``,
#: a changed conclusion for ``diff``, a mismatch for ``verify``, a failed ``selftest``.
FINDINGS = 1
#: Bad input or usage: one sentence, no traceback.
USAGE = 2
#: An internal error (a bug in appendix), with a log file naming versions.
BUG = 3
#: Stopped by SIGINT (Ctrl-C) and SIGTERM: the shell's 128 + signal number.
INTERRUPTED, TERMINATED = 130, 143


@dataclass(frozen=True)
class CommandIO:
    """The streams a command writes to, the folder its relative paths start from and the
    clock it reads (all passed in, so that tests control them)."""

    out: TextIO
    err: TextIO
    cwd: Path
    clock: Callable[[], _dt.datetime]

    def path(self, given: Path) -> Path:
        """A path from the command line, relative to `cwd` unless absolute."""
        return self.cwd / given

    def say(self, *lines: str) -> None:
        """Print lines to `out`."""
        for line in lines:
            print(line, file=self.out)
