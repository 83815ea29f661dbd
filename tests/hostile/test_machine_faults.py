"""When the machine refuses (a full disk, a full standard output): one sentence, exit 2, no
traceback, and the previous run folder untouched."""

from __future__ import annotations

import errno
import io
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

from appendix import publish
from appendix.cli import main
from tests.conftest import DEMO
from tests.hostile.helpers import hashes


@pytest.fixture
def study(tmp_path: Path) -> Path:
    shutil.copytree(DEMO, tmp_path / "s", ignore=shutil.ignore_patterns("__pycache__"))
    return tmp_path / "s" / "study.yaml"


def test_a_full_standard_output_is_a_sentence(study: Path):
    with open("/dev/full", "w") as full:
        done = subprocess.run([sys.executable, "-m", "appendix", "check", str(study)],
                              stdout=full, stderr=subprocess.PIPE, text=True, timeout=120)
    assert done.returncode == 2 and "Traceback" not in done.stderr
    assert "No space left on device" in done.stderr and done.stderr.startswith("error: ")


def test_a_full_disk_during_a_run_leaves_the_previous_run(study: Path, monkeypatch):
    out, err = io.StringIO(), io.StringIO()
    assert main(["run", str(study), "--out", "run", "--no-pdf"], stdout=out, stderr=err,
                cwd=study.parent) == 0
    before = hashes(study.parent / "run")

    def full(*args, **kwargs):
        raise OSError(errno.ENOSPC, "No space left on device", str(study.parent / "x"))

    monkeypatch.setattr(publish, "write_manifest", full)
    err = io.StringIO()
    code = main(["run", str(study), "--out", "run", "--no-pdf"], stdout=io.StringIO(),
                stderr=err, cwd=study.parent)
    assert code == 2 and "Traceback" not in err.getvalue()
    assert err.getvalue().startswith("error: cannot write or read (")
    assert "No space left on device; nothing was replaced" in err.getvalue()
    assert hashes(study.parent / "run") == before
    assert not [p for p in study.parent.iterdir() if p.name.startswith(".run.")]
