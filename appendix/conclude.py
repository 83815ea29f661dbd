"""Plain-language sentences from results.

Wording follows two rules that reviewers check: not rejecting is not evidence of
equality, and significance is not importance (Wasserstein & Lazar 2016, The ASA
statement on p-values, The American Statistician 70:129-133). A sentence is built as
parts: words from the plan and the results, and each number as a `Number` that is
written at render time by appendix.numbers (APA 7), with the tables' decimals.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass

from appendix import numbers as fmt
from appendix.methods import TEST_NAMES, adjustment
from appendix.plan.model import Outcome, Plan
from appendix.results import (
    AssumptionStatus,
    Conclusion,
    HypothesisResult,
    NormalityTest,
    Number,
    OutcomeResult,
    RegisteredFamily,
    StatWarning,
    VarianceTest,
)



Parts = tuple[str | Number, ...]


def parts(*items: str | Number | Iterable) -> Parts:
    """A sentence's parts from words, `Number`s and nested parts, adjacent words joined."""
    out: list[str | Number] = []
    for item in items:
        for part in (item,) if isinstance(item, (str, Number)) else parts(*item):
            if isinstance(part, str) and out and isinstance(out[-1], str):
                out[-1] += part
            elif part != "":
                out.append(part)
    return tuple(out)


def _alpha(alpha: float) -> Number:
    return Number("alpha", alpha)


def _test(name: str, df1: float | None, df2: float | None, statistic: float | None,
          p: float | None) -> Parts:
    """``F(3, 39) = 7.89, p < .001`` (``H(3) = ...`` without `df2`)."""
    dfs = ("(", Number("df", df1), *((", ", Number("df", df2)) if df2 is not None else ()), ")")
    return parts(name, dfs, " = ", Number("statistic", statistic), ", ", Number("p", p))


def f_clause(row, df_error: float) -> Parts:
    """``F(3, 39) = 7.89, p < .001`` for a model row tested on `df_error`."""
    return _test("F", row.df, df_error, row.statistic, row.p)


def _eta(name: str, row) -> Parts:
    """``, η² = .38 (90% CI [.14, .52])`` under `name`, or nothing when unavailable."""
    if row.partial_eta_squared is None:
        return ()
    ci = () if row.partial_eta_ci_low is None else (
        " (", Number("percent", row.confidence_level), " CI ",
        Number("proportion-interval", row.partial_eta_ci_low, row.partial_eta_ci_high), ")")
    return parts(f", {name} = ", Number("proportion", row.partial_eta_squared), ci)


def eta_clause(row) -> Parts:
    """``, η² = .38 (90% CI [.14, .52])`` (a one-term model's partial eta squared is eta
    squared), or nothing when it is unavailable."""
    return _eta("\u03b7\u00b2", row)


def _compatible(row) -> Parts:
    if row.partial_eta_ci_high is None:
        return ("the data cannot rule out differences of a size that would matter.",)
    return parts("an effect as large as \u03b7\u00b2 = ", Number("proportion", row.partial_eta_ci_high),
                 ", the upper confidence limit, remains compatible with the data.")


@dataclass(frozen=True)
class _Omnibus:
    """The omnibus test in force for an outcome, as words."""

    name: str
    short: str
    clause: Parts
    p: float | None
    warnings: tuple[StatWarning, ...]
    hypothesis: str = "equal means"
    unequal: str = "the means are not all equal"
    equal: str = "the means are equal"


def _omnibus(method: str, row, df_error: float, robust) -> _Omnibus:
    welch = robust.welch if robust is not None else None
    kruskal = robust.kruskal if robust is not None else None
    if method == "welch" and welch is not None:
        clause = _test("Welch's F", welch.df1, welch.df2, welch.statistic, welch.p)
        return _Omnibus("Welch's F test", "Welch's F", clause,
                        welch.p if welch.statistic is not None else None, welch.warnings)
    if method == "rank-based" and kruskal is not None:
        clause = _test("Kruskal–Wallis H", kruskal.df1, None, kruskal.statistic, kruskal.p)
        return _Omnibus("The Kruskal–Wallis test", "H", clause,
                        kruskal.p if kruskal.statistic is not None else None, kruskal.warnings,
                        hypothesis="identical distributions",
                        unequal="the distributions are not all identical",
                        equal="the distributions are identical")
    clause = parts(f_clause(row, df_error), eta_clause(row)) if row.statistic is not None else ()
    return _Omnibus("The F test", "F", clause, row.p if row.statistic is not None else None,
                    tuple(row.warnings))


