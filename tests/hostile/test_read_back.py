"""Hostile files that we read back (manifest, results, records, lock) and hostile packages:
a sentence and exit 2 (or 1 for a package that does not verify), never a traceback, never a
read outside the package, never an unbounded expansion."""

from __future__ import annotations

import hashlib
import json
import shutil
import zipfile
from pathlib import Path

import pytest

from appendix import bundle, publish
from tests.hostile.helpers import hashes, run_cli

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


def _truncated(text: str) -> str:
    return text[:len(text) // 2]   # a copy cut off halfway


def _format_1(text: str) -> str:
    return text.replace('"format_version": 2,', '"format_version": 1,', 1)  # as an earlier version wrote


def _wrong_type(text: str) -> str:
    tree = json.loads(text)
    tree["outcomes"][0]["tables"][0]["rows"][0]["statistic"] = "large"
    return json.dumps(tree, sort_keys=True, indent=2, ensure_ascii=False) + "\n"


#: (change of results.json, the words that follow the file's name in the first line)
BROKEN_RESULTS = [
    (_truncated, " is not valid JSON (line "),
    (_format_1, " is a results file of format 1, and this version of appendix "),
    (_wrong_type, " is not a results file of this version (outcomes.0.tables.0.rows.0.statistic: "
                  "Input should be a valid number"),
]
BROKEN_IDS = ["truncated", "format-1", "wrong-type"]


@pytest.mark.parametrize("change, words", BROKEN_RESULTS, ids=BROKEN_IDS)
@pytest.mark.parametrize("side", ["A", "B"])
def test_diff_refuses_results_it_cannot_read_naming_the_file(place: Path, change, words, side):
    shutil.copytree(place / "run", place / "other")
    broken = place / ("run" if side == "A" else "other") / "results.json"
    broken.write_text(change(broken.read_text(encoding="utf-8")), encoding="utf-8")
    before = hashes(place)
    code, out, err = run_cli(["diff", "run", "other", "--html", "diff.html"], place)
    assert (code, out) == (2, "") and "Traceback" not in err, err
    assert err.splitlines()[0].startswith(f"error: {broken}{words}"), err
    assert hashes(place) == before   # no page written, nothing else touched


def _forged(package: Path, change) -> Path:
    """The package with its results.json changed and every hash rewritten to match (SHA256SUMS
    and the run manifest): the hashes agree, only the results cannot be read."""
    def forge(entries):
        results = change(entries["run/results.json"].decode("utf-8")).encode("utf-8")
        entries["run/results.json"] = results
        manifest = json.loads(entries["run/manifest.json"])
        for item in manifest["outputs"]:
            if item["path"] == "results.json":
                item["sha256"], item["bytes"] = hashlib.sha256(results).hexdigest(), len(results)
        entries["run/manifest.json"] = publish.manifest_text(manifest).encode("utf-8")
        body = {name: data for name, data in entries.items() if name != "SHA256SUMS"}
        entries["SHA256SUMS"] = bundle.sums_text(body).encode("ascii")

    return _rewrite(package, forge)


@pytest.fixture(scope="module")
def demo_package(demo_run: Path, tmp_path_factory) -> Path:
    """The demo run's package, made once for the verify cases below."""
    target = tmp_path_factory.mktemp("package") / "run.zip"
    code, _, err = run_cli(["pack", demo_run / "run", "--out", target], demo_run)
    assert code == 0, err
    return target


@pytest.mark.parametrize("change, words", BROKEN_RESULTS, ids=BROKEN_IDS)
def test_verify_refuses_packaged_results_it_cannot_read_naming_the_file(demo_package: Path,
                                                                       tmp_path: Path, change, words):
    forged = _forged(shutil.copy(demo_package, tmp_path / "run.zip"), change)
    code, out, err = run_cli(["verify", forged], tmp_path)
    assert (code, out) == (2, "") and "Traceback" not in err, err
    assert err.splitlines()[0].startswith(f"error: run/results.json in {forged}{words}"), err
    assert sorted(p.name for p in tmp_path.iterdir()) == ["changed.zip", "run.zip"]


def test_verify_counts_results_changed_since_packing_as_a_difference(demo_package: Path, tmp_path: Path):
    """Cut off without its hashes rewritten: SHA256SUMS already shows the change, so the
    unreadable results are one more difference (exit 1), not a refusal."""
    cut = _rewrite(shutil.copy(demo_package, tmp_path / "run.zip"), lambda entries: entries.update(
        {"run/results.json": _truncated(entries["run/results.json"].decode("utf-8")).encode("utf-8")}))
    code, out, err = run_cli(["verify", cut], tmp_path)
    assert code == 1 and err == "", err
    lines = out.splitlines()
    assert "  changed: run/results.json" in lines
    assert any(line.startswith(f"  run/results.json cannot be compared: run/results.json in {cut} "
                               "is not valid JSON (line ") for line in lines), out
    assert lines[-1].startswith("not reproduced: ")
