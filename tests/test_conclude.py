"""Conclusion sentences: the decision at alpha, worded as reviewers require."""

from __future__ import annotations

from pathlib import Path

import pytest

from appendix.conclude import assumption_statuses, conclusion
from appendix.plan.load import load_plan
from appendix.results import ModelRow, StatWarning, VarianceTest

DEMO = Path(__file__).resolve().parent.parent / "studies" / "seed-coating" / "study.yaml"


@pytest.fixture(scope="module")
def plan():
    return load_plan(DEMO).plan


def row(f, p, effect=None, warnings=()):
    """The factor's row of a one-term variance table on 3 and 39 df; `effect` is eta squared
    and its 90% interval, or None."""
    estimate, low, high = effect if effect is not None else (None, None, None)
    return ModelRow(term=("coating",), label="seed coating", kind="factor", df=3,
                    sum_of_squares=30.0, mean_square=10.0, statistic=f, p=p,
                    partial_eta_squared=estimate,
                    partial_eta_ci_low=low, partial_eta_ci_high=high, partial_omega_squared=None,
                    partial_omega_ci_low=None, partial_omega_ci_high=None, confidence_level=0.9,
                    warnings=warnings)


def test_rejected_hypothesis_says_so_and_warns_that_significance_is_not_importance(plan):
    outcome = plan.outcomes[0]
    result = conclusion(plan, outcome, row(7.8856, 0.000313, (0.3776, 0.1419, 0.4988)), 39)
    assert result.decision == "reject"
    assert result.sentence == (
        "Mean shoot dry mass at day 21 differed across the 4 levels of seed coating, "
        "F(3, 39) = 7.89, p < .001, \u03b7\u00b2 = .38 (90% CI [.14, .50]); the hypothesis of "
        "equal means is rejected at \u03b1 = .05. A significant F shows that the means are "
        "not all equal, not which levels differ nor whether the differences matter in "
        "practice.")


def test_retained_hypothesis_is_not_called_evidence_of_equality(plan):
    outcome = plan.outcomes[1]
    result = conclusion(plan, outcome, row(0.2329, 0.8729, (0.0172, 0.0, 0.0470)), 39)
    assert result.decision == "retain"
    assert result.sentence.endswith(
        "the hypothesis of equal means is not rejected at \u03b1 = .05. This is not evidence "
        "that the means are equal: an effect as large as \u03b7\u00b2 = .05, the upper "
        "confidence limit, remains compatible with the data.")
    assert "p = .873" in result.sentence


def test_p_exactly_alpha_is_not_a_rejection(plan):
    # The F test rejects when p < alpha (common practice, no source).
    result = conclusion(plan, plan.outcomes[0], row(2.85, 0.05, (0.18, 0.0, 0.3)), 39)
    assert result.decision == "retain"


def test_unavailable_test_explains_why(plan):
    warning = StatWarning("single-group", "Only one group has data; there is nothing to compare.")
    result = conclusion(plan, plan.outcomes[0], row(None, None, warnings=(warning,)), 39)
    assert result.decision == "unavailable" and result.p is None
    assert result.sentence == ("The F test for shoot dry mass at day 21 could not be computed. "
                               "Only one group has data; there is nothing to compare.")


def test_assumptions_name_how_each_is_supported(plan):
    tests = [VarianceTest("brown-forsythe", 0.48, 3.0, 39.0, 0.697),
             VarianceTest("bartlett", 2.46, 3.0, None, 0.482)]
    statuses = assumption_statuses(plan, None, tests)
    basis = {s.assumption: s.basis for s in statuses}
    assert basis == {
        "independent observations": "attested",
        "random allocation of units to groups": "attested",
        "a categorical factor with fixed levels": "by-construction",
        "a numeric response": "by-construction",
        "normally distributed residuals": "not-checked",
        "equal variances across groups": "checked",
    }
    spread = statuses[-1].detail
    assert spread.startswith("Brown–Forsythe: F(3, 39) = 0.48, p = .697; "
                             "Bartlett: \u03c7\u00b2(3) = 2.46, p = .482")


def hypothesis(**changes):
    from appendix.results import HypothesisResult

    base = dict(id="C2:seaweed", contrast="C2", kind="versus-control", label="seaweed \u2212 uncoated",
                weights=(-1.0, 0.0, 1.0, 0.0), alternative="two-sided", method="classical",
                estimate=6.12, se=1.6, statistic=3.82, statistic_name="t", df=39.0, p=0.0005,
                p_adjusted=0.0014, ci_low=2.01, ci_high=10.23, confidence_level=0.95,
                ci_simultaneous=True, standardized=1.55, decision="reject")
    base.update(changes)
    return HypothesisResult(**base)


