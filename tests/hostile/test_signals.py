"""Stopping a run: SIGINT and SIGTERM stop cleanly (exit 130 / 143, no traceback, no
staging folder left, the previous appendix untouched); SIGKILL at any moment leaves either
the previous appendix or the new one complete, and the next run puts right what was left
and says so."""

from __future__ import annotations

import os
import shutil
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

from appendix import staging
from tests.conftest import DEMO
from tests.hostile.helpers import hashes

pytestmark = pytest.mark.slow


def _content(folder: Path) -> dict[str, str]:
    """The run folder's files that do not name where the study lives (the manifest, and the
    PDF that carries it, record the study file's absolute path)."""
    return {k: v for k, v in hashes(folder).items() if k not in ("manifest.json", "appendix.pdf")}


def _start(work: Path) -> subprocess.Popen:
    env = {**os.environ, "SOURCE_DATE_EPOCH": "1767225600"}
    return subprocess.Popen([sys.executable, "-m", "appendix", "run", "study/study.yaml",
                             "--out", "run"], cwd=work, env=env, stdout=subprocess.PIPE,
                            stderr=subprocess.PIPE, text=True)


def _leftovers(work: Path) -> list[str]:
    return sorted(p.name for p in work.iterdir() if p.name.startswith(".run."))


@pytest.fixture(scope="module")
def finished(tmp_path_factory) -> Path:
    base = tmp_path_factory.mktemp("signals")
    shutil.copytree(DEMO, base / "study", ignore=shutil.ignore_patterns("__pycache__"))
    process = _start(base)
    assert process.wait(timeout=300) == 0, process.stderr.read()
    return base


@pytest.fixture
def work(finished: Path, tmp_path: Path) -> Path:
    shutil.copytree(finished, tmp_path / "w")
    return tmp_path / "w"


def _wait_for_staging(process: subprocess.Popen, work: Path) -> None:
    deadline = time.monotonic() + 120
    while not any(n.startswith(".run.staging-") for n in _leftovers(work)):
        assert process.poll() is None, "the run ended before it staged anything"
        assert time.monotonic() < deadline
        time.sleep(0.02)


@pytest.mark.parametrize("sent, code, word", [(signal.SIGINT, 130, "interrupted"),
                                              (signal.SIGTERM, 143, "terminated")])
def test_a_stopped_run_leaves_the_previous_appendix_and_no_staging(work, sent, code, word):
    before = hashes(work / "run")
    process = _start(work)
    _wait_for_staging(process, work)
    process.send_signal(sent)
    assert process.wait(timeout=120) == code
    err = process.stderr.read()
    assert "Traceback" not in err and f"stopped ({word}); nothing was replaced" in err
    assert _leftovers(work) == [] and hashes(work / "run") == before


@pytest.mark.parametrize("delay", [0.0, 0.5, 1.5, 3.0])
def test_sigkill_at_any_moment_then_the_next_run_cleans_up(work, delay):
    before = _content(work / "run")
    process = _start(work)
    _wait_for_staging(process, work)
    time.sleep(delay)
    process.kill()
    process.wait(timeout=60)
    left = _leftovers(work)
    # The previous run folder, a complete new one (same inputs: the same bytes), or, killed
    # between the two renames of the swap, the previous one set aside.
    if (work / "run").exists():
        assert _content(work / "run") == before
    else:
        assert any(name.startswith(".run.old-") for name in left)
    again = _start(work)
    assert again.wait(timeout=300) == 0
    err = again.stderr.read()
    for name in left:
        assert name in err or "restored" in err, (name, err)
    assert _leftovers(work) == [] and _content(work / "run") == before


def test_a_kill_between_the_two_renames_is_put_right(work):
    """The swap moves the old folder aside, then the new one in; killed in between, the
    old folder sits in .run.old-<pid>-*/run and nothing is at run/."""
    before = hashes(work / "run")
    dead = 2**22 + 12345   # above the default pid range: no such process
    aside = work / f".run.old-{dead}-abcd"
    aside.mkdir()
    os.replace(work / "run", aside / "run")
    notes = staging.recover(work / "run")
    assert notes == [f"restored {work / 'run'} from an earlier run that was stopped while it "
                     "replaced the folder"]
    assert hashes(work / "run") == before and _leftovers(work) == []