def conclusion(plan: Plan, outcome: Outcome, row, df_error: float, *, method: str = "classical",
               robust=None) -> Conclusion:
    """The one-factor model's hypothesis (equal means, or identical distributions for the
    rank-based test) decided at the plan's alpha by the test in force, in one sentence.
    `row` is the factor's row of the variance table, tested on `df_error`; `robust` the
    outcome's `RobustTests`, whose tests a registered contingency may put in force."""
    factor = plan.factor
    what = upper_first(f"{'' if method == 'rank-based' else 'mean '}{outcome.label}")
    across = f"across the {len(factor.levels)} levels of {factor.label or factor.name}"
    alpha = plan.alpha
    test = _omnibus(method, row, df_error, robust)
    if test.p is None:
        reasons = " ".join(w.message for w in test.warnings) or "See the warnings."
        sentence = (f"{test.name} for {outcome.label} could not be computed. {reasons}",)
        return Conclusion(sentence, decision="unavailable", p=None, alpha=alpha)
    if test.p < alpha:
        sentence = parts(
            f"{what} differed {across}, ", test.clause, f"; the hypothesis of {test.hypothesis} "
            "is rejected at ", _alpha(alpha), f". A significant {test.short} shows that "
            f"{test.unequal}, not which levels differ nor whether the differences "
            "matter in practice.")
        decision = "reject"
    else:
        caveat = (_compatible(row) if method == "classical" else
                  "the data cannot rule out differences of a size that would matter.")
        sentence = parts(
            f"{what} did not differ detectably {across}, ", test.clause, "; the hypothesis of "
            f"{test.hypothesis} is not rejected at ", _alpha(alpha), ". This is not evidence "
            f"that {test.equal}: ", caveat)
        decision = "retain"
    return Conclusion(sentence, decision=decision, p=test.p, alpha=alpha)


def upper_first(text: str) -> str:
    """Capitalise the first letter only (``hbA1c`` labels keep their other capitals)."""
    return text[:1].upper() + text[1:]


def _levels_compared(h: HypothesisResult, levels: tuple[str, ...]) -> tuple[str, str] | None:
    """For a simple difference (one +1 and one -1 weight): (higher-weighted, lower) levels."""
    plus = [lv for lv, w in zip(levels, h.weights) if w > 0]
    minus = [lv for lv, w in zip(levels, h.weights) if w < 0]
    if len(plus) == 1 and len(minus) == 1:
        return plus[0], minus[0]
    return None


def _interval_words(h: HypothesisResult) -> Parts:
    """``95% CI [1.20, 3.40]`` (APA 7: a CI in brackets, its unit stated by the estimate)."""
    level = (Number("percent", h.confidence_level), " simultaneous CI" if h.ci_simultaneous else " CI")
    if h.ci_low is None and h.ci_high is None:
        return parts(level, " not available")
    return parts(level, " [", Number("lower-limit", h.ci_low), ", ",
                 Number("upper-limit", h.ci_high), "]")


def _family_words(family: RegisteredFamily | None) -> str:
    """``, family S`` for a hypothesis of a declared family (with ``, tested after every
    hypothesis of family P was rejected`` behind an open gate); empty for the family of
    one outcome (or of the primary outcomes) that the top-level form registers."""
    if family is None or family.scope != "declared":
        return ""
    words = f", family {family.id}"
    if family.gate is not None and family.gate.status == "open":
        words += f", tested after every hypothesis of family {family.gate.after} was rejected"
    return words


def _not_tested(ref: str, family: RegisteredFamily | None) -> str:
    """Why a hypothesis was not tested: a closed gate, or a fixed sequence that stopped."""
    gate = family.gate if family is not None else None
    if gate is None or gate.status == "open":
        return (f"{upper_first(ref)} was not tested under the plan: fixed-sequence testing "
                "stopped at an earlier hypothesis that was not rejected.")
    if not gate.after_tested:
        why = f"family {gate.after} was not tested itself"
    else:
        count = len(gate.not_rejected)
        why = f"{count} of its hypothes{'is was' if count == 1 else 'es were'} not rejected"
    return (f"{upper_first(ref)} was not tested under the plan: its family {family.id} is tested "
            f"only when every hypothesis of family {gate.after} is rejected, and {why} (the gate "
            "was closed).")


