"""Designs beyond one factor, end to end: study file and CSV in, results and HTML out.

The data are invented here (seeded). Each variance table produced through the whole
pipeline (plan, data stage, model, results) is compared with statsmodels' formula OLS
and `anova_lm` on the same rows, and the repeated-measures table with pingouin's
`mixed_anova`: independent libraries, not the code under test.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from appendix.api import check, compute, render

STUDY = """\
format: 1
study: {{id: invented-factorial, title: Invented factorial data for tests}}
data:
  source: units.csv
  unit: unit_id
  exclusions:
    - {{id: X1, column: flagged, equals: yes, reason: Protocol violated}}
design:
  factors:
    - {{name: coating, levels: [none, thin, thick], control: none}}
    - {{name: water, levels: [steady, pulsed]}}
    - {{name: bench, role: block, levels: [B1, B2, B3]}}
{extra}  sums_of_squares: {ss}
outcomes:
  - {{name: mass, label: Dry mass, unit: g, role: primary}}
contrasts:
  - {{id: C1, factor: coating, kind: versus-control, label: Each coating against none}}
  - {{id: C2, factor: coating, kind: pairwise, by: water, label: Coating pairs within each regime}}
multiplicity: {{method: holm}}
"""


def _factorial(tmp_path, *, ss: int, covariate: bool, interaction: bool, seed: int = 7):
    rng = np.random.default_rng(seed)
    rows = []
    unit = 0
    for c, coating in enumerate(["none", "thin", "thick"]):
        for w, water in enumerate(["steady", "pulsed"]):
            for b, bench in enumerate(["B1", "B2", "B3"]):
                for _ in range(int(rng.integers(2, 6))):  # unbalanced on purpose
                    unit += 1
                    base = float(np.round(rng.normal(10, 2), 1))
                    y = 20 + 2 * c + 1.5 * w + (1.0 * c * w if interaction else 0) + b \
                        + 0.8 * (base - 10) + rng.normal(0, 1.5)
                    rows.append((f"P{unit:03d}", coating, water, bench, "yes" if unit % 17 == 0 else "no",
                                 f"{base:.1f}", f"{y:.2f}"))
    frame = pd.DataFrame(rows, columns=["unit_id", "coating", "water", "bench", "flagged", "baseline", "mass"])
    frame.to_csv(tmp_path / "units.csv", index=False)
    extra = ""
    if interaction:
        extra += "  interactions: [[coating, water]]\n"
    if covariate:
        extra += "  covariates: [{name: baseline, label: Baseline height, unit: cm}]\n"
    (tmp_path / "study.yaml").write_text(STUDY.format(extra=extra, ss=ss), encoding="utf-8")
    return frame


def _statsmodels_table(frame: pd.DataFrame, ss: int, covariate: bool, interaction: bool):
    import statsmodels.formula.api as smf
    from statsmodels.stats.anova import anova_lm

    data = frame[frame.flagged != "yes"].copy()
    data["mass"] = data["mass"].astype(float)
    data["baseline"] = data["baseline"].astype(float)
    coding = ", Sum" if ss == 3 else ""
    terms = (["baseline"] if covariate else []) + [f"C(bench{coding})", f"C(coating{coding})",
                                                   f"C(water{coding})"]
    if interaction:
        terms.append(f"C(coating{coding}):C(water{coding})")
    fit = smf.ols("mass ~ " + " + ".join(terms), data=data).fit()
    return anova_lm(fit, typ=ss), fit


@pytest.mark.parametrize("ss, covariate, interaction", [
    (1, False, True), (2, False, False), (2, True, True), (3, False, True), (3, True, True)])
def test_blocked_factorial_tables_match_statsmodels(tmp_path, ss, covariate, interaction):
    frame = _factorial(tmp_path, ss=ss, covariate=covariate, interaction=interaction)
    results = compute(tmp_path / "study.yaml").results
    (model,) = results.outcomes
    assert model.robust is None and "blocks" in model.robust_absent
    (table,) = model.tables
    assert table.ss_type == ss
    reference, fit = _statsmodels_table(frame, ss, covariate, interaction)
    names = {("baseline",): "baseline", ("bench",): "C(bench", ("coating",): "C(coating",
             ("water",): "C(water", ("coating", "water"): "C(coating"}
    for row in table.rows:
        matches = [i for i in reference.index
                   if i.startswith(names[row.term]) and (":" in i) == (len(row.term) > 1)]
        assert len(matches) == 1, (row.term, list(reference.index))
        ref = reference.loc[matches[0]]
        assert row.df == int(ref["df"])
        assert row.sum_of_squares == pytest.approx(ref["sum_sq"], rel=1e-9)
        assert row.statistic == pytest.approx(ref["F"], rel=1e-9)
        assert row.p == pytest.approx(ref["PR(>F)"], rel=1e-7)
    assert table.residual_df == int(fit.df_resid)
    assert table.residual_ss == pytest.approx(fit.ssr, rel=1e-9)
    assert model.n_units == int(fit.nobs)
    assert len(model.slopes) == (1 if covariate else 0)
    assert [m.factors for m in model.marginal_means][:2] == [("coating",), ("water",)]
    # Every C1 and C2 hypothesis is there, C2 once per level of `by`: 2 + 3 pairs x 2 regimes.
    (family,) = model.contrasts
    assert len(family.hypotheses) == 2 + 3 * 2
    assert all(h.p_adjusted is not None and h.p_adjusted >= h.p for h in family.hypotheses)


def test_marginal_means_match_statsmodels_predictions(tmp_path):
    frame = _factorial(tmp_path, ss=3, covariate=True, interaction=True)
    (model,) = compute(tmp_path / "study.yaml").results.outcomes
    _, fit = _statsmodels_table(frame, 3, True, True)
    data = frame[frame.flagged != "yes"]
    mean_base = data["baseline"].astype(float).mean()
    grid = pd.DataFrame([(c, w, b, mean_base) for c in ["none", "thin", "thick"]
                         for w in ["steady", "pulsed"] for b in ["B1", "B2", "B3"]],
                        columns=["coating", "water", "bench", "baseline"])
    grid["pred"] = fit.predict(grid)
    expected = grid.groupby("coating", sort=False)["pred"].mean()
    coating = model.marginal_means[0]
    for mm in coating.means:
        assert mm.estimate == pytest.approx(expected[mm.levels[0]], rel=1e-9)


def test_the_appendix_names_the_design_and_the_sums_of_squares(tmp_path):
    frame = _factorial(tmp_path, ss=3, covariate=True, interaction=True)
    html = render(compute(tmp_path / "study.yaml")).html
    assert "type 3 (each term adjusted for all others, sum-to-zero coding)" in html
    assert "Estimated marginal means of dry mass by coating" in html.replace("Dry", "dry")
    # blocked factorial with a covariate: the raw means are named by the crossed treatment
    # factors (the block is not one), and the exclusion rule by its reason
    assert "Means of Dry mass by coating × water (raw, before adjustment by the model)" in html
    assert "Group means" not in html and "Cell means" not in html
    flagged = frame.drop_duplicates("unit_id").flagged.eq("yes").sum()
    assert flagged > 0
    assert (f"rule X1 (Protocol violated) sets aside every unit with a row whose flagged cell "
            f"reads “yes”, {flagged} units here.") in " ".join(html.split())
    assert "flagged = yes" not in html
    assert "Covariate adjustment" in html and "Common slope of Dry mass on Baseline height" in html
    assert "statistical output informs, but is not, a clinical or regulatory decision" in " ".join(html.split())


def _repeated(tmp_path, seed: int = 3):
    rng = np.random.default_rng(seed)
    rows = []
    for u in range(1, 25):
        arm = ["none", "thin", "thick"][u % 3]
        level = rng.normal(0, 2)
        for v, visit in enumerate(["day7", "day14", "day21"]):
            if u == 5 and visit == "day14":
                continue  # a missing visit: the unit is left out (complete units only)
            y = 30 + level + 2 * v + (u % 3) * 0.8 * v + rng.normal(0, 1)
            rows.append((f"U{u:02d}", arm, visit, f"{y:.2f}"))
    frame = pd.DataFrame(rows, columns=["unit_id", "coating", "visit", "index"])
    frame.to_csv(tmp_path / "visits.csv", index=False)
    (tmp_path / "study.yaml").write_text("""\
