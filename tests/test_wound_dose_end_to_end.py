"""End to end: the third demo (one ordered dose factor in cohort blocks, a baseline
covariate, three outcomes, Dunnett's comparisons with vehicle) through the command line to
a finished HTML and PDF appendix, and its results.json checked against an independent
reference.

The reference is computed here from the demo's CSV with pandas and statsmodels
(`statsmodels.formula.api.ols`, `statsmodels.stats.anova.anova_lm`, the version the test
environment installs; 0.15.0 when written) and scipy (`scipy.stats.shapiro`,
`scipy.stats.multivariate_t`): the covariate-adjusted model outcome ~ C(dose) + C(cohort) +
baseline with type 2 sums of squares, as the plan registers. The data are INVENTED
(studies/wound-dose/generate.py).
"""

from __future__ import annotations

import re

import json
import shutil
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from patsy import build_design_matrices
from pypdf import PdfReader
from scipy import stats
from scipy.optimize import brentq
from statsmodels.formula.api import ols
from statsmodels.stats.anova import anova_lm

from tests.conftest import REPO
from tests.test_cli import run_cli
from tests.test_end_to_end import _Ids

pytestmark = pytest.mark.slow  # renders a PDF

DEMO = REPO / "studies" / "wound-dose"
DOSES = ["vehicle", "1 mg/kg", "3 mg/kg", "10 mg/kg", "30 mg/kg"]
COHORTS = ["K1", "K2", "K3", "K4"]
OUTCOMES = {"wound_area": "wound_area_d7_mm2", "reepithelialisation": "reepithelialisation_pct",
            "granulation": "granulation_um"}
PARTS = ["descriptives", "figures", "variance", "slopes", "marginal", "contrasts", "diagnostics",
         "conclusion"]
# Both sides solve the same least-squares problem in double precision (the engine from
# exact cell sums, statsmodels by a pivoted QR of the row-level design): agreement to
# 1e-9 relative is what that allows (common practice, no source).
REL = 1e-9
MODEL = "y ~ C(dose, Treatment('vehicle')) + C(cohort) + baseline"
DOSE_TERM, COHORT_TERM = "C(dose, Treatment('vehicle'))", "C(cohort)"


@pytest.fixture(scope="module")
def run(tmp_path_factory) -> Path:
    """The demo run once for this module: study copied, `appendix run` to out/."""
    folder = tmp_path_factory.mktemp("wound-dose")
    shutil.copytree(DEMO, folder / "study", ignore=shutil.ignore_patterns("__pycache__"))
    code, _, err = run_cli(["run", "study/study.yaml", "--out", "out"], folder)
    assert (code, err) == (0, ""), err
    return folder / "out"


@pytest.fixture(scope="module")
def results(run) -> dict:
    return json.loads((run / "results.json").read_text(encoding="utf-8"))


def _model(results: dict, name: str) -> dict:
    return next(m for m in results["outcomes"] if m["name"] == name)


def _analysed(column: str) -> pd.DataFrame:
    """The analysed mice of one outcome, by hand: rule X1 applied, missing values dropped."""
    data = pd.read_csv(DEMO / "data" / "animals.csv", dtype=str, keep_default_na=False)
    data = data[(data["dressing_lost"] != "yes") & (data[column] != "")]
    return pd.DataFrame({"dose": data["dose"], "cohort": data["cohort"],
                         "baseline": data["wound_area_d0_mm2"].astype(float),
                         "y": data[column].astype(float)})


def _fit(column: str):
    return ols(MODEL, data=_analysed(column)).fit()


def _adjusted_mean_rows(fit, data: pd.DataFrame) -> np.ndarray:
    """One row per dose: the coefficient weights of the prediction at the mean baseline of
    the analysed mice, averaged with equal weights over the four cohorts."""
    grid = pd.DataFrame([(d, c, data["baseline"].mean()) for d in DOSES for c in COHORTS],
                        columns=["dose", "cohort", "baseline"])
    (design,) = build_design_matrices([fit.model.data.orig_exog.design_info], grid)
    design = np.asarray(design)
    return np.vstack([design[grid["dose"] == d].mean(axis=0) for d in DOSES])


