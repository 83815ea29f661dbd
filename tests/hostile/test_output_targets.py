"""Hostile and careless output targets: no command writes over one of its inputs or over a
file or folder it did not create. Each case asserts the exit code, the first line of the
message, that no traceback is printed, and that every file of the study folder (the demo
study, its data and anything the user keeps beside it) is byte for byte as before."""

from __future__ import annotations

import os
import shutil
from pathlib import Path

import pytest

from tests.hostile.helpers import hashes, run_cli


def _refused(work: Path, argv, first_line: str, protect: str = "study"):
    before = hashes(work / protect)
    code, out, err = run_cli(argv, work)
    assert code == 2, (out, err)
    assert "Traceback" not in err
    first = err.splitlines()[0]
    assert first.startswith("error: ") and first_line in first, first
    assert hashes(work / protect) == before
    return err


RUN_REFUSED = [
    # (--out relative to the working folder, words of the message's first line)
    ("study", "holds {w}/study/study.yaml, an input of this run"),
    (".", "holds {w}/study/study.yaml, an input of this run"),
    ("study/data", "holds {w}/study/data/units.csv, an input of this run"),
    ("study/reports", "study/reports is not a run folder (it holds files that appendix did not write)"),
    ("study/notes.txt", "study/notes.txt is not a run folder (it is a file or a link)"),
    ("study/data/units.csv", "holds {w}/study/data/units.csv, an input of this run"),
]


@pytest.mark.parametrize("out, words", RUN_REFUSED, ids=[c[0] for c in RUN_REFUSED])
def test_run_refuses_a_folder_it_may_not_replace(place: Path, out: str, words: str):
    _refused(place, ["run", "study/study.yaml", "--out", out, "--no-pdf"],
             words.format(w=place), protect=".")


def test_run_refuses_a_run_folder_that_also_holds_a_users_file(place: Path):
    (place / "run" / "my-comments.docx").write_bytes(b"mine")
    _refused(place, ["run", "study/study.yaml", "--out", "run", "--no-pdf"],
             "run is a run folder but also holds my-comments.docx, which the run did not write",
             protect=".")


def test_run_refuses_a_link_as_its_folder(place: Path):
    os.symlink(place / "study" / "reports", place / "linked")
    _refused(place, ["run", "study/study.yaml", "--out", "linked", "--no-pdf"],
             "linked is not a run folder (it is a file or a link)", protect=".")


@pytest.mark.parametrize("prepare", ["absent", "empty", "ours"])
def test_run_may_write_a_new_an_empty_or_its_own_folder(place: Path, prepare: str):
    target = place / ("run" if prepare == "ours" else "fresh")
    if prepare == "empty":
        target.mkdir()
    before = hashes(place / "study")
    code, out, err = run_cli(["run", "study/study.yaml", "--out", target.name, "--no-pdf"], place)
    assert (code, err) == (0, "")
    assert (target / "manifest.json").is_file() and hashes(place / "study") == before


PACK_REFUSED = [
    ("study/data/units.csv", "study/data/units.csv is {w}/study/data/units.csv, an input of this command"),
    ("study/study.yaml", "is {w}/study/study.yaml, an input of this command"),
    ("run/results.json", "is inside {w}/run, an input of this command"),
    ("run/extra.zip", "is inside {w}/run, an input of this command"),
    ("study/notes.txt", "study/notes.txt exists and is not a package written by appendix"),
    ("study/reports", "study/reports is not a regular file"),
    ("study/notes.txt/deeper.zip", "cannot create the folder"),
]


@pytest.mark.parametrize("out, words", PACK_REFUSED, ids=[c[0] for c in PACK_REFUSED])
def test_pack_never_writes_over_an_input_or_a_file_it_did_not_create(place: Path, out, words):
    _refused(place, ["pack", "run", "--out", out], words.format(w=place), protect=".")


def test_pack_replaces_its_own_package_and_creates_a_folder(place: Path):
    for _ in range(2):
        code, out, err = run_cli(["pack", "run", "--out", "packages/new/run.zip"], place)
        assert (code, err) == (0, ""), err
    assert (place / "packages" / "new" / "run.zip").is_file()


DIFF_REFUSED = [
    ("run/results.json", "is inside {w}/run, an input of this command"),
    ("run/diff.html", "is inside {w}/run, an input of this command"),
    ("study/notes.txt", "study/notes.txt exists and is not a diff page written by appendix"),
    ("study", "study is not a regular file"),
]


@pytest.mark.parametrize("out, words", DIFF_REFUSED, ids=[c[0] for c in DIFF_REFUSED])
def test_diff_never_writes_over_an_input_or_a_file_it_did_not_create(place: Path, out, words):
    shutil.copytree(place / "run", place / "run-b")
    err = _refused(place, ["diff", "run", "run-b", "--html", out], words.format(w=place),
                   protect=".")
    assert err.count("\n") == 1   # refused before anything else was printed


def test_diff_replaces_its_own_page_and_creates_its_folder(place: Path):
    shutil.copytree(place / "run", place / "run-b")
    for _ in range(2):
        code, out, err = run_cli(["diff", "run", "run-b", "--html", "pages/diff.html"], place)
        assert (code, err) == (0, ""), err
    assert b'<meta name="generator" content="appendix diff">' in \
        (place / "pages" / "diff.html").read_bytes()