format: 1
study: {id: invented-repeated, title: Invented repeated measures for tests}
data: {source: visits.csv, unit: unit_id}
design:
  factors:
    - {name: coating, levels: [none, thin, thick], control: none}
    - {name: visit, role: within, levels: [day7, day14, day21]}
  interactions: [[coating, visit]]
  sums_of_squares: 2
outcomes:
  - {name: index, label: Leaf index, role: primary}
""", encoding="utf-8")
    return frame


def test_repeated_measures_match_pingouin(tmp_path):
    pingouin = pytest.importorskip("pingouin")
    frame = _repeated(tmp_path)
    computed = compute(tmp_path / "study.yaml")
    (model,) = computed.results.outcomes
    assert model.n_units == 23
    assert any(f.code == "incomplete-units" for f in computed.results.findings)
    complete = frame[frame.unit_id != "U05"].copy()
    complete["index"] = complete["index"].astype(float)
    reference = pingouin.mixed_anova(data=complete, dv="index", within="visit", subject="unit_id",
                                     between="coating", correction=True)
    between, within = model.tables
    assert (between.stratum, within.stratum) == ("between units", "within units")
    terms = {r.term: r for t in model.tables for r in t.rows}
    for term, source in ((("coating",), "coating"), (("visit",), "visit"),
                         (("coating", "visit"), "Interaction")):
        ref = reference[reference.Source == source].iloc[0]
        assert terms[term].sum_of_squares == pytest.approx(ref["SS"], rel=1e-9)
        assert terms[term].df == ref["DF1"]
        assert terms[term].statistic == pytest.approx(ref["F"], rel=1e-9)
    assert between.residual_df == reference.iloc[0]["DF2"]
    assert within.residual_df == reference[reference.Source == "visit"].iloc[0]["DF2"]
    ref_visit = reference[reference.Source == "visit"].iloc[0]
    assert model.tables[1].sphericity.greenhouse_geisser == pytest.approx(ref_visit["eps"], rel=1e-9)
    assert model.tables[1].sphericity.mauchly_w == pytest.approx(ref_visit["W_spher"], rel=1e-9)


def test_dunnett_on_marginal_means_of_a_balanced_design(tmp_path):
    """Balanced, no covariate: Dunnett's family on coating's marginal means against the
    two-sided many-to-one probability from scipy's multivariate t (Genz's algorithm),
    whose correlation matrix is built here from the marginal means' covariance."""
    from scipy import stats

    rng = np.random.default_rng(11)
    rows = [(f"P{i:03d}", c, w, f"{20 + 2 * k + rng.normal(0, 1.5):.2f}")
            for i, (k, c, w) in enumerate((k, c, w) for k, c in enumerate(["none", "thin", "thick", "dense"])
                                           for w in ["steady", "pulsed"] for _ in range(5))]
    pd.DataFrame(rows, columns=["unit_id", "coating", "water", "mass"]).to_csv(tmp_path / "units.csv",
                                                                               index=False)
    (tmp_path / "study.yaml").write_text("""\
format: 1
study: {id: invented-dunnett, title: Invented balanced data for tests}
data: {source: units.csv, unit: unit_id}
design:
  factors:
    - {name: coating, levels: [none, thin, thick, dense], control: none}
    - {name: water, levels: [steady, pulsed]}
  interactions: [[coating, water]]
  sums_of_squares: 3
outcomes:
  - {name: mass, label: Dry mass, role: primary}
contrasts:
  - {id: C1, factor: coating, kind: versus-control, label: Each coating against none}
multiplicity: {method: dunnett}
""", encoding="utf-8")
    (model,) = compute(tmp_path / "study.yaml").results.outcomes
    (family,) = model.contrasts
    assert [h.id for h in family.hypotheses] == ["C1:thin", "C1:thick", "C1:dense"]
    # Balanced: the three differences share the control, correlation 1/2 each.
    corr = np.full((3, 3), 0.5) + 0.5 * np.eye(3)
    df = model.tables[0].residual_df
    for h in family.hypotheses:
        t = abs(h.statistic)
        inside = stats.multivariate_t(shape=corr, df=df).cdf(np.full(3, t), lower_limit=np.full(3, -t),
                                                              random_state=1)
        assert h.p_adjusted == pytest.approx(1.0 - inside, abs=2e-4)
        assert h.p_adjusted >= h.p