# --- the run and its appendix ------------------------------------------------------------


def test_every_section_is_there_and_every_link_lands(run):
    parser = _Ids()
    parser.feed((run / "appendix.html").read_text(encoding="utf-8"))
    for outcome in OUTCOMES:
        for part in PARTS:
            assert f"{outcome}-{part}" in parser.ids, (outcome, part)
    assert {"exploratory", "exploratory-E1", "methods", "unit-flow", "deviations"} <= parser.ids
    assert set(parser.links) <= parser.ids
    # every figure of the one-factor appendix, for this design too, plus the covariate plot
    kinds = ("contrasts", "covariate-1", "distribution", "f-reference", "means", "qq", "residuals")
    # and the study's unit-flow diagram
    assert sorted(p.name for p in (run / "figures").iterdir()) == sorted(
        [f"{o}-{kind}.svg" for o in OUTCOMES for kind in kinds] + ["unit-flow.svg"])


def test_the_pdf_renders_names_the_method_and_carries_the_caution(run):
    pages = PdfReader(run / "appendix.pdf").pages
    assert len(pages) > 5
    text = " ".join(" ".join(page.extract_text() for page in pages).split())
    # a line may break after a hyphen, and the extracted text then has a space there
    assert "Dunnett" in text and "type 2" in text and re.search(r"homogeneity-of-\s?slopes", text)
    assert "not, a clinical or regulatory decision" in text
    assert "ZQ-118" in text and "(invented demo)" in text


def test_the_design_the_family_and_the_exploratory_trend(results):
    assert [m["name"] for m in results["outcomes"]] == list(OUTCOMES)
    assert all(m["robust"] is None and m["robust_absent"] for m in results["outcomes"])
    assert results["multiplicity"] == "dunnett"
    for m in results["outcomes"]:
        assert m["design"] == "one treatment factor, in blocks, covariate-adjusted"
        (table,) = m["tables"]
        assert table["ss_type"] == 2
        assert [r["term"] for r in table["rows"]] == [["baseline_area"], ["cohort"], ["dose"]]
        (family,) = m["contrasts"]
        assert family["multiplicity"] == "dunnett" and family["joint"] == "multivariate-t"
        assert [h["id"] for h in family["hypotheses"]] == [f"C1:{d}" for d in DOSES[1:]]
        assert all(h["ci_simultaneous"] for h in family["hypotheses"])
    (e1,) = results["exploratory"]
    (trend,) = e1["families"]
    assert (e1["id"], trend["outcome"], trend["multiplicity"]) == ("E1", "wound_area", "none")


def test_unit_flow_matches_counts_by_hand(results):
    data = pd.read_csv(DEMO / "data" / "animals.csv", dtype=str, keep_default_na=False)
    flow = results["unit_flow"]
    assert {c["level"]: c["n"] for c in flow["read"]} == data["dose"].value_counts().to_dict()
    eligible = data[data["dressing_lost"] != "yes"]
    assert {c["level"]: c["n"] for c in flow["eligible"]} == eligible["dose"].value_counts().to_dict()
    for entry in flow["outcomes"]:
        kept = eligible[eligible[OUTCOMES[entry["outcome"]]] != ""]
        counts = kept["dose"].value_counts()
        assert {c["level"]: c["n"] for c in entry["analysed"]} == {d: int(counts.get(d, 0)) for d in DOSES}


# --- values against statsmodels and scipy -----------------------------------------------


