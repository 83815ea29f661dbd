"""pack and verify: the reviewer package of the demo study (INVENTED data, see
studies/seed-coating/README.md).

The run folders are written by `appendix.publish.write_run`, the function `api.run` hands
its files to, so these tests hold whatever the command line does around it.
"""

from __future__ import annotations

import datetime as _dt
import hashlib
import io
import json
import platform
import shutil
import stat
import sys
import zipfile
from pathlib import Path

import numpy
import pytest

from appendix import api, bundle, publish
from appendix.cli import main
from appendix.errors import UserError
from appendix.names import RECORDS_FILE
from appendix.records import records_text
from appendix.staging import staged_folder
from appendix.targets import check_run_target
from appendix.render import RenderOptions
from tests.conftest import DEMO

RUN_TIME = _dt.datetime(2026, 3, 1, 12, 0, tzinfo=_dt.timezone.utc)
CAUTION = "It is not a clinical or regulatory decision."


def write_run(study: Path, folder: Path, when: _dt.datetime = RUN_TIME) -> Path:
    """A complete run folder of `study` (PDF included), as `api.run` writes it."""
    computed = api.compute(study)
    options = RenderOptions()
    rendered = api.render(computed, options)
    with staged_folder(folder, check=lambda: check_run_target(folder, ())) as staging:
        publish.write_run(staging, results=computed.results,
                          results_json=rendered.results_json, html=rendered.html,
                          figures=rendered.figures, options=options,
                          study_file=computed.loaded.path, now=when,
                          extra_files={RECORDS_FILE: records_text(computed.loaded,
                                                                  computed.dataset)},
                          environment={"python": sys.version.split()[0],
                                       "platform": platform.platform()})
    return folder


@pytest.fixture(scope="module")
def packed(tmp_path_factory) -> tuple[Path, Path, Path]:
    """(study file, run folder, package) of a locked copy of the demo study."""
    root = tmp_path_factory.mktemp("bundle")
    shutil.copytree(DEMO, root / "study", ignore=shutil.ignore_patterns("__pycache__"))
    study = root / "study" / "study.yaml"
    api.lock(study, clock=lambda: _dt.datetime(2026, 2, 14, 9, 0, tzinfo=_dt.timezone.utc))
    run = write_run(study, root / "run")
    return study, run, bundle.pack(run)


def entries_of(package: Path) -> dict[str, bytes]:
    with zipfile.ZipFile(package) as archive:
        return {info.filename: archive.read(info) for info in archive.infolist()}


def rezip(entries: dict[str, bytes], target: Path, extra: list[zipfile.ZipInfo] = ()) -> Path:
    with zipfile.ZipFile(target, "w", zipfile.ZIP_DEFLATED) as archive:
        for name, content in entries.items():
            archive.writestr(name, content)
        for info in extra:
            archive.writestr(info, b"x")
    return target


def verify_lines(package: Path) -> tuple[int, list[str]]:
    out = io.StringIO()
    code = main(["verify", str(package)], stdout=out, stderr=io.StringIO(), cwd=package.parent)
    return code, out.getvalue().splitlines()


FIGURE = "run/figures/dry_mass-means.svg"
EXPECTED_NAMES = {
    "VERIFY.txt", "SHA256SUMS", "environment.json", "study/study.yaml",
    "study/study.lock.json", "study/data/units.csv", "run/results.json",
    "run/appendix.html", "run/appendix.pdf", "run/manifest.json", "run/records.json", FIGURE,
}


def test_package_holds_every_file_with_its_sha256(packed):
    study, run, package = packed
    entries = entries_of(package)
    figures = {f"run/figures/{p.name}" for p in (run / "figures").iterdir()}
    assert set(entries) == (EXPECTED_NAMES | figures)
    assert list(entries)[:2] == ["VERIFY.txt", "SHA256SUMS"]
    assert entries["study/study.yaml"] == study.read_bytes()
    assert entries["study/data/units.csv"] == (study.parent / "data" / "units.csv").read_bytes()
    assert entries["study/study.lock.json"] == (study.parent / "study.lock.json").read_bytes()
    for name in ("results.json", "appendix.html", "appendix.pdf", "manifest.json"):
        assert entries[f"run/{name}"] == (run / name).read_bytes()
    # SHA256SUMS in the coreutils format, every other entry listed, digests by hashlib
    lines = entries["SHA256SUMS"].decode("ascii").splitlines()
    assert [line.split("  ", 1)[1] for line in lines] == sorted(set(entries) - {"SHA256SUMS"})
    for line in lines:
        digest, name = line.split("  ", 1)
        assert digest == hashlib.sha256(entries[name]).hexdigest()