def test_a_simple_difference_reads_as_higher_or_lower(plan):
    from appendix.conclude import hypothesis_conclusion

    result = hypothesis_conclusion(plan, plan.outcomes[0], hypothesis(), "dunnett")
    assert result.decision == "reject" and result.p == 0.0014
    assert result.sentence == (
        "Mean shoot dry mass at day 21 under seaweed was 6.12 mg higher than under uncoated "
        "(95% simultaneous CI [2.01, 10.23], adjusted p = .001, Dunnett); the hypothesis "
        "of no difference is rejected at \u03b1 = .05.")
    lower = hypothesis_conclusion(plan, plan.outcomes[0], hypothesis(
        estimate=-1.5, ci_low=-3.0, ci_high=0.1, p=0.06, p_adjusted=0.12, decision="retain",
        ci_simultaneous=False), "holm")
    assert lower.sentence == (
        "Mean shoot dry mass at day 21 under seaweed was 1.50 mg lower than under uncoated "
        "(95% CI [\u22123.00, 0.10], adjusted p = .120, Holm); the hypothesis of no "
        "difference is not rejected at \u03b1 = .05, which is not evidence that there is no "
        "difference.")


def test_a_weighted_contrast_one_sided_and_not_tested(plan):
    from appendix.conclude import hypothesis_conclusion

    custom = hypothesis(id="C1", contrast="C1", kind="custom", label="coated versus uncoated",
                        weights=(-1.0, 1 / 3, 1 / 3, 1 / 3), alternative="greater",
                        estimate=3.9, ci_low=1.6, ci_high=None, ci_simultaneous=False,
                        p_adjusted=0.0031)
    sentence = hypothesis_conclusion(plan, plan.outcomes[0], custom, "fixed-sequence").sentence
    assert sentence == (
        "The contrast of mean shoot dry mass at day 21, coated versus uncoated, was "
        "estimated at 3.90 mg (95% CI [1.60, \u221e], adjusted p = .003, fixed-sequence); "
        "the hypothesis of a zero contrast against the one-sided alternative 'greater' is "
        "rejected at \u03b1 = .05.")
    skipped = hypothesis_conclusion(plan, plan.outcomes[0],
                                    hypothesis(decision="not-tested", p_adjusted=None), "fixed-sequence")
    assert skipped.decision == "unavailable"
    assert skipped.sentence == ("Seaweed \u2212 uncoated was not tested under the "
                                "plan: fixed-sequence testing stopped at an earlier hypothesis "
                                "that was not rejected.")


def test_a_sentence_names_a_hypothesis_by_its_label_not_its_id(plan):
    # the id (C2:seaweed) is the tables' key and results.json's; prose uses the label
    from appendix.conclude import hypothesis_conclusion

    for changes in ({}, {"decision": "not-tested", "p_adjusted": None},
                    {"kind": "custom", "weights": (-1.0, 1 / 3, 1 / 3, 1 / 3)},
                    {"estimate": None, "p": None, "decision": "unavailable"}):
        sentence = hypothesis_conclusion(plan, plan.outcomes[0], hypothesis(**changes),
                                         "holm").sentence
        assert "C2" not in sentence and "seaweed" in sentence.lower()


@pytest.mark.parametrize(("multiplicity", "method", "name"), [
    ("tukey", "classical", "Tukey–Kramer"),
    ("tukey", "marginal-means", "Tukey on the joint t"),
    ("tukey", "welch", "Games–Howell"),
    ("tukey", "rank-based", "Nemenyi"),
    ("dunnett", "classical", "Dunnett"),
    ("dunnett", "marginal-means", "Dunnett on the joint t"),
    ("dunnett", "welch", "Dunnett with unequal variances"),
    ("dunnett", "rank-based", "Dunnett on mean ranks"),
    ("benjamini-hochberg", "welch", "Benjamini–Hochberg"),
    ("none", "rank-based", "unadjusted"),
])
def test_the_sentence_names_the_procedure_computed(plan, multiplicity, method, name):
    """The registered single-step control changes with the hypotheses' method: Tukey's range
    with Welch df is Games & Howell's (1976), on Dunn's rank z Nemenyi's (1963)."""
    from appendix.conclude import hypothesis_conclusion

    sentence = hypothesis_conclusion(plan, plan.outcomes[0], hypothesis(method=method),
                                     multiplicity).sentence
    assert f", {name}); the hypothesis of no difference" in sentence
    if not name.startswith("Tukey"):
        assert "Tukey" not in sentence