@pytest.mark.parametrize("name", list(OUTCOMES))
def test_model_table_matches_statsmodels_type_2(results, name):
    # reference: statsmodels anova_lm(ols(MODEL).fit(), typ=2)
    reference = anova_lm(_fit(OUTCOMES[name]), typ=2)
    (table,) = _model(results, name)["tables"]
    rows = {tuple(r["term"]): r for r in table["rows"]}
    residual_ss = reference.loc["Residual", "sum_sq"]
    for term, label in ((("baseline_area",), "baseline"), (("cohort",), COHORT_TERM),
                        (("dose",), DOSE_TERM)):
        row, ref = rows[term], reference.loc[label]
        assert row["df"] == ref["df"]
        assert row["sum_of_squares"] == pytest.approx(ref["sum_sq"], rel=REL)
        assert row["statistic"] == pytest.approx(ref["F"], rel=REL)
        assert row["p"] == pytest.approx(ref["PR(>F)"], rel=1e-7)
        assert row["partial_eta_squared"] == pytest.approx(ref["sum_sq"] / (ref["sum_sq"] + residual_ss),
                                                           rel=REL)
    assert table["residual_df"] == reference.loc["Residual", "df"]
    assert table["residual_ss"] == pytest.approx(residual_ss, rel=REL)


@pytest.mark.parametrize("name", list(OUTCOMES))
def test_adjusted_means_match_statsmodels_predictions(results, name):
    # reference: statsmodels OLS coefficients and cov_params, predictions at the analysed
    # mice's mean baseline averaged over the four cohorts with equal weights
    data = _analysed(OUTCOMES[name])
    fit = ols(MODEL, data=data).fit()
    rows = _adjusted_mean_rows(fit, data)
    estimate = rows @ fit.params.to_numpy()
    se = np.sqrt(np.diag(rows @ fit.cov_params().to_numpy() @ rows.T))
    (group,) = _model(results, name)["marginal_means"]
    assert [m["levels"] for m in group["means"]] == [[d] for d in DOSES]
    assert [m["estimate"] for m in group["means"]] == pytest.approx(estimate, rel=REL)
    assert [m["se"] for m in group["means"]] == pytest.approx(se, rel=1e-8)
    assert {m["df"] for m in group["means"]} == {fit.df_resid}


@pytest.mark.parametrize("name", list(OUTCOMES))
def test_covariate_slope_and_homogeneity_of_slopes_match_statsmodels(results, name):
    data = _analysed(OUTCOMES[name])
    fit = ols(MODEL, data=data).fit()
    (slope,) = _model(results, name)["covariate_slopes"]
    # reference: the OLS coefficient of baseline, its SE and 95% t interval (conf_int)
    assert slope["estimate"] == pytest.approx(fit.params["baseline"], rel=REL)
    assert slope["se"] == pytest.approx(fit.bse["baseline"], rel=1e-8)
    low, high = fit.conf_int(0.05).loc["baseline"]
    assert (slope["ci_low"], slope["ci_high"]) == pytest.approx((low, high), rel=1e-8)
    assert slope["mean"] == pytest.approx(data["baseline"].mean(), rel=REL)
    # reference: anova_lm(reduced, full) with the dose x baseline interaction added
    full = ols(MODEL + " + C(dose, Treatment('vehicle')):baseline", data=data).fit()
    comparison = anova_lm(fit, full)
    (check,) = _model(results, name)["slopes"]
    assert (check["df1"], check["df2"]) == (comparison["df_diff"][1], full.df_resid)
    assert check["statistic"] == pytest.approx(comparison["F"][1], rel=1e-8)
    assert check["p"] == pytest.approx(comparison["Pr(>F)"][1], rel=1e-7)


@pytest.mark.parametrize("name", list(OUTCOMES))
def test_shapiro_wilk_of_the_model_residuals_matches_scipy(results, name):
    # reference: scipy.stats.shapiro on the statsmodels OLS residuals
    reference = stats.shapiro(_fit(OUTCOMES[name]).resid)
    normality = _model(results, name)["diagnostics"]["normality"]
    assert normality["residuals"] == "model"
    assert normality["statistic"] == pytest.approx(reference.statistic, abs=1e-6)
    assert normality["p"] == pytest.approx(reference.pvalue, abs=1e-5)


