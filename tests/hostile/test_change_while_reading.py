"""The checksum is of the bytes analysed: a data file rewritten while a run reads it is
refused with a sentence (exit 2), and nothing is written."""

from __future__ import annotations

import io
import shutil
import threading
import time
from pathlib import Path

import pytest

from appendix import api
from appendix.cli import main
from appendix.errors import UserError
from tests.conftest import DEMO


@pytest.fixture
def study(tmp_path: Path) -> Path:
    shutil.copytree(DEMO, tmp_path / "s", ignore=shutil.ignore_patterns("__pycache__"))
    return tmp_path / "s" / "study.yaml"


def test_a_file_rewritten_by_another_thread_during_the_read_is_refused(study: Path, monkeypatch):
    """A writer thread replaces the data with the corrected file's bytes while the data
    stage runs (the stage is slowed a little so the writer lands inside it)."""
    from appendix.data import build

    data = study.parent / "data" / "units.csv"
    corrected = (study.parent / "data" / "units-corrected.csv").read_bytes()
    real = build.build_dataset
    started = threading.Event()

    def slow_build(loaded):
        started.set()
        time.sleep(0.3)
        return real(loaded)

    def writer():
        started.wait(10)
        data.write_bytes(corrected)

    monkeypatch.setattr(api, "build_dataset", slow_build)
    thread = threading.Thread(target=writer)
    thread.start()
    err = io.StringIO()
    code = main(["run", str(study), "--out", "run", "--no-pdf"], stdout=io.StringIO(), stderr=err,
                cwd=study.parent)
    thread.join()
    assert code == 2 and "Traceback" not in err.getvalue()
    assert f"error: the data file {data} changed while it was read" in err.getvalue()
    assert not (study.parent / "run").exists()
    assert not [p for p in study.parent.iterdir() if p.name.startswith(".run.")]


def test_a_file_changed_after_the_read_but_before_the_records_is_refused(study: Path, monkeypatch):
    from appendix import records

    data = study.parent / "data" / "units.csv"
    real = records.records_text

    def touch_then_record(loaded, dataset):
        data.write_bytes(data.read_bytes())   # same bytes, rewritten: its status time moves
        return real(loaded, dataset)

    monkeypatch.setattr(records, "records_text", touch_then_record)
    with pytest.raises(UserError, match="changed while it was read"):
        api.run(study, out_dir=study.parent / "run", pdf=False)
    assert not (study.parent / "run").exists()


def test_an_untouched_file_runs(study: Path):
    record = api.run(study, out_dir=study.parent / "run", pdf=False)
    assert (record.folder / "results.json").is_file()
