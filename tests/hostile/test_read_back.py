"""Hostile files that we read back (manifest, results, records, lock) and hostile packages:
a sentence and exit 2 (or 1 for a package that does not verify), never a traceback, never a
read outside the package, never an unbounded expansion."""

from __future__ import annotations

import zipfile
from pathlib import Path

import pytest

from tests.hostile.helpers import run_cli

DEEP = "[" * 100_000 + "]" * 100_000


READ_BACK = [
    # (file in the run folder, its new text, command, first words of the error)
    ("manifest.json", DEEP, "pack", "is nested too deeply to be read"),
    ("manifest.json", "not json", "pack", "is not valid JSON (line 1, column 1)"),
    ("manifest.json", "\udcff", "pack", "is not UTF-8 text"),
    ("manifest.json", "[1, 2]", "pack", "is not a run manifest of this version ((top): Input should be"),
    ("results.json", DEEP, "diff", "is nested too deeply to be read"),
    ("results.json", "{", "diff", "is not valid JSON"),
    ("records.json", DEEP, "diff", "is not a records file this version can read"),
    ("manifest.json", '{"format_version": 1}', "pack", "is not a run manifest of this version (tool: Field required"),
    ("manifest.json", '{"format_version": 1}', "diff", "is not a run manifest of this version (tool: Field required"),
    ("results.json", '{"format_version": 2, "study": 3}', "diff", "is not a results file of this version (study: "),
    ("results.json", '{"format_version": 1, "outcomes": [], "models": []}', "diff",
     "is a results file of format 1, and this version of appendix compares results of format 2 only"),
    ("results.json", '{"format_version": "2"}', "diff", "results.json: not a results file of format 2"),
]


@pytest.mark.parametrize("name, text, command, words", READ_BACK,
                         ids=[f"{c[2]}-{c[0]}-{i}" for i, c in enumerate(READ_BACK)])
def test_a_broken_file_of_ours_gets_a_sentence(place: Path, name, text, command, words):
    target = place / "run" / name
    target.write_bytes(text.encode("utf-8", "surrogateescape"))
    argv = ["pack", "run"] if command == "pack" else ["diff", "run", "run"]
    code, out, err = run_cli(argv, place)
    assert code == 2 and "Traceback" not in err, err
    assert words in err.splitlines()[0], err


def test_a_folder_where_a_file_of_ours_should_be(place: Path):
    (place / "run" / "results.json").unlink()
    (place / "run" / "results.json").mkdir()
    code, _, err = run_cli(["diff", "run", "run"], place)
    assert code == 2 and "has no results.json" in err and "Traceback" not in err


def test_a_huge_source_date_epoch_is_refused(place: Path, monkeypatch):
    monkeypatch.setenv("SOURCE_DATE_EPOCH", "9" * 30)
    code, _, err = run_cli(["run", "study/study.yaml", "--out", "fresh", "--no-pdf"], place)
    assert code == 2 and "SOURCE_DATE_EPOCH 999" in err and "Traceback" not in err
    assert not (place / "fresh").exists()


def _package(place: Path) -> Path:
    code, _, err = run_cli(["pack", "run", "--out", "run.zip"], place)
    assert code == 0, err
    return place / "run.zip"


def _rewrite(package: Path, change) -> Path:
    with zipfile.ZipFile(package) as archive:
        entries = {i.filename: archive.read(i) for i in archive.infolist()}
    change(entries)
    out = package.with_name("changed.zip")
    with zipfile.ZipFile(out, "w", zipfile.ZIP_DEFLATED) as archive:
        for name, data in entries.items():
            archive.writestr(name, data)
    return out


def test_verify_refuses_an_expansion_bomb_before_extracting(place: Path, tmp_path: Path):
    bomb = tmp_path / "bomb.zip"
    with zipfile.ZipFile(bomb, "w", zipfile.ZIP_DEFLATED) as archive:
        archive.writestr("run/results.json", b"0" * (64 * 2**20))   # 64 MiB of zeros
    assert bomb.stat().st_size < 2**20
    code, _, err = run_cli(["verify", bomb], place)
    assert code == 2 and "Traceback" not in err
    assert "refused" in err and "-fold, above the 200-fold" in err


def test_verify_never_reads_a_study_outside_the_package(place: Path):
    outside = place / "secret.yaml"
    outside.write_text("password: hunter2\n")

    def point_outside(entries):
        text = entries["run/manifest.json"].decode()
        entries["run/manifest.json"] = text.replace('"path": "study.yaml"',
                                                    f'"path": "{outside}"').encode()

    changed = _rewrite(_package(place), point_outside)
    code, out, err = run_cli(["verify", changed], place)
    assert code == 1 and "hunter2" not in out + err and "Traceback" not in err
    assert "the package names no study file inside it to recompute from" in out


def test_verify_never_reads_data_outside_the_package(place: Path):
    def data_outside(entries):
        text = entries["study/study.yaml"].decode()
        entries["study/study.yaml"] = text.replace("source: data/units.csv",
                                                   f"source: {place}/study/data/units.csv").encode()

    changed = _rewrite(_package(place), data_outside)
    code, out, err = run_cli(["verify", changed], place)
    assert code == 1 and "Traceback" not in err
    assert "names a data file outside the package" in out
