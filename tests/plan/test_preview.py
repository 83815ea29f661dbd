"""What `appendix check` lists of contrasts, multiplicity, fallbacks and notes."""

from __future__ import annotations

from pathlib import Path

from appendix.data.build import build_dataset
from appendix.plan.load import load_plan
from appendix.preview import describe_contrasts, describe_run

# The demo's data (invented, see studies/seed-coating) under a plan of our own.
PLAN = """\
format: 1
study: {id: preview-test, title: Invented plan for the preview test}
data: {source: data/units.csv, unit: unit_id}
design:
  factors:
    - {name: coating, levels: [uncoated, chitosan, seaweed, humic], control: uncoated, ordered: true}
outcomes:
  - {name: dry_mass, column: shoot_dry_mass_mg, label: dry mass, role: primary}
  - {name: chlorophyll, column: chlorophyll_index, label: chlorophyll, role: secondary}
assumptions:
  fallbacks: [{when: unequal-variance, test: bartlett, threshold: 0.01, use: welch}]
contrasts:
  - {id: C1, kind: custom, label: coated versus uncoated, outcomes: [dry_mass],
     weights: {uncoated: -3, chitosan: 1, seaweed: 1, humic: 1}}
  - {id: C2, kind: trend, label: dose trend, degree: 2}
  - {id: C3, kind: pairwise, label: all pairs, alternative: greater, justification: j}
multiplicity: {method: fixed-sequence, order: [C2, C1, C3]}
exploratory:
  - {id: E1, kind: helmert, label: each versus later, reason: asked after unblinding}
"""


def _loaded(demo_study: Path, text: str):
    study = demo_study.parent / "preview.yaml"
    study.write_text(text, encoding="utf-8")
    return load_plan(study)


def test_contrast_lines(demo_study):
    assert describe_contrasts(_loaded(demo_study, PLAN).plan) == [
        "registered analysis: classical",
        "registered fallback 1: if bartlett gives p < 0.01 (unequal-variance), use welch",
        "contrast C1 (custom): coated versus uncoated; 1 hypothesis, two-sided; outcomes: dry_mass",
        "contrast C2 (trend): dose trend; 2 hypotheses, two-sided; outcomes: every outcome",
        "contrast C3 (pairwise): all pairs; 6 hypotheses, greater; outcomes: every outcome",
        "multiplicity: fixed-sequence in the order C2, C1, C3, per-outcome; "
        "hypotheses per outcome: dry_mass 9, chlorophyll 8",
        "exploratory E1 (helmert): each versus later; 3 hypotheses, two-sided; "
        "outcomes: every outcome; not adjusted; reason: asked after unblinding",
    ]


def test_check_prints_notes_before_the_last_line(demo_study):
    loaded = _loaded(demo_study, PLAN)
    lines = describe_run(loaded, build_dataset(loaded))
    assert lines[0] == "study preview-test: Invented plan for the preview test"
    assert lines[-1] == "nothing was written"
    notes = [line for line in lines if line.startswith("note: ")]
    assert [n.split(":")[1].strip() for n in notes] == ["assumptions.fallbacks[0]",
                                                       "contrasts[2].alternative"]
    assert lines[-3:-1] == notes
    assert "note: assumptions.fallbacks[0]: the switch to the welch analysis when bartlett" in notes[0]
    plan_lines = describe_contrasts(loaded.plan)
    start = lines.index(plan_lines[0])
    assert lines[start:start + len(plan_lines)] == plan_lines


def test_no_contrasts_no_multiplicity_line(demo_study):
    text = PLAN.split("assumptions:")[0] + "analysis: {method: rank-based}\n"
    assert describe_contrasts(_loaded(demo_study, text).plan) == ["registered analysis: rank-based"]


def test_primary_family_size(demo_study):
    text = PLAN.replace("{method: fixed-sequence, order: [C2, C1, C3]}",
                        "{method: bonferroni, scope: primary-family}")
    lines = describe_contrasts(_loaded(demo_study, text).plan)
    assert lines[5] == ("multiplicity: bonferroni, primary-family; hypotheses per outcome: "
                        "dry_mass 9, chlorophyll 8; primary family 9")


def test_graphical_plan_lists_its_graph(demo_study):
    contrasts = PLAN[PLAN.index("contrasts:"):PLAN.index("exploratory:")]
    text = PLAN.replace(contrasts, """\
contrasts:
  - {id: C1, kind: custom, label: coated versus uncoated, weights: {uncoated: -3, chitosan: 1, seaweed: 1, humic: 1}}
  - {id: C2, kind: trend, label: dose trend}
  - {id: C3, kind: custom, label: seaweed versus chitosan, weights: {chitosan: -1, seaweed: 1}}
multiplicity:
  method: graphical
  weights: {C1: 0.75, C2: 0.25}
  transitions: {C1: {C2: 0.5, C3: 0.5}, C2: {C3: 1}}
""")
    lines = describe_contrasts(_loaded(demo_study, text).plan)
    assert lines[-3:-1] == [
        "multiplicity: graphical, per-outcome; hypotheses per outcome: dry_mass 3, chlorophyll 3",
        "graph: weights C1 0.75, C2 0.25; transitions C1 -> C2 0.5, C1 -> C3 0.5, C2 -> C3 1"]
