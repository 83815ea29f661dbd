"""Result types and their canonical JSON.

Every analysis returns a frozen dataclass defined here; `StudyResults` gathers them for a
run. `to_json` is the one contract between computing and everything after it
(rendering, diff, verify): sorted keys, two-space indent, no NaN or infinity (written as
null), no wall-clock time, so that two runs on the same inputs give byte-identical files.

Fields named ``ci_low``/``ci_high`` always come with a ``confidence_level`` value on the
same object. Degenerate data never raise: the statistic is None and a `StatWarning`
explains the gap.
"""

from __future__ import annotations

import dataclasses
import json
import math
from dataclasses import dataclass, field
from functools import cache
from typing import Any, Literal, get_args, get_type_hints

FORMAT_VERSION = 2


@dataclass(frozen=True)
class StatWarning:
    """Why a statistic is missing or should be read with care.

    `code` is a stable identifier (e.g. ``group-n-one``); `message` is a full sentence.
    """

    code: str
    message: str


Warnings = tuple[StatWarning, ...]


@dataclass(frozen=True)
class EstimateScale:
    """What a hypothesis's estimate measures when it is not a difference of level means.

    A trend's estimate is the least-squares slope (linear) or leading polynomial
    coefficient (higher degrees) over the level scores: `name` is the component ("linear
    trend"), `meaning` says what its estimate is ("least-squares slope per step between
    adjacent levels of dose"), `per` what follows the outcome's unit ("per step", "per
    dose unit\u00b2").
    """

    name: str
    meaning: str
    per: str


# --- per-outcome statistics -------------------------------------------------------------


@dataclass(frozen=True)
class GroupSummary:
    """Descriptive statistics of one group (level) of the factor for one outcome.

    `sd` is the sample standard deviation (n - 1 divisor); `se` = sd / sqrt(n); the CI of
    the mean uses Student's t with n - 1 df. Quartiles use linear interpolation
    (Hyndman & Fan 1996, definition 7).
    """

    level: str
    n: int
    n_missing: int
    mean: float | None
    sd: float | None
    se: float | None
    ci_low: float | None
    ci_high: float | None
    median: float | None
    q1: float | None
    q3: float | None
    minimum: float | None
    maximum: float | None


@dataclass(frozen=True)
class Descriptives:
    confidence_level: float
    groups: tuple[GroupSummary, ...]
    warnings: Warnings = ()


@dataclass(frozen=True)
class WelchAnova:
    """Welch's (1951) heteroscedastic one-way test: the F `statistic` on (`df1`, `df2`),
    `df2` fractional."""

    statistic: float | None
    df1: float | None
    df2: float | None
    p: float | None
    warnings: Warnings = ()


@dataclass(frozen=True)
class KruskalWallis:
    """Kruskal & Wallis (1952) rank test: the `statistic` H corrected for ties, referred to
    chi-squared on `df1`."""

    statistic: float | None
    df1: int | None
    p: float | None
    tie_correction: float | None
    warnings: Warnings = ()


@dataclass(frozen=True)
class NormalityTest:
    """Shapiro & Wilk (1965) test on residuals (Royston 1995 algorithm).

    `residuals` says which: ``model`` (the fitted model's: each value less its fitted
    value), ``unit-means`` (the between-units model fitted to each unit's mean over the
    within levels; the between-units tests rely on them) or ``within-units`` (each
    observation less its unit's mean and the fitted within-unit effects; the tests of
    the within factor and its interactions rely on them).
    """

    method: str
    statistic: float | None
    p: float | None
    n: int
    warnings: Warnings = ()
    residuals: str = "model"


@dataclass(frozen=True)
class VarianceTest:
    """A test of equal group variances: ``brown-forsythe`` (F on `df1`, `df2`) or
    ``bartlett`` (chi-squared on `df1`; `df2` None)."""

    method: str
    statistic: float | None
    df1: float | None
    df2: float | None
    p: float | None
    warnings: Warnings = ()