def test_repeated_measures_alone_match_pingouin_rm_anova(tmp_path):
    """A within factor and nothing else (one group of units measured at every level)."""
    pingouin = pytest.importorskip("pingouin")
    rng = np.random.default_rng(8)
    rows = [(f"U{u:02d}", visit, f"{30 + u % 5 + 1.5 * v + rng.normal(0, 1):.2f}")
            for u in range(1, 16) for v, visit in enumerate(["day7", "day14", "day21", "day28"])]
    frame = pd.DataFrame(rows, columns=["unit_id", "visit", "index"])
    frame.to_csv(tmp_path / "visits.csv", index=False)
    (tmp_path / "study.yaml").write_text("""\
format: 1
study: {id: invented-within, title: Invented repeated measures alone}
data: {source: visits.csv, unit: unit_id}
design:
  factors:
    - {name: visit, role: within, levels: [day7, day14, day21, day28], ordered: true}
  sums_of_squares: 2
outcomes:
  - {name: index, label: Leaf index, role: primary}
contrasts:
  - {id: T1, factor: visit, kind: trend, label: Linear trend over visits}
multiplicity: {method: none}
""", encoding="utf-8")
    computed = compute(tmp_path / "study.yaml")
    (model,) = computed.results.outcomes
    frame["index"] = frame["index"].astype(float)
    reference = pingouin.rm_anova(data=frame, dv="index", within="visit", subject="unit_id",
                                  correction=True).iloc[0]
    visit = next(r for r in model.tables[1].rows if r.term == ("visit",))
    assert visit.statistic == pytest.approx(reference["F"], rel=1e-9)
    assert (visit.df, model.tables[1].residual_df) == (reference["ddof1"], reference["ddof2"])
    assert model.tables[1].sphericity.greenhouse_geisser == pytest.approx(reference["eps"], rel=1e-9)
    # The linear trend is a one-sample t test of each unit's trend score (scipy as reference).
    from scipy import stats

    (family,) = model.contrasts
    (trend,) = family.hypotheses
    wide = frame.pivot(index="unit_id", columns="visit", values="index")[["day7", "day14", "day21", "day28"]]
    scores = wide.to_numpy() @ np.array(trend.weights)
    assert trend.p == pytest.approx(stats.ttest_1samp(scores, 0.0).pvalue, rel=1e-9)
    # On the slope scale: the least-squares slope of the visit means per visit step
    # (scipy 1.17.1 stats.linregress on the means of the complete units).
    slope = stats.linregress(np.arange(4.0), wide.mean(axis=0).to_numpy()).slope
    assert trend.estimate == pytest.approx(slope, rel=1e-10)
    assert model.hypothesis_conclusions[0].sentence.startswith(
        "The linear trend of mean Leaf index, its least-squares slope per step "
        f"between adjacent levels of visit, was estimated at {slope:.2f} per step (95% CI ")
    assert "all units" in render(computed).html