def _comparisons(name: str):
    """Each dose minus vehicle on the adjusted means: estimates, t and their correlation."""
    data = _analysed(OUTCOMES[name])
    fit = ols(MODEL, data=data).fit()
    rows = _adjusted_mean_rows(fit, data)
    differences = rows[1:] - rows[0]
    estimate = differences @ fit.params.to_numpy()
    covariance = differences @ fit.cov_params().to_numpy() @ differences.T
    se = np.sqrt(np.diag(covariance))
    return fit, estimate, se, covariance / np.outer(se, se)


@pytest.mark.parametrize("name", list(OUTCOMES))
def test_dunnett_comparisons_match_the_multivariate_t_reference(results, name):
    fit, estimate, se, corr = _comparisons(name)
    (family,) = _model(results, name)["contrasts"]
    hypotheses = family["hypotheses"]
    # reference: the linear combinations of the statsmodels OLS coefficients
    assert [h["estimate"] for h in hypotheses] == pytest.approx(estimate, rel=1e-8)
    assert [h["se"] for h in hypotheses] == pytest.approx(se, rel=1e-8)
    assert [h["statistic"] for h in hypotheses] == pytest.approx(estimate / se, rel=1e-8)
    assert {h["df"] for h in hypotheses} == {fit.df_resid}
    # reference: scipy.stats.multivariate_t (its own randomized QMC integration) for
    # P(max |T_j| >= |t|) on the residual df. Tolerance 2e-3 absolute: the engine states an
    # integration error bound (joint_error) and scipy's default has its own.
    law = stats.multivariate_t(loc=np.zeros(4), shape=corr, df=fit.df_resid, seed=20260309)
    assert family["joint_error"] < 1e-3
    for h, t in zip(hypotheses, estimate / se):
        bound = np.full(4, abs(t))
        assert h["p_adjusted"] == pytest.approx(1 - law.cdf(bound, lower_limit=-bound), abs=2e-3)
    # the simultaneous 95% interval: estimate -/+ c SE, c the two-sided 95% quantile of
    # max |T_j| under the same law (scipy root finding on the reference law)
    c = brentq(lambda x: law.cdf(np.full(4, x), lower_limit=np.full(4, -x)) - 0.95, 1.5, 5.0)
    for h, e, s in zip(hypotheses, estimate, se):
        assert (h["ci_low"], h["ci_high"]) == pytest.approx((e - c * s, e + c * s), abs=5e-3 * s)


@pytest.mark.parametrize("name", ["wound_area"])
def test_dunnett_adjusted_p_stays_within_the_union_bound(results, name):
    # Boole's inequality: P(max_j |T_j| >= t) <= sum_j P(|T_j| >= t) = m p (textbook, e.g.
    # Hochberg & Tamhane 1987, from memory); and it is at least the raw p.
    (family,) = _model(results, name)["contrasts"]
    m = len(family["hypotheses"])
    for h in family["hypotheses"]:
        assert h["p"] <= h["p_adjusted"] <= min(1.0, m * h["p"]), h["id"]


def test_exploratory_linear_trend_matches_statsmodels(results):
    # reference: the least-squares slope of the five adjusted means on the dose step
    # (0, 1, 2, 3, 4), as a linear combination of the statsmodels OLS coefficients
    data = _analysed(OUTCOMES["wound_area"])
    fit = ols(MODEL, data=data).fit()
    steps = np.arange(5.0) - 2.0
    weights = steps / (steps ** 2).sum()
    row = weights @ _adjusted_mean_rows(fit, data)
    reference = fit.t_test(row)
    ((trend,),) = [f["hypotheses"] for f in results["exploratory"][0]["families"]]
    assert trend["weights"] == pytest.approx(weights, abs=1e-12)
    assert trend["estimate"] == pytest.approx(float(reference.effect[0]), rel=1e-8)
    assert trend["se"] == pytest.approx(float(reference.sd[0, 0]), rel=1e-8)
    assert trend["statistic"] == pytest.approx(float(reference.tvalue[0, 0]), rel=1e-8)
    assert trend["p"] == pytest.approx(float(reference.pvalue), rel=1e-6)
    assert (trend["ci_low"], trend["ci_high"]) == pytest.approx(tuple(reference.conf_int(0.05)[0]),
                                                                rel=1e-8)
