"""Two within-unit factors, through the whole pipeline (study file and CSV in, results out),
against outside references.

References (installed versions): statsmodels 0.15.0 `AnovaRM`; pingouin 0.7.0 `rm_anova`
(two within factors), `epsilon`, `sphericity` and `mixed_anova`; scipy 1.17.1
`stats.ttest_rel`. Data: pingouin 0.7.0's shipped dataset ``rm_anova2`` (employees'
performance at two times on three metrics; pingouin names its source
www.real-statistics.com), and, for a between x within x within design, invented values
drawn here from numpy's seeded generator.

Pingouin's Mauchly p uses the number of conditions where Anderson's second-order term has
the dimension (its own comment says it follows R); the two agree when that term vanishes,
with at most two contrasts (d <= 2), so Mauchly's p is compared only there, and W, the
chi-square and the epsilons everywhere.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pingouin as pg
import pytest
from scipy import stats
from statsmodels.stats.anova import AnovaRM

from appendix.api import compute

TOL = 1e-9

WITHIN_ONLY = """\
format: 1
study: {id: two-within-reference, title: Two within factors against outside references}
data: {source: units.csv, unit: Subject}
design:
  factors:
    - {name: Time, role: within, levels: [Pre, Post]}
    - {name: Metric, role: within, levels: [Product, Client, Action]}
  interactions: [[Time, Metric]]
  sums_of_squares: 3
outcomes:
  - {name: Performance, label: performance, role: primary}
contrasts:
  - {id: C1, factor: Metric, kind: pairwise, by: Time, label: metric pairs at each time}
  - {id: C2, factor: Metric, kind: pairwise, label: metric pairs over both times}
