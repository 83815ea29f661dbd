"""Exception families.

`UserError` and its subclasses mean bad input or usage: the CLI prints the message and
exits 2, never a traceback. Anything else that escapes is a bug (`InternalError` or an
unexpected exception): the CLI exits 3 and writes a log naming versions.
"""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class Problem:
    """One thing wrong with a study file or its data, located as precisely as we can.

    `file` and `line` point into the study file (line is 1-based, None when unknown);
    `path` is the key path such as ``outcomes[1].role``; `message` says what was
    received and what is allowed.
    """

    file: str
    line: int | None
    path: str
    message: str

    def __str__(self) -> str:
        where = self.file if self.line is None else f"{self.file}:{self.line}"
        key = f" {self.path}:" if self.path else ""
        return f"{where}:{key} {self.message}"


class UserError(Exception):
    """Bad input or usage; the message is for the user and is complete."""


class _ProblemsError(UserError):
    """A user error that carries every problem found, not only the first."""

    subject = "the input"

    def __init__(self, problems: list[Problem]):
        self.problems = tuple(problems)
        count = len(self.problems)
        head = f"{count} problem{'s' if count != 1 else ''} in {self.subject}:"
        super().__init__("\n".join([head, *(f"  {p}" for p in self.problems)]))


class PlanError(_ProblemsError):
    """The study file is invalid."""

    subject = "the study file"


class DataError(_ProblemsError):
    """The data do not fit the plan (unknown level, non-numeric outcome cell, ...).

    For data problems `file` is the data file, `line` its 1-based line (header = 1)
    and `path` the column name.
    """

    subject = "the data"


class InternalError(Exception):
    """A bug in appendix itself."""
