"""Planned contrasts end to end: every contrast kind and every multiplicity method runs
from a study file to results and HTML (one full plan also to PDF); registered fallbacks
fire deterministically and are recorded as deviations. Data are invented (seeded)."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest
import yaml

from appendix import api

LEVELS = ["d0", "d1", "d2", "d4"]
ALL_KINDS = [
    {"id": "C1", "kind": "custom", "label": "dosed versus undosed",
     "weights": {"d0": -3, "d1": 1, "d2": 1, "d4": 1}},
    {"id": "C2", "kind": "versus-control", "label": "each dose versus none"},
    {"id": "C3", "kind": "pairwise", "label": "all pairs of doses"},
    {"id": "C4", "kind": "trend", "label": "dose trend", "degree": 2, "spacing": [0, 1, 2, 4]},
    {"id": "C5", "kind": "helmert", "label": "each dose versus the higher ones"},
]


def write_study(folder: Path, *, contrasts, multiplicity, sds=(1.0, 1.0, 1.0, 1.0),
                skewed=False, extra=None, seed=7) -> Path:
    """An invented dose study: 10 units per level, a rising mean, chosen spreads."""
    rng = np.random.default_rng(seed)
    lines = ["unit,dose,y,z"]
    for i, (level, sd) in enumerate(zip(LEVELS, sds)):
        noise = rng.exponential(sd, 10) if skewed else rng.normal(0, sd, 10)
        for j, e in enumerate(noise):
            lines.append(f"u{i}{j},{level},{10 + 0.8 * i + e:.3f},{5 + rng.normal():.3f}")
    (folder / "units.csv").write_text("\n".join(lines) + "\n", encoding="utf-8")
    plan = {
        "format": 1,
        "study": {"id": "dose-demo", "title": "Invented dose study"},
        "data": {"source": "units.csv", "unit": "unit"},
        "design": {"factors": [{"name": "dose", "levels": LEVELS, "control": "d0",
                                "ordered": True}]},
        "outcomes": [{"name": "y", "label": "response", "unit": "mg", "role": "primary"},
                     {"name": "z", "label": "second response", "role": "secondary"}],
        "contrasts": contrasts,
        "multiplicity": multiplicity,
    }
    plan.update(extra or {})
    study = folder / "study.yaml"
    study.write_text(yaml.safe_dump(plan, sort_keys=False), encoding="utf-8")
    return study


#: Contrasts of one hypothesis each, as a graphical plan needs.
SINGLE = [ALL_KINDS[0],
          {"id": "C6", "kind": "custom", "label": "d4 versus d0", "weights": {"d0": -1, "d4": 1}},
          {"id": "C7", "kind": "custom", "label": "d1 versus d0", "weights": {"d0": -1, "d1": 1}}]


def only(kind):
    return [c for c in ALL_KINDS if c["kind"] == kind]


CASES = {
    "none": (ALL_KINDS, {"method": "none"}),
    "bonferroni": (ALL_KINDS, {"method": "bonferroni"}),
    "holm": (ALL_KINDS, {"method": "holm"}),
    "hochberg": (ALL_KINDS, {"method": "hochberg"}),
    "sidak": (ALL_KINDS, {"method": "sidak"}),
    "benjamini-hochberg": (ALL_KINDS, {"method": "benjamini-hochberg"}),
    "tukey": (only("pairwise"), {"method": "tukey"}),
    "dunnett": (only("versus-control"), {"method": "dunnett"}),
    "fixed-sequence": (ALL_KINDS, {"method": "fixed-sequence",
                                   "order": ["C4", "C2", "C1", "C3", "C5"]}),
    "graphical": (SINGLE, {"method": "graphical", "weights": {"C1": 0.5, "C6": 0.5},
                           "transitions": {"C1": {"C6": 0.5, "C7": 0.5}, "C6": {"C7": 1},
                                           "C7": {"C1": 0.5, "C6": 0.5}}}),
}


@pytest.mark.parametrize("method", sorted(CASES))
def test_every_multiplicity_method_runs_to_html(method: str, tmp_path: Path):
    contrasts, multiplicity = CASES[method]
    study = write_study(tmp_path, contrasts=contrasts, multiplicity=multiplicity)
    record = api.run(study, tmp_path / "run", pdf=False)
    primary = record.results.outcomes[0]
    (family,) = primary.contrasts
    assert family.multiplicity == method and family.registered
    expected = {"custom": 1, "versus-control": 3, "pairwise": 6, "trend": 2, "helmert": 3}
    assert len(family.hypotheses) == sum(expected[c["kind"]] for c in contrasts)
    for h in family.hypotheses:
        if h.decision == "not-tested":
            assert method == "fixed-sequence" and h.p_adjusted is None
            continue
        assert h.p_adjusted is not None and h.p_adjusted >= h.p - 1e-15
        assert h.decision == ("reject" if h.p_adjusted < 0.05 else "retain")
    assert len(primary.hypothesis_conclusions) == len(family.hypotheses)
    html = (tmp_path / "run" / "appendix.html").read_text(encoding="utf-8")
    assert 'id="y-contrasts"' in html
    for h in family.hypotheses:
        assert h.label.replace("\u2212", "&#8722;") in html or h.label in html


def test_all_kinds_render_to_pdf_with_hypotheses(tmp_path: Path):
    from pypdf import PdfReader

    study = write_study(tmp_path, contrasts=ALL_KINDS, multiplicity={"method": "holm"})
    api.run(study, tmp_path / "run")
    text = " ".join(p.extract_text() for p in PdfReader(tmp_path / "run" / "appendix.pdf").pages)
    results = json.loads((tmp_path / "run" / "results.json").read_text())
    trend = next(h for h in results["outcomes"][0]["contrasts"][0]["hypotheses"]
                 if h["id"] == "C4:linear")
    # The invented means rise by 0.8 per level: the linear trend is clearly positive.
    assert trend["estimate"] > 0 and trend["decision"] == "reject"
    assert "linear" in text and "Holm" in text


def test_fixed_sequence_stops_at_the_first_retained_hypothesis(tmp_path: Path):
    contrasts = [ALL_KINDS[3], {"id": "C6", "kind": "custom", "label": "d1 versus d2",
                                "weights": {"d1": -1, "d2": 1}}, ALL_KINDS[1]]
    study = write_study(tmp_path, contrasts=contrasts,
                        multiplicity={"method": "fixed-sequence", "order": ["C4", "C6", "C2"]})
    record = api.run(study, tmp_path / "run", pdf=False)
    by_id = {h.id: h for h in record.results.outcomes[0].contrasts[0].hypotheses}
    walk = ["C4:linear", "C4:quadratic", "C6", "C2:d1", "C2:d2", "C2:d4"]
    decisions = [by_id[i].decision for i in walk]
    stop = next(i for i, d in enumerate(decisions) if d != "reject")
    assert decisions[stop] == "retain"
    assert all(d == "not-tested" for d in decisions[stop + 1:])
    assert all(d == "reject" for d in decisions[:stop])


@pytest.mark.parametrize("graph", ["holm", "fixed-sequence"])
def test_graphical_plans_reduce_to_holm_and_fixed_sequence(tmp_path: Path, graph: str):
    from statsmodels.stats.multitest import multipletests

    # Bretz et al. (2009): equal weights passed equally to the others is Holm (reference:
    # statsmodels 0.15.0 multipletests); everything passed on to the next is fixed-sequence
    # testing, p_adj the running maximum (Westfall & Krishen 2001).
    ids = [c["id"] for c in SINGLE]
    if graph == "holm":
        multiplicity = {"weights": {i: 1 / 3 for i in ids},
                        "transitions": {i: {j: 0.5 for j in ids if j != i} for i in ids}}
    else:
        multiplicity = {"weights": {"C6": 1}, "transitions": {"C6": {"C1": 1}, "C1": {"C7": 1}}}
    study = write_study(tmp_path, contrasts=SINGLE, multiplicity={"method": "graphical", **multiplicity})
    record = api.run(study, tmp_path / "run", pdf=False)
    for outcome in record.results.outcomes:
        (family,) = outcome.contrasts
        p = [h.p for h in family.hypotheses]
        adjusted = [h.p_adjusted for h in family.hypotheses]
        if graph == "holm":
            reject, expected, _, _ = multipletests(p, alpha=0.05, method="holm")
            assert adjusted == pytest.approx(expected, rel=1e-9)
        else:
            walk = [1, 0, 2]  # C6, C1, C7
            expected = np.maximum.accumulate([p[i] for i in walk])
            assert [adjusted[i] for i in walk] == pytest.approx(expected, rel=1e-12)
            reject = [a < 0.05 for a in adjusted]
        assert [h.decision == "reject" for h in family.hypotheses] == list(reject)
        assert family.multiplicity == "graphical" and not any(h.ci_simultaneous for h in family.hypotheses)
    html = (tmp_path / "run" / "appendix.html").read_text(encoding="utf-8")
    assert "Graphical multiple testing" in html and "graphical sequentially rejective procedure" in html
    assert "A graphical approach to sequentially rejective multiple test procedures" in html
    assert "Adjusted <i>p</i>: the graphical procedure of Bretz et al. (2009)" in html


def test_primary_family_adjusts_across_primary_outcomes(tmp_path: Path):
    study = write_study(tmp_path, contrasts=only("versus-control"),
                        multiplicity={"method": "bonferroni", "scope": "primary-family"})
    plan_text = study.read_text().replace("role: secondary", "role: primary")
    study.write_text(plan_text)
    record = api.run(study, tmp_path / "run", pdf=False)
    families = [o.contrasts[0] for o in record.results.outcomes]
    assert [f.scope for f in families] == ["primary-family", "primary-family"]
    for family in families:
        for h in family.hypotheses:
            # Bonferroni over both outcomes' 3 + 3 hypotheses (Dunn 1961): m = 6
            assert h.p_adjusted == pytest.approx(min(1.0, 6 * h.p), rel=1e-12)


def test_variance_fallback_fires_and_both_families_are_shown(tmp_path: Path):
    fallback = {"assumptions": {"fallbacks": [{"when": "unequal-variance",
                                               "test": "brown-forsythe", "threshold": 0.05,
                                               "use": "welch"}]}}
    study = write_study(tmp_path, contrasts=only("pairwise"), multiplicity={"method": "tukey"},
                        sds=(0.2, 0.4, 2.5, 5.0), extra=fallback)
    record = api.run(study, tmp_path / "run", pdf=False)
    primary = record.results.outcomes[0]
    (rule,) = primary.contingencies
    assert rule.fired and rule.p < 0.05
    assert primary.selected_method == "welch"
    assert [(f.method, f.registered) for f in primary.contrasts] == [("welch", True),
                                                                   ("classical", False)]
    assert "differed across the 4 levels of dose, Welch's F(3, " in primary.conclusions[0].sentence
    deviation = record.results.deviations[0]
    assert (deviation.kind, deviation.subject, deviation.acknowledged) == (
        "registered-contingency", "y", True)
    html = (tmp_path / "run" / "appendix.html").read_text(encoding="utf-8")
    assert 'id="deviations"' in html and "registered result" in html


def test_normality_fallback_selects_the_rank_based_analysis(tmp_path: Path):
    fallback = {"assumptions": {"fallbacks": [{"when": "non-normal", "test": "shapiro-wilk",
                                               "threshold": 0.05, "use": "rank-based"}]}}
    study = write_study(tmp_path, contrasts=only("versus-control"),
                        multiplicity={"method": "holm"}, sds=(3, 3, 3, 3), skewed=True,
                        extra=fallback, seed=3)
    record = api.run(study, tmp_path / "run", pdf=False)
    primary = record.results.outcomes[0]
    assert primary.diagnostics.normality.p < 0.05  # exponential errors (invented)
    assert primary.selected_method == "rank-based"
    registered = next(f for f in primary.contrasts if f.registered)
    assert registered.method == "rank-based"
    assert {h.statistic_name for h in registered.hypotheses} == {"z"}
    assert primary.conclusions[0].sentence.startswith("Response differed") or \
        primary.conclusions[0].sentence.startswith("Response did not differ")
    assert "Kruskal–Wallis H(3)" in primary.conclusions[0].sentence


def test_exploratory_analyses_stay_out_of_the_conclusions(tmp_path: Path):
    extra = {"exploratory": [{"id": "E1", "kind": "pairwise", "label": "all pairs",
                              "reason": "asked for after unblinding (invented)"}]}
    study = write_study(tmp_path, contrasts=only("versus-control"),
                        multiplicity={"method": "holm"}, extra=extra)
    record = api.run(study, tmp_path / "run", pdf=False)
    (analysis,) = record.results.exploratory
    assert analysis.reason == "asked for after unblinding (invented)"
    assert [f.scope for f in analysis.families] == ["exploratory", "exploratory"]
    assert all(f.multiplicity == "none" for f in analysis.families)
    for family in analysis.families:
        for h in family.hypotheses:
            assert h.p_adjusted == h.p
    sentences = " ".join(c.sentence for o in record.results.outcomes
                         for c in o.hypothesis_conclusions)
    assert "E1" not in sentences
    html = (tmp_path / "run" / "appendix.html").read_text(encoding="utf-8")
    summary = html[html.index('id="summary"'):html.index('id="unit-flow"')]
    assert "E1" not in summary and 'id="exploratory"' in html


def _typeset(value: float) -> str:
    """Two decimals with the typographic minus, as journals print a number."""
    return f"{value:.2f}".replace("-", "\u2212")


def _games_howell_sentence(study: Path, low: str, high: str) -> str:
    """The conclusion sentence of pair `high` minus `low` of the invented dose study, its
    numbers from pingouin 0.7.0 pairwise_gameshowell (mean difference, SE, Welch df,
    adjusted p) and the simultaneous interval estimate -/+ q(.95; 4, df) / sqrt 2 * SE from
    scipy 1.17 studentized_range (Games & Howell 1976)."""
    import pandas as pd
    import pingouin
    from scipy import stats

    frame = pd.read_csv(study.parent / "units.csv")
    ref = pingouin.pairwise_gameshowell(data=frame, dv="y", between="dose")
    row = ref[(ref["A"] == low) & (ref["B"] == high)].iloc[0]
    estimate = -float(row["diff"])  # pingouin gives A - B
    half = float(stats.studentized_range.isf(0.05, 4, float(row["df"]))) / np.sqrt(2) * float(row["se"])
    p = float(row["pval"])
    p_words = "adjusted p < .001" if p < 0.001 else f"adjusted p = {p:.3f}".replace("0.", ".", 1)
    rejected = p < 0.05
    direction = "higher" if estimate >= 0 else "lower"
    rest = ("the hypothesis of no difference is rejected at \u03b1 = .05." if rejected else
            "the hypothesis of no difference is not rejected at \u03b1 = .05, which is not "
            "evidence that there is no difference.")
    return (f"Mean response under {high} was {abs(estimate):.2f} mg {direction} than under {low} "
            f"(95% simultaneous CI [{_typeset(estimate - half)}, {_typeset(estimate + half)}], "
            f"{p_words}, Games–Howell); {rest}")


def test_tukey_under_welch_is_named_games_howell_everywhere(tmp_path: Path):
    """analysis.method welch with multiplicity tukey computes Games–Howell pairs: the
    conclusions, the table note and the Methods section say so, and none says Tukey."""
    study = write_study(tmp_path, contrasts=only("pairwise"), multiplicity={"method": "tukey"},
                        sds=(0.2, 0.4, 2.5, 5.0), extra={"analysis": {"method": "welch"}})
    record = api.run(study, tmp_path / "run", pdf=False)
    primary = record.results.outcomes[0]
    assert [f.method for f in primary.contrasts] == ["welch"]
    sentences = [c.sentence for c in primary.hypothesis_conclusions]
    assert sentences[0] == _games_howell_sentence(study, "d0", "d1")
    assert sentences[5] == _games_howell_sentence(study, "d2", "d4")
    assert all(", Games–Howell); " in s and "Tukey" not in s for s in sentences)
    html = (tmp_path / "run" / "appendix.html").read_text(encoding="utf-8")
    assert "Adjusted <i>p</i>: Games&#8211;Howell single-step" in html or \
        "Adjusted <i>p</i>: Games\u2013Howell single-step" in html
    assert "Games\u2013Howell pairwise comparisons" in html  # the Methods section
    assert "Tukey" not in html


def test_tukey_after_an_unequal_variance_fallback_is_named_games_howell(tmp_path: Path):
    """A classical plan whose registered unequal-variance fallback fires: the registered
    (Welch) family's conclusions name Games–Howell, never Tukey; the classical family shown
    for comparison keeps its Tukey–Kramer note."""
    fallback = {"assumptions": {"fallbacks": [{"when": "unequal-variance",
                                               "test": "brown-forsythe", "threshold": 0.05,
                                               "use": "welch"}]}}
    study = write_study(tmp_path, contrasts=only("pairwise"), multiplicity={"method": "tukey"},
                        sds=(0.2, 0.4, 2.5, 5.0), extra=fallback)
    record = api.run(study, tmp_path / "run", pdf=False)
    primary = record.results.outcomes[0]
    assert primary.contingencies[0].fired and primary.selected_method == "welch"
    sentences = [c.sentence for c in primary.hypothesis_conclusions]
    assert len(sentences) == 6
    assert sentences[2] == _games_howell_sentence(study, "d0", "d4")
    assert all(", Games–Howell); " in s and "Tukey" not in s for s in sentences)
    html = (tmp_path / "run" / "appendix.html").read_text(encoding="utf-8")
    assert "Games\u2013Howell single-step" in html and "Tukey\u2013Kramer single-step" in html


def test_one_way_trend_estimates_are_slope_and_curvature_in_outcome_units(tmp_path: Path):
    """Balanced one-way data (10 units per dose): the linear trend is the least-squares slope
    of the dose means on the registered spacing, the quadratic its x^2 coefficient, and the
    sentence says which scale each is on."""
    import pandas as pd
    from scipy import stats

    study = write_study(tmp_path, contrasts=only("trend"), multiplicity={"method": "none"})
    results = api.compute(study).results
    primary = results.outcomes[0]
    linear, quadratic = primary.contrasts[0].hypotheses
    frame = pd.read_csv(tmp_path / "units.csv")
    means = frame.groupby("dose")["y"].mean()[LEVELS].to_numpy()
    x = np.array([0.0, 1.0, 2.0, 4.0])
    slope = stats.linregress(x, means).slope  # scipy 1.17.1 stats.linregress
    assert linear.estimate == pytest.approx(slope, rel=1e-10)
    # numpy 2.4.6 polyfit(x, means, 2)[0]: the x^2 coefficient of the quadratic fit
    assert quadratic.estimate == pytest.approx(np.polyfit(x, means, 2)[0], rel=1e-9)
    sentence = primary.hypothesis_conclusions[0].sentence
    assert sentence.startswith(
        "The linear trend of mean response, its least-squares slope per dose unit "
        f"of the registered spacing 0, 1, 2, 4, was estimated at {slope:.2f} mg per dose unit "
        "(95% CI [")
    assert "], p < .001, unadjusted); the hypothesis of no linear trend is " \
           "rejected at \u03b1 = .05." in sentence
    assert primary.hypothesis_conclusions[1].sentence.startswith(
        "The quadratic trend of mean response, its coefficient of x\u00b2 in the "
        "least-squares quadratic in x, x in dose units of the registered spacing 0, 1, 2, 4, "
        "was estimated at ")
    assert " mg per dose unit\u00b2 (95% CI [" in primary.hypothesis_conclusions[1].sentence
