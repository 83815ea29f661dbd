"""Writing into a temporary place beside the target and moving it into place at the end,
so that a failed or killed command leaves the previous output untouched.

`staged_folder` stages a whole folder (a run folder) and swaps it in; `staged_file` and
`write_atomically` stage one file (a package, a diff page, a lock); `recover` puts right
what a run killed in the middle of a swap left. Staging and retired folders carry the
pid of the process that made them (``.<name>.staging-<pid>-*``, ``.<name>.old-<pid>-*``),
so that a later run can tell a live one's from a dead one's.
"""

from __future__ import annotations

import os
import shutil
import tempfile
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from pathlib import Path


@contextmanager
def staged_folder(target: Path, *, check: Callable[[], None]) -> Iterator[Path]:
    """Yield an empty staging folder that replaces `target` when the block completes.

    `check` refuses a target that may not be replaced (it raises); it is called before the
    staging folder is made and again just before the swap. If the block raises, the
    staging folder is removed and `target` is left as it was.
    """
    target = Path(target)
    check()
    target.parent.mkdir(parents=True, exist_ok=True)
    staging = Path(tempfile.mkdtemp(prefix=f".{target.name}.staging-{os.getpid()}-",
                                    dir=target.parent))
    try:
        yield staging
        check()
    except BaseException:
        shutil.rmtree(staging, ignore_errors=True)
        raise
    os.chmod(staging, 0o755)
    retired = None
    if target.exists():
        retired = Path(tempfile.mkdtemp(prefix=f".{target.name}.old-{os.getpid()}-",
                                        dir=target.parent))
        os.replace(target, retired / target.name)
    os.replace(staging, target)
    if retired is not None:
        shutil.rmtree(retired, ignore_errors=True)


def _owner_alive(leftover: Path) -> bool:
    """Whether the process that made a staging or retired folder (its pid is in the name)
    still runs; a name without a pid counts as not running."""
    parts = leftover.name.rsplit("-", 2)
    if len(parts) != 3 or not parts[1].isdigit():
        return False
    pid = int(parts[1])
    if pid == os.getpid():
        return True
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:  # another user's process: alive
        return True
    return True


def recover(target: Path) -> list[str]:
    """Put right what a killed run left beside `target`, and say what was done.

    A run killed between the two renames of the swap leaves the previous run folder in
    ``.<name>.old-<pid>-*/<name>`` and nothing at `target`: it is moved back. Staging and
    retired folders of runs that no longer run are removed.
    """
    target = Path(target)
    parent = target.parent
    if not parent.is_dir():
        return []
    notes = []
    for leftover in sorted(parent.glob(f".{target.name}.old-*")):
        if not leftover.is_dir() or _owner_alive(leftover):
            continue
        kept = leftover / target.name
        if not os.path.lexists(target) and kept.is_dir():
            os.replace(kept, target)
            notes.append(f"restored {target} from an earlier run that was stopped while it "
                         "replaced the folder")
        shutil.rmtree(leftover, ignore_errors=True)
    for leftover in sorted(parent.glob(f".{target.name}.staging-*")):
        if leftover.is_dir() and not _owner_alive(leftover):
            shutil.rmtree(leftover, ignore_errors=True)
            notes.append(f"removed {leftover.name}, the unfinished output of a run that was "
                         "stopped")
    return notes


@contextmanager
def staged_file(target: Path) -> Iterator[Path]:
    """Yield a temporary file beside `target` (``.<name>.*``) to write; when the block
    completes it is renamed onto `target` (mode 0644), so a failed write never leaves
    half a file where the old one stood. If the block raises, the file is removed."""
    target = Path(target)
    handle, name = tempfile.mkstemp(prefix=f".{target.name}.", dir=target.parent)
    os.close(handle)
    temporary = Path(name)
    try:
        yield temporary
        os.chmod(temporary, 0o644)
        os.replace(temporary, target)
    except BaseException:
        temporary.unlink(missing_ok=True)
        raise


def write_atomically(target: Path, data: bytes) -> None:
    """Write `data` to `target` through a `staged_file`."""
    with staged_file(target) as temporary:
        temporary.write_bytes(data)
