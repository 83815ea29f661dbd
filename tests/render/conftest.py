"""Fixtures for the render tests: a hand-built StudyResults and a tiny Dataset.

All data here are INVENTED (seeded generator) for testing; they describe no real study.
The primary outcome's statistics are computed below with numpy so that figures and
tables agree; the secondary outcome is degenerate on purpose (F unavailable, with a
warning) so that the appendix must show an explained gap.

Planned contrasts (registered order C1, C2, C3 under a fixed sequence): C1 custom, C2 a
one-sided linear trend (open lower bound), C3 each dose versus placebo. The Brown–Forsythe
fallback fires on the primary outcome, so its Welch family is the registered result and
the classical family is shown for comparison; the fixed sequence stops at C3:low dose, so
C3:high dose is not tested. The secondary outcome's contrast is unavailable, with a
warning. E1 is an exploratory pairwise analysis.
"""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest
from scipy import stats

from appendix import results as R
from appendix.numbers import p_clause
from appendix.data.dataset import Dataset, OutcomeData, frozen_array
from appendix.figures import make_figures
from appendix.models import Residuals
from appendix.render import RenderOptions, render_html
from render_helpers import changed, parse

LEVELS = ("placebo", "low dose", "high dose")
PER_GROUP = 8
DATA_SHA = "3f5a9c0e7b21d4c8a6e0f9b3d2c1a4e5f6071829304a5b6c7d8e9f0a1b2c3d4e"
STUDY_SHA = "0f1e2d3c4b5a69788796a5b4c3d2e1f00112233445566778899aabbccddeeff1"
PLAN_SHA = "a1b2c3d4e5f60718293a4b5c6d7e8f90112233445566778899aabbccddeeff00"


def _invented_values() -> tuple[np.ndarray, np.ndarray]:
    rng = np.random.default_rng(12345)
    codes = np.repeat(np.arange(len(LEVELS)), PER_GROUP)
    values = np.round(np.array([-2.0, -7.0, -12.0])[codes] + rng.normal(0, 4.0, codes.size), 1)
    return values, codes


def _group(level: str, x: np.ndarray) -> R.GroupSummary:
    n = len(x)
    mean, sd = float(x.mean()), float(x.std(ddof=1))
    se = sd / np.sqrt(n)
    half = float(stats.t.ppf(0.975, n - 1)) * se
    q1, median, q3 = (float(v) for v in np.quantile(x, [0.25, 0.5, 0.75]))
    return R.GroupSummary(level, n, 0, mean, sd, se, mean - half, mean + half, median, q1,
                          q3, float(x.min()), float(x.max()))


