"""Helpers of the hostile-input corpus: the command line in-process, file hashes."""

from __future__ import annotations

import hashlib
import io
from pathlib import Path

from appendix.cli import main


def run_cli(argv, cwd: Path) -> tuple[int, str, str]:
    """Exit code, stdout and stderr of one command run in-process in `cwd`."""
    out, err = io.StringIO(), io.StringIO()
    code = main([str(a) for a in argv], stdout=out, stderr=err, cwd=cwd)
    return code, out.getvalue(), err.getvalue()


def hashes(folder: Path) -> dict[str, str]:
    """SHA-256 of every file below `folder`, by relative path."""
    return {p.relative_to(folder).as_posix(): hashlib.sha256(p.read_bytes()).hexdigest()
            for p in sorted(folder.rglob("*")) if p.is_file()}