@dataclass(frozen=True)
class FlaggedUnit:
    unit: str
    level: str
    value: float
    residual: float
    studentized: float


@dataclass(frozen=True)
class OutlierScreen:
    """Units whose externally studentized residual exceeds `threshold` in absolute value."""

    method: str
    threshold: float
    n_screened: int
    flagged: tuple[FlaggedUnit, ...]
    warnings: Warnings = ()


@dataclass(frozen=True)
class AssumptionStatus:
    """How one classical assumption of the model is supported.

    `basis` is ``checked`` (a diagnostic was computed), ``not-checked`` (none registered
    or it could not be computed), ``attested`` (the plan states how it holds),
    ``not-attested`` (the plan is silent) or ``by-construction`` (the tool enforces it,
    e.g. a numeric response).
    """

    assumption: str
    basis: Literal["checked", "not-checked", "attested", "not-attested", "by-construction"]
    detail: str


@dataclass(frozen=True)
class Diagnostics:
    """Residual diagnostics of one outcome. `normality` checks the residuals the between-unit
    tests rely on (the model's, or the unit means' in a repeated-measures design);
    `within_normality` those of the within-units stratum (None without a within factor)."""

    normality: NormalityTest | None
    equal_variance: tuple[VarianceTest, ...]
    outliers: OutlierScreen | None
    assumptions: tuple[AssumptionStatus, ...] = ()
    within_normality: NormalityTest | None = None


@dataclass(frozen=True)
class Number:
    """A number inside a conclusion, kept as a number so that it is written when the
    appendix is rendered, by the same rule and decimals as the tables
    (`appendix.numbers.write_number`; `kind` is one of `appendix.numbers.NUMBER_KINDS`).
    `high` is the upper end of an interval kind."""

    kind: Literal["statistic", "df", "p", "proportion", "proportion-interval", "estimate",
                  "lower-limit", "upper-limit", "percent", "alpha"]
    value: float | None
    high: float | None = None


@dataclass(frozen=True)
class Conclusion:
    """A plain-language conclusion, and the decision it states.

    `decision` is ``reject`` (H0 rejected at `alpha`), ``retain`` (not rejected; not
    evidence of equality) or ``unavailable`` (the test could not be computed), for the
    test whose `p` it reports. `parts` is the sentence as words and `Number`s; the words
    come from the resolved plan and the results, the numbers are written at render time
    (`appendix.numbers.write_parts`), so the render options' decimals apply to text and
    tables alike. `sentence` is the sentence with the default decimals.
    """

    parts: tuple[str | Number, ...]
    decision: Literal["reject", "retain", "unavailable"]
    p: float | None
    alpha: float

    @property
    def sentence(self) -> str:
        from appendix.numbers import write_parts

        return write_parts(self.parts)


@dataclass(frozen=True)
class HypothesisResult:
    """One planned (or exploratory) contrast hypothesis: H0 says sum(weights * means) = 0.

    `method` says how estimate, SE and df were computed: ``classical`` (pooled within-group
    variance, df N - k), ``welch`` (per-group variances, Welch–Satterthwaite df) or
    ``rank-based`` (Dunn 1964 z on mean ranks; the estimate is in mean-rank units).
    `p` is the raw p for the `alternative`; `p_adjusted` the p under the registered
    multiplicity control (None when not tested). `ci_simultaneous` is True when the interval
    holds jointly for the family (Tukey–Kramer, Games–Howell, Nemenyi, Dunnett, Bonferroni, Sidak).
    For one-sided alternatives the open end of the interval is None. `standardized` is the
    estimate over the pooled SD with Hedges' (1981) small-sample correction
    J = 1 - 3 / (4 df - 1). `decision` is ``reject``, ``retain``, ``not-tested`` (a
    fixed-sequence stop came first) or ``unavailable``. `scale` says what the estimate
    measures when it is not a difference of means (trends: a slope or polynomial
    coefficient over the level scores); None otherwise. `within` is the level of the
    contrast's `by` factor a simple effect is taken within (its id then ends ``@level``);
    None for a contrast across all levels. `factor` names the factor whose levels a
    contrast on a model's marginal means compares (None for a one-factor family).
    """

    id: str
    contrast: str
    kind: str
    label: str
    weights: tuple[float, ...]
    alternative: str
    method: str
    estimate: float | None
    se: float | None
    statistic: float | None
    statistic_name: str
    df: float | None
    p: float | None
    p_adjusted: float | None
    ci_low: float | None
    ci_high: float | None
    confidence_level: float
    ci_simultaneous: bool
    standardized: float | None
    decision: str
    warnings: Warnings = ()
    scale: EstimateScale | None = None
    within: str | None = None
    factor: str | None = None


