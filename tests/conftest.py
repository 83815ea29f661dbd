"""Shared fixtures: the demo study copied into a temporary folder, so tests never write
into the repository."""

from __future__ import annotations

import shutil
from pathlib import Path

import pytest

REPO = Path(__file__).resolve().parent.parent
DEMO = REPO / "studies" / "seed-coating"


@pytest.fixture
def demo_study(tmp_path: Path) -> Path:
    """A copy of the demo study folder without its registration lock (the plan as it is
    before `appendix lock`, so that tests register it themselves); returns the path of
    its study file."""
    target = tmp_path / "seed-coating"
    shutil.copytree(DEMO, target, ignore=shutil.ignore_patterns("__pycache__", "study.lock.json"))
    return target / "study.yaml"


@pytest.fixture(scope="session")
def computed_demos() -> dict:
    """Each invented demo in studies/ computed once per session (`api.compute`, read-only:
    nothing is written), by folder name."""
    from appendix import api

    return {name: api.compute(REPO / "studies" / name / "study.yaml")
            for name in ("seed-coating", "greenhouse-split", "wound-dose")}


@pytest.fixture(scope="session")
def rendered_demos(computed_demos) -> dict:
    """Each demo of `computed_demos` rendered once per session (`api.render`: figures and
    HTML, no PDF), by folder name."""
    from appendix import api

    return {name: api.render(computed) for name, computed in computed_demos.items()}