multiplicity: {method: none}
"""


@pytest.fixture(scope="module")
def dataset() -> pd.DataFrame:
    return pg.read_dataset("rm_anova2")


@pytest.fixture(scope="module")
def within_only(tmp_path_factory, dataset):
    folder = tmp_path_factory.mktemp("two-within")
    dataset.to_csv(folder / "units.csv", index=False)
    (folder / "study.yaml").write_text(WITHIN_ONLY, encoding="utf-8")
    (model,) = compute(folder / "study.yaml").results.outcomes
    return model


def _rows(model) -> dict[tuple[str, ...], tuple]:
    """Each within term's (row, its stratum's table)."""
    return {row.term: (row, table) for table in model.tables[1:] for row in table.rows}


def test_strata_tables_hold_one_within_term_each(within_only):
    between, *strata = within_only.tables
    assert between.stratum == "between units" and between.within == ()
    assert [t.stratum for t in strata] == ["units \u00d7 Time", "units \u00d7 Metric",
                                          "units \u00d7 Time \u00d7 Metric"]
    assert [t.within for t in strata] == [("Time",), ("Metric",), ("Time", "Metric")]
    assert [[r.term for r in t.rows] for t in strata] == [[("Time",)], [("Metric",)],
                                                          [("Time", "Metric")]]
    assert within_only.n_units == 10 and within_only.n_observations == 60


def test_f_df_and_p_equal_statsmodels_anova_rm(within_only, dataset):
    # statsmodels 0.15.0 AnovaRM(rm_anova2, "Performance", "Subject", within=[Time, Metric])
    table = AnovaRM(dataset, "Performance", "Subject", within=["Time", "Metric"]).fit().anova_table
    rows = _rows(within_only)
    for term, name in [(("Time",), "Time"), (("Metric",), "Metric"), (("Time", "Metric"), "Time:Metric")]:
        row, stratum = rows[term]
        assert row.statistic == pytest.approx(table.loc[name, "F Value"], rel=TOL)
        assert row.df == table.loc[name, "Num DF"]
        assert stratum.residual_df == table.loc[name, "Den DF"]
        assert row.p == pytest.approx(table.loc[name, "Pr > F"], rel=1e-7)


def test_sums_of_squares_epsilon_and_sphericity_equal_pingouin_rm_anova(within_only, dataset):
    # pingouin 0.7.0 rm_anova(rm_anova2, within=[Time, Metric]): SS, F, p_unc, p_GG_corr,
    # eps (Greenhouse–Geisser), W_spher and p_spher per effect
    reference = pg.rm_anova(data=dataset, dv="Performance", within=["Time", "Metric"],
                            subject="Subject").set_index("Source")
    rows = _rows(within_only)
    for term, name in [(("Time",), "Time"), (("Metric",), "Metric"),
                       (("Time", "Metric"), "Time * Metric")]:
        row, stratum = rows[term]
        ref = reference.loc[name]
        spher = stratum.sphericity
        assert row.sum_of_squares == pytest.approx(ref["SS"], rel=TOL)
        assert row.statistic == pytest.approx(ref["F"], rel=TOL)
        assert row.p == pytest.approx(ref["p_unc"], rel=1e-7)
        assert spher.greenhouse_geisser == pytest.approx(ref["eps"], rel=TOL)
        if ref["ddof1"] == 1:  # a single contrast: epsilon 1, no corrected test, no W
            assert row.gg_p is None and spher.mauchly_w is None and spher.lower_bound == 1.0
            assert ref["p_GG_corr"] == pytest.approx(row.p, rel=1e-7)
        else:
            assert row.gg_p == pytest.approx(ref["p_GG_corr"], rel=1e-7)
            assert spher.mauchly_w == pytest.approx(ref["W_spher"], rel=TOL)
            assert spher.p == pytest.approx(ref["p_spher"], rel=1e-7)  # d = 2 here
    # Worked values as pingouin 0.7.0 prints them for this dataset
    assert rows[("Time", "Metric")][0].statistic == pytest.approx(12.63227, abs=5e-6)
    assert rows[("Time", "Metric")][1].sphericity.greenhouse_geisser == pytest.approx(0.727166, abs=5e-7)


def test_huynh_feldt_and_chi_square_equal_pingouin_epsilon_and_sphericity(within_only, dataset):
    # pingouin 0.7.0 epsilon(correction="hf") and sphericity(): of Metric (subject means
    # over Time) and of the Time x Metric interaction (within=[Time, Metric])
    rows = _rows(within_only)
    for term, within in [(("Metric",), "Metric"), (("Time", "Metric"), ["Time", "Metric"])]:
        spher = rows[term][1].sphericity
        hf = pg.epsilon(dataset, dv="Performance", within=within, subject="Subject", correction="hf")
        assert spher.huynh_feldt == pytest.approx(hf, rel=TOL)
    ref = pg.sphericity(dataset, dv="Performance", within=["Time", "Metric"], subject="Subject")
    spher = rows[("Time", "Metric")][1].sphericity
    assert (spher.chi_square, spher.df) == (pytest.approx(ref.chi2, rel=TOL), ref.dof)


def test_within_contrasts_equal_paired_t_tests(within_only, dataset):
    # scipy 1.17.1 ttest_rel: a pair of metrics at one time, and averaged over both times
    wide = dataset.pivot_table(index="Subject", columns=["Time", "Metric"], values="Performance")
    (family,) = within_only.contrasts
    found = {h.id: h for h in family.hypotheses}
    at_pre = stats.ttest_rel(wide[("Pre", "Client")], wide[("Pre", "Product")])
    h = found["C1:Client-Product@Pre"]
    assert h.statistic == pytest.approx(at_pre.statistic, rel=TOL)
    assert h.p == pytest.approx(at_pre.pvalue, rel=1e-7) and h.df == 9
    means = dataset.pivot_table(index="Subject", columns="Metric", values="Performance")
    over = stats.ttest_rel(means["Action"], means["Client"])
    h = found["C2:Action-Client"]
    assert h.statistic == pytest.approx(over.statistic, rel=TOL)
    assert h.estimate == pytest.approx(float((means["Action"] - means["Client"]).mean()), rel=TOL)


MIXED = """\
format: 1
study: {id: mixed-two-within, title: Invented between x within x within design}
data: {source: units.csv, unit: unit_id}
design:
  factors:
    - {name: arm, levels: [placebo, low, high], control: placebo}
    - {name: phase, role: within, levels: [rest, load]}
    - {name: hour, role: within, levels: [h1, h2, h3, h4]}
  interactions: [[arm, phase], [arm, hour], [phase, hour], [arm, phase, hour]]
  sums_of_squares: 2
outcomes:
  - {name: rate, label: heart rate, unit: bpm, role: primary}