@dataclass(frozen=True)
class ContrastFamily:
    """The hypotheses of one outcome tested together under one multiplicity control.

    `scope` is ``per-outcome``, ``primary-family`` (adjusted across every primary outcome's
    hypotheses) or ``exploratory`` (never adjusted with the registered family).
    `registered` is True for the family whose `method` the plan (or a registered
    fallback) selected; other families are shown for comparison.

    `joint` names the joint law a single-step family (Tukey, Dunnett) is adjusted over,
    always the family as a whole, every slice of a simple effect included:
    ``studentized-range`` (all pairs of one factor's levels, Tukey–Kramer or
    Games–Howell), ``many-to-one`` (Dunnett's law for comparisons with one shared
    control), ``multivariate-t`` (the multivariate t with the estimates' correlation
    matrix, exact for estimates from one variance estimate) or
    ``multivariate-t-approximate`` (correlations from estimates with separate variance
    estimates); None for other controls. `joint_error` bounds the numerical integration
    error of its adjusted p-values (about 99%; None when they are exact to rounding).
    `by` is the label of the factor whose levels slice every contrast of the family
    (simple effects), else None. `family` is the id of the registered family
    (`RegisteredFamily`) this is the share of on the outcome: a family may span outcomes,
    and an outcome hold shares of several families (None for exploratory families).
    `scope` is then that family's: ``per-outcome``, ``primary-family`` or ``declared``.
    """

    outcome: str
    scope: str
    multiplicity: str
    method: str
    alpha: float
    registered: bool
    hypotheses: tuple[HypothesisResult, ...]
    warnings: Warnings = ()
    joint: str | None = None
    joint_error: float | None = None
    by: str | None = None
    family: str | None = None


@dataclass(frozen=True)
class HypothesisRef:
    """A registered hypothesis by outcome and hypothesis id."""

    outcome: str
    id: str


@dataclass(frozen=True)
class FamilyMember:
    """One member of a registered family: a contrast on an outcome (`node`, as the plan
    names it: the contrast id, or ``contrast@outcome`` in a declared family), the ids of
    its hypotheses there, and under the graphical procedure its initial share of alpha."""

    node: str
    contrast: str
    outcome: str
    hypotheses: tuple[str, ...]
    weight: float | None = None


@dataclass(frozen=True)
class FamilyEdge:
    """A transition of a registered graph: the share of `source`'s level passed to `target`
    once `source` is rejected."""

    source: str
    target: str
    share: float


@dataclass(frozen=True)
class FamilyGate:
    """Serial gatekeeping of a family: `after` is the family before it in the registered
    sequence; `status` ``open`` when every hypothesis of that family was rejected (and it
    was tested itself), else ``closed``. `p` is the largest adjusted p of the families
    before it (the smallest alpha at which the gate opens; None when one is missing);
    `not_rejected` the hypotheses of `after` that were not rejected."""

    after: str
    status: str
    p: float | None
    not_rejected: tuple[HypothesisRef, ...] = ()
    after_tested: bool = True


