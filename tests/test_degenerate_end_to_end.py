"""Degenerate data never crash a run: the gap is recorded on the result and explained in
the appendix (invented data, written by the tests)."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from appendix import api

STUDY = """\
format: 1
study: {{id: degenerate, title: Degenerate invented data}}
data: {{source: units.csv, unit: unit}}
design:
  factors:
    - {{name: group, levels: [{levels}]}}
outcomes:
  - {{name: y, label: response, role: primary}}
"""


def write_study(folder: Path, levels: str, rows: list[tuple[str, str]]) -> Path:
    lines = ["unit,group,y"] + [f"u{i},{g},{y}" for i, (g, y) in enumerate(rows)]
    (folder / "units.csv").write_text("\n".join(lines) + "\n", encoding="utf-8")
    study = folder / "study.yaml"
    study.write_text(STUDY.format(levels=levels), encoding="utf-8")
    return study


def codes(result: dict) -> set[str]:
    found = set()

    def walk(node):
        if isinstance(node, dict):
            if set(node) == {"code", "message"}:
                found.add(node["code"])
            for value in node.values():
                walk(value)
        elif isinstance(node, list):
            for value in node:
                walk(value)

    walk(result)
    return found


@pytest.mark.slow
def test_single_unit_empty_level_and_constant_group_render(tmp_path: Path):
    rows = [("a", "1.5"), ("a", "2.5"), ("a", "3.0"), ("b", "4.0"),
            ("d", "2.0"), ("d", "2.0"), ("d", "2.0")]
    study = write_study(tmp_path, "a, b, c, d", rows)
    record = api.run(study, tmp_path / "run")
    results = json.loads((tmp_path / "run" / "results.json").read_text())
    outcome = results["outcomes"][0]
    groups = {g["level"]: g for g in outcome["descriptives"]["groups"]}
    assert groups["b"]["n"] == 1 and groups["b"]["sd"] is None
    assert groups["c"]["n"] == 0 and groups["c"]["mean"] is None
    assert groups["d"]["sd"] == 0.0
    # Three non-empty groups, 7 units: the F test exists (df 2 and 4).
    assert (outcome["tables"][0]["rows"][0]["df"], outcome["tables"][0]["residual_df"]) == (2, 4)
    assert outcome["tables"][0]["rows"][0]["statistic"] is not None
    assert outcome["robust"]["welch"]["statistic"] is None  # Welch needs n >= 2 and variance > 0 in every group
    assert {f["code"] for f in results["findings"]} >= {"level-without-units"}
    html = (tmp_path / "run" / "appendix.html").read_text(encoding="utf-8")
    for group_warning in outcome["robust"]["welch"]["warnings"]:
        assert group_warning["message"].split(";")[0].replace("'", "&#39;") in html
    assert (tmp_path / "run" / "appendix.pdf").stat().st_size > 10_000
    assert record.results.outcomes[0].conclusions[0].decision in {"reject", "retain"}


def test_a_single_group_gives_no_test_and_says_why(tmp_path: Path):
    study = write_study(tmp_path, "a, b", [("a", "1.0"), ("a", "2.0"), ("a", "4.0")])
    record = api.run(study, tmp_path / "run", pdf=False)
    outcome = record.results.outcomes[0]
    assert outcome.tables[0].rows[0].statistic is None and outcome.tables[0].rows[0].p is None
    assert outcome.conclusions[0].decision == "unavailable"
    assert outcome.conclusions[0].sentence == (
        "The F test for response could not be computed. Level 'b' has no analysed units; it "
        "is left out of the tests. Fewer than two levels have analysed units (found 1); "
        "groups cannot be compared.")
    results = json.loads((tmp_path / "run" / "results.json").read_text())
    assert "single-group" in " ".join(sorted(codes(results)))
    html = (tmp_path / "run" / "appendix.html").read_text(encoding="utf-8")
    assert "could not be computed" in html