def test_trend_on_marginal_means_is_the_slope_of_a_balanced_design(tmp_path):
    """Two crossed factors, balanced, no covariate: the marginal means of coating are its
    raw level means, so the linear and quadratic trends over the registered spacing are the
    least-squares slope and x^2 coefficient of those means."""
    from scipy import stats

    rng = np.random.default_rng(12)
    coatings, spacing = ["none", "thin", "thick"], [0.0, 1.0, 3.0]
    rows = [(f"P{c}{w}{i}", coating, water, f"{15 + 2.0 * x - 0.4 * x * x + w + rng.normal(0, 1):.2f}")
            for c, (coating, x) in enumerate(zip(coatings, spacing))
            for w, water in enumerate(["steady", "pulsed"]) for i in range(4)]
    frame = pd.DataFrame(rows, columns=["unit_id", "coating", "water", "mass"])
    frame.to_csv(tmp_path / "units.csv", index=False)
    (tmp_path / "study.yaml").write_text("""\
format: 1
study: {id: invented-trend, title: Invented balanced factorial for tests}
data: {source: units.csv, unit: unit_id}
design:
  factors:
    - {name: coating, label: coat thickness, levels: [none, thin, thick], ordered: true}
    - {name: water, levels: [steady, pulsed]}
  sums_of_squares: 2
outcomes:
  - {name: mass, label: Dry mass, unit: g, role: primary}
contrasts:
  - {id: T1, factor: coating, kind: trend, degree: 2, spacing: [0, 1, 3], label: Thickness trend}
multiplicity: {method: none}
""", encoding="utf-8")
    (model,) = compute(tmp_path / "study.yaml").results.outcomes
    linear, quadratic = model.contrasts[0].hypotheses
    means = frame.assign(mass=frame["mass"].astype(float)).groupby("coating")["mass"].mean()[coatings]
    # References: scipy 1.17.1 stats.linregress(...).slope; numpy 2.4.6 polyfit(..., 2)[0].
    assert linear.estimate == pytest.approx(stats.linregress(spacing, means.to_numpy()).slope, rel=1e-9)
    assert quadratic.estimate == pytest.approx(np.polyfit(spacing, means.to_numpy(), 2)[0], rel=1e-9)
    assert linear.scale.per == "per coat thickness unit"
    assert model.hypothesis_conclusions[1].sentence.startswith(
        "The quadratic trend of mean Dry mass, its coefficient of x\u00b2 in the "
        "least-squares quadratic in x, x in coat thickness units of the registered spacing "
        "0, 1, 3, was estimated at ")
    assert " g per coat thickness unit\u00b2 (95% CI " in model.hypothesis_conclusions[1].sentence