def _primary(values: np.ndarray, codes: np.ndarray) -> R.OutcomeResult:
    groups = [values[codes == i] for i in range(len(LEVELS))]
    grand = values.mean()
    ss_between = float(sum(len(g) * (g.mean() - grand) ** 2 for g in groups))
    ss_within = float(sum(((g - g.mean()) ** 2).sum() for g in groups))
    df_b, df_w = len(LEVELS) - 1, len(values) - len(LEVELS)
    ms_b, ms_w = ss_between / df_b, ss_within / df_w
    f = ms_b / ms_w
    p = float(stats.f.sf(f, df_b, df_w))
    eta = ss_between / (ss_between + ss_within)
    table = _one_term_table(df_b, df_w, ss_between, ss_within, f, p,
                            effects=(eta, (0.05, 0.61), eta - 0.06, (0.0, 0.55), 0.86, (0.23, 1.25)))
    diagnostics = R.Diagnostics(
        normality=R.NormalityTest("shapiro-wilk", 0.9712, 0.6843, len(values)),
        equal_variance=(R.VarianceTest("brown-forsythe", 3.99, 2, 21, 0.0312),
                        R.VarianceTest("bartlett", 0.77, 2, None, 0.6805)),
        outliers=R.OutlierScreen("studentized-residual", 3.0, len(values), (
            R.FlaggedUnit("U-017", "high dose", -19.3, -9.81, -3.12),)),
        assumptions=(
            R.AssumptionStatus("Independent units", "attested", "One measurement per participant."),
            R.AssumptionStatus("Random allocation", "not-attested", "The plan does not say."),
            R.AssumptionStatus("Normal errors", "checked", "Shapiro–Wilk on residuals, Q-Q plot."),
            R.AssumptionStatus("Equal variances", "checked", "Brown–Forsythe and Bartlett."),
            R.AssumptionStatus("Numeric outcome", "by-construction", "Values are read as numbers."),
        ))
    registered = _family("sbp_change", "welch", groups, REGISTERED, registered=True)
    return R.OutcomeResult(
        name="sbp_change", label="Change in systolic blood pressure", unit="mmHg",
        role="primary", design="one treatment factor", n_units=len(values),
        n_observations=len(values), arithmetic="float64",
        descriptives=R.Descriptives(0.95, tuple(_group(lv, g) for lv, g in zip(LEVELS, groups))),
        tables=(table,), marginal_means=(), slopes=(),
        diagnostics=diagnostics,
        conclusions=(R.Conclusion(
            (f"Mean change in systolic blood pressure differed between the groups, "
             f"F({df_b}, {df_w}) = ", R.Number("statistic", f), ", ", R.Number("p", p), "."),
            "reject", p, 0.05),),
        robust=R.RobustTests(welch=R.WelchAnova(5.87, 2.0, 13.62, 0.0146),
                             kruskal=R.KruskalWallis(8.04, 2, 0.0180, 0.9996)),
        selected_method="welch",
        contrasts=(registered,
                   _family("sbp_change", "classical", groups, REGISTERED, registered=False)),
        contingencies=(
            R.Contingency("assumptions.fallbacks[0]", "non-normal", "shapiro-wilk", 0.6843, 0.05,
                          False, "rank-based"),
            R.Contingency("assumptions.fallbacks[1]", "unequal-variance", "brown-forsythe",
                          0.0312, 0.05, True, "welch")),
        hypothesis_conclusions=tuple(_sentence(h) for h in registered.hypotheses))


def _one_term_table(df_b, df_w, ss_between, ss_within, f, p, effects=None, warnings=()):
    """The one-term variance table of the arm factor; `effects` is (eta squared, its CI,
    omega squared, its CI, Cohen's f, its CI) at 95%, or None."""
    eta, eta_ci, omega, omega_ci, cohens_f, f_ci = effects or (None,) * 6
    eta_ci, omega_ci, f_ci = (pair or (None, None) for pair in (eta_ci, omega_ci, f_ci))
    ms_b, ms_w = ss_between / df_b, ss_within / df_w
    row = R.ModelRow(term=("arm",), label="Treatment arm", kind="factor", df=df_b,
                     sum_of_squares=ss_between, mean_square=ms_b, statistic=f, p=p,
                     partial_eta_squared=eta, partial_eta_ci_low=eta_ci[0],
                     partial_eta_ci_high=eta_ci[1], partial_omega_squared=omega,
                     partial_omega_ci_low=omega_ci[0], partial_omega_ci_high=omega_ci[1],
                     confidence_level=0.95, cohens_f=cohens_f, cohens_f_ci_low=f_ci[0],
                     cohens_f_ci_high=f_ci[1], critical_f=float(stats.f.isf(0.05, df_b, df_w)),
                     warnings=warnings)
    total = ss_between + ss_within
    return R.ModelTable(ss_type=2, rows=(row,), residual_df=df_w, residual_ss=ss_within,
                        residual_ms=ms_w, total_df=df_b + df_w, total_ss=total,
                        r_squared=ss_between / total if total > 0 else None,
                        estimability="All effects are estimable.",
                        residual_sd=float(np.sqrt(ms_w)), ss_type_stated=False, warnings=warnings)


# (id, contrast, kind, label, weights, alternative) in registered order
REGISTERED = (
    ("C1", "C1", "custom", "active doses versus placebo", (-1.0, 0.5, 0.5), "two-sided"),
    # the slope per step of three equally spaced levels: (x - mean x) / sum (x - mean x)^2
    ("C2:linear", "C2", "trend", "linear trend", (-0.5, 0.0, 0.5), "less"),
    ("C3:low dose", "C3", "versus-control", "low dose \u2212 placebo", (-1.0, 1.0, 0.0),
     "two-sided"),
    ("C3:high dose", "C3", "versus-control", "high dose \u2212 placebo", (-1.0, 0.0, 1.0),
     "two-sided"),
)
EXPLORATORY = (
    ("E1:low dose-placebo", "E1", "pairwise", "low dose \u2212 placebo", (-1.0, 1.0, 0.0),
     "two-sided"),
    ("E1:high dose-placebo", "E1", "pairwise", "high dose \u2212 placebo", (-1.0, 0.0, 1.0),
     "two-sided"),
    ("E1:high dose-low dose", "E1", "pairwise", "high dose \u2212 low dose", (0.0, -1.0, 1.0),
     "two-sided"),
)


