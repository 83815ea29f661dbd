"""End to end: the demo study through the command line to a finished appendix."""

from __future__ import annotations

import json
from html.parser import HTMLParser
from pathlib import Path

import pytest
from pypdf import PdfReader

from appendix import numbers
from tests.test_cli import run_cli

SECTIONS = ["cover", "contents", "summary", "unit-flow", "findings", "methods",
            "references", "reproducibility"]
OUTCOME_PARTS = ["descriptives", "figures", "variance", "robust", "effects", "diagnostics",
                 "assumptions", "conclusion"]


class _Ids(HTMLParser):
    def __init__(self):
        super().__init__()
        self.ids: set[str] = set()
        self.links: list[str] = []

    def handle_starttag(self, tag, attrs):
        attributes = dict(attrs)
        if "id" in attributes:
            self.ids.add(attributes["id"])
        if tag == "a" and (attributes.get("href") or "").startswith("#"):
            self.links.append(attributes["href"][1:])


@pytest.fixture(scope="module")
def demo_run(tmp_path_factory) -> Path:
    import shutil

    from tests.conftest import DEMO

    root = tmp_path_factory.mktemp("e2e")
    shutil.copytree(DEMO, root / "study", ignore=shutil.ignore_patterns("__pycache__"))
    code, out, err = run_cli(["run", "study/study.yaml", "--out", "run"], root)
    assert (code, err) == (0, ""), err
    assert out.splitlines() == ["wrote " + str(root / "run"),
                                "  Shoot dry mass at day 21 (primary): Seed coating (F test): rejected",
                                "  Leaf chlorophyll index at day 21 (secondary): Seed coating (F "
                                "test): not rejected"]
    return root


def test_run_folder_holds_every_output(demo_run: Path):
    folder = demo_run / "run"
    names = {p.relative_to(folder).as_posix() for p in folder.rglob("*") if p.is_file()}
    assert {"results.json", "appendix.html", "appendix.pdf", "manifest.json"} <= names
    manifest = json.loads((folder / "manifest.json").read_text())
    listed = {item["path"] for item in manifest["outputs"]}
    assert listed == names - {"manifest.json"}
    assert manifest["run_time"] == "2026-03-01T12:00:00+00:00"
    # the demo comes registered: its study.lock.json is an input too
    assert [i["role"] for i in manifest["inputs"]] == ["study", "data", "lock"]


def test_html_holds_every_section_and_working_links(demo_run: Path):
    parser = _Ids()
    parser.feed((demo_run / "run" / "appendix.html").read_text(encoding="utf-8"))
    expected = set(SECTIONS)
    for outcome in ("dry_mass", "chlorophyll"):
        expected.add(f"outcome-{outcome}")
        expected |= {f"{outcome}-{part}" for part in OUTCOME_PARTS}
    assert expected <= parser.ids
    assert parser.links and set(parser.links) <= parser.ids


def test_pdf_text_holds_the_model_table(demo_run: Path):
    results = json.loads((demo_run / "run" / "results.json").read_text())
    reader = PdfReader(demo_run / "run" / "appendix.pdf")
    # no-break spaces (number clauses never break) read as spaces
    text = " ".join(page.extract_text() for page in reader.pages).replace("\u00a0", " ")
    assert "\u2060" not in text  # a leading point is kept with its digits by CSS, not a character
    for outcome in results["outcomes"]:
        table = outcome["tables"][0]
        row = table["rows"][0]
        assert f"F({numbers.df_value(row['df'])}, {numbers.df_value(table['residual_df'])}) = " \
               f"{numbers.fixed(row['statistic'], 2)}" in text
        assert numbers.p_value(row["p"]) in text
    # The demo builds a coating effect into dry mass only (see studies/seed-coating/generate.py).
    decisions = {o["name"]: o["conclusions"][0]["decision"] for o in results["outcomes"]}
    assert decisions == {"dry_mass": "reject", "chlorophyll": "retain"}


def test_results_json_is_byte_identical_across_runs(demo_run: Path):
    code, _, err = run_cli(["run", "study/study.yaml", "--out", "again", "--no-pdf"], demo_run)
    assert code == 0, err
    first = (demo_run / "run" / "results.json").read_bytes()
    assert (demo_run / "again" / "results.json").read_bytes() == first
    assert b"NaN" not in first and b"Infinity" not in first
    assert json.loads(first)["format_version"] == 2