def _two_primary_outcomes(tmp_path) -> str:
    """The blocked factorial (type 2, no covariate or interaction) with a second primary
    outcome, `height`, invented from `mass`; returns the study text to edit."""
    frame = _factorial(tmp_path, ss=2, covariate=False, interaction=False)
    frame["height"] = (frame["mass"].astype(float) * 0.3 + np.arange(len(frame)) % 5).round(2)
    frame.to_csv(tmp_path / "units.csv", index=False)
    return (tmp_path / "study.yaml").read_text().replace(
        "  - {name: mass, label: Dry mass, unit: g, role: primary}\n",
        "  - {name: mass, label: Dry mass, unit: g, role: primary}\n"
        "  - {name: height, label: Height, role: primary}\n")


def test_primary_family_and_exploratory_entries_for_designs(tmp_path):
    """Two primary outcomes adjusted as one Holm family (checked against statsmodels'
    multipletests on the raw p of every hypothesis), and an exploratory entry reported
    apart, unadjusted."""
    from statsmodels.stats.multitest import multipletests

    study = _two_primary_outcomes(tmp_path)
    study = study.replace("multiplicity: {method: holm}",
                          "multiplicity: {method: holm, scope: primary-family}\n"
                          "exploratory:\n  - {id: E1, factor: water, kind: pairwise, label: Regimes,"
                          " reason: Asked by the steering group}")
    (tmp_path / "study.yaml").write_text(study)
    results = compute(tmp_path / "study.yaml").results
    hypotheses = [h for m in results.outcomes for f in m.contrasts for h in f.hypotheses]
    assert len(hypotheses) == 2 * 8
    assert {f.scope for m in results.outcomes for f in m.contrasts} == {"primary-family"}
    expected = multipletests([h.p for h in hypotheses], method="holm")[1]
    np.testing.assert_allclose([h.p_adjusted for h in hypotheses], expected, rtol=1e-12)
    assert all(len(m.hypothesis_conclusions) == 8 for m in results.outcomes)
    (entry,) = results.exploratory
    assert entry.id == "E1" and [f.outcome for f in entry.families] == ["mass", "height"]
    assert all(h.p_adjusted == h.p for f in entry.families for h in f.hypotheses)
    html = render(compute(tmp_path / "study.yaml")).html
    assert "E1: Regimes" in html and "Asked by the steering group" in html


@pytest.mark.parametrize("kind, method", [
    ("pairwise", "tukey"), ("helmert", "fixed-sequence"), ("trend", "bonferroni"),
    ("custom", "none"), ("pairwise", "benjamini-hochberg"), ("versus-control", "sidak"),
    ("custom", "graphical")])
