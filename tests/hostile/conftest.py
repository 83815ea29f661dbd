"""Shared fixtures of the hostile-input corpus: the demo run made once, and a working copy."""

from __future__ import annotations

import shutil
from pathlib import Path

import pytest

from tests.conftest import DEMO
from tests.hostile.helpers import run_cli


@pytest.fixture(scope="session")
def demo_run(tmp_path_factory) -> Path:
    """One demo run, made once per session; tests copy it."""
    base = tmp_path_factory.mktemp("demo")
    shutil.copytree(DEMO, base / "study", ignore=shutil.ignore_patterns("__pycache__"))
    code, _, err = run_cli(["run", "study/study.yaml", "--out", "run"], base)
    assert code == 0, err
    return base


@pytest.fixture
def place(demo_run: Path, tmp_path: Path) -> Path:
    """A working folder: `study/` (the demo, plus the user's own notes.txt, reports/memo.txt)
    and `run/`, a finished run folder of it."""
    shutil.copytree(demo_run, tmp_path / "w", symlinks=True)
    work = tmp_path / "w"
    manifest = work / "run" / "manifest.json"   # the copy's study file is the one beside it
    manifest.write_text(manifest.read_text().replace(str(demo_run), str(work)))
    (work / "study" / "notes.txt").write_text("my notes\n")
    (work / "study" / "reports").mkdir()
    (work / "study" / "reports" / "memo.txt").write_text("keep me\n")
    return work
