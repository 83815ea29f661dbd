"""Input files as records: their SHA-256 and study-relative paths."""

from __future__ import annotations

from appendix.data.checksums import input_file, relative_posix, study_inputs
from appendix.results import InputFile


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