@dataclass(frozen=True)
class RegisteredFamily:
    """A family of registered hypotheses tested together, as the plan registered it and as
    it was tested, whatever the form of the plan's multiplicity.

    `method` is the registered multiplicity method and `scope` ``per-outcome`` (one
    outcome's contrasts, id the outcome's name), ``primary-family`` (the primary
    outcomes') or ``declared`` (under ``multiplicity.families``). `members` are its nodes
    in listing order, `order` the fixed-sequence order of their names, `transitions` its
    graph's edges. `gate` is None unless the family stands after another in the serial
    gatekeeping sequence; `tested` is False when that gate was closed. `hypotheses` and
    `rejected` count its hypotheses; `p` is its largest adjusted p (None when one is
    missing or it was not tested). `intervals` says what its intervals are
    (``simultaneous``, ``unadjusted`` or ``not-tested``) and `interval_note` why, in a
    sentence for the table note.
    """

    id: str
    method: str
    scope: str
    alpha: float
    members: tuple[FamilyMember, ...]
    tested: bool
    hypotheses: int
    rejected: int
    intervals: str
    interval_note: str
    label: str | None = None
    order: tuple[str, ...] = ()
    transitions: tuple[FamilyEdge, ...] = ()
    gate: FamilyGate | None = None
    p: float | None = None


@dataclass(frozen=True)
class Contingency:
    """A registered fallback rule and whether it fired on this outcome's data."""

    rule: str
    when: str
    test: str
    p: float | None
    threshold: float
    fired: bool
    use: str


# --- designs beyond one factor ----------------------------------------------------------


@dataclass(frozen=True)
class ModelRow:
    """One term of a variance table of a linear model (factor, interaction, covariate) or
    of a repeated-measures table (``kind`` ``between``, ``within`` or ``error``).

    Partial eta squared = SS / (SS + SS_error). Partial omega squared: for between-unit
    terms (SS - df MS_error) / (SS + (N - df) MS_error) (Olejnik & Algina 2003); for
    within-unit terms df1 (F - 1) / (df1 (F - 1) + df1 + df2 + 1). Both share one CI, by
    inverting the noncentral F (Steiger 2004) at `confidence_level` = 1 - 2 alpha. `full_df` is the df the term would have with every
    cell filled (smaller `df`: some of its contrasts are not estimable). For within-unit
    terms `gg_*` and `hf_*` give the Greenhouse–Geisser and Huynh–Feldt corrected df and p
    (None with two within levels: a single contrast, sphericity holds by construction).
    `effect_ci_df` is the (df1, df2) on which the noncentral F was inverted for the CI:
    those of the test in force, so the CI excludes zero exactly when that test rejects
    (for a within-unit term the Greenhouse–Geisser corrected df, generally fractional;
    otherwise the term's df and its error df); None when there is no CI.
    """

    term: tuple[str, ...]
    label: str
    kind: str
    df: float
    sum_of_squares: float | None
    mean_square: float | None
    statistic: float | None
    p: float | None
    partial_eta_squared: float | None
    partial_eta_ci_low: float | None
    partial_eta_ci_high: float | None
    partial_omega_squared: float | None
    partial_omega_ci_low: float | None
    partial_omega_ci_high: float | None
    confidence_level: float
    cohens_f: float | None = None
    cohens_f_ci_low: float | None = None
    cohens_f_ci_high: float | None = None
    critical_f: float | None = None
    full_df: float | None = None
    gg_df: tuple[float, float] | None = None
    gg_p: float | None = None
    hf_df: tuple[float, float] | None = None
    hf_p: float | None = None
    effect_ci_df: tuple[float, float] | None = None
    warnings: Warnings = ()


