"""The README's walk-through, command by command through the command line: lock, run,
correct the data, rerun, diff, pack, verify (and a tampered package that fails)."""

from __future__ import annotations

import json
import shutil
import zipfile
from pathlib import Path

import pytest

from tests.conftest import DEMO, REPO
from tests.test_cli import run_cli


def _readme_commands() -> list[str]:
    """The shell lines of the README's walk-through block."""
    text = (REPO / "README.md").read_text(encoding="utf-8")
    block = text.split("## Walk-through: a data correction", 1)[1].split("```sh", 1)[1].split("```", 1)[0]
    return [line.strip() for line in block.strip().splitlines() if line.strip() and not line.startswith("#")]


def test_the_readme_lists_the_commands_this_test_runs():
    assert _readme_commands() == [
        "cp -r studies/seed-coating trial && cd trial",
        "appendix lock study.yaml",
        "appendix run study.yaml --out run-1",
        "cp data/units-corrected.csv data/units.csv",
        "appendix run study.yaml --out run-2",
        "appendix diff run-1 run-2 --html diff.html",
        "appendix pack run-2",
        "appendix verify run-2.zip",
    ]


@pytest.fixture(scope="module")
def walked(tmp_path_factory) -> tuple[Path, dict[str, tuple[int, str, str]]]:
    """The walk-through done once: the trial folder and each command's (code, out, err)."""
    trial = tmp_path_factory.mktemp("walk") / "trial"
    shutil.copytree(DEMO, trial, ignore=shutil.ignore_patterns("__pycache__"))
    done = {"lock": run_cli(["lock", "study.yaml"], trial),
            "run-1": run_cli(["run", "study.yaml", "--out", "run-1"], trial)}
    shutil.copyfile(trial / "data" / "units-corrected.csv", trial / "data" / "units.csv")
    done["run-2"] = run_cli(["run", "study.yaml", "--out", "run-2"], trial)
    done["diff"] = run_cli(["diff", "run-1", "run-2", "--html", "diff.html"], trial)
    done["diff-json"] = run_cli(["diff", "run-1", "run-2", "--json"], trial)
    done["pack"] = run_cli(["pack", "run-2"], trial)
    done["verify"] = run_cli(["verify", "run-2.zip"], trial)
    return trial, done


def test_lock_run_correct_rerun_diff_pack_verify(walked):
    trial, done = walked
    # the demo comes registered (studies/seed-coating/study.lock.json): locking again is a no-op
    assert done["lock"][0] == 0 and "the plan is unchanged since it was locked" in done["lock"][1]
    assert done["run-1"][0] == done["run-2"][0] == 0
    code, out, _ = done["diff"]
    assert code == 1  # a conclusion changed
    assert ("shoot dry mass at day 21: humic − uncoated (primary outcome): not rejected" in out
            and "-> rejected" in out and "hypothesis C2:humic of outcome dry_mass" in out)
    assert "P024" in out and "P049" in out
    assert 'title="hypothesis C2:humic">shoot dry mass at day 21: humic − uncoated<' in (
        trial / "diff.html").read_text(encoding="utf-8")
    assert json.loads(done["diff-json"][1])["conclusions_changed"] is True
    assert done["pack"][0] == 0, done["pack"][2]
    code, out, err = done["verify"]
    assert (code, out.strip().splitlines()[-1]) == (0, "reproduced"), err


def test_a_package_with_one_changed_byte_fails_verification(walked, tmp_path):
    trial, _ = walked
    tampered = tmp_path / "tampered.zip"
    with zipfile.ZipFile(trial / "run-2.zip") as source, zipfile.ZipFile(tampered, "w") as target:
        for item in source.infolist():
            data = source.read(item)
            if item.filename.endswith("results.json"):
                data = data.replace(b'"alpha": 0.05', b'"alpha": 0.06', 1)
            target.writestr(item, data)
    code, out, _ = run_cli(["verify", str(tampered)], tmp_path)
    assert code == 1
    assert "results.json" in out
