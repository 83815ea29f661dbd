"""Plain-language sentences from results.

Wording follows two rules that reviewers check: not rejecting is not evidence of
equality, and significance is not importance (Wasserstein & Lazar 2016, The ASA
statement on p-values, The American Statistician 70:129-133). Numbers are written with
appendix.numbers (APA 7).
"""

from __future__ import annotations

from appendix import numbers as fmt
from appendix.plan.model import Outcome, Plan
from appendix.results import (
    AssumptionStatus,
    Conclusion,
    EffectSize,
    NormalityTest,
    OneWayTable,
    VarianceTest,
)

_TEST_NAMES = {
    "shapiro-wilk": "Shapiro-Wilk",
    "brown-forsythe": "Brown-Forsythe",
    "bartlett": "Bartlett",
}


def _alpha(alpha: float) -> str:
    return f"\u03b1 = {fmt.no_leading_zero(f'{alpha:g}')}"


def f_clause(table: OneWayTable) -> str:
    """``F(3, 39) = 7.89, p < .001``."""
    return (f"F({table.df_between}, {table.df_within}) = {fmt.fixed(table.f, 2)}, "
            f"{fmt.p_clause(table.p)}")


def eta_clause(effects: tuple[EffectSize, ...]) -> str:
    """``η² = .38 (90% CI [.14, .52])``, or empty when eta squared is unavailable."""
    eta = next((e for e in effects if e.measure == "eta_squared"), None)
    if eta is None or eta.estimate is None:
        return ""
    ci = ""
    if eta.ci_low is not None and eta.ci_high is not None:
        ci = (f" ({fmt.percent(eta.confidence_level)} CI "
              f"{fmt.interval(eta.ci_low, eta.ci_high, 2, bounded=True)})")
    return f", \u03b7\u00b2 = {fmt.proportion(eta.estimate)}{ci}"


def _compatible(effects: tuple[EffectSize, ...]) -> str:
    eta = next((e for e in effects if e.measure == "eta_squared"), None)
    if eta is None or eta.ci_high is None:
        return "the data cannot rule out differences of a size that would matter."
    return (f"an effect as large as \u03b7\u00b2 = {fmt.proportion(eta.ci_high)}, the upper "
            "confidence limit, remains compatible with the data.")


def conclusion(plan: Plan, outcome: Outcome, table: OneWayTable,
               effects: tuple[EffectSize, ...]) -> Conclusion:
    """The registered hypothesis of one outcome (equal means across the factor's
    levels), decided at the plan's alpha, in one sentence."""
    factor = plan.factor
    what = f"mean {outcome.label}"
    across = f"across the {len(factor.levels)} levels of {factor.label or factor.name}"
    alpha = plan.alpha
    if table.f is None or table.p is None:
        reasons = " ".join(w.message for w in table.warnings) or "see the warnings."
        sentence = f"The F test for {outcome.label} could not be computed. {reasons}"
        return Conclusion(sentence=sentence, decision="unavailable", p=None, alpha=alpha)
    stats = f"{f_clause(table)}{eta_clause(effects)}"
    if table.p < alpha:
        sentence = (
            f"{what[0].upper()}{what[1:]} differed {across}, {stats}; the hypothesis of "
            f"equal means is rejected at {_alpha(alpha)}. A significant F shows that the "
            "means are not all equal, not which levels differ nor whether the differences "
            "matter in practice."
        )
        decision = "reject"
    else:
        sentence = (
            f"{what[0].upper()}{what[1:]} did not differ detectably {across}, {stats}; the "
            f"hypothesis of equal means is not rejected at {_alpha(alpha)}. This is not "
            f"evidence that the means are equal: {_compatible(effects)}"
        )
        decision = "retain"
    return Conclusion(sentence=sentence, decision=decision, p=table.p, alpha=alpha)


def _variance_detail(test: VarianceTest) -> str:
    name = _TEST_NAMES.get(test.method, test.method)
    if test.statistic is None:
        return f"{name}: not computed ({' '.join(w.message for w in test.warnings)})"
    if test.df_den is not None:
        stat = (f"F({fmt.df_value(test.df_num)}, {fmt.df_value(test.df_den)}) = "
                f"{fmt.fixed(test.statistic, 2)}")
    else:
        stat = f"\u03c7\u00b2({fmt.df_value(test.df_num)}) = {fmt.fixed(test.statistic, 2)}"
    return f"{name}: {stat}, {fmt.p_clause(test.p)}"


def assumption_statuses(plan: Plan, normality: NormalityTest | None,
                        variance_tests: list[VarianceTest] | tuple[VarianceTest, ...],
                        ) -> tuple[AssumptionStatus, ...]:
    """Each classical assumption of the one-way model with how it is supported."""
    attested = plan.assumptions.attested
    factor = plan.factor

    def stated(name: str, text: str | None) -> AssumptionStatus:
        if text:
            return AssumptionStatus(name, "attested", f"The plan states: {text}.")
        return AssumptionStatus(name, "not-attested",
                                "The plan does not say how this holds; data cannot show it.")

    if normality is None:
        normal = AssumptionStatus("normally distributed residuals", "not-checked",
                                  "The plan registers no normality diagnostic.")
    elif normality.statistic is None:
        normal = AssumptionStatus(
            "normally distributed residuals", "not-checked",
            "Shapiro-Wilk could not be computed: "
            + " ".join(w.message for w in normality.warnings))
    else:
        normal = AssumptionStatus(
            "normally distributed residuals", "checked",
            f"Shapiro-Wilk on the residuals: W = {fmt.fixed(normality.statistic, 3)}, "
            f"{fmt.p_clause(normality.p)} (a small p indicates non-normal residuals); "
            "see also the normal Q-Q plot.")
    if variance_tests:
        spread = AssumptionStatus(
            "equal variances across groups", "checked",
            "; ".join(_variance_detail(t) for t in variance_tests)
            + " (a small p indicates unequal variances); Welch's test is shown alongside.")
    else:
        spread = AssumptionStatus("equal variances across groups", "not-checked",
                                  "The plan registers no equal-variance diagnostic.")
    return (
        stated("independent observations", attested.independent_units),
        stated("random allocation of units to groups", attested.random_allocation),
        AssumptionStatus(
            "a categorical factor with fixed levels", "by-construction",
            f"The plan fixes the {len(factor.levels)} levels of {factor.name}; a unit with any "
            "other level stops the run."),
        AssumptionStatus(
            "a numeric response", "by-construction",
            "Every analysed value was read as a number; a non-numeric cell stops the run."),
        normal,
        spread,
    )
