"""Covariates per outcome (`design.covariates[].outcomes`): a baseline of one outcome is no
covariate of another. The data are invented here (seeded).

Each outcome is analysed under the plan as it sees it (`Plan.for_outcome`): its own
covariates in the model, the slopes check, the adjusted means, the conclusions and the
figures; a unit without a value of a covariate is left out only of the outcomes that
covariate adjusts. The covariate-adjusted table is compared with statsmodels' formula
OLS and `anova_lm` (statsmodels 0.15.0) on the same rows, the unadjusted one with
scipy.stats.f_oneway (scipy 1.17.1): independent libraries, not the code under test.
"""

from __future__ import annotations

import io

import numpy as np
import pandas as pd
import pytest
import yaml

from appendix.api import compute
from appendix.cli import main
from appendix.plan.load import load_plan

STUDY = """\
format: 1
study: {id: invented-baselines, title: Invented data with a baseline per outcome}
data: {source: units.csv, unit: unit_id}
design:
  factors:
    - {name: arm, levels: [control, low, high], control: control}
  covariates:
    - {name: grip_base, label: grip strength at entry, unit: kg, outcomes: [grip]}
  sums_of_squares: 2
outcomes:
  - {name: grip, label: grip strength, unit: kg, role: primary}
  - {name: walk, label: walking speed, unit: m/s, role: secondary}
contrasts:
  - {id: C1, kind: versus-control, label: each dose against control}
multiplicity: {method: holm}
"""


def _write(tmp_path, study: str = STUDY, seed: int = 3) -> pd.DataFrame:
    rng = np.random.default_rng(seed)
    rows = []
    for a, arm in enumerate(["control", "low", "high"]):
        for i in range(8 + a):
            base = rng.normal(30, 4)
            grip = 5 + 0.9 * base + 1.5 * a + rng.normal(0, 1.5)
            walk = 1.1 + 0.05 * a + rng.normal(0, 0.1)
            rows.append((f"U{a}{i:02d}", arm, f"{base:.1f}", f"{grip:.2f}", f"{walk:.3f}"))
    frame = pd.DataFrame(rows, columns=["unit_id", "arm", "grip_base", "grip", "walk"])
    frame.loc[[2, 11], "grip_base"] = "NA"  # no baseline: left out of grip only
    frame.to_csv(tmp_path / "units.csv", index=False)
    (tmp_path / "study.yaml").write_text(study, encoding="utf-8")
    return frame


def test_each_outcome_is_analysed_with_its_own_covariates(tmp_path):
    import statsmodels.formula.api as smf
    from scipy import stats
    from statsmodels.stats.anova import anova_lm

    frame = _write(tmp_path)
    results = compute(tmp_path / "study.yaml").results
    grip, walk = results.outcomes
    # grip: adjusted for its baseline (statsmodels 0.15.0, formula OLS, anova_lm typ=2)
    data = frame[frame.grip_base != "NA"].astype({"grip_base": float, "grip": float})
    reference = anova_lm(smf.ols("grip ~ grip_base + C(arm)", data=data).fit(), typ=2)
    (table,) = grip.tables
    assert [r.term for r in table.rows] == [("grip_base",), ("arm",)]
    for row, name in zip(table.rows, ["grip_base", "C(arm)"]):
        assert row.statistic == pytest.approx(reference.loc[name, "F"], rel=1e-9)
        assert row.p == pytest.approx(reference.loc[name, "PR(>F)"], rel=1e-7)
    assert grip.n_units == len(data) == len(frame) - 2
    assert [c.covariate for c in grip.covariate_slopes] == ["grip_base"] and len(grip.slopes) == 1
    assert grip.robust is None
    # walk: no covariate, so the one-factor layout with its robust block, every unit
    # (scipy 1.17.1, f_oneway on the same groups)
    groups = [frame.loc[frame.arm == a, "walk"].astype(float) for a in ["control", "low", "high"]]
    expected = stats.f_oneway(*groups)
    (table,) = walk.tables
    assert [r.term for r in table.rows] == [("arm",)]
    assert table.rows[0].statistic == pytest.approx(expected.statistic, rel=1e-9)
    assert table.rows[0].p == pytest.approx(expected.pvalue, rel=1e-7)
    assert walk.n_units == len(frame)
    assert walk.covariate_slopes == () and walk.slopes == () and walk.robust is not None
    # conclusions: "adjusted for" only where the covariate adjusts
    grip_words = " ".join(str(p) for c in grip.hypothesis_conclusions for p in c.parts)
    walk_words = " ".join(str(p) for c in walk.hypothesis_conclusions for p in c.parts)
    assert "adjusted for grip strength at entry" in grip_words
    assert "adjusted for" not in walk_words
    # the unit flow counts the two units without a baseline as missing for grip only
    flows = {f.outcome: sum(c.n for c in f.missing) for f in results.unit_flow.outcomes}
    assert flows == {"grip": 2, "walk": 0}
    finding = next(f for f in results.findings if f.code == "covariate-missing")
    assert finding.message == ("2 eligible units without a value of the covariate grip strength "
                               "at entry: not analysed for outcome grip strength (the outcomes it adjusts).")