def hypothesis_conclusion(plan: Plan, outcome: Outcome, h: HypothesisResult,
                          multiplicity: str, family: RegisteredFamily | None = None) -> Conclusion:
    """One registered contrast hypothesis in plain words, e.g. "Mean shoot dry mass under
    seaweed was 6.1 mg higher than under uncoated (95% simultaneous CI [2.0, 10.2],
    adjusted p = .002, Dunnett); the hypothesis of no difference is rejected at α = .05."
    A trend names the scale of its estimate: "The linear trend of mean dry
    mass, its least-squares slope per step between adjacent levels of dose, was estimated
    at 0.80 mg per step (...)".
    `family` is the registered family the hypothesis belongs to: a declared family is named
    in the evidence, and a hypothesis behind a closed gate says why it was not tested.
    """
    alpha = plan.alpha
    ref = h.label  # the id stays in the tables' key column and in results.json
    if h.decision == "not-tested":
        return Conclusion((_not_tested(ref, family),), decision="unavailable", p=None, alpha=alpha)
    if h.estimate is None or h.p is None:
        reasons = " ".join(w.message for w in h.warnings) or "See the warnings."
        sentence = (f"{upper_first(ref)} could not be estimated. {reasons}",)
        return Conclusion(sentence, decision="unavailable", p=None, alpha=alpha)
    unit = f" {outcome.unit}" if outcome.unit and h.method != "rank-based" else ""
    if h.scale is not None:  # a trend: outcome units per step (or per spacing unit, squared, ...)
        unit = f"{unit} {h.scale.per}"
    adjusted = (("adjusted ", Number("p", h.p_adjusted))
                if h.p_adjusted is not None and multiplicity != "none" else Number("p", h.p))
    how = adjustment(multiplicity, h.method).name  # the procedure computed, e.g. Games–Howell
    evidence = parts(" (", _interval_words(h), ", ", adjusted, f", {how}{_family_words(family)})")
    factor = plan.factor_named(_contrast_factor(plan, h))
    pair = _levels_compared(h, factor.levels)
    size = abs(h.estimate)
    measure = "mean rank" if h.method == "rank-based" else f"mean {outcome.label}{_adjusted_for(plan, h)}"
    if pair is not None:
        higher_lower = "higher" if h.estimate >= 0 else "lower"
        first = parts(f"{upper_first(measure)} under {pair[0]} was ", Number("estimate", size),
                      f"{unit} {higher_lower} than under {pair[1]}", evidence)
        null = absent = "no difference"
    elif h.scale is not None:
        first = parts(f"The {ref} of {measure.rstrip(',')}, its {h.scale.meaning}, was estimated at ",
                      Number("estimate", h.estimate), unit, evidence)
        null = absent = f"no {h.label}"
    else:
        first = parts(f"The contrast of {measure}, {ref}, was estimated at ",
                      Number("estimate", h.estimate), unit, evidence)
        null, absent = "a zero contrast", "no difference"
    if h.within is not None:  # a simple effect: the comparison within one level of another factor
        by = plan.factor_named(_contrast_of(plan, h).by)
        opening = first[0]  # words: every branch above starts with them
        first = (f"Within {by.label or by.name} {h.within}, {opening[:1].lower()}{opening[1:]}",
                 *first[1:])
    if h.alternative != "two-sided":
        null += f" against the one-sided alternative '{h.alternative}'"
    if h.decision == "reject":
        rest = parts(f"the hypothesis of {null} is rejected at ", _alpha(alpha), ".")
        decision = "reject"
    else:
        rest = parts(f"the hypothesis of {null} is not rejected at ", _alpha(alpha),
                     f", which is not evidence that there is {absent}.")
        decision = "retain"
    return Conclusion(parts(first, "; ", rest), decision=decision,
                      p=h.p_adjusted if h.p_adjusted is not None else h.p, alpha=alpha)


def _adjusted_for(plan: Plan, h: HypothesisResult) -> str:
    """``, adjusted for cohort and baseline area,`` when the contrast compares the model's
    marginal means of a between-unit factor in a design with blocks or covariates (its
    estimate is then not a difference of raw means); else empty."""
    if h.method != "marginal-means":
        return ""
    contrast = _contrast_of(plan, h)
    if contrast is None or plan.is_within(plan.factor_of(contrast).name):
        return ""
    names = [f.label or f.name for f in plan.blocks] + [c.label for c in plan.design.covariates]
    if not names:
        return ""
    return f", adjusted for {_listed(names)},"