def test_every_contrast_kind_and_multiplicity_method_on_marginal_means(tmp_path, kind, method):
    """Each kind of contrast on coating's marginal means under each multiplicity method: the
    raw p is the t test of statsmodels' own linear combination of its fitted coefficients
    (`t_test` with an L row built from the marginal means), and the adjustment is the
    registered one (statsmodels' multipletests; for Tukey the joint t of the pairs)."""
    from statsmodels.stats.multitest import multipletests

    from tests.reference.joint_reference import rank2_tail

    frame = _factorial(tmp_path, ss=3, covariate=False, interaction=True)
    extra = {"custom": ", weights: {thin: 1, thick: 1, none: -2}", "trend": "", "helmert": "",
             "pairwise": "", "versus-control": ""}[kind]
    order = {"fixed-sequence": ", order: [C1]", "graphical": ", weights: {C1: 0.5}"}.get(method, "")
    study = (tmp_path / "study.yaml").read_text()
    study = study.replace("    - {name: coating, levels: [none, thin, thick], control: none}",
                          "    - {name: coating, levels: [none, thin, thick], control: none, ordered: true}")
    start = study.index("contrasts:")
    study = study[:start] + (f"contrasts:\n  - {{id: C1, factor: coating, kind: {kind}, label: Coatings{extra}}}\n"
                             f"multiplicity: {{method: {method}{order}}}\n")
    (tmp_path / "study.yaml").write_text(study)
    (model,) = compute(tmp_path / "study.yaml").results.outcomes
    (family,) = model.contrasts
    _, fit = _statsmodels_table(frame, 3, False, True)
    names = list(fit.params.index)
    grid = pd.DataFrame([(c, w, b) for c in ["none", "thin", "thick"] for w in ["steady", "pulsed"]
                         for b in ["B1", "B2", "B3"]], columns=["coating", "water", "bench"])
    import patsy

    # The model's design rows of every grid cell, coded as statsmodels coded its fit.
    data = frame[frame.flagged != "yes"][["coating", "water", "bench"]]
    rhs = fit.model.formula.split("~", 1)[1]
    both = patsy.dmatrix(rhs, pd.concat([data, grid], ignore_index=True), return_type="dataframe")
    assert list(both.columns) == names
    rows = both.iloc[len(data):].reset_index(drop=True)
    means = rows.groupby(grid["coating"].to_numpy(), sort=False).mean().loc[["none", "thin", "thick"]]
    raw, rows = [], []
    for h in family.hypotheses:
        l = np.asarray(h.weights) @ means.to_numpy()
        test = fit.t_test(l.reshape(1, -1))
        assert h.estimate == pytest.approx(float(np.squeeze(test.effect)), rel=1e-9, abs=1e-12)
        assert h.p == pytest.approx(float(np.squeeze(test.pvalue)), rel=1e-7)
        raw.append(h.p)
        rows.append(l)
    adjusted = [h.p_adjusted for h in family.hypotheses]
    if method == "tukey":
        # The single-step law of these unbalanced marginal means: the joint t of the three
        # pairs with statsmodels' covariance of the estimates (cov_params), integrated by
        # the independent quadrature of tests/reference/joint_reference.py.
        covariance = np.array(rows) @ fit.cov_params().to_numpy() @ np.array(rows).T
        expected = [rank2_tail(covariance, h.df, abs(h.statistic)) for h in family.hypotheses]
        assert family.joint == "multivariate-t" and 0 < family.joint_error < 1e-4
        np.testing.assert_allclose(adjusted, expected, rtol=0, atol=family.joint_error + 1e-8)
    elif method == "fixed-sequence":  # p_adj(i) = max(p_1..p_i) until the first retained
        running, stopped = 0.0, False
        for h in family.hypotheses:
            if stopped:
                assert (h.p_adjusted, h.decision) == (None, "not-tested")
                continue
            running = max(running, h.p)
            assert h.p_adjusted == pytest.approx(running, rel=1e-12)
            stopped = h.decision != "reject"
    elif method == "none":
        assert adjusted == raw
    elif method == "graphical":  # one node at weight 1/2: the Bonferroni p / w (Bretz et al. 2009)
        assert adjusted == pytest.approx([min(1.0, 2 * p) for p in raw], rel=1e-15)
    else:
        key = {"bonferroni": "bonferroni", "benjamini-hochberg": "fdr_bh", "sidak": "sidak"}[method]
        np.testing.assert_allclose(adjusted, multipletests(raw, method=key)[1], rtol=1e-10)


def test_an_empty_cell_is_stated_and_costs_the_interaction_a_degree_of_freedom(tmp_path):
    frame = _factorial(tmp_path, ss=2, covariate=False, interaction=True)
    frame = frame[~((frame.coating == "thick") & (frame.water == "pulsed"))]
    frame.to_csv(tmp_path / "units.csv", index=False)
    computed = compute(tmp_path / "study.yaml")
    (model,) = computed.results.outcomes
    (table,) = model.tables
    interaction = next(r for r in table.rows if r.term == ("coating", "water"))
    assert (interaction.df, interaction.full_df) == (1, 2)
    assert any(c.startswith("thick × pulsed") for c in table.empty_cells)
    html = render(computed).html
    assert "Empty cells:" in html and table.estimability in html
    assert any(f.code == "level-without-units" for f in computed.results.findings)