def test_the_plan_as_an_outcome_sees_it(tmp_path):
    _write(tmp_path)
    plan = load_plan(tmp_path / "study.yaml").plan
    assert [c.name for c in plan.for_outcome("grip").design.covariates] == ["grip_base"]
    assert plan.for_outcome("walk").design.covariates == ()
    assert plan.for_outcome("walk").is_one_way and not plan.is_one_way
    assert plan.for_outcome("grip").model_terms == (("grip_base",), ("arm",))


def test_the_key_is_left_out_of_the_canonical_plan_at_its_default(tmp_path):
    # A plan without `outcomes` on its covariates keeps its canonical JSON (and hash).
    _write(tmp_path, STUDY.replace(", outcomes: [grip]", ""))
    dumped = load_plan(tmp_path / "study.yaml").plan.model_dump(mode="json")
    assert "outcomes" not in dumped["design"]["covariates"][0]
    _write(tmp_path)
    dumped = load_plan(tmp_path / "study.yaml").plan.model_dump(mode="json")
    assert dumped["design"]["covariates"][0]["outcomes"] == ["grip"]


def test_a_changed_covariate_scope_is_a_deviation_from_the_lock(tmp_path):
    _write(tmp_path)
    assert main(["lock", "study.yaml"], stdout=io.StringIO(), stderr=io.StringIO(), cwd=tmp_path) == 0
    (tmp_path / "study.yaml").write_text(STUDY.replace("outcomes: [grip]", "outcomes: [grip, walk]"),
                                         encoding="utf-8")
    deviations = compute(tmp_path / "study.yaml").results.deviations
    changed = [d for d in deviations if d.kind == "plan-changed"]
    assert [d.subject for d in changed] == ["design.covariates[grip_base].outcomes"]


def test_check_refuses_an_outcome_it_does_not_know(tmp_path):
    _write(tmp_path, STUDY.replace("outcomes: [grip]", "outcomes: [grips]"))
    err = io.StringIO()
    assert main(["check", "study.yaml"], stdout=io.StringIO(), stderr=err, cwd=tmp_path) == 2
    assert ("design.covariates[0].outcomes[0]: got 'grips'; allowed: one of the outcomes 'grip' "
            "or 'walk'; did you mean 'grip'?") in err.getvalue()
    assert "Traceback" not in err.getvalue()


def test_run_words_the_covariate_per_outcome(tmp_path):
    _write(tmp_path)
    out = io.StringIO()
    assert main(["check", "study.yaml"], stdout=out, stderr=io.StringIO(), cwd=tmp_path) == 0
    lines = out.getvalue().splitlines()
    assert "covariate grip_base: column grip_base; adjusts grip only" in lines
    assert any(line.startswith("outcome grip, at alpha 0.05: descriptives by cell; variance table "
                               "with type 2 sums of squares of grip_base, arm;") for line in lines)
    assert any(line.startswith("outcome walk, at alpha 0.05: descriptives; one-way variance table")
               for line in lines)
    err = io.StringIO()
    code = main(["run", "study.yaml", "--out", "run", "--no-pdf"], stdout=io.StringIO(), stderr=err,
                cwd=tmp_path)
    assert code in (0, 1), err.getvalue()
    html = (tmp_path / "run" / "appendix.html").read_text(encoding="utf-8")
    assert "<dt>Covariate</dt><dd>grip strength at entry (adjusting grip strength only)</dd>" in html
    assert ("Each outcome is adjusted only for the covariates the plan registers for it: grip "
            "strength is adjusted for grip strength at entry; walking speed is adjusted for no "
            "covariate.") in html
    figures = sorted(p.name for p in (tmp_path / "run" / "figures").iterdir())
    assert "grip-covariate-1.svg" in figures and not any(f.startswith("walk-covariate") for f in figures)
    records = (tmp_path / "run" / "records.json").read_text(encoding="utf-8").splitlines()
    # a unit without a baseline: its walk value is used, its (missing) baseline is not
    row = next(yaml.safe_load(line.rstrip(",")) for line in records if '"unit":"U002"' in line)
    assert row["outcomes"] == {"grip": "left-out", "walk": "analysed"}
    assert row["values"]["grip_base"] is None