def test_environment_record_and_note(packed):
    entries = entries_of(packed[2])
    environment = json.loads(entries["environment.json"])
    for side in ("run", "pack"):
        assert environment[side]["python"] == sys.version.split()[0]
        versions = {d["name"]: d["version"] for d in environment[side]["distributions"]}
        assert versions["numpy"] == numpy.__version__
        assert versions["weasyprint"] == sys.modules["weasyprint"].__version__
    note = entries["VERIFY.txt"].decode("utf-8")
    assert "appendix verify" in note and "sha256sum -c SHA256SUMS" in note
    assert "relative tolerance of 1e-09" in note
    assert CAUTION in note and "qualified, licensed statistician" in note


def test_packing_twice_gives_the_same_bytes(packed, tmp_path):
    _, run, package = packed
    again = bundle.pack(run, tmp_path / "elsewhere" / "again.zip")
    assert again.read_bytes() == package.read_bytes()
    with zipfile.ZipFile(package) as archive:
        for info in archive.infolist():
            assert info.date_time == (2026, 3, 1, 12, 0, 0)  # the run's time, from its manifest
            assert info.external_attr >> 16 == stat.S_IFREG | 0o644


def test_clean_package_reproduces(packed):
    code, lines = verify_lines(packed[2])
    assert code == 0
    assert lines[-1] == "reproduced"
    assert lines[0] == f"package {packed[2]}: {len(entries_of(packed[2]))} files hashed"


