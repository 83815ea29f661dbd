"""Helpers shared by the tests of the invented demo studies in studies/: a demo's seeded
generator and its byte-for-byte rewrite, its rows, the README's statements and caution,
and the study file against the published JSON Schema."""

from __future__ import annotations

import csv
import importlib.util
import json
import os
import subprocess
import sys
from pathlib import Path

import jsonschema

from appendix.plan.yamltree import read_tree

REPO = Path(__file__).resolve().parent.parent


def load_generator(folder: Path):
    """The demo's generate.py as a module (without running its main)."""
    spec = importlib.util.spec_from_file_location(f"{folder.name}_generate", folder / "generate.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


def assert_rewrites_byte_for_byte(folder: Path, committed: Path, tmp_path: Path, rows: int) -> bytes:
    """`write` of the demo's generator gives `rows` rows and the committed file's bytes,
    here and in a fresh interpreter with another hash seed; returns those bytes."""
    expected = committed.read_bytes()
    assert load_generator(folder).write(tmp_path / "a.csv") == rows
    assert (tmp_path / "a.csv").read_bytes() == expected
    script = str(folder / "generate.py")
    code = (f"import importlib.util as u; s = u.spec_from_file_location('g', {script!r}); "
            f"m = u.module_from_spec(s); s.loader.exec_module(m); "
            f"from pathlib import Path; m.write(Path({str(tmp_path / 'b.csv')!r}))")
    subprocess.run([sys.executable, "-c", code], check=True,
                   env={**os.environ, "PYTHONHASHSEED": "4242"})
    assert (tmp_path / "b.csv").read_bytes() == expected
    return expected


def read_rows(path: Path) -> list[dict[str, str]]:
    """The rows of a demo's CSV file, as text."""
    with path.open(newline="", encoding="utf-8") as handle:
        return list(csv.DictReader(handle))


def assert_invented_with_caution(folder: Path) -> str:
    """The demo's README says its data are invented and generated, and carries the caution
    the project rules ask for; its study file opens by saying it is invented. Returns the
    README's text with whitespace collapsed, for checks of its own."""
    text = " ".join((folder / "README.md").read_text(encoding="utf-8").split())
    assert "**Everything here is invented.**" in text
    assert "seeded random generator" in text and "byte for byte" in text
    assert "Statistical output is not a clinical or regulatory decision." in text
    assert "qualified, licensed statistician and the study's own governance" in text
    assert "regulations that apply locally" in text
    assert (folder / "study.yaml").read_text(encoding="utf-8").startswith("# Invented demo study")
    return text


def validate_study_file(study: Path) -> tuple[dict, jsonschema.Draft202012Validator]:
    """The study file, read as the loader reads YAML (core schema: dates and yes/no stay
    text), validated by the jsonschema library against the committed JSON Schema (draft
    2020-12); returns the parsed file and the validator."""
    schema = json.loads((REPO / "schema" / "study.schema.json").read_text(encoding="utf-8"))
    plan = read_tree(study.read_text(encoding="utf-8")).value
    validator = jsonschema.Draft202012Validator(schema)
    validator.validate(plan)
    return plan, validator