@dataclass(frozen=True)
class ModelTable:
    """A variance table of a linear model with its sums-of-squares type (1 sequential,
    2 marginal-hierarchical, 3 each term adjusted for all others under sum-to-zero coding).

    `stratum` names the error stratum: ``units`` (no within factor), ``between units``, or
    for a within stratum ``within units`` (one within factor) or ``units × <its factors>``
    (several within strata). A within stratum's table has `within`, the within factors of
    its term, and `sphericity`, Mauchly's test and the epsilons of its contrasts; both
    are empty for between-unit tables."""

    ss_type: int
    rows: tuple[ModelRow, ...]
    residual_df: float
    residual_ss: float
    residual_ms: float | None
    total_df: float
    total_ss: float
    r_squared: float | None
    estimability: str
    empty_cells: tuple[str, ...] = ()
    residual_sd: float | None = None
    ss_type_stated: bool = True
    stratum: str = "units"
    within: tuple[str, ...] = ()
    sphericity: Sphericity | None = None
    warnings: Warnings = ()


@dataclass(frozen=True)
class MarginalMean:
    """An estimated marginal mean (predicted cell means averaged with equal weights over
    the other factors' levels, covariates at their mean) with its t interval."""

    levels: tuple[str, ...]
    estimate: float | None
    se: float | None
    df: float | None
    ci_low: float | None
    ci_high: float | None
    warnings: Warnings = ()


@dataclass(frozen=True)
class MarginalMeans:
    factors: tuple[str, ...]
    label: str
    confidence_level: float
    means: tuple[MarginalMean, ...]
    basis: str


@dataclass(frozen=True)
class SlopesCheck:
    """Homogeneity of regression slopes: the covariate by treatment-cell interaction added
    to the model: the F `statistic` on the interaction's `df1` and the residual `df2`."""

    covariate: str
    by: tuple[str, ...]
    df1: float
    df2: float
    statistic: float | None
    p: float | None
    warnings: Warnings = ()


@dataclass(frozen=True)
class CovariateSlope:
    """The common within-cell regression slope of the outcome on a covariate, with its t
    interval on the residual df (the covariate is centred at `mean`, where the adjusted
    means are taken)."""

    covariate: str
    label: str
    mean: float
    estimate: float | None
    se: float | None
    df: float
    ci_low: float | None
    ci_high: float | None
    confidence_level: float
    unit: str | None = None


@dataclass(frozen=True)
class Sphericity:
    """Mauchly's (1940) test and the epsilon estimates for one within stratum (a within
    factor, or an interaction of within factors: the contrasts of its term).

    `df` is the df of Mauchly's chi-square, d(d + 1)/2 - 1. `lower_bound` is 1/d
    (Greenhouse & Geisser 1959). `huynh_feldt` (Huynh & Feldt 1976, with Lecoutre's 1991
    correction for groups) is capped at 1; `greenhouse_geisser` never exceeds 1. With two
    levels sphericity holds by construction: both epsilons are 1 and Mauchly's W is None,
    with a warning saying why.
    """

    mauchly_w: float | None
    chi_square: float | None
    df: int
    p: float | None
    greenhouse_geisser: float | None
    huynh_feldt: float | None
    lower_bound: float
    warnings: Warnings = ()


@dataclass(frozen=True)
class RobustTests:
    """Tests of a one-factor layout that do not assume equal variances (Welch 1951) or
    normal errors (Kruskal & Wallis 1952). They are defined for one treatment factor
    without blocks, covariates or repeated measures, and computed only there."""

    welch: WelchAnova
    kruskal: KruskalWallis


