"""SHA-256 (FIPS 180-4) of every input file, streamed, as `InputFile` records."""

from __future__ import annotations

import hashlib
import os
from pathlib import Path

from appendix.results import InputFile

_CHUNK = 1 << 20


def sha256_file(path: Path) -> tuple[str, int]:
    """The hex SHA-256 of a file and its size in bytes, read in 1 MiB pieces.

    >>> sha256_file(Path("abc.txt"))  # a file holding b"abc"  # doctest: +SKIP
    ('ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad', 3)
    """
    digest = hashlib.sha256()
    size = 0
    with path.open("rb") as handle:
        while chunk := handle.read(_CHUNK):
            digest.update(chunk)
            size += len(chunk)
    return digest.hexdigest(), size


def relative_posix(path: Path, folder: Path) -> str:
    """`path` relative to `folder`, with '/' separators (``../`` where it lies outside)."""
    return Path(os.path.relpath(path.resolve(), folder.resolve())).as_posix()


def input_file(path: Path, role: str, study_folder: Path) -> InputFile:
    """The `InputFile` record of one file; `role` is ``study`` or ``data``."""
    digest, size = sha256_file(path)
    return InputFile(role=role, path=relative_posix(path, study_folder), sha256=digest, bytes=size)


def study_inputs(study_file: Path, data_file: Path) -> tuple[InputFile, ...]:
    """The study file, its data file and, when there is one beside the study file, its
    registration lock, in that order, paths relative to the study file."""
    from appendix.plan.lock import LOCK_NAME

    folder = study_file.parent
    inputs = (input_file(study_file, "study", folder), input_file(data_file, "data", folder))
    lock = folder / LOCK_NAME
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