def _hypothesis(spec, method: str, groups, confidence: float = 0.95) -> R.HypothesisResult:
    """Contrast estimate, SE, t, df, p and CI by the textbook formulas (numpy/scipy):
    pooled variance on N - k df, or per-group variances with Welch–Satterthwaite df."""
    hid, contrast, kind, label, weights, alternative = spec
    w = np.array(weights)
    n = np.array([len(g) for g in groups], dtype=float)
    means = np.array([g.mean() for g in groups])
    variances = np.array([g.var(ddof=1) for g in groups])
    df_within = n.sum() - len(groups)
    pooled = float(((n - 1) * variances).sum() / df_within)
    if method == "classical":
        se, df = float(np.sqrt(pooled * (w ** 2 / n).sum())), df_within
    else:
        parts = w ** 2 * variances / n
        se = float(np.sqrt(parts.sum()))
        df = float(se ** 4 / (parts ** 2 / (n - 1)).sum())
    estimate = float(w @ means)
    t = estimate / se
    low = high = None
    if alternative == "two-sided":
        p = float(2 * stats.t.sf(abs(t), df))
        half = float(stats.t.isf((1 - confidence) / 2, df)) * se
        low, high = estimate - half, estimate + half
    elif alternative == "less":
        p = float(stats.t.sf(-t, df))
        high = estimate + float(stats.t.isf(1 - confidence, df)) * se
    else:
        p = float(stats.t.sf(t, df))
        low = estimate - float(stats.t.isf(1 - confidence, df)) * se
    hedges = estimate / np.sqrt(pooled) * (1 - 3 / (4 * df_within - 1))
    return R.HypothesisResult(
        id=hid, contrast=contrast, kind=kind, label=label, weights=tuple(weights),
        alternative=alternative, method=method, estimate=estimate, se=se, statistic=t,
        statistic_name="t", df=df, p=p, p_adjusted=None, ci_low=low, ci_high=high,
        confidence_level=confidence, ci_simultaneous=False, standardized=float(hedges),
        decision="retain", scale=TREND_SCALE if kind == "trend" else None)


TREND_SCALE = R.EstimateScale("linear trend", "least-squares slope per step between adjacent "
                              "levels of dose", "per step")


def _fixed_sequence(hypotheses, alpha: float = 0.05) -> tuple[R.HypothesisResult, ...]:
    """Walk the registered order: reject while p < alpha; the first non-rejection is
    retained and every later hypothesis is not tested (Maurer et al. 1995)."""
    done, running, stopped = [], 0.0, False
    for h in hypotheses:
        if stopped:
            done.append(dataclasses.replace(h, decision="not-tested", p_adjusted=None))
            continue
        running = max(running, h.p)
        stopped = running >= alpha
        done.append(dataclasses.replace(h, p_adjusted=running,
                                        decision="retain" if stopped else "reject"))
    return tuple(done)


def _family(outcome: str, method: str, groups, specs, registered: bool) -> R.ContrastFamily:
    hypotheses = _fixed_sequence([_hypothesis(s, method, groups) for s in specs])
    return R.ContrastFamily(outcome, "per-outcome", "fixed-sequence", method, 0.05, registered,
                            hypotheses, family=outcome)


_DECISION_WORDS = {"reject": "is rejected", "retain": "is not rejected",
                   "not-tested": "is not tested under the fixed sequence"}


def _sentence(h: R.HypothesisResult) -> R.Conclusion:
    text = f"The hypothesis {h.id} ({h.label}) {_DECISION_WORDS[h.decision]}"
    if h.p_adjusted is not None:
        text += f", adjusted {p_clause(h.p_adjusted)}"
    decision = "retain" if h.decision == "not-tested" else h.decision
    return R.Conclusion((text + ".",), decision, h.p_adjusted, 0.05)