@dataclass(frozen=True)
class OutcomeResult:
    """Everything computed for one registered outcome, for every design.

    `tables` holds the between-unit variance table and, with within factors, one table
    per within stratum, each with its sphericity (`ModelTable.sphericity`);
    `conclusions` one sentence per tested term, in table order.
    `robust` is set where its tests are defined (`RobustTests`), else `robust_absent`
    says why not. `selected_method` is the analysis in force after the registered
    contingencies (`contingencies`), ``classical`` when none fired.

    `arithmetic` is ``exact-decimal`` when the within-cell sums of squares were
    accumulated exactly on the decimal text as scaled integers, else ``float64``. When
    `sample_of` is set the source was aggregated out of core: cell-statistic results use
    all `sample_of` analysed units, while figures and row-level diagnostics (Shapiro–Wilk,
    Kruskal–Wallis, Brown–Forsythe, the outlier screen, quartiles) use a deterministic
    subsample of `sample_size` units.
    """

    name: str
    label: str
    unit: str | None
    role: str
    design: str
    n_units: int
    n_observations: int
    arithmetic: str
    descriptives: Descriptives
    tables: tuple[ModelTable, ...]
    marginal_means: tuple[MarginalMeans, ...]
    slopes: tuple[SlopesCheck, ...]
    diagnostics: Diagnostics
    conclusions: tuple[Conclusion, ...] = ()
    robust: RobustTests | None = None
    robust_absent: str | None = None
    selected_method: str = "classical"
    contingencies: tuple[Contingency, ...] = ()
    sample_of: int | None = None
    sample_size: int | None = None
    contrasts: tuple[ContrastFamily, ...] = ()
    hypothesis_conclusions: tuple[Conclusion, ...] = ()
    covariate_slopes: tuple[CovariateSlope, ...] = ()
    warnings: Warnings = ()


# --- data provenance --------------------------------------------------------------------


@dataclass(frozen=True)
class InputFile:
    """An input file, by path relative to the study file, with its SHA-256."""

    role: str
    path: str
    sha256: str
    bytes: int


@dataclass(frozen=True)
class LevelCount:
    level: str
    n: int


@dataclass(frozen=True)
class ExclusionCount:
    """Units set aside by one registered exclusion rule (rules apply in plan order)."""

    rule: str
    column: str
    equals: str
    reason: str
    by_level: tuple[LevelCount, ...]
    total: int


@dataclass(frozen=True)
class OutcomeFlow:
    """One outcome's eligible units `missing` a value and `analysed`, per level, and the
    analysed units `short` of the planned number per level (empty unless
    ``data.planned_n.per_group`` is planned; 0 where the plan is met) and `short_in_all`
    in all (None without ``data.planned_n``): attrition, not in itself a deviation."""

    outcome: str
    missing: tuple[LevelCount, ...]
    analysed: tuple[LevelCount, ...]
    short: tuple[LevelCount, ...] = ()
    short_in_all: int | None = None


@dataclass(frozen=True)
class UnitFlow:
    """Read -> excluded by rule -> eligible -> (per outcome) missing, analysed; per level."""

    read: tuple[LevelCount, ...]
    exclusions: tuple[ExclusionCount, ...]
    eligible: tuple[LevelCount, ...]
    outcomes: tuple[OutcomeFlow, ...]


@dataclass(frozen=True)
class PlannedNumbers:
    """The plan's ``data.planned_n``: analysed units planned per group (cell) and in all,
    and the registered minimums, per group and in all, below which a shortfall is a
    deviation."""

    per_group: int | None = None
    total: int | None = None
    minimum: int | None = None
    minimum_total: int | None = None


@dataclass(frozen=True)
class BaselineGroup:
    """A covariate's values in one level of the treatment factor: units with a value,
    their mean and SD (n - 1 divisor); None where there are too few units."""

    level: str
    n: int
    mean: float | None
    sd: float | None


@dataclass(frozen=True)
class BaselineSummary:
    """A covariate (a baseline value) by level of the treatment factor, over the units
    analysed for `outcomes`: the outcomes it adjusts whose analysed units are the same
    (one summary per distinct set of units, in outcome order)."""

    covariate: str
    label: str
    unit: str | None
    outcomes: tuple[str, ...]
    groups: tuple[BaselineGroup, ...]


@dataclass(frozen=True)
class Finding:
    """Something about plan versus data that the reader must see (not an error)."""

    code: str
    message: str


# --- the run ----------------------------------------------------------------------------


@dataclass(frozen=True)
class ExploratoryAnalysis:
    """An analysis not in the registered plan, reported apart with the stated reason."""

    id: str
    label: str
    reason: str
    families: tuple[ContrastFamily, ...]


