"""Whatever `check` accepts, `run` carries through: generated valid plans with data that fit
them (`tests/hostile/valid_plans.py`, invented values), awkward data included.

When `check` exits 0, the run must compute every analysis, the canonical JSON, the records
and the HTML without refusing (exit 2) or failing (exit 3), and without a leaked numpy
warning (degenerate statistics warn on the result instead; DEVELOPERS.md). The first test
takes the run's stages through the API and leaves out the figures, which cost most of a
run's time; the second runs the whole command, figures and run folder included, on fewer
plans. Both are derandomized, so CI draws the same plans every time.

Each crash these tests found has its own regression test below, named for its case.
"""

from __future__ import annotations

import io
from pathlib import Path

import pytest
import yaml
from hypothesis import HealthCheck, event, given, settings

from appendix import api
from appendix.cli import main
from appendix.errors import PlanError
from appendix.plan.load import load_plan
from appendix.records import records_text
from appendix.render import RenderOptions, render_html
from appendix.results import to_json
from tests.hostile.valid_plans import Case, cases

PARITY = dict(deadline=None, derandomize=True, database=None,
              suppress_health_check=[HealthCheck.function_scoped_fixture, HealthCheck.too_slow,
                                     HealthCheck.data_too_large])


@pytest.fixture(scope="module")
def folder(tmp_path_factory) -> Path:
    return tmp_path_factory.mktemp("parity")


def _write(folder: Path, case: Case) -> None:
    for log in folder.glob("appendix-error-*.log"):
        log.unlink()
    (folder / "study.yaml").write_text(yaml.safe_dump(case.plan, sort_keys=False), encoding="utf-8")
    (folder / "units.csv").write_text(case.csv, encoding="utf-8")


def _checked(folder: Path, case: Case) -> bool:
    """True when `check` accepts the case; the plan itself must always load."""
    _write(folder, case)
    try:
        load_plan(folder / "study.yaml")
    except PlanError as error:  # the strategy drifted from the schema, or the loader did
        pytest.fail(f"a plan valid by construction was refused: {error}")
    err = io.StringIO()
    code = main(["check", "study.yaml"], stdout=io.StringIO(), stderr=err, cwd=folder)
    assert code in (0, 2), err.getvalue()  # 2: the data were refused, with a sentence
    assert "Traceback" not in err.getvalue()
    event("check accepted" if code == 0 else "check refused the data")
    event(f"design: {case.shape}")
    if any("outcomes" in c for c in case.plan["design"].get("covariates", [])):
        event("a covariate of some outcomes only")
    settings = case.plan.get("multiplicity", {})
    event(f"multiplicity: {'families' if 'families' in settings else settings.get('method', 'holm')}")
    if "sequence" in settings:
        event("multiplicity: a gatekeeping sequence")
    return code == 0


@pytest.mark.filterwarnings("error::RuntimeWarning")
@settings(max_examples=400, **PARITY)
@given(case=cases())
def test_every_checked_plan_is_analysed_and_rendered(folder: Path, case: Case):
    if not _checked(folder, case):
        return
    computed = api.compute(folder / "study.yaml")  # any exception fails the test
    text = to_json(computed.results)
    records_text(computed.loaded, computed.dataset)
    html = render_html(computed.results, {}, RenderOptions())
    assert text.startswith("{") and html.startswith("<!DOCTYPE html>")


@pytest.mark.filterwarnings("error::RuntimeWarning")
@settings(max_examples=80, **PARITY)
@given(case=cases("families"))
def test_every_checked_family_plan_is_analysed_and_rendered(folder: Path, case: Case):
    # declared families only: each with a method its members allow, graphs and orders over
    # nodes across outcomes, a serial gatekeeping sequence; every family recorded
    if not _checked(folder, case):
        return
    computed = api.compute(folder / "study.yaml")
    results = computed.results
    declared = case.plan["multiplicity"]["families"]
    assert [f.id for f in results.families] == [f["id"] for f in declared]
    assert sum(f.hypotheses for f in results.families) == sum(
        len(h.hypotheses) for o in results.outcomes for h in o.contrasts if h.registered)
    html = render_html(results, {}, RenderOptions())
    assert to_json(results).startswith("{") and html.startswith("<!DOCTYPE html>")


