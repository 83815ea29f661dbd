"""A study with two within-unit factors and a covariate of one outcome, end to end: study
file and CSV in, `check`, `run` (results.json, records, HTML, figures) and `diff` out.

The scenario and its data are invented here (numpy seeded): units in two arms measured at
rest and under load, at three hours each; the resting rate at entry adjusts the heart rate
only. One unit lacks a cell of the grid and is left out as incomplete.
"""

from __future__ import annotations

import io
import json
import re

import numpy as np
import pytest

from appendix.cli import main
from appendix.results import from_json, to_json

STUDY = """\
format: 1
study: {id: invented-load-hours, title: "Invented study: heart rate at rest and under load"}
data: {source: units.csv, unit: unit_id}
design:
  factors:
    - {name: arm, label: arm, levels: [placebo, active], control: placebo}
    - {name: phase, label: phase, role: within, levels: [rest, load]}
    - {name: hour, label: hour, role: within, levels: [h1, h2, h3], ordered: true}
  interactions: [[arm, phase], [arm, hour], [phase, hour], [arm, phase, hour]]
  covariates:
    - {name: base, label: resting rate at entry, unit: bpm, outcomes: [rate]}
  sums_of_squares: 3
outcomes:
  - {name: rate, label: heart rate, unit: bpm, role: primary}
  - {name: pressure, label: blood pressure, unit: mmHg, role: secondary}
contrasts:
  - {id: C1, factor: phase, kind: pairwise, by: hour, label: load against rest at each hour}
  - {id: C2, factor: hour, kind: trend, label: linear trend over the hours}
  - {id: C3, factor: arm, kind: versus-control, by: phase, label: active against placebo per phase}
multiplicity: {method: holm}
exploratory:
  - {id: E1, factor: hour, kind: pairwise, by: arm, label: hour pairs per arm, reason: asked after unblinding (invented)}
"""


def _write(folder, seed: int = 11, shift: float = 0.0) -> None:
    rng = np.random.default_rng(seed)
    rows = ["unit_id,arm,phase,hour,base,rate,pressure"]
    for u in range(18):
        arm = ("placebo", "active")[u % 2]
        base, own = rng.normal(68, 5), rng.normal(0, 3)
        for p, phase in enumerate(("rest", "load")):
            for h, hour in enumerate(("h1", "h2", "h3")):
                if u == 5 and (phase, hour) == ("load", "h3"):
                    continue  # no row: the unit is incomplete
                rate = base + own + 9 * p + 1.5 * h + 2.5 * p * (u % 2) + rng.normal(0, 2) + shift
                pressure = 118 + own + 6 * p + h + rng.normal(0, 3)
                rows.append(f"U{u:02d},{arm},{phase},{hour},{base:.1f},{rate:.2f},{pressure:.2f}")
    (folder / "units.csv").write_text("\n".join(rows) + "\n", encoding="utf-8")
    (folder / "study.yaml").write_text(STUDY, encoding="utf-8")


def _run(folder, out: str) -> int:
    err = io.StringIO()
    code = main(["run", "study.yaml", "--out", out, "--no-pdf"], stdout=io.StringIO(), stderr=err,
                cwd=folder)
    assert "Traceback" not in err.getvalue() and not list(folder.glob("appendix-error-*.log"))
    return code


@pytest.fixture(scope="module")
def run(tmp_path_factory):
    folder = tmp_path_factory.mktemp("two-within")
    _write(folder)
    out = io.StringIO()
    assert main(["check", "study.yaml"], stdout=out, stderr=io.StringIO(), cwd=folder) == 0
    assert _run(folder, "run") in (0, 1)  # 1 only with --strict, which this run does not ask
    return folder, out.getvalue()


def test_check_lists_every_stratum_per_outcome(run):
    _, printed = run
    assert ("stratum units x phase x hour: phase x hour, arm x phase x hour, with Mauchly's test "
            "and Greenhouse–Geisser / Huynh–Feldt corrections per stratum") in printed
    assert "covariate base: column base; adjusts rate only" in printed
    assert "contrast C1 (pairwise of phase within each level of hour)" in printed