"""


@pytest.fixture(scope="module")
def mixed(tmp_path_factory):
    rng = np.random.default_rng(2026)
    rows = []
    for a, arm in enumerate(["placebo", "low", "high"]):
        for i in range(7):
            unit_effect = rng.normal(0, 4)
            slopes = rng.normal(0, 1.5, 2)  # units differ in their hour profile: not spherical
            for p, phase in enumerate(["rest", "load"]):
                for h, hour in enumerate(["h1", "h2", "h3", "h4"]):
                    value = (70 + unit_effect + 8 * p + 1.5 * h + a * p * 2 + slopes[p] * h
                             + 0.4 * a * h + rng.normal(0, 2))
                    rows.append((f"U{a}{i}", arm, phase, hour, round(value, 2)))
    frame = pd.DataFrame(rows, columns=["unit_id", "arm", "phase", "hour", "rate"])
    folder = tmp_path_factory.mktemp("mixed-two-within")
    frame.to_csv(folder / "units.csv", index=False)
    (folder / "study.yaml").write_text(MIXED, encoding="utf-8")
    (model,) = compute(folder / "study.yaml").results.outcomes
    return frame, model


def _mixed_reference(frame: pd.DataFrame, dv: str, within: str) -> pd.DataFrame:
    return pg.mixed_anova(data=frame, dv=dv, within=within, subject="unit_id", between="arm",
                          correction=True).set_index("Source")


def _check_stratum(rows, own, mixed_term, ref):
    """Our stratum of `own` (and its arm interaction `mixed_term`) against pingouin's
    mixed_anova rows of the within factor and of the Interaction."""
    row, stratum = rows[own]
    interaction, _ = rows[mixed_term]
    within = ref.iloc[1]  # rows: arm, the within factor, Interaction
    assert row.statistic == pytest.approx(within["F"], rel=TOL)
    assert row.p == pytest.approx(within["p_unc"], rel=1e-7)
    assert (row.df, stratum.residual_df) == (within["DF1"], within["DF2"])
    assert interaction.statistic == pytest.approx(ref.loc["Interaction", "F"], rel=TOL)
    assert interaction.p == pytest.approx(ref.loc["Interaction", "p_unc"], rel=1e-7)
    assert interaction.df == ref.loc["Interaction", "DF1"]
    spher = stratum.sphericity
    if within["DF1"] > 1:
        assert spher.greenhouse_geisser == pytest.approx(within["eps"], rel=TOL)
        assert row.gg_p == pytest.approx(within["p_GG_corr"], rel=1e-7)
        assert spher.mauchly_w == pytest.approx(within["W_spher"], rel=TOL)
    else:
        assert spher.lower_bound == 1.0 and row.gg_p is None
    return spher


def test_between_within_within_strata_equal_pingouin_mixed_anova(mixed):
    # pingouin 0.7.0 mixed_anova (one within, one between factor) on each stratum's own
    # data: a within factor's stratum from each unit's means over the other within
    # factor; phase x hour (phase of two levels) from each unit's load - rest differences,
    # whose hour effect is phase x hour and whose interaction with arm is arm x phase x hour
    frame, model = mixed
    rows = _rows(model)
    by_phase = frame.groupby(["unit_id", "arm", "phase"], as_index=False)["rate"].mean()
    ref = _mixed_reference(by_phase, "rate", "phase")
    _check_stratum(rows, ("phase",), ("arm", "phase"), ref)
    between = model.tables[0].rows[0]
    assert between.statistic == pytest.approx(ref.loc["arm", "F"], rel=TOL)
    assert between.p == pytest.approx(ref.loc["arm", "p_unc"], rel=1e-7)
    by_hour = frame.groupby(["unit_id", "arm", "hour"], as_index=False)["rate"].mean()
    spher = _check_stratum(rows, ("hour",), ("arm", "hour"), _mixed_reference(by_hour, "rate", "hour"))
    assert spher.df == 5  # d = 3: Mauchly's p differs by design (see the module docstring)
    wide = frame.pivot_table(index=["unit_id", "arm", "hour"], columns="phase", values="rate")
    difference = (wide["load"] - wide["rest"]).rename("difference").reset_index()
    _check_stratum(rows, ("phase", "hour"), ("arm", "phase", "hour"),
                   _mixed_reference(difference, "difference", "hour"))


def test_the_between_stratum_and_the_conclusions_cover_every_term(mixed):
    _, model = mixed
    assert [r.term for r in model.tables[0].rows] == [("arm",)]
    assert [c.parts[0].split(" (")[0] for c in model.conclusions] == [
        "Arm", "Phase", "Arm \u00d7 phase", "Hour", "Arm \u00d7 hour", "Phase \u00d7 hour",
        "Arm \u00d7 phase \u00d7 hour"]
    groups = [m.factors for m in model.marginal_means]
    assert groups == [("arm",), ("phase",), ("arm", "phase"), ("hour",), ("arm", "hour"),
                      ("phase", "hour"), ("arm", "phase", "hour")]