@pytest.mark.filterwarnings("error::RuntimeWarning")
@settings(max_examples=40, **PARITY)
@given(case=cases())
def test_every_checked_plan_runs_to_its_folder(folder: Path, case: Case):
    if not _checked(folder, case):
        return
    err = io.StringIO()
    code = main(["run", "study.yaml", "--out", "run", "--no-pdf", "--strict"],
                stdout=io.StringIO(), stderr=err, cwd=folder)
    assert code in (0, 1), err.getvalue()  # 1: --strict and an unacknowledged deviation
    assert not list(folder.glob("appendix-error-*.log"))
    assert (folder / "run" / "appendix.html").is_file()


# --- regressions: each a case the properties above found -------------------------------

WITHIN_ONLY = """\
format: 1
study: {id: regression, title: Invented regression case}
data: {source: units.csv, unit: unit_id}
design:
  factors:
    - {name: visit, levels: [v1, v2, v3], role: within}
"""


def _study(tmp_path: Path, plan: str, rows: list[str]) -> Path:
    (tmp_path / "units.csv").write_text("\n".join(rows) + "\n", encoding="utf-8")
    (tmp_path / "study.yaml").write_text(plan, encoding="utf-8")
    err = io.StringIO()
    assert main(["check", "study.yaml"], stdout=io.StringIO(), stderr=err, cwd=tmp_path) == 0, \
        err.getvalue()
    return tmp_path / "study.yaml"


def _long(values: dict[str, list[float | None]]) -> list[str]:
    """Rows unit_id,visit,y of each unit's values at v1, v2, v3 (None: no row)."""
    return ["unit_id,visit,y"] + [f"{unit},v{j + 1},{value}" for unit, row in values.items()
                                  for j, value in enumerate(row) if value is not None]


@pytest.mark.filterwarnings("error::RuntimeWarning")
def test_type_3_repeated_measures_with_a_score_its_model_fits_exactly(tmp_path):
    """Crashed with exit 3 ("need F >= 0 and positive df, got F=nan"): under type 3 the
    within SS summed t^2 MS_res over the Helmert score columns, and a column with zero
    residual (both units' scores equal) gave NaN. Reference: statsmodels' `AnovaRM` on the
    same rows (the type of sums of squares does not matter in a one-factor within design)."""
    import pandas as pd
    from statsmodels.stats.anova import AnovaRM

    plan = WITHIN_ONLY + "  sums_of_squares: 3\noutcomes:\n  - {name: y, label: Score, role: primary}\n"
    values = {"u1": [10.0, 12.0, 10.0], "u2": [8.0, 10.0, 10.0]}
    study = _study(tmp_path, plan, _long(values))
    (model,) = api.compute(study).results.outcomes
    row = model.tables[1].rows[0]
    frame = pd.DataFrame([(u, f"v{j + 1}", v) for u, r in values.items() for j, v in enumerate(r)],
                         columns=["unit", "visit", "y"])
    reference = AnovaRM(frame, depvar="y", subject="unit", within=["visit"]).fit().anova_table.iloc[0]
    assert row.statistic == pytest.approx(reference["F Value"], rel=1e-12)  # 3.0 by hand too
    assert row.p == pytest.approx(reference["Pr > F"], rel=1e-12)  # 0.25: F(2, 2) sf 3 = 1/(1+F)


@pytest.mark.filterwarnings("error::RuntimeWarning")
def test_sphericity_of_repeated_measures_without_residual_variation(tmp_path):
    """Leaked numpy's "invalid value in scalar divide" (0/0 in the Greenhouse–Geisser
    epsilon) when every unit's profile is parallel to the others (no unit x visit
    variation): sphericity is then undefined and says so, and the within F is undefined."""
    plan = WITHIN_ONLY + "outcomes:\n  - {name: y, label: Score, role: primary}\n"
    values = {"u1": [10, 11, 13], "u2": [12, 13, 15], "u3": [9, 10, 12], "u4": [7, 8, 10]}
    (model,) = api.compute(_study(tmp_path, plan, _long(values))).results.outcomes
    assert model.tables[1].sphericity.greenhouse_geisser is None and model.tables[1].sphericity.huynh_feldt is None
    assert [w.code for w in model.tables[1].sphericity.warnings] == ["sphericity-undefined"]
    assert model.tables[1].rows[0].statistic is None


