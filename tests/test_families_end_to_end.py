"""Declared families end to end: a study of three outcomes whose plan declares a Dunnett
family and a Holm family on the primary outcome and a graphical family across the two
secondary outcomes, gated by serial gatekeeping, runs from the study file to results.json,
HTML and PDF; the gate opens or closes with the data. Data are invented (seeded normal
draws), in an invented scenario: three doses of an analgesic and three outcomes.
"""

from __future__ import annotations

import io
import json
from pathlib import Path

import numpy as np
import pytest
import scipy
import scipy.stats as st
import yaml

from appendix import api
from appendix.cli import main
from appendix.results import from_json, to_json

LEVELS = ["placebo", "low", "high"]
OUTCOMES = [("pain", "Pain score", "primary"), ("sleep", "Sleep hours", "secondary"),
            ("mobility", "Mobility score", "secondary")]
CONTRASTS = [
    {"id": "D1", "kind": "versus-control", "label": "each dose versus placebo", "outcomes": ["pain"]},
    {"id": "C1", "kind": "custom", "label": "high dose versus placebo",
     "weights": {"placebo": -1, "high": 1}},
    {"id": "C2", "kind": "custom", "label": "low dose versus placebo",
     "weights": {"placebo": -1, "low": 1}, "outcomes": ["sleep", "mobility"]},
]
FAMILIES = {
    "families": [
        {"id": "P", "label": "primary comparisons", "contrasts": ["D1"], "outcomes": ["pain"],
         "method": "dunnett"},
        {"id": "Q", "contrasts": ["C1"], "outcomes": ["pain"], "method": "holm"},
        {"id": "S", "label": "key secondary", "contrasts": ["C1", "C2"],
         "outcomes": ["sleep", "mobility"], "method": "graphical",
         "weights": {"C1@sleep": 0.5, "C1@mobility": 0.5},
         "transitions": {"C1@sleep": {"C2@sleep": 1}, "C1@mobility": {"C2@mobility": 1},
                         "C2@sleep": {"C1@mobility": 1}, "C2@mobility": {"C1@sleep": 1}}},
    ],
    "sequence": ["P", "S"],
}


def write_study(folder: Path, pain_effect: float, *, multiplicity=None, seed=11) -> tuple[Path, dict]:
    """Twelve invented units per dose; pain falls with dose by `pain_effect` per step,
    sleep and mobility rise clearly. Returns the study file and the values by outcome and
    level."""
    rng = np.random.default_rng(seed)
    values: dict[str, dict[str, list[float]]] = {name: {lv: [] for lv in LEVELS} for name, _, _ in OUTCOMES}
    lines = ["unit,arm,pain,sleep,mobility"]
    for i, level in enumerate(LEVELS):
        for j in range(12):
            row = {"pain": 50 - pain_effect * i + rng.normal(0, 4),
                   "sleep": 6 + 0.9 * i + rng.normal(0, 0.8),
                   "mobility": 20 + 2.5 * i + rng.normal(0, 2)}
            for name in row:
                row[name] = round(row[name], 2)
                values[name][level].append(row[name])
            lines.append(f"u{i}-{j},{level},{row['pain']},{row['sleep']},{row['mobility']}")
    (folder / "units.csv").write_text("\n".join(lines) + "\n", encoding="utf-8")
    plan = {
        "format": 1,
        "study": {"id": "analgesic-families", "title": "Invented analgesic study with three outcomes"},
        "data": {"source": "units.csv", "unit": "unit"},
        "design": {"factors": [{"name": "arm", "levels": LEVELS, "control": "placebo"}]},
        "outcomes": [{"name": n, "label": label, "role": role} for n, label, role in OUTCOMES],
        "contrasts": CONTRASTS,
        "multiplicity": multiplicity or FAMILIES,
    }
    study = folder / "study.yaml"
    study.write_text(yaml.safe_dump(plan, sort_keys=False), encoding="utf-8")
    return study, values


def _shares(results, outcome: str) -> dict:
    found = next(o for o in results.outcomes if o.name == outcome)
    return {f.family: f for f in found.contrasts if f.registered}


@pytest.fixture(scope="module")
def opened(tmp_path_factory):
    folder = tmp_path_factory.mktemp("gate-open")
    study, values = write_study(folder, pain_effect=6.0)
    out, err = io.StringIO(), io.StringIO()
    code = main(["run", str(study), "--out", "run"], stdout=out, stderr=err, cwd=folder)
    assert code in (0, 1), err.getvalue()
    text = (folder / "run" / "results.json").read_text(encoding="utf-8")
    html = (folder / "run" / "appendix.html").read_text(encoding="utf-8")
    assert (folder / "run" / "appendix.pdf").stat().st_size > 0
    return from_json(text), text, html, values


def test_three_outcomes_run_and_results_json_round_trips(opened):
    results, text, _, _ = opened
    assert to_json(results) == text
    records = {r.id: r for r in results.families}
    assert list(records) == ["P", "Q", "S"]
    assert [(m.node, m.hypotheses) for m in records["S"].members] == [
        ("C1@sleep", ("C1",)), ("C2@sleep", ("C2",)), ("C1@mobility", ("C1",)),
        ("C2@mobility", ("C2",))]
    assert records["P"].gate is None and records["Q"].gate is None
    assert (records["S"].gate.after, records["S"].gate.status) == ("P", "open")
    assert records["P"].intervals == "simultaneous" and records["S"].intervals == "unadjusted"
    # pain holds two shares, of two families with different methods
    pain = _shares(results, "pain")
    assert {k: f.multiplicity for k, f in pain.items()} == {"P": "dunnett", "Q": "holm"}
    assert json.loads(text)["multiplicity_scope"] == "declared"