def test_simple_effects_across_strata(tmp_path):
    """A between-unit contrast within each occasion is the contrast of the model fitted to
    that occasion's values (statsmodels OLS on those rows); a within-unit contrast within
    each treatment level is the t test of those units' contrast scores with their variance
    pooled within the remaining treatment cells (statsmodels OLS of the scores on them)."""
    import statsmodels.formula.api as smf
    from scipy import stats

    rng = np.random.default_rng(21)
    rows = []
    for u in range(1, 41):
        coating, water = ["none", "thin"][u % 2], ["steady", "pulsed"][(u // 2) % 2]
        level = rng.normal(0, 1.5)
        for v, visit in enumerate(["day7", "day14", "day21"]):
            y = 20 + level + 1.2 * v + (coating == "thin") * 0.9 * v + (water == "pulsed") + rng.normal(0, 1)
            rows.append((f"U{u:02d}", coating, water, visit, f"{y:.2f}"))
    frame = pd.DataFrame(rows, columns=["unit_id", "coating", "water", "visit", "y"])
    frame.to_csv(tmp_path / "rows.csv", index=False)
    (tmp_path / "study.yaml").write_text("""\
format: 1
study: {id: invented-simple, title: Invented simple effects}
data: {source: rows.csv, unit: unit_id}
design:
  factors:
    - {name: coating, levels: [none, thin], control: none}
    - {name: water, levels: [steady, pulsed]}
    - {name: visit, role: within, levels: [day7, day14, day21], ordered: true}
  interactions: [[coating, water], [coating, visit]]
  sums_of_squares: 3
outcomes:
  - {name: y, label: Response, role: primary}
contrasts:
  - {id: S1, factor: coating, kind: versus-control, by: visit, label: Coating at each visit}
  - {id: S2, factor: visit, kind: trend, by: coating, label: Trend within each coating}
multiplicity: {method: none}
""", encoding="utf-8")
    (model,) = compute(tmp_path / "study.yaml").results.outcomes
    hypotheses = {h.id: h for h in model.contrasts[0].hypotheses}
    frame["y"] = frame["y"].astype(float)
    for visit in ["day7", "day14", "day21"]:
        at = frame[frame.visit == visit]
        fit = smf.ols("y ~ C(coating, Sum) * C(water, Sum)", at).fit()
        # thin - none on equally weighted marginal means = -2 x the sum-coded coating effect
        test = fit.t_test("-2 * C(coating, Sum)[S.none] = 0")
        h = hypotheses[f"S1:thin@{visit}"]
        assert h.estimate == pytest.approx(float(np.squeeze(test.effect)), rel=1e-9)
        assert h.p == pytest.approx(float(np.squeeze(test.pvalue)), rel=1e-7)
    wide = frame.pivot(index="unit_id", columns="visit", values="y")[["day7", "day14", "day21"]]
    meta = frame.drop_duplicates("unit_id").set_index("unit_id").loc[wide.index]
    for coating in ["none", "thin"]:
        h = hypotheses[f"S2:linear@{coating}"]
        chosen = (meta.coating == coating).to_numpy()
        scores = pd.DataFrame({"s": wide.to_numpy()[chosen] @ np.array(h.weights),
                               "water": meta.water.to_numpy()[chosen]})
        pooled = smf.ols("s ~ C(water)", scores).fit()
        se = np.sqrt(pooled.mse_resid / len(scores))
        assert h.estimate == pytest.approx(scores.s.mean(), rel=1e-9)
        assert h.se == pytest.approx(se, rel=1e-9)
        assert h.p == pytest.approx(2 * stats.t.sf(abs(scores.s.mean() / se), pooled.df_resid), rel=1e-7)


def test_unequal_covariate_slopes_put_a_caveat_on_every_adjusted_conclusion(tmp_path):
    """When the registered homogeneity-of-slopes test rejects, each conclusion on adjusted
    means (model terms and contrasts) carries the caveat with that test's numbers; the F
    is statsmodels' comparison of the models with and without covariate x cells (anova_lm)."""
    import statsmodels.formula.api as smf
    from statsmodels.stats.anova import anova_lm

    rng = np.random.default_rng(4)
    rows = []
    for c, coating in enumerate(["none", "thin", "thick"]):
        for u in range(14):
            base = float(np.round(rng.normal(10, 2), 1))
            y = 20 + 2 * c + (0.2 + 1.2 * c) * (base - 10) + rng.normal(0, 1.0)
            rows.append((f"{coating}{u}", coating, f"{base:.1f}", f"{y:.2f}"))
    frame = pd.DataFrame(rows, columns=["unit_id", "coating", "baseline", "mass"])
    frame.to_csv(tmp_path / "units.csv", index=False)
    (tmp_path / "study.yaml").write_text("""\
format: 1
study: {id: invented-slopes, title: Invented data with unequal slopes for tests}
data: {source: units.csv, unit: unit_id}
design:
  factors:
    - {name: coating, levels: [none, thin, thick], control: none}
  covariates: [{name: baseline, label: baseline height, unit: cm}]
  sums_of_squares: 2
outcomes:
  - {name: mass, label: dry mass, unit: g, role: primary}
contrasts:
  - {id: C1, factor: coating, kind: versus-control, label: Each coating against none}
multiplicity: {method: holm}
""")
    (model,) = compute(tmp_path / "study.yaml").results.outcomes
    (check,) = model.slopes
    data = frame.astype({"baseline": float, "mass": float})
    reduced = smf.ols("mass ~ baseline + C(coating)", data=data).fit()
    full = smf.ols("mass ~ baseline * C(coating)", data=data).fit()
    reference = anova_lm(reduced, full)
    assert check.statistic == pytest.approx(reference["F"].iloc[1], rel=1e-9)
    assert check.p < 0.05
    text = f"F(2, {int(full.df_resid)}) = {check.statistic:.2f}"
    sentences = [c.sentence for c in (*model.conclusions, *model.hypothesis_conclusions)]
    assert len(sentences) == 3
    for sentence in sentences:
        assert "Caution: the slopes of the outcome on the covariate differ" in sentence
        assert f"baseline height: {text}" in sentence


def _walk(hypotheses, alpha=0.05):
    """(p_adjusted, decision) of a fixed-sequence walk, by the published rule: p_adj(i) =
    max(p_1..p_i), testing stops after the first retained (Maurer, Hothorn & Lehmacher 1995;
    Westfall & Krishen 2001, J Stat Plan Inference 99:25-40)."""
    running, stopped, out = 0.0, False, []
    for h in hypotheses:
        if stopped:
            out.append((None, "not-tested"))
            continue
        running = max(running, h.p)
        stopped = running >= alpha
        out.append((running, "retain" if stopped else "reject"))
    return out


@pytest.mark.parametrize("scope", ["per-outcome", "primary-family"])
def test_fixed_sequence_skips_contrasts_limited_to_other_outcomes(tmp_path, scope):
    """Regression: `order: [S1, C1, C2]` with S1 limited to `height` and C2 to `mass` crashed
    the run of a design beyond one factor ("fixed-sequence order names 'S1', which is not in
    the family"). Each outcome's family is walked in the registered order restricted to the
    contrasts that apply to it (mass: C1 then C2; height: S1 then C1); under primary-family
    the walk is mass's sequence then height's, in plan order."""
    study = _two_primary_outcomes(tmp_path)
    study = study.replace("label: Coating pairs within each regime}",
                          "label: Coating pairs within each regime, outcomes: [mass]}\n"
                          "  - {id: S1, factor: water, kind: pairwise, label: Regimes, outcomes: [height]}")
    study = study.replace("multiplicity: {method: holm}",
                          f"multiplicity: {{method: fixed-sequence, scope: {scope}, order: [S1, C1, C2]}}")
    (tmp_path / "study.yaml").write_text(study)
    check(tmp_path / "study.yaml")  # the plan passes check
    results = compute(tmp_path / "study.yaml").results
    (mass,), (height,) = (m.contrasts for m in results.outcomes)
    assert [h.contrast for h in mass.hypotheses] == ["C1"] * 2 + ["C2"] * 6
    assert [h.contrast for h in height.hypotheses] == ["C1", "C1", "S1"]  # listed in plan order
    walks = [list(mass.hypotheses), [height.hypotheses[i] for i in (2, 0, 1)]]
    if scope == "primary-family":
        walks = [walks[0] + walks[1]]
    got = [(h.p_adjusted, h.decision) for walk in walks for h in walk]
    expected = [item for walk in walks for item in _walk(walk)]
    assert [d for _, d in got] == [d for _, d in expected]
    np.testing.assert_allclose([p if p is not None else -1 for p, _ in got],
                               [p if p is not None else -1 for p, _ in expected], rtol=1e-12)
    html = render(compute(tmp_path / "study.yaml")).html
    assert "S1:pulsed-steady" in html
