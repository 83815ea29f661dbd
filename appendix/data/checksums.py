"""SHA-256 of every input file (`appendix.hashing`), as `InputFile` records."""

from __future__ import annotations

import os
from pathlib import Path

from appendix.hashing import sha256_and_size
from appendix.names import LOCK_FILE
from appendix.results import InputFile


def relative_posix(path: Path, folder: Path) -> str:
    """`path` relative to `folder`, with '/' separators (``../`` where it lies outside)."""
    return Path(os.path.relpath(path.resolve(), folder.resolve())).as_posix()


def input_file(path: Path, role: str, study_folder: Path) -> InputFile:
    """The `InputFile` record of one file; `role` is ``study`` or ``data``."""
    digest, size = sha256_and_size(path)
    return InputFile(role=role, path=relative_posix(path, study_folder), sha256=digest, bytes=size)


def study_inputs(study_file: Path, data_file: Path) -> tuple[InputFile, ...]:
    """The study file, its data file and, when there is one beside the study file, its
    registration lock, in that order, paths relative to the study file."""
    folder = study_file.parent
    inputs = (input_file(study_file, "study", folder), input_file(data_file, "data", folder))
    lock = folder / LOCK_FILE
    return (*inputs, input_file(lock, "lock", folder)) if lock.is_file() else inputs


def fingerprint(path: Path) -> tuple[int, int, int, int, int] | None:
    """What any rewrite of a file changes: device, inode, size, modification and status
    change times (ns). The status change time cannot be set back by a writer, so equal
    fingerprints before and after a read mean the bytes read are the bytes hashed.
    None when the file cannot be examined (the reader says why)."""
    try:
        st = os.stat(path)
    except OSError:
        return None
    return (st.st_dev, st.st_ino, st.st_size, st.st_mtime_ns, st.st_ctime_ns)


def confirm_unchanged(path: Path, before: tuple[int, int, int, int, int] | None) -> None:
    """Refuse a result read from a file that changed while it was read and hashed."""
    from appendix.errors import UserError

    if before is not None and fingerprint(path) != before:
        raise UserError(f"the data file {path} changed while it was read, so its checksum "
                        "may not belong to the values analysed; nothing was written; run again "
                        "once the file is complete")