@dataclass(frozen=True)
class Deviation:
    """A departure from the registered plan, or a registered contingency that was applied.

    `kind` is a stable identifier (``registered-contingency``, ``plan-changed``, ...; see
    `appendix.deviations`); `subject` what it concerns (a key path such as ``alpha``, an
    outcome, a level); `message` what changed, in words; `detected` how the run found it;
    `acknowledged` whether the plan provides for it or justifies it (its `deviations` key,
    a registered rule, or a recorded revision of the lock). For a change of the plan,
    `registered` and `current` give the locked and the present value in words.
    """

    kind: str
    subject: str
    message: str
    acknowledged: bool
    justification: str | None = None
    detected: str | None = None
    registered: str | None = None
    current: str | None = None


@dataclass(frozen=True)
class PlanRevision:
    """A recorded revision of the registration lock (``appendix lock --relock``)."""

    number: int
    time: str
    previous_sha256: str
    sha256: str
    reason: str


@dataclass(frozen=True)
class PlanSetting:
    """One plan key with a default, resolved: its `value` as the study file would write
    it, and whether the file `stated` it (the appendix says "as registered") or the
    default held (it says "by default")."""

    key: str
    value: str
    stated: bool


@dataclass(frozen=True)
class Registration:
    """The registration lock the run compared the plan with (``study.lock.json``).

    `locked_at` is the first lock's time (UTC, ISO 8601); `plan_sha256` the hash of the
    plan as last registered (after any revision), which differs from the run's
    `StudyResults.plan_sha256` (the plan analysed, its ``deviations`` acknowledgements
    included) when the plan was changed or acknowledgements were added since;
    `data_at_lock` says in words whether the data file existed when the plan was first
    locked and, after a revision, at the last revision; `data_sha256_at_lock` is its
    SHA-256 at the last registration (None when it did not exist then).
    """

    lock_file: str
    locked_at: str
    plan_sha256: str
    tool_version: str
    data_at_lock: str
    revisions: tuple[PlanRevision, ...] = ()
    data_sha256_at_lock: str | None = None


@dataclass(frozen=True)
class StudyInfo:
    id: str
    title: str
    registered: str | None
    population: str | None


@dataclass(frozen=True)
class FactorInfo:
    name: str
    label: str
    levels: tuple[str, ...]
    control: str | None
    ordered: bool
    role: str = "treatment"


@dataclass(frozen=True)
class Software:
    name: str
    version: str


@dataclass(frozen=True)
class StudyResults:
    """Everything a run computed; serialised by `to_json` as results.json.

    `plan_settings` holds every plan key with a default, its resolved value and whether the
    study file states it (`appendix.plan.settings`): the appendix says "as registered" only
    for stated keys. `baselines` summarises each covariate by level of the treatment
    factor over the units analysed (`appendix.baselines`)."""

    study: StudyInfo
    plan_sha256: str
    alpha: float
    factor: FactorInfo
    inputs: tuple[InputFile, ...]
    unit_flow: UnitFlow
    outcomes: tuple[OutcomeResult, ...]
    findings: tuple[Finding, ...]
    software: tuple[Software, ...]
    exploratory: tuple[ExploratoryAnalysis, ...] = ()
    deviations: tuple[Deviation, ...] = ()
    multiplicity: str | None = None
    multiplicity_scope: str | None = None
    factors: tuple[FactorInfo, ...] = ()
    registration: Registration | None = None
    plan_settings: tuple[PlanSetting, ...] = ()
    families: tuple[RegisteredFamily, ...] = ()
    planned_n: PlannedNumbers | None = None
    baselines: tuple[BaselineSummary, ...] = ()
    format_version: int = field(default=FORMAT_VERSION)


# --- canonical JSON ---------------------------------------------------------------------


def _mentions(hint: Any, kind: type) -> bool:
    return hint is kind or any(_mentions(arg, kind) for arg in get_args(hint))


