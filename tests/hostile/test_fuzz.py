"""Random bytes and random mutations of the demo's study file and data, fed to `check`
(and a few to `run`): the exit code is only ever 0, 1 or 2, with no traceback; exit 3 is
for our own bugs, so any example that reaches it is one."""

from __future__ import annotations

import io
import shutil
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from appendix.cli import main
from tests.conftest import DEMO

STUDY = (DEMO / "study.yaml").read_bytes()
DATA = (DEMO / "data" / "units.csv").read_bytes()


@pytest.fixture(scope="module")
def folder(tmp_path_factory) -> Path:
    target = tmp_path_factory.mktemp("fuzz") / "s"
    shutil.copytree(DEMO, target, ignore=shutil.ignore_patterns("__pycache__"))
    return target


def _mutate(data: bytes, edits) -> bytes:
    out = bytearray(data)
    for kind, where, payload in edits:
        at = where % (len(out) + 1)
        if kind == "flip" and out:
            out[at % len(out)] ^= payload[0] if payload else 0xFF
        elif kind == "insert":
            out[at:at] = payload
        elif kind == "delete":
            del out[at:at + len(payload) + 1]
        elif kind == "truncate":
            del out[at:]
        elif kind == "repeat":
            out[at:at] = bytes(out[max(0, at - 40):at])
    return bytes(out)


EDITS = st.lists(st.tuples(st.sampled_from(["flip", "insert", "delete", "truncate", "repeat"]),
                           st.integers(0, 10**6), st.binary(max_size=12)), min_size=1, max_size=4)


def _command(folder: Path, argv) -> tuple[int, str]:
    err = io.StringIO()
    code = main([str(a) for a in argv], stdout=io.StringIO(), stderr=err, cwd=folder)
    return code, err.getvalue()


def _assert_handled(folder: Path, argv):
    for log in folder.glob("appendix-error-*.log"):   # one example's bug is reported once
        log.unlink()
    code, err = _command(folder, argv)
    assert code in (0, 1, 2), err
    assert "Traceback" not in err and "internal error" not in err, err
    assert not list(folder.glob("appendix-error-*.log"))


FUZZ = settings(max_examples=1000, deadline=None, derandomize=True, database=None,
                suppress_health_check=[HealthCheck.function_scoped_fixture,
                                       HealthCheck.too_slow])


@FUZZ
@given(edits=EDITS)
def test_mutated_study_files_are_checked_or_refused(folder: Path, edits):
    (folder / "data" / "units.csv").write_bytes(DATA)
    (folder / "study.yaml").write_bytes(_mutate(STUDY, edits))
    _assert_handled(folder, ["check", "study.yaml"])


@FUZZ
@given(edits=EDITS)
def test_mutated_data_files_are_checked_or_refused(folder: Path, edits):
    (folder / "study.yaml").write_bytes(STUDY)
    (folder / "data" / "units.csv").write_bytes(_mutate(DATA, edits))
    _assert_handled(folder, ["check", "study.yaml"])


@settings(max_examples=600, deadline=None, derandomize=True, database=None,
          suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(study=st.booleans(), junk=st.binary(max_size=400))
def test_random_bytes_are_refused(folder: Path, study: bool, junk: bytes):
    (folder / "study.yaml").write_bytes(junk if study else STUDY)
    (folder / "data" / "units.csv").write_bytes(DATA if study else junk)
    _assert_handled(folder, ["check", "study.yaml"])


@settings(max_examples=100, deadline=None, derandomize=True, database=None,
          suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(edits=EDITS, which=st.sampled_from(["study.yaml", "data/units.csv"]))
def test_mutated_demo_files_run_or_are_refused(folder: Path, edits, which):
    (folder / "study.yaml").write_bytes(STUDY)
    (folder / "data" / "units.csv").write_bytes(DATA)
    target = folder / which
    target.write_bytes(_mutate(target.read_bytes(), edits))
    _assert_handled(folder, ["run", "study.yaml", "--out", "fuzz-run", "--no-pdf"])