def _exploratory(values: np.ndarray, codes: np.ndarray) -> R.ExploratoryAnalysis:
    groups = [values[codes == i] for i in range(len(LEVELS))]
    hypotheses = []
    for spec in EXPLORATORY:
        h = _hypothesis(spec, "classical", groups)
        hypotheses.append(dataclasses.replace(
            h, p_adjusted=h.p, decision="reject" if h.p < 0.05 else "retain"))
    family = R.ContrastFamily("sbp_change", "exploratory", "none", "classical", 0.05, True,
                              tuple(hypotheses))
    return R.ExploratoryAnalysis("E1", "all pairs of arms",
                                 "requested by the steering committee after unblinding",
                                 (family,))


def _degenerate() -> R.OutcomeResult:
    gap = R.StatWarning("within-variance-zero", "Every group's values are identical, so F is undefined.")
    summaries = tuple(R.GroupSummary(lv, 3, 1, 2.0, 0.0, 0.0, 2.0, 2.0, 2.0, 2.0, 2.0, 2.0, 2.0)
                      for lv in LEVELS)
    table = dataclasses.replace(_one_term_table(2, 6, 0.0, 0.0, None, None, warnings=(gap,)),
                                residual_sd=0.0)
    return R.OutcomeResult(
        name="pain", label="Pain score", unit=None, role="secondary", design="one treatment factor",
        n_units=9, n_observations=9, arithmetic="float64",
        descriptives=R.Descriptives(0.95, summaries),
        tables=(table,), marginal_means=(), slopes=(),
        diagnostics=R.Diagnostics(None, (), None, ()),
        conclusions=(R.Conclusion(("The pain score could not be compared: every value was 2.",),
                                  "unavailable", None, 0.05),),
        robust=R.RobustTests(welch=R.WelchAnova(None, None, None, None, (gap,)),
                             kruskal=R.KruskalWallis(None, 2, None, None, (gap,))),
        contrasts=(R.ContrastFamily("pain", "per-outcome", "fixed-sequence", "classical", 0.05,
                                    True, (_unavailable(gap),), family="pain"),),
        contingencies=(R.Contingency("assumptions.fallbacks[0]", "non-normal", "shapiro-wilk",
                                     None, 0.05, False, "rank-based"),
                       R.Contingency("assumptions.fallbacks[1]", "unequal-variance",
                                     "brown-forsythe", None, 0.05, False, "welch")),
        hypothesis_conclusions=(R.Conclusion(
            ("The hypothesis C1 (active doses versus placebo) could not be tested for the pain "
             "score: every value was 2.",), "unavailable", None, 0.05),))


def _unavailable(gap: R.StatWarning) -> R.HypothesisResult:
    hid, contrast, kind, label, weights, alternative = REGISTERED[0]
    return R.HypothesisResult(
        id=hid, contrast=contrast, kind=kind, label=label, weights=weights,
        alternative=alternative, method="classical", estimate=0.0, se=0.0, statistic=None,
        statistic_name="t", df=6.0, p=None, p_adjusted=None, ci_low=None, ci_high=None,
        confidence_level=0.95, ci_simultaneous=False, standardized=None,
        decision="unavailable", warnings=(gap,))


def build_dataset() -> Dataset:
    """A tiny INVENTED dataset matching `build_results`."""
    values, codes = _invented_values()
    units = tuple(f"U-{i + 1:03d}" for i in range(len(values)))
    pain_codes = np.repeat(np.arange(len(LEVELS)), 3)
    return Dataset(
        levels=LEVELS,
        inputs=(R.InputFile("data", "data/units.csv", DATA_SHA, 812),),
        unit_flow=_flow(),
        outcomes=(
            OutcomeData("sbp_change", frozen_array(values), frozen_array(codes), units,
                        tuple(range(2, len(values) + 2)), factors=(frozen_array(codes),)),
            OutcomeData("pain", frozen_array(np.full(9, 2.0)), frozen_array(pain_codes),
                        units[:9], tuple(range(2, 11)), factors=(frozen_array(pain_codes),)),
        ),
        findings=(),
    )


def _counts(*ns: int) -> tuple[R.LevelCount, ...]:
    return tuple(R.LevelCount(lv, n) for lv, n in zip(LEVELS, ns))


