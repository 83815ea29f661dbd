"""SHA-256 (FIPS 180-4) of texts, bytes, files and streams: the one place every checksum
appendix records or checks is computed. Files are read in 1 MiB blocks, never whole.

>>> sha256_text("abc")
'ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad'
"""

from __future__ import annotations

import hashlib
from pathlib import Path
from typing import BinaryIO

BLOCK = 1 << 20


def sha256_bytes(data: bytes) -> str:
    """The hex SHA-256 of `data`."""
    return hashlib.sha256(data).hexdigest()


def sha256_text(text: str) -> str:
    """The hex SHA-256 of `text` encoded as UTF-8."""
    return sha256_bytes(text.encode("utf-8"))


def sha256_and_size(path: Path) -> tuple[str, int]:
    """The hex SHA-256 of a file and its size in bytes, counted over the bytes hashed."""
    digest = hashlib.sha256()
    size = 0
    with open(path, "rb") as handle:
        while block := handle.read(BLOCK):
            digest.update(block)
            size += len(block)
    return digest.hexdigest(), size


def sha256_file(path: Path) -> str:
    """The hex SHA-256 of a file."""
    return sha256_and_size(path)[0]


def copy_hashed(source: BinaryIO, sink: BinaryIO) -> str:
    """Copy `source` into `sink` block by block; the hex SHA-256 of the bytes copied."""
    digest = hashlib.sha256()
    while block := source.read(BLOCK):
        digest.update(block)
        sink.write(block)
    return digest.hexdigest()