@cache
def _float_fields(cls: type) -> frozenset[str]:
    """The fields of `cls` declared as floats (alone, optional or in tuples), which are
    written as floats even when they hold an integer (a df of 39 is 39.0), so that the
    text `from_json` reads back writes out byte for byte the same."""
    return frozenset(name for name, hint in get_type_hints(cls).items()
                     if _mentions(hint, float) and not _mentions(hint, int))


def _as_float(value: Any) -> Any:
    if isinstance(value, (list, tuple)):
        return [_as_float(v) for v in value]
    return float(value) if isinstance(value, int) and not isinstance(value, bool) else value


def _plain(value: Any) -> Any:
    """Dataclasses, tuples and floats to JSON-ready values; NaN and infinities to None."""
    if dataclasses.is_dataclass(value) and not isinstance(value, type):
        floats = _float_fields(type(value))
        return {f.name: _plain(_as_float(getattr(value, f.name)) if f.name in floats
                               else getattr(value, f.name))
                for f in dataclasses.fields(value)}
    if isinstance(value, (list, tuple)):
        return [_plain(v) for v in value]
    if isinstance(value, dict):
        return {str(k): _plain(v) for k, v in value.items()}
    if isinstance(value, bool) or value is None or isinstance(value, (int, str)):
        return value
    if isinstance(value, float):
        return value if math.isfinite(value) else None
    # numpy scalars and the like
    if hasattr(value, "item"):
        return _plain(value.item())
    raise TypeError(f"cannot serialise {type(value).__name__} in results")


def to_json(results: StudyResults) -> str:
    """Canonical results.json text: sorted keys, no NaN, ends with a newline."""
    return json.dumps(_plain(results), sort_keys=True, indent=2, ensure_ascii=False,
                      allow_nan=False) + "\n"


def to_plain(results: Any) -> Any:
    """The same JSON-ready structure `to_json` writes (dicts, lists and plain values)."""
    return json.loads(json.dumps(_plain(results), allow_nan=False))


class ResultsFormatError(ValueError):
    """A results.json text that is not of this results format; the message names the
    first keys that do not fit."""


def from_json(text: str | bytes) -> StudyResults:
    """The typed `StudyResults` of a results.json text of `FORMAT_VERSION`: every key
    checked against its declared type, so `to_json(from_json(text)) == text` for a text
    that `to_json` wrote. Raises `ResultsFormatError` for anything else (another format,
    a missing or misspelled key, a value of the wrong type, text that is not JSON)."""
    try:
        data = json.loads(text)
    except (json.JSONDecodeError, UnicodeDecodeError) as error:
        raise ResultsFormatError(f"not JSON ({error})") from None
    return from_plain(data)


def from_plain(data: Any) -> StudyResults:
    """`from_json` of a results.json text already parsed (the reader of a file that words
    its own JSON errors, `appendix.jsonread.read_results`)."""
    from pydantic import ValidationError

    version = data.get("format_version") if isinstance(data, dict) else None
    if version != FORMAT_VERSION:
        raise ResultsFormatError(f"results format {version!r}; this version reads {FORMAT_VERSION}")
    try:
        return _reader().validate_python(data)
    except ValidationError as error:
        raise ResultsFormatError(first_errors(error)) from None


def first_errors(error, limit: int = 3) -> str:
    """The first keys a pydantic `ValidationError` found wrong, in words, for the sentence
    that refuses a file we read back."""
    shown = [f"{'.'.join(str(p) for p in e['loc']) or '(top)'}: {e['msg']}"
             for e in error.errors()[:limit]]
    more = error.error_count() - len(shown)
    return "; ".join(shown) + (f"; and {more} more" if more > 0 else "")


@cache
def _reader():
    from pydantic import TypeAdapter

    return TypeAdapter(StudyResults)


# A key that no field declares is an error when a results file is read back (pydantic reads
# this plain-dict config of each dataclass).
for _type in list(globals().values()):
    if isinstance(_type, type) and dataclasses.is_dataclass(_type):
        _type.__pydantic_config__ = {"extra": "forbid"}