def _listed(names) -> str:
    """``a``, ``a and b``, ``a, b and c``."""
    return ", ".join(names[:-1]) + (" and " if len(names) > 1 else "") + names[-1]


def slopes_caveat(slopes, alpha: float) -> Parts:
    """The caveat a covariate-adjusted conclusion carries when a registered test of equal
    covariate slopes rejected at `alpha` (nothing when none did): the adjusted differences then
    hold at the covariate's mean and may differ elsewhere (Huitema 2011, *The Analysis of
    Covariance and Alternatives*, 2nd ed., ch. 11, from memory)."""
    rejected = [c for c in slopes if c.p is not None and c.p < alpha]
    if not rejected:
        return ()
    tests = [parts("; " if i else "", f"{c.covariate}: ", _test("F", c.df1, c.df2, c.statistic, c.p))
             for i, c in enumerate(rejected)]
    return parts(" Caution: the slopes of the outcome on the covariate differ across the treatment "
                 "cells (", tests, "), so this covariate-adjusted comparison holds at the "
                 "covariate's mean and may differ at other covariate values.")


def with_caveat(conclusion: Conclusion, caveat: Parts) -> Conclusion:
    """The conclusion with a caveat sentence appended (unchanged for an empty caveat)."""
    if not caveat or conclusion.decision == "unavailable":
        return conclusion
    return Conclusion(parts(conclusion.parts, caveat), decision=conclusion.decision,
                      p=conclusion.p, alpha=conclusion.alpha)


def _contrast_of(plan: Plan, h: HypothesisResult):
    """The registered (or exploratory) contrast hypothesis `h` belongs to, or None."""
    return next((c for c in (*plan.contrasts, *plan.exploratory) if c.id == h.contrast), None)


def _contrast_factor(plan: Plan, h: HypothesisResult) -> str:
    """The factor whose levels hypothesis `h` compares (its contrast's, else the plan's)."""
    contrast = _contrast_of(plan, h)
    return contrast.factor if contrast is not None and contrast.factor else plan.factor.name


def _variance_detail(test: VarianceTest) -> str:
    name = TEST_NAMES.get(test.method, test.method)
    if test.statistic is None:
        return f"{name}: not computed ({' '.join(w.message for w in test.warnings)})"
    if test.df2 is not None:
        stat = (f"F({fmt.df_value(test.df1)}, {fmt.df_value(test.df2)}) = "
                f"{fmt.fixed(test.statistic, 2)}")
    else:
        stat = f"\u03c7\u00b2({fmt.df_value(test.df1)}) = {fmt.fixed(test.statistic, 2)}"
    return f"{name}: {stat}, {fmt.p_clause(test.p)}"


#: Which residuals a normality check used (NormalityTest.residuals), in words.
_RESIDUAL_WORDS = {
    "model": "the residuals",
    "unit-means": "the residuals of the unit means (between units)",
    "within-units": "the within-units residuals",
}


def assumption_statuses(plan: Plan, normality: NormalityTest | None,
                        variance_tests: list[VarianceTest] | tuple[VarianceTest, ...],
                        *, within: NormalityTest | None = None, qq_plot: bool = True,
                        welch_shown: bool = True) -> tuple[AssumptionStatus, ...]:
    """Each classical assumption of the model with how it is supported. `within` is the
    normality check of the within-units residuals of a repeated-measures design;
    `qq_plot` and `welch_shown` say whether the appendix shows a normal Q-Q plot and
    Welch's test, so the statuses refer to them only when they exist."""
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
            "Shapiro–Wilk could not be computed: "
            + " ".join(w.message for w in normality.warnings))
    else:
        checks = [(normality, _RESIDUAL_WORDS[normality.residuals])]
        checks += [(within, _RESIDUAL_WORDS[within.residuals])] if within is not None else []
        normal = AssumptionStatus(
            "normally distributed residuals", "checked",
            "; ".join(f"Shapiro–Wilk on {words}: " + (
                f"W = {fmt.proportion(test.statistic, 3)}, {fmt.p_clause(test.p)}"
                if test.statistic is not None else "not computed") for test, words in checks)
            + " (a small p indicates non-normal residuals)"
            + ("; see also the normal Q-Q plot." if qq_plot else "."))
    if variance_tests:
        spread = AssumptionStatus(
            "equal variances across groups", "checked",
            "; ".join(_variance_detail(t) for t in variance_tests)
            + " (a small p indicates unequal variances)"
            + ("; Welch's test is shown alongside." if welch_shown else "."))
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