@pytest.mark.parametrize("name", sorted(EXPECTED_NAMES - {"SHA256SUMS"}))
def test_one_changed_byte_in_any_file_is_named(packed, tmp_path, name):
    entries = entries_of(packed[2])
    content = bytearray(entries[name])
    content[len(content) // 2] ^= 0x01
    entries[name] = bytes(content)
    code, lines = verify_lines(rezip(entries, tmp_path / "tampered.zip"))
    assert code == 1
    assert f"  changed: {name}" in lines
    assert lines[-1].startswith("not reproduced: ")


def test_every_single_byte_change_of_the_sums_file_is_found(packed, tmp_path):
    """Each position of SHA256SUMS's first line (and its newline), flipped in turn: the
    strict format or a digest catches every one. Checked on the hash step alone."""
    entries = entries_of(packed[2])
    folder = tmp_path / "x"
    for name, content in entries.items():
        (folder / name).parent.mkdir(parents=True, exist_ok=True)
        (folder / name).write_bytes(content)
    digests = {name: hashlib.sha256(content).hexdigest() for name, content in entries.items()}
    original = entries["SHA256SUMS"]
    assert bundle._hash_problems(digests, folder) == []
    for position in range(original.index(b"\n") + 1):
        changed = bytearray(original)
        changed[position] ^= 0x01
        (folder / "SHA256SUMS").write_bytes(bytes(changed))
        assert bundle._hash_problems(digests, folder), position


def test_changed_sums_file_fails_verify(packed, tmp_path):
    entries = entries_of(packed[2])
    entries["SHA256SUMS"] = entries["SHA256SUMS"].replace(b"  run/results.json", b"  run/result.json")
    code, lines = verify_lines(rezip(entries, tmp_path / "t.zip"))
    assert code == 1
    assert "  missing: run/result.json" in lines
    assert "  extra (not in SHA256SUMS): run/results.json" in lines


def test_missing_and_extra_files_are_named(packed, tmp_path):
    entries = entries_of(packed[2])
    del entries[FIGURE]
    entries["run/figures/added.svg"] = b"<svg/>"
    code, lines = verify_lines(rezip(entries, tmp_path / "t.zip"))
    assert code == 1
    assert f"  missing: {FIGURE}" in lines
    assert "  extra (not in SHA256SUMS): run/figures/added.svg" in lines
    assert f"  run/manifest.json records {FIGURE}, which the package lacks" in lines


def _resum(entries: dict[str, bytes]) -> None:
    body = {k: v for k, v in entries.items() if k != "SHA256SUMS"}
    entries["SHA256SUMS"] = bundle.sums_text(body).encode("ascii")


def _forge(entries: dict[str, bytes], output: str, content: bytes, target: Path) -> Path:
    """A careful forgery: the run output replaced, its hash in the run manifest and
    SHA256SUMS rewritten to match (the PDF is left as it was)."""
    entries[f"run/{output}"] = content
    manifest = json.loads(entries["run/manifest.json"])
    for item in manifest["outputs"]:
        if item["path"] == output:
            item["sha256"] = hashlib.sha256(content).hexdigest()
    entries["run/manifest.json"] = publish.manifest_text(manifest).encode("utf-8")
    _resum(entries)
    return rezip(entries, target)


def test_forged_results_with_fresh_hashes_are_caught_by_recomputation(packed, tmp_path):
    """results.json edited, and SHA256SUMS and the run manifest rewritten to match: the
    PDF's embedded copy and the recomputation still disagree."""
    entries = entries_of(packed[2])
    results = json.loads(entries["run/results.json"])
    f_value = results["outcomes"][0]["tables"][0]["rows"][0]["statistic"]
    results["outcomes"][0]["tables"][0]["rows"][0]["statistic"] = f_value * (1 + 1e-6)
    forged = json.dumps(results, sort_keys=True, indent=2, ensure_ascii=False) + "\n"
    code, lines = verify_lines(_forge(entries, "results.json", forged.encode("utf-8"),
                                      tmp_path / "forged.zip"))
    assert code == 1
    assert not any(line.startswith("  changed:") for line in lines)
    assert "  the results.json embedded in run/appendix.pdf differs from the package's" in lines
    assert (f"  outcomes[0].tables[0].rows[0].statistic: {f_value * (1 + 1e-6)!r} packaged, {f_value!r} "
            "recomputed") in lines


def test_packaged_results_of_format_1_are_refused_with_a_sentence(packed, tmp_path):
    """A package whose results.json an earlier version wrote (format 1), hashes rewritten
    to match: nothing can be compared with it, so verify refuses it (exit 2) and says
    which version to verify it with."""
    entries = entries_of(packed[2])
    results = json.loads(entries["run/results.json"])
    results["format_version"] = 1
    old = json.dumps(results, sort_keys=True, indent=2, ensure_ascii=False) + "\n"
    package = _forge(entries, "results.json", old.encode("utf-8"), tmp_path / "old.zip")
    out, err = io.StringIO(), io.StringIO()
    assert main(["verify", str(package)], stdout=out, stderr=err, cwd=tmp_path) == 2
    assert (out.getvalue(), err.getvalue()) == ("", (
        f"error: run/results.json in {package} is a results file of format 1, and this version of "
        "appendix verifies results of format 2 only: verify the package with the appendix version "
        "its environment.json names\n"))


def test_forged_page_with_fresh_hashes_is_caught(packed, tmp_path):
    """appendix.html edited, SHA256SUMS and the run manifest rewritten to match: the PDF's
    embedded manifest and the page rendered again both disagree."""
    entries = entries_of(packed[2])
    page = entries["run/appendix.html"].replace(b"</body>", b"<p>x</p></body>")
    code, lines = verify_lines(_forge(entries, "appendix.html", page, tmp_path / "forged.zip"))
    assert code == 1
    assert lines[2:-1] == [
        "  the manifest.json embedded in run/appendix.pdf differs from the package's",
        ("  run/appendix.html differs from the page rendered again from the recomputed "
         "results with the same versions")]


def test_forged_data_with_fresh_hashes_change_the_recomputed_results(packed, tmp_path):
    entries = entries_of(packed[2])
    rows = entries["study/data/units.csv"].decode("utf-8").splitlines(keepends=True)
    header = rows[0].rstrip("\n").split(",")
    column = header.index("shoot_dry_mass_mg")
    cells = rows[1].rstrip("\n").split(",")
    cells[column] = f"{float(cells[column]) + 1:.1f}"
    rows[1] = ",".join(cells) + "\n"
    entries["study/data/units.csv"] = "".join(rows).encode("utf-8")
    _resum(entries)
    code, lines = verify_lines(rezip(entries, tmp_path / "forged.zip"))
    assert code == 1
    assert ("  study/data/units.csv differs from the SHA-256 run/manifest.json records"
            in lines)
    assert any(line.startswith("  outcomes[0].") and line.endswith(" recomputed")
               for line in lines)


def _symlink(name: str) -> zipfile.ZipInfo:
    info = zipfile.ZipInfo(name)
    info.external_attr = (stat.S_IFLNK | 0o777) << 16
    return info


@pytest.mark.parametrize(("entry", "reason"), [
    (zipfile.ZipInfo("/etc/appendix-escape"), "absolute path"),
    (zipfile.ZipInfo("../escape.txt"), "'..' component"),
    (zipfile.ZipInfo("study/../../escape.txt"), "'..' component"),
    (zipfile.ZipInfo("C:/Windows/escape.txt"), "drive letter"),
    (zipfile.ZipInfo("c:escape.txt"), "drive letter"),
    (zipfile.ZipInfo("study\\..\\..\\escape.txt"), "backslash in the name"),
    (_symlink("run/figures/link.svg"), "symbolic link"),
    (zipfile.ZipInfo("run/results.json"), "listed twice"),
])
def test_unsafe_entries_are_refused_before_anything_is_extracted(packed, tmp_path, monkeypatch,
                                                                 entry, reason):
    extracted: list[object] = []
    monkeypatch.setattr(bundle, "_extract", lambda *args: extracted.append(args))
    entries = entries_of(packed[2])
    if entry.filename in entries:  # zipfile itself warns of the duplicate it writes
        with pytest.warns(UserWarning, match="Duplicate name: 'run/results.json'"):
            package = rezip(entries, tmp_path / "unsafe.zip", extra=[entry])
    else:
        package = rezip(entries, tmp_path / "unsafe.zip", extra=[entry])
    with pytest.raises(UserError) as refused:
        api.verify(package)
    assert str(refused.value) == (f"refused {package}: unsafe entries, nothing was extracted:\n"
                                  f"  {entry.filename!r}: {reason}")
    assert extracted == []


def test_not_a_zip_is_a_user_error(tmp_path):
    fake = tmp_path / "fake.zip"
    fake.write_bytes(b"not a zip at all")
    with pytest.raises(UserError, match="is not a readable zip archive"):
        api.verify(fake)
    with pytest.raises(UserError, match="not found"):
        api.verify(tmp_path / "absent.zip")


def _copy_run(packed, tmp_path) -> tuple[Path, Path]:
    """A fresh run of a fresh study copy, to change without touching the module's."""
    shutil.copytree(packed[0].parent, tmp_path / "study")
    study = tmp_path / "study" / "study.yaml"
    manifest = json.loads((packed[1] / "manifest.json").read_text())
    manifest["study_file"] = str(study)
    run = tmp_path / "run"
    shutil.copytree(packed[1], run)
    (run / "manifest.json").write_text(publish.manifest_text(manifest), encoding="utf-8")
    return study, run


def test_pack_refuses_a_changed_study_file(packed, tmp_path):
    study, run = _copy_run(packed, tmp_path)
    assert bundle.pack(run, tmp_path / "ok.zip").is_file()  # unchanged: packs
    with open(study, "a", encoding="utf-8") as handle:
        handle.write("# edited after the run\n")
    with pytest.raises(UserError) as refused:
        bundle.pack(run, tmp_path / "p.zip")
    assert str(refused.value).startswith(f"the study file {study} has changed since the run")
    assert not (tmp_path / "p.zip").exists()


def test_pack_refuses_changed_data_and_changed_outputs(packed, tmp_path):
    study, run = _copy_run(packed, tmp_path)
    data = study.parent / "data" / "units.csv"
    data.write_bytes(data.read_bytes().replace(b"\n", b"\r\n", 1))
    with pytest.raises(UserError, match=r"^the data file .*units\.csv has changed since the run"):
        bundle.pack(run)
    shutil.copyfile(packed[0].parent / "data" / "units.csv", data)
    (run / "appendix.html").write_text("edited", encoding="utf-8")
    with pytest.raises(UserError, match=r"^the run's output .*appendix\.html has changed"):
        bundle.pack(run)


def test_pack_refuses_a_run_that_does_not_say_where_its_study_is(packed, tmp_path):
    _, run = _copy_run(packed, tmp_path)
    manifest = json.loads((run / "manifest.json").read_text())
    del manifest["study_file"]
    (run / "manifest.json").write_text(publish.manifest_text(manifest), encoding="utf-8")
    with pytest.raises(UserError, match="does not record where the study file is"):
        bundle.pack(run)
    with pytest.raises(UserError, match="is not a run folder"):
        bundle.pack(tmp_path / "no-such-run")


def test_pack_refuses_a_file_that_changes_while_it_is_packed(packed, tmp_path, monkeypatch):
    _, run = _copy_run(packed, tmp_path)
    real = bundle._digests

    def stale(entries):  # the digest SHA256SUMS lists, then the file changes underneath
        digests = real(entries)
        digests["run/results.json"] = "0" * 64
        return digests

    monkeypatch.setattr(bundle, "_digests", stale)
    with pytest.raises(UserError, match=r"results\.json changed while the package was being "
                                        "written; pack again"):
        bundle.pack(run, tmp_path / "p.zip")
    assert sorted(p.name for p in tmp_path.iterdir()) == ["run", "study"]  # no half package


def test_pack_refuses_a_broken_manifest(packed, tmp_path):
    _, run = _copy_run(packed, tmp_path)
    manifest = json.loads((run / "manifest.json").read_text())
    del manifest["inputs"]
    (run / "manifest.json").write_text(publish.manifest_text(manifest), encoding="utf-8")
    with pytest.raises(UserError, match=r"manifest\.json is not a run manifest of this version "
                                         r"\(inputs: Field required\)"):
        bundle.pack(run)


def test_pack_command_prints_the_package(packed, tmp_path):
    out = io.StringIO()
    target = tmp_path / "cmd.zip"
    assert main(["pack", str(packed[1]), "--out", str(target)], stdout=out, cwd=tmp_path) == 0
    assert out.getvalue() == f"wrote {target}\n"
    assert bundle.default_package_path(packed[1]) == packed[2]


# Tolerance of the comparison: relative 1e-9, absolute 1e-12 (common practice, no source).
@pytest.mark.parametrize(("packaged", "recomputed", "found"), [
    (1.0, 1.0 + 5e-10, []),
    (1.0, 1.0 + 2e-9, ["(top): 1.0 packaged, 1.000000002 recomputed"]),
    (0.0, 1e-13, []),
    (0.0, 1e-11, ["(top): 0.0 packaged, 1e-11 recomputed"]),
    (3, 3.0, []),
    (3, 4, ["(top): 3 packaged, 4 recomputed"]),
    (True, 1, ["(top): True packaged, 1 recomputed"]),
    ({"d": "reject"}, {"d": "retain"}, ["d: 'reject' packaged, 'retain' recomputed"]),
    ({"a": [1, 2]}, {"a": [1]}, ["a: 2 items packaged, 1 recomputed"]),
    ({"a": None}, {"b": None}, ["a: packaged, absent from the recomputation",
                                "b: recomputed, absent from the package"]),
    ({"o": [{"p": 0.04}]}, {"o": [{"p": None}]}, ["o[0].p: 0.04 packaged, None recomputed"]),
])
def test_compare_results(packaged, recomputed, found):
    assert bundle.compare_results(packaged, recomputed) == found
