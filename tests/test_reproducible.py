"""Reproducibility: with SOURCE_DATE_EPOCH set, two runs of the demo study (INVENTED data)
give byte-identical results.json, HTML and PDF; the run time is in manifest.json only.

SOURCE_DATE_EPOCH follows the reproducible-builds.org specification: whole seconds since
1970-01-01 00:00:00 UTC (from memory). 1772366400 is 2026-03-01T12:00:00Z.
"""

from __future__ import annotations

import datetime as _dt
import json
import shutil
from pathlib import Path

import pypdf
import pytest

from appendix import api, publish
from appendix.errors import UserError
from tests.conftest import DEMO
from tests.test_bundle import write_run

EPOCH = "1772366400"
EPOCH_TIME = _dt.datetime(2026, 3, 1, 12, 0, tzinfo=_dt.timezone.utc)
CLOCKS = (_dt.datetime(2026, 5, 4, 8, 15, 0, tzinfo=_dt.timezone.utc),
          _dt.datetime(2026, 6, 9, 17, 45, 30, tzinfo=_dt.timezone.utc))


def _files(folder: Path) -> dict[str, bytes]:
    return {p.relative_to(folder).as_posix(): p.read_bytes()
            for p in sorted(folder.rglob("*")) if p.is_file()}


@pytest.fixture(scope="module")
def study(tmp_path_factory) -> Path:
    root = tmp_path_factory.mktemp("repro")
    shutil.copytree(DEMO, root / "study", ignore=shutil.ignore_patterns("__pycache__"))
    return root / "study" / "study.yaml"


def test_api_run_twice_under_source_date_epoch_is_byte_identical(study, monkeypatch):
    monkeypatch.setenv("SOURCE_DATE_EPOCH", EPOCH)
    folders = [study.parent.parent / f"api-run-{i}" for i in (1, 2)]
    for folder, clock in zip(folders, CLOCKS):
        api.run(study, out_dir=folder, clock=lambda clock=clock: clock)
    first, second = (_files(folder) for folder in folders)
    assert first.keys() == second.keys()
    assert {"results.json", "appendix.html", "appendix.pdf"} <= first.keys()
    for name in first.keys() - {"manifest.json"}:
        assert first[name] == second[name], name
    for clock in CLOCKS:  # neither clock reached any output but the manifest
        for name in ("results.json", "appendix.html"):
            assert clock.isoformat()[:16].encode() not in first[name]
            assert clock.strftime("%Y-%m-%d").encode() not in first[name]


@pytest.fixture(scope="module")
def two_runs(study) -> list[Path]:
    """The demo written twice by publish.write_run at the run time SOURCE_DATE_EPOCH gives,
    whatever the clock says."""
    environ = {"SOURCE_DATE_EPOCH": EPOCH}
    return [write_run(study, study.parent.parent / f"run-{i}",
                      publish.run_time(lambda clock=clock: clock, environ))
            for i, clock in enumerate(CLOCKS, start=1)]


def test_every_file_is_identical_and_the_time_is_the_epochs(two_runs):
    first, second = (_files(folder) for folder in two_runs)
    assert first == second  # manifest.json too: its run time is SOURCE_DATE_EPOCH's
    manifest = json.loads(first["manifest.json"])
    assert manifest["run_time"] == "2026-03-01T12:00:00+00:00"
    reader = pypdf.PdfReader(two_runs[0] / "appendix.pdf")
    assert reader.metadata["/CreationDate"] == "D:20260301120000Z"
    for name in ("results.json", "appendix.html"):
        assert b"2026-03-01T12" not in first[name]


def test_the_pdf_carries_study_file_results_and_manifest(study, two_runs):
    run = two_runs[0]
    carried = pypdf.PdfReader(run / "appendix.pdf").attachments
    assert carried["study.yaml"] == [study.read_bytes()]
    assert carried["results.json"] == [(run / "results.json").read_bytes()]
    manifest = json.loads((run / "manifest.json").read_text(encoding="utf-8"))
    # a file cannot hold its own hash: the PDF carries the manifest without its own entry
    assert carried["manifest.json"] == [publish.manifest_text(publish.pdf_evidence(manifest))
                                        .encode("utf-8")]
    listed = [o["path"] for o in json.loads(carried["manifest.json"][0])["outputs"]]
    assert "appendix.pdf" not in listed and "results.json" in listed
    assert [o["path"] for o in manifest["outputs"]] == sorted([*listed, "appendix.pdf"])
    assert manifest["study_file"] == str(study.resolve())


@pytest.mark.parametrize(("environ", "expected"), [
    ({"SOURCE_DATE_EPOCH": EPOCH}, EPOCH_TIME),
    ({"SOURCE_DATE_EPOCH": " 0 "}, _dt.datetime(1970, 1, 1, tzinfo=_dt.timezone.utc)),
    ({"SOURCE_DATE_EPOCH": ""}, CLOCKS[0]),
    ({}, CLOCKS[0]),
])
def test_run_time_prefers_source_date_epoch(environ, expected):
    assert publish.run_time(lambda: CLOCKS[0], environ) == expected


@pytest.mark.parametrize("value", ["yesterday", "-5", "1.5", "1e9"])
def test_a_malformed_source_date_epoch_is_a_user_error(value):
    with pytest.raises(UserError) as refused:
        publish.source_date({"SOURCE_DATE_EPOCH": value})
    assert str(refused.value) == ("SOURCE_DATE_EPOCH must be a whole number of seconds since "
                                  f"1970-01-01 UTC, got {value!r}")