_SS_TYPES = {1: "sequential (type 1) sums of squares in the registered order",
             2: "type 2 sums of squares", 3: "type 3 sums of squares under sum-to-zero coding"}


def term_conclusion(plan: Plan, outcome: Outcome, row, ss_type: int, df_error: float) -> Conclusion:
    """One model term's F test in plain words, e.g. "Coating × Irrigation: F(2, 60) = 4.10,
    p = .021, partial η² = .12 (90% CI [.01, .24]); the hypothesis of no interaction is
    rejected at α = .05 (type 3 sums of squares)." Within-unit terms name the corrected test
    in force: Greenhouse–Geisser when its df are given."""
    alpha = plan.alpha
    # An interaction is a term of several factors, whichever stratum it is tested in.
    what = ("no interaction" if len(row.term) > 1 else
            "no association with the covariate" if row.kind == "covariate" else "equal marginal means")
    how = _SS_TYPES.get(ss_type, f"type {ss_type} sums of squares")
    if row.statistic is None or row.p is None:
        reasons = " ".join(w.message for w in row.warnings) or "See the warnings."
        return Conclusion((f"The test of {row.label} for {outcome.label} could not be computed. "
                           f"{reasons}",), decision="unavailable", p=None, alpha=alpha)
    df1, df2, p, corrected = row.df, df_error, row.p, ""
    if row.gg_df is not None and row.gg_p is not None:
        (df1, df2), p, corrected = row.gg_df, row.gg_p, ", Greenhouse–Geisser corrected"
    clause = parts(_test("F", df1, df2, row.statistic, p), _eta("partial \u03b7\u00b2", row))
    if p < alpha:
        rest = parts(f"the hypothesis of {what} is rejected at ", _alpha(alpha))
        decision = "reject"
    else:
        rest = parts(f"the hypothesis of {what} is not rejected at ", _alpha(alpha),
                     ", which is not evidence that there is no effect")
        decision = "retain"
    sentence = parts(f"{upper_first(row.label)} ({outcome.label}): ", clause, corrected, "; ",
                     rest, f"; {how}.")
    adjusted = _model_adjustment(plan, row)
    if adjusted:
        sentence = parts(sentence, f" The test is {adjusted}.")
    if decision == "reject" and row.kind == "factor" and row.df > 1:
        sentence = parts(sentence, " A significant F shows that the marginal means are not all "
                         "equal, not which levels differ nor whether the differences matter in "
                         "practice.")
    return Conclusion(sentence, decision=decision, p=p, alpha=alpha)


def _concluded(plan: Plan, term: tuple[str, ...]) -> bool:
    """Whether a term's test is a conclusion: terms of treatment and within factors only;
    blocks and covariates adjust the model and are reported in its table."""
    tested = {f.name for f in plan.treatments} | {f.name for f in plan.within_factors}
    return set(term) <= tested


def term_conclusions(plan: Plan, outcome: Outcome, result: OutcomeResult) -> tuple[Conclusion, ...]:
    """One sentence per tested term of an outcome's tables, in table order: where the
    one-factor tests are defined (`result.robust`), the factor's test in force after the
    registered contingencies; elsewhere each treatment and within term's F test, the
    between-unit ones with the covariate slopes' caveat."""
    if result.robust is not None:
        (table,) = result.tables
        return (conclusion(plan, outcome, table.rows[0], table.residual_df,
                           method=result.selected_method, robust=result.robust),)
    caveat = slopes_caveat(result.slopes, plan.alpha)
    return tuple(with_caveat(term_conclusion(plan, outcome, row, table.ss_type, table.residual_df),
                             () if table.within else caveat)
                 for table in result.tables for row in table.rows if _concluded(plan, row.term))


def _model_adjustment(plan: Plan, row) -> str:
    """``adjusted for cohort and wound area at day 0`` for a between-unit treatment term
    of a model with blocks or covariates; empty for other terms and designs."""
    if row.kind == "covariate" or any(plan.is_within(n) for n in row.term):
        return ""
    names = [f.label or f.name for f in plan.blocks] + [c.label for c in plan.design.covariates]
    names = [n for n in names if n != row.label]
    return f"adjusted for {_listed(names)}" if names else ""
