"""appendix.hashing: the one SHA-256 helper of the package, against published test vectors."""

from __future__ import annotations

import hashlib
import io

from appendix.hashing import copy_hashed, sha256_and_size, sha256_bytes, sha256_file, sha256_text

#: FIPS 180-2, appendix B.1 (the one-block message "abc").
ABC = "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"
#: FIPS 180-2, appendix B.2 (the two-block message "abcdbcde...nopq"; from memory, hashlib agrees).
TWO_BLOCKS = "248d6a61d20638b8e5c026930c3e6039a33ce45964ff2167f6ecedd419db06c1"
TWO_BLOCKS_MESSAGE = "abcdbcdecdefdefgefghfghighijhijkijkljklmklmnlmnomnopnopq"


def test_fips_test_vectors_of_text_and_bytes():
    assert sha256_text("abc") == sha256_bytes(b"abc") == ABC
    assert sha256_text(TWO_BLOCKS_MESSAGE) == TWO_BLOCKS


def test_text_is_hashed_as_utf8():
    assert sha256_text("ä") == sha256_bytes("ä".encode("utf-8")) != sha256_bytes("ä".encode("latin-1"))


def test_fips_test_vector_of_a_file(tmp_path):
    path = tmp_path / "abc.txt"
    path.write_bytes(b"abc")
    assert sha256_and_size(path) == (ABC, 3)
    assert sha256_file(path) == ABC


def test_empty_file(tmp_path):
    path = tmp_path / "empty"
    path.write_bytes(b"")
    # SHA-256 of the empty message (from memory; also hashlib.sha256(b"") in Python 3.11).
    assert sha256_and_size(path) == (
        "e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855", 0)


def test_streamed_hash_of_file_larger_than_one_block(tmp_path):
    content = bytes(range(256)) * 20_000  # 5 MiB: several 1 MiB blocks and a partial one
    path = tmp_path / "big.bin"
    path.write_bytes(content)
    # reference: hashlib.sha256 over the whole content at once
    assert sha256_and_size(path) == (hashlib.sha256(content).hexdigest(), len(content))


def test_copy_hashed_copies_every_byte_and_hashes_them():
    content = bytes(range(256)) * 9_000  # more than two blocks
    sink = io.BytesIO()
    # reference: hashlib.sha256 over the whole content at once
    assert copy_hashed(io.BytesIO(content), sink) == hashlib.sha256(content).hexdigest()
    assert sink.getvalue() == content