@pytest.mark.filterwarnings("error::RuntimeWarning")
def test_repeated_measures_with_no_complete_unit(tmp_path):
    """Leaked numpy's "Mean of empty slice" when no unit has a value at every visit (the
    registered rule complete-units leaves none): the run reports 0 units and no test."""
    plan = WITHIN_ONLY + "outcomes:\n  - {name: y, label: Score, role: primary}\n"
    values = {"u1": [10, None, 13], "u2": [None, 13, 15], "u3": [9, 10, None]}
    computed = api.compute(_study(tmp_path, plan, _long(values)))
    (model,) = computed.results.outcomes
    assert model.n_units == 0
    assert [row.statistic for table in model.tables for row in table.rows] == [None]
    assert "no-residual-df" in [w.code for w in model.tables[0].warnings]
    assert render_html(computed.results, {}, RenderOptions())


@pytest.mark.filterwarnings("error::RuntimeWarning")
def test_dunnett_within_a_treatment_level_without_units(tmp_path):
    """Leaked numpy's "invalid value in scalar divide" (a covariance over 0 units) when a
    Dunnett family of within-unit comparisons is sliced `by` a treatment factor one of whose
    levels has no units: that slice is unavailable, the others are tested."""
    plan = WITHIN_ONLY.replace(
        "  factors:\n", "  factors:\n    - {name: arm, levels: [a, b, c]}\n").replace(
        "role: within}", "role: within, control: v1}") + """\
  interactions: [[arm, visit]]
  sums_of_squares: 2
outcomes:
  - {name: y, label: Score, role: primary}
contrasts:
  - {id: C1, factor: visit, by: arm, kind: versus-control, label: each visit versus the first}
multiplicity: {method: dunnett}
"""
    rows = ["unit_id,arm,visit,y"] + [
        f"{unit},{arm},v{j + 1},{base + j * step + noise:.2f}"
        for unit, arm, base, step in [("u1", "a", 10, 1), ("u2", "a", 12, 2), ("u3", "a", 9, 1.5),
                                      ("u4", "b", 11, 0), ("u5", "b", 8, 1), ("u6", "b", 10, -1)]
        for j, noise in enumerate([0.3, -0.2, 0.1])]
    (model,) = api.compute(_study(tmp_path, plan, rows)).results.outcomes
    (family,) = model.contrasts
    by_slice = {h.within: h for h in family.hypotheses if h.id.startswith("C1:v2")}
    assert by_slice["c"].p is None and by_slice["c"].decision == "unavailable"
    assert by_slice["a"].p_adjusted is not None and by_slice["b"].p_adjusted is not None


@pytest.mark.filterwarnings("error::RuntimeWarning")
def test_covariate_in_a_design_without_treatment_factor(tmp_path):
    """Crashed with exit 3 ("`by` must name factors of the design ..., got ()"): the
    homogeneity-of-slopes check ran across treatment cells that a design of a within factor
    and a covariate does not have. It is now stated as not defined, and the common slope is
    the least-squares slope of the units' means on the covariate (numpy 2 `polyfit`)."""
    import numpy as np

    plan = WITHIN_ONLY.replace("role: within}\n", "role: within}\n  covariates:\n"
                               "    - {name: base, label: Baseline}\n  sums_of_squares: 2\n") + \
        "outcomes:\n  - {name: y, label: Score, role: primary}\n"
    values = {"u1": [10, 12, 11], "u2": [13, 13, 15], "u3": [9, 11, 12], "u4": [7, 9, 10],
              "u5": [11, 10, 14]}
    base = {"u1": 4.0, "u2": 6.5, "u3": 4.5, "u4": 3.0, "u5": 5.0}
    rows = ["unit_id,visit,y,base"] + [f"{u},v{j + 1},{v},{base[u]}" for u, r in values.items()
                                       for j, v in enumerate(r)]
    computed = api.compute(_study(tmp_path, plan, rows))
    (model,) = computed.results.outcomes
    (check,) = model.slopes
    assert (check.statistic, check.p, check.by) == (None, None, ())
    assert [w.code for w in check.warnings] == ["slopes-check-undefined"]
    (slope,) = model.covariate_slopes
    means = [sum(r) / 3 for r in values.values()]
    assert slope.estimate == pytest.approx(np.polyfit(list(base.values()), means, 1)[0], rel=1e-10)
    html = render_html(computed.results, {}, RenderOptions())
    assert "Covariate Baseline: not computed." in html