def _flow() -> R.UnitFlow:
    return R.UnitFlow(
        read=_counts(9, 8, 9),
        exclusions=(R.ExclusionCount("X1", "consent_withdrawn", "yes", "consent withdrawn",
                                     _counts(1, 0, 1), 2),),
        eligible=_counts(8, 8, 8),
        outcomes=(R.OutcomeFlow("sbp_change", _counts(0, 0, 0), _counts(8, 8, 8)),
                  R.OutcomeFlow("pain", _counts(5, 5, 5), _counts(3, 3, 3))))


def _record(outcome: R.OutcomeResult) -> R.RegisteredFamily:
    """The record of an outcome's fixed-sequence family, as a run writes it."""
    from appendix.methods import interval_note

    hypotheses = next(f for f in outcome.contrasts if f.registered).hypotheses
    kind, note = interval_note("fixed-sequence", sum(h.p is not None for h in hypotheses))
    return R.RegisteredFamily(
        id=outcome.name, method="fixed-sequence", scope="per-outcome", alpha=0.05,
        members=tuple(R.FamilyMember(h.contrast, h.contrast, outcome.name, (h.id,))
                      for h in hypotheses),
        tested=True, hypotheses=len(hypotheses),
        rejected=sum(h.decision == "reject" for h in hypotheses), intervals=kind,
        interval_note=note, order=tuple(h.contrast for h in hypotheses))


def build_results() -> R.StudyResults:
    """A StudyResults built by hand from INVENTED numbers."""
    values, codes = _invented_values()
    outcomes = (_degenerate(), _primary(values, codes))
    return R.StudyResults(
        study=R.StudyInfo("DEMO-BP-01", "Invented dose-finding study (test data only)",
                          "2026-02-14", "all randomised units"),
        plan_sha256=PLAN_SHA, alpha=0.05,
        factor=R.FactorInfo("arm", "Treatment arm", LEVELS, "placebo", True),
        inputs=(R.InputFile("study", "study.yaml", STUDY_SHA, 1204),
                R.InputFile("data", "data/units.csv", DATA_SHA, 812)),
        unit_flow=_flow(),
        outcomes=outcomes,
        findings=(R.Finding("below-planned-n", "Level 'placebo' of Treatment arm: units analysed: 8; 10 planned per group."),),
        software=(R.Software("appendix", "0.1.0"), R.Software("numpy", np.__version__)),
        exploratory=(_exploratory(values, codes),),
        deviations=(R.Deviation(
            "registered-contingency", "sbp_change",
            "Brown\u2013Forsythe p = .031 < .05 on the primary outcome: the registered fallback "
            "put the Welch analysis in force; the classical analysis is shown for comparison.",
            True, "Fallback assumptions.fallbacks[1] of the registered plan."),),
        multiplicity="fixed-sequence", multiplicity_scope="per-outcome",
        factors=(R.FactorInfo("arm", "Treatment arm", LEVELS, "placebo", True),),
        families=tuple(_record(o) for o in outcomes),
    )


def build_residuals(dataset: Dataset) -> dict[str, Residuals]:
    """The one-way model's residuals of each outcome: each value minus its group mean."""
    out = {}
    for data in dataset.outcomes:
        means = np.array([data.values[data.codes == i].mean() for i in range(len(LEVELS))])
        fitted = means[data.codes]
        out[data.name] = Residuals(data.name, fitted, data.values - fitted, data.codes)
    return out


@pytest.fixture(scope="session")
def dataset() -> Dataset:
    return build_dataset()


@pytest.fixture(scope="session")
def study_results() -> R.StudyResults:
    return build_results()


@pytest.fixture(scope="session")
def residuals(dataset) -> dict[str, Residuals]:
    return build_residuals(dataset)


@pytest.fixture(scope="session")
def figures(dataset, study_results, residuals) -> dict[str, str]:
    return make_figures(dataset, study_results, residuals)


@pytest.fixture(scope="session")
def html(study_results, figures) -> str:
    """The fixture's appendix HTML with default options."""
    return render_html(study_results, figures, RenderOptions())


@pytest.fixture(scope="session")
def page(html):
    return parse(html)


@pytest.fixture()
def hostile_results(study_results) -> R.StudyResults:
    """Results whose plan and data strings try to inject markup."""
    hostile = changed(study_results, "study", title="<script>alert(1)</script>")
    hostile = changed(hostile, "outcomes[1]", label="<b onmouseover=alert(2)>x</b>")
    return changed(hostile, "unit_flow.exclusions[0]", reason="<img src=x onerror=alert(3)>")
