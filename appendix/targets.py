"""Where a command may write: never over one of its inputs, never over anything it did not
create.

`appendix run` replaces a run folder only when the folder is empty or is a run folder of
ours whose every file its manifest lists; `appendix pack` and `appendix diff --html` write
a file only where none exists or where one of their own (a package, a diff page) stands.
Every refusal is a `UserError` (exit 2) that says what was found and what to do.
"""

from __future__ import annotations

import json
import os
import stat
import zipfile
from collections.abc import Callable, Iterable
from pathlib import Path

from appendix.errors import UserError
from appendix.names import MANIFEST_FILE, PACKAGE_ENTRIES

#: The mark the diff page carries in its head (templates/diff.html.j2).
DIFF_MARK = b'<meta name="generator" content="appendix diff'


def _resolved(path: Path) -> Path:
    return Path(os.path.abspath(Path(path).expanduser())).resolve(strict=False)


def _inside(path: Path, folder: Path) -> bool:
    """Whether `path` is `folder` or lies below it (both resolved)."""
    return path == folder or folder in path.parents


def run_manifest_outputs(folder: Path) -> set[str] | None:
    """The outputs a run folder's manifest lists (relative paths, the manifest included),
    or None when `folder` holds no manifest of ours."""
    manifest = Path(folder) / MANIFEST_FILE
    try:
        if not manifest.is_file() or manifest.stat().st_size > 64 * 2**20:
            return None
        data = json.loads(manifest.read_text(encoding="utf-8"))
    except (OSError, UnicodeDecodeError, ValueError, RecursionError):
        return None
    if not isinstance(data, dict) or not isinstance(data.get("tool"), dict) \
            or data["tool"].get("name") != "appendix" or not isinstance(data.get("outputs"), list):
        return None
    listed = {o.get("path") for o in data["outputs"] if isinstance(o, dict)}
    return {p for p in listed if isinstance(p, str)} | {MANIFEST_FILE}


def _files_below(folder: Path) -> list[str]:
    return sorted(p.relative_to(folder).as_posix() for p in folder.rglob("*")
                  if p.is_file() or p.is_symlink())


def check_run_target(target: Path, inputs: Iterable[Path]) -> None:
    """Refuse a run folder target that `appendix run` may not replace.

    Allowed: a path that does not exist yet, an empty folder, or a run folder of ours
    (its manifest lists every file in it). Never a folder that holds an input of the run.
    """
    target = Path(target)
    where = _resolved(target)
    for source in inputs:
        if source is not None and _inside(_resolved(source), where):
            raise UserError(f"{target} holds {source}, an input of this run; choose another "
                            "--out (the run folder is replaced as a whole)")
    if not os.path.lexists(target):
        return
    if target.is_symlink() or not target.is_dir():
        raise UserError(f"{target} is not a run folder (it is a file or a link); choose "
                        "another --out or remove it")
    present = _files_below(target)
    if not present and not any(target.iterdir()):
        return
    listed = run_manifest_outputs(target)
    if listed is None:
        raise UserError(f"{target} is not a run folder (it holds files that appendix did not "
                        "write); choose another --out or remove it")
    foreign = [p for p in present if p not in listed]
    if foreign:
        more = f" and {len(foreign) - 1} more" if len(foreign) > 1 else ""
        raise UserError(f"{target} is a run folder but also holds {foreign[0]}{more}, which the "
                        "run did not write; move it out, or choose another --out")


def is_package(path: Path) -> bool:
    """Whether `path` is a reviewer package of ours (a zip holding its sums and note)."""
    try:
        with zipfile.ZipFile(path) as archive:
            names = set(archive.namelist())
    except (OSError, zipfile.BadZipFile, ValueError):
        return False
    return all(name in names for name in PACKAGE_ENTRIES)


def is_diff_page(path: Path) -> bool:
    """Whether `path` is a diff page of ours (its head carries our mark)."""
    try:
        with open(path, "rb") as handle:
            return DIFF_MARK in handle.read(4096)
    except OSError:
        return False


def make_parent(target: Path, option: str) -> None:
    """Create the folder an output goes into (a new folder harms nothing), or say why not."""
    try:
        Path(target).parent.mkdir(parents=True, exist_ok=True)
    except OSError as error:
        raise UserError(f"cannot create the folder {Path(target).parent} for {target}: "
                        f"{error.strerror or error}; choose another {option}") from None


def check_file_target(target: Path, inputs: Iterable[Path], what: str,
                      ours: Callable[[Path], bool], option: str) -> None:
    """Refuse an output file that would land on an input, on a folder or other non-file, or
    over a file that is not one of ours (`ours` recognises them); create its folder.

    `what` names the output ("package", "diff page"), `option` the option that chose it.
    """
    target = Path(target)
    where = _resolved(target)
    for source in inputs:
        if source is None:
            continue
        place = _resolved(source)
        if where == place or _inside(where, place):
            raise UserError(f"{target} is {'inside ' if where != place else ''}{source}, an input "
                            f"of this command; choose another {option}")
    make_parent(target, option)
    if not os.path.lexists(target):
        return
    mode = os.lstat(target).st_mode
    if not stat.S_ISREG(mode):
        raise UserError(f"{target} is not a regular file (a folder, link or device); choose "
                        f"another {option}")
    if not ours(target):
        raise UserError(f"{target} exists and is not a {what} written by appendix; choose "
                        f"another {option} or remove it")

