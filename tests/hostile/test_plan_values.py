"""Hostile values in a study file: non-finite numbers, levels that contain the characters
we use ourselves, bidirectional controls in labels. Each gets a sentence (exit 2) or is
handled and shown as stored; never a traceback."""

from __future__ import annotations

import shutil
from pathlib import Path

import pytest

from appendix.api import compute, render
from tests.conftest import DEMO
from tests.hostile.helpers import run_cli


@pytest.fixture
def study(tmp_path: Path) -> Path:
    shutil.copytree(DEMO, tmp_path / "s", ignore=shutil.ignore_patterns("__pycache__"))
    return tmp_path / "s" / "study.yaml"


@pytest.mark.parametrize("value, shown", [(".inf", "got inf"), ("-.inf", "got -inf"),
                                          (".nan", "got nan"), ("1e400", "got inf")])
def test_a_non_finite_number_in_the_plan_is_refused(study: Path, value, shown):
    text = study.read_text()
    assert "    threshold: 3\n" in text
    study.write_text(text.replace("    threshold: 3\n", f"    threshold: {value}\n"))
    for command in ("check", "run"):
        code, _, err = run_cli([command, study, "--no-pdf"] if command == "run" else
                               [command, study], study.parent)
        assert code == 2 and "Traceback" not in err
        assert f"assumptions.outliers.threshold: {shown}; allowed: a number greater than 0" in err


def test_a_level_with_an_at_sign_is_an_ordinary_level(study: Path):
    """Simple-effect ids end '@level'; the level itself may hold '@' (one-way demo here)."""
    for path in (study, study.parent / "data" / "units.csv"):
        path.write_text(path.read_text().replace("seaweed", "sea@weed"))
    sentences = [c.sentence for o in compute(study).results.outcomes
                 for c in o.hypothesis_conclusions]
    assert sentences and any("under sea@weed" in s for s in sentences)


def test_bidirectional_controls_in_labels_are_shown_visibly(study: Path):
    text = study.read_text()
    assert "label: seed coating" in text
    study.write_text(text.replace("label: seed coating", "label: seed \u202egnitaoc\u202c"))
    html = render(compute(study)).html
    assert "\u202e" not in html and "\u202c" not in html
    assert "seed [U+202E]gnitaoc[U+202C]" in html