def test_the_dunnett_family_beside_a_holm_family_matches_scipy(opened):
    results, _, _, values = opened
    pain = _shares(results, "pain")
    control = values["pain"]["placebo"]
    # Reference: scipy 1.17.1 scipy.stats.dunnett (two-sided, pooled variance), which
    # integrates the multivariate t numerically: agreement to 1e-4 absolute.
    assert scipy.__version__ == "1.17.1"
    reference = st.dunnett(values["pain"]["low"], values["pain"]["high"], control=control,
                           random_state=np.random.default_rng(5))
    got = [h.p_adjusted for h in pain["P"].hypotheses]
    assert got == pytest.approx(reference.pvalue.tolist(), abs=1e-4)
    assert [h.statistic for h in pain["P"].hypotheses] == pytest.approx(reference.statistic.tolist(),
                                                                         rel=1e-10)
    # the Holm family of one hypothesis on the same outcome is its own t test, unadjusted
    (c1,) = pain["Q"].hypotheses
    t = st.ttest_ind(values["pain"]["high"], control)  # scipy 1.17.1, pooled two-sample t
    assert c1.p_adjusted == c1.p and c1.decision == "reject"
    # C1 uses the pooled variance of all three groups (df 33), not of two: only the sign
    # and the estimate agree with the two-sample t.
    assert c1.df == 33 and np.sign(c1.statistic) == np.sign(t.statistic)
    assert c1.estimate == pytest.approx(np.mean(values["pain"]["high"]) - np.mean(control), rel=1e-12)


def test_the_open_gate_in_the_adjusted_p_the_sentences_and_the_page(opened):
    results, _, html, _ = opened
    gate = next(r for r in results.families if r.id == "S").gate
    secondary = [h for o in ("sleep", "mobility") for h in _shares(results, o)["S"].hypotheses]
    assert all(h.p_adjusted >= gate.p for h in secondary)
    sleep = next(o for o in results.outcomes if o.name == "sleep")
    assert "family S, tested after every hypothesis of family P was rejected" in \
        sleep.hypothesis_conclusions[0].sentence
    pain = next(o for o in results.outcomes if o.name == "pain")
    assert [c.sentence.count("family P") for c in pain.hypothesis_conclusions] == [1, 1, 0]
    assert "family Q" in pain.hypothesis_conclusions[2].sentence
    assert "Family S (key secondary): 4 hypotheses on sleep and mobility, tested together; this " \
           "table shows those on this outcome." in html
    assert "Serial gatekeeping: family S was tested because every hypothesis of family P was " \
           "rejected" in html
    assert "No simultaneous intervals compatible with the graphical procedure are computed" in html
    assert '<span class="method-name">Registered families of hypotheses.</span>' in html
    assert '<span class="method-name">Serial gatekeeping.</span>' in html
    assert "Family Q is tested apart from the others, so the family-wise error rate is " \
           "controlled within each family, not across them." in html


def test_the_closed_gate_leaves_the_secondary_family_untested(tmp_path):
    study, _ = write_study(tmp_path, pain_effect=0.0, seed=3)
    results = api.compute(study).results
    records = {r.id: r for r in results.families}
    assert records["P"].rejected < records["P"].hypotheses  # no effect on pain: the gate closes
    assert records["S"].gate.status == "closed" and not records["S"].tested
    for outcome in ("sleep", "mobility"):
        share = _shares(results, outcome)["S"]
        assert {h.decision for h in share.hypotheses} == {"not-tested"}
        assert all(h.p is not None and h.p_adjusted is None for h in share.hypotheses)
        sentences = next(o for o in results.outcomes if o.name == outcome).hypothesis_conclusions
        assert all("its family S is tested only when every hypothesis of family P is rejected"
                   in c.sentence and "(the gate was closed)" in c.sentence for c in sentences)
    # Q is not in the sequence: tested whatever P gave
    assert records["Q"].tested and records["Q"].gate is None


def test_one_declared_family_per_outcome_is_the_top_level_form(tmp_path):
    # The top-level form is the special case of one family per outcome: declared families
    # that say the same give the same hypotheses, numbers and decisions.
    holm_plan = {"method": "holm"}
    declared = {"families": [{"id": f"F{i}", "contrasts": ["D1", "C1", "C2"], "outcomes": [name],
                              "method": "holm"} for i, (name, _, _) in enumerate(OUTCOMES)]}
    declared["families"][0]["contrasts"] = ["D1", "C1"]
    declared["families"][1]["contrasts"] = ["C1", "C2"]
    declared["families"][2]["contrasts"] = ["C1", "C2"]
    top, _ = write_study(tmp_path, 6.0, multiplicity=holm_plan)
    first = api.compute(top).results
    (tmp_path / "declared").mkdir()
    again, _ = write_study(tmp_path / "declared", 6.0, multiplicity=declared)
    second = api.compute(again).results
    for a, b in zip(first.outcomes, second.outcomes):
        assert [f.hypotheses for f in a.contrasts] == [f.hypotheses for f in b.contrasts]


def test_a_changed_family_is_a_deviation_named_by_its_id(tmp_path):
    study, _ = write_study(tmp_path, 6.0)
    assert main(["lock", str(study)], stdout=io.StringIO(), stderr=io.StringIO(), cwd=tmp_path) == 0
    plan = yaml.safe_load(study.read_text(encoding="utf-8"))
    plan["multiplicity"]["families"][1]["method"] = "bonferroni"
    study.write_text(yaml.safe_dump(plan, sort_keys=False), encoding="utf-8")
    changed = [(d.kind, d.subject, d.message) for d in api.compute(study).results.deviations]
    assert changed == [("plan-changed", "multiplicity.families[Q].method",
                        "multiplicity.families[Q].method: registered holm, now bonferroni.")]
