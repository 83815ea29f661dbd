"""SHA-256 of input files and their study-relative paths."""

from __future__ import annotations

import hashlib

from appendix.data.checksums import input_file, relative_posix, sha256_file, study_inputs
from appendix.results import InputFile


def test_fips_test_vector(tmp_path):
    path = tmp_path / "abc.txt"
    path.write_bytes(b"abc")
    # FIPS 180-2, appendix B.1 (one-block message "abc").
    assert sha256_file(path) == (
        "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad", 3)


def test_empty_file(tmp_path):
    path = tmp_path / "empty"
    path.write_bytes(b"")
    # SHA-256 of the empty message (from memory; also hashlib.sha256(b"") in Python 3.11).
    assert sha256_file(path)[0] == "e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855"


def test_streamed_hash_of_file_larger_than_one_chunk(tmp_path):
    content = bytes(range(256)) * 20_000  # 5 MiB: several 1 MiB pieces and a partial one
    path = tmp_path / "big.bin"
    path.write_bytes(content)
    assert sha256_file(path) == (hashlib.sha256(content).hexdigest(), len(content))


def test_paths_relative_to_study_file(tmp_path):
    (tmp_path / "study" / "data").mkdir(parents=True)
    (tmp_path / "shared").mkdir()
    study = tmp_path / "study" / "study.yaml"
    study.write_bytes(b"x")
    inside = tmp_path / "study" / "data" / "units.csv"
    inside.write_bytes(b"abc")
    outside = tmp_path / "shared" / "units.csv"
    assert relative_posix(inside, study.parent) == "data/units.csv"
    assert relative_posix(outside, study.parent) == "../shared/units.csv"
    assert input_file(inside, "data", study.parent) == InputFile(
        role="data", path="data/units.csv",
        sha256="ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad", bytes=3)
    assert [f.role for f in study_inputs(study, inside)] == ["study", "data"]