def test_results_cover_every_within_term_and_read_back(run):
    folder, _ = run
    text = (folder / "run" / "results.json").read_text(encoding="utf-8")
    assert to_json(from_json(text)) == text
    results = json.loads(text)
    rate, pressure = results["outcomes"]
    for outcome in (rate, pressure):
        assert [t["stratum"] for t in outcome["tables"]] == [
            "between units", "units \u00d7 phase", "units \u00d7 hour", "units \u00d7 phase \u00d7 hour"]
        assert [t["sphericity"] is not None for t in outcome["tables"]] == [False, True, True, True]
        assert outcome["n_units"] == 17 and outcome["n_observations"] == 17 * 6
        assert len(outcome["conclusions"]) == 7
    assert [r["term"] for r in rate["tables"][0]["rows"]] == [["base"], ["arm"]]
    assert [r["term"] for r in pressure["tables"][0]["rows"]] == [["arm"]]
    assert [c["covariate"] for c in rate["covariate_slopes"]] == ["base"]
    assert pressure["covariate_slopes"] == [] and pressure["slopes"] == []
    # a within stratum of one contrast (phase, two levels) has epsilon 1 and no corrected test
    phase = rate["tables"][1]
    assert phase["sphericity"]["lower_bound"] == 1.0 and phase["rows"][0]["gg_p"] is None
    assert rate["tables"][2]["rows"][0]["gg_p"] is not None
    ids = [h["id"] for f in rate["contrasts"] for h in f["hypotheses"]]
    assert ids == ["C1:load-rest@h1", "C1:load-rest@h2", "C1:load-rest@h3", "C2:linear",
                   "C3:active@rest", "C3:active@load"]
    assert [f["outcome"] for e in results["exploratory"] for f in e["families"]] == ["rate", "pressure"]
    messages = [f["message"] for f in results["findings"] if f["code"] == "incomplete-units"]
    assert messages[0].startswith("Outcome heart rate: 1 eligible unit without a value at every cell of "
                                  "phase \u00d7 hour")


def test_the_appendix_shows_every_stratum(run):
    folder, _ = run
    html = (folder / "run" / "appendix.html").read_text(encoding="utf-8")
    text = " ".join(re.sub(r"<[^>]+>", " ", html).split())
    assert "Variance table of heart rate, units \u00d7 phase \u00d7 hour stratum" in text
    assert "Mauchly's test of sphericity for hour (units \u00d7 hour stratum): W = ." in text
    assert "Mauchly's test of sphericity for phase \u00d7 hour (units \u00d7 phase \u00d7 hour stratum)" in text
    assert "Phase (units \u00d7 phase stratum) has a single contrast, so sphericity holds trivially" in text
    assert "Several within-unit factors" in text  # the Methods block
    assert "Covariates by outcome" in text
    figures = {p.name for p in (folder / "run" / "figures").iterdir()}
    for name in ("rate-profile-1.svg", "rate-profile-2.svg", "pressure-profile-2.svg",
                 "rate-covariate-1.svg"):
        assert name in figures
    assert not any(n.startswith("pressure-covariate") for n in figures)
    # the interaction plot of phase x hour, among the outcome's marginal-means tables
    assert any(re.fullmatch(r"rate-interaction-\d+\.svg", n) for n in figures)
    assert "Mean heart rate at each level of hour by arm (each unit's mean over the other within factors)" in text


def test_records_name_each_row_by_its_cell_of_the_grid(run):
    folder, _ = run
    lines = (folder / "run" / "records.json").read_text(encoding="utf-8").splitlines()
    assert '"within_factor": "phase \u00d7 hour"' in lines
    rows = [json.loads(line.rstrip(",")) for line in lines if line.startswith('{"cells"')]
    assert {r["within"] for r in rows} == {f"{p} \u00d7 {h}" for p in ("rest", "load") for h in ("h1", "h2", "h3")}
    incomplete = [r for r in rows if r["unit"] == "U05"]
    assert len(incomplete) == 5 and {r["outcomes"]["rate"] for r in incomplete} == {"left-out"}


def test_diff_of_two_runs_names_the_changed_within_terms(run):
    folder, _ = run
    _write(folder, shift=0.0, seed=12)
    assert _run(folder, "run-b") in (0, 1)
    out = io.StringIO()
    code = main(["diff", "run", "run-b"], stdout=out, stderr=io.StringIO(), cwd=folder)
    assert code in (0, 1)
    assert "(units \u00d7 phase \u00d7 hour)" in out.getvalue()
