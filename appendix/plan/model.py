"""The study file, format 1, as typed frozen models.

These models are the single source of the study-file schema: validation, the published
JSON Schema (`schema/study.schema.json`) and the frozen plan that the pipeline passes on
are all derived from them. Unknown keys are errors (``extra="forbid"``).

Format 1 holds one or more crossed factors (treatments, blocks, within-unit factors),
explicit interactions and covariates; a plan written for one treatment factor
keeps its meaning and its canonical JSON, because every key added since is left out of
the dump while it holds its default. Planned contrasts, their multiplicity control,
registered fallbacks and exploratory analyses are optional keys.
"""

from __future__ import annotations

import datetime as _dt
import itertools
from typing import Annotated, Literal

from pydantic import (
    AllowInfNan,
    BaseModel,
    BeforeValidator,
    ConfigDict,
    Field,
    Strict,
    StringConstraints,
    WithJsonSchema,
    model_serializer,
    model_validator,
)
from pydantic_core import PydanticCustomError

from appendix.plan.checks import DATA_FORMATS, consistency_problems
from appendix.plan.choices import (
    ContrastKind,
    DeviationKind,
    FactorRole,
    MultiplicityMethod,
    hypotheses_of_kind,
)
from appendix.plan.scalars import scalar_text
from appendix.plan.wording import key_path


def _numbers_as_text(value: object) -> object:
    # A level written `1` in YAML arrives as an int; it names the same level as the
    # data text "1". Booleans stay booleans so that `yes`-like surprises are reported.
    if isinstance(value, (int, float)) and not isinstance(value, bool):
        return scalar_text(value)
    return value


def _scalars_as_text(value: object) -> object:
    if isinstance(value, (bool, int, float)):
        return scalar_text(value)
    return value


#: A level name: text, or a number taken as its canonical text.
LevelText = Annotated[
    str,
    BeforeValidator(_numbers_as_text),
    StringConstraints(min_length=1),
    WithJsonSchema({"type": ["string", "number"], "minLength": 1}),
]

#: A value an exclusion rule compares with: text, number or boolean, kept as text.
ValueText = Annotated[
    str,
    BeforeValidator(_scalars_as_text),
    WithJsonSchema({"type": ["string", "number", "boolean"]}),
]


#: A finite number written as a number (not text, not true/false).
Number = Annotated[float, Strict(), AllowInfNan(False)]

#: Identifier of a contrast or exploratory analysis; hypothesis ids extend it with ':'.
ContrastId = Annotated[str, StringConstraints(pattern=r"^[A-Za-z][A-Za-z0-9_.-]{0,31}$")]


def _whole_number_of(expected: str):
    """A check that refuses what a whole-number Literal would take as equal (True, 1.0)."""

    def check(value: object) -> object:
        # Literal[1] would accept True and 1.0 (both == 1 in Python); the number is
        # written as the whole number itself.
        if isinstance(value, (bool, float)):
            raise PydanticCustomError("literal_error", "Input should be {expected}",
                                      {"expected": expected})
        return value

    return check


#: The study-file format number (this version reads 1).
FormatNumber = Annotated[Literal[1], BeforeValidator(_whole_number_of("1"))]

#: The registered type of sums of squares: 1 (sequential), 2 or 3.
SumsOfSquaresType = Annotated[Literal[1, 2, 3],
                              BeforeValidator(_whole_number_of("1, 2 or 3"))]

#: A term's factor names: an interaction of two or more factors.
Interaction = Annotated[tuple[str, ...], Field(min_length=2)]

#: Pattern of the names that identify outcomes and covariates in results and figures.
MEASURE_NAME = r"^[A-Za-z][A-Za-z0-9_]{0,62}$"


def _is(default: object):
    """`exclude_if` for keys added after the first release: left out of the dump at their
    default, so that older plans keep their canonical JSON and hash."""
    return lambda value: value == default


class _Frozen(BaseModel):
    # Lax by default so that YAML lists fill tuples and ISO text fills dates; numbers and
    # flags are strict per field, so that `format: true` or `ordered: 1` are reported.
    model_config = ConfigDict(extra="forbid", frozen=True, strict=False, allow_inf_nan=False)


class Study(_Frozen):
    """Who and what: the study's stable identifier and title."""

    id: str = Field(
        pattern=r"^[A-Za-z0-9][A-Za-z0-9._-]{0,79}$",
        description="Stable identifier: letters, digits, '.', '_' or '-'; names the output folder.",
    )
    title: str = Field(min_length=1, description="Full title as in the trial report.")
    registered: _dt.date | None = Field(
        default=None, description="Date the analysis plan was fixed (ISO 8601)."
    )
    population: str | None = Field(
        default=None, description="The analysis population in words, e.g. 'all randomised units'."
    )


class Exclusion(_Frozen):
    """A pre-registered exclusion rule: units whose `column` equals `equals` are set aside."""

    id: str = Field(min_length=1, description="Short identifier of the rule, e.g. 'X1'.")
    column: str = Field(min_length=1, description="Data column the rule looks at.")
    equals: ValueText = Field(
        description="Value that excludes a unit; compared with the cell as text (see the data stage)."
    )
    reason: str = Field(min_length=1, description="Why units matching the rule are excluded.")


class PlannedN(_Frozen):
    """Planned numbers of analysed units, shown in the unit flow against the numbers
    achieved; a shortfall is attrition, a deviation only below a registered `minimum`
    (per group) or `minimum_total` (in all)."""

    per_group: int | None = Field(
        default=None, ge=1, strict=True,
        description="Units per cell of the crossed treatment factors (per group of a one-way design).")
    total: int | None = Field(default=None, ge=1, strict=True)
    minimum: int | None = Field(
        default=None, ge=1, strict=True, exclude_if=_is(None),
        description="Fewest analysed units per group (per cell) the plan accepts, for every "
                    "outcome; fewer is reported as a deviation. At most `per_group`.")
    minimum_total: int | None = Field(
        default=None, ge=1, strict=True, exclude_if=_is(None),
        description="Fewest analysed units in all the plan accepts, for every outcome; fewer "
                    "is reported as a deviation. At most the planned total (`total`, or "
                    "`per_group` times the cells of the crossed treatment factors).")


class Data(_Frozen):
    """Where the data are and how units are identified."""

    source: str = Field(
        min_length=1,
        description=f"Data file, relative to the study file: {', '.join(DATA_FORMATS)}.",
    )
    unit: str = Field(min_length=1, description="Column identifying each experimental unit.")
    sheet: str | None = Field(default=None, description="Worksheet name, for Excel sources.")
    exclusions: tuple[Exclusion, ...] = Field(default=(), description="Pre-registered rules only.")
    planned_n: PlannedN | None = None
    missing_limit: float | None = Field(
        default=None, ge=0, lt=1, strict=True, exclude_if=_is(None),
        description="Largest registered share of eligible units without a value, per outcome "
                    "(0 to under 1, e.g. 0.1); a larger share is reported as a deviation.")


class Factor(_Frozen):
    """A factor: a data column, its levels in the registered order and its role.

    role treatment (the default) is a factor the study compares; block a fixed nuisance
    factor (no control, not ordered); within a repeated-measures factor whose levels are
    observed on every unit (one data row per unit and level).
    """

    name: str = Field(min_length=1, description="Data column holding the level of each unit.")
    label: str | None = Field(default=None, description="Name of the factor in prose.")
    levels: tuple[LevelText, ...] = Field(min_length=2, description="Levels in registered order.")
    control: LevelText | None = Field(default=None, description="The control level, if any.")
    ordered: bool = Field(default=False, strict=True, description="Whether the levels are ordered.")
    role: FactorRole = Field(default="treatment", exclude_if=_is("treatment"),
                             description="treatment (default), block or within.")


class _Measured(_Frozen):
    """A named measurement taken from a data column: an outcome or a covariate."""

    name: str = Field(pattern=MEASURE_NAME, description="Identifier used in results and figures.")
    column: str | None = Field(default=None, description="Data column; defaults to `name`.")
    label: str = Field(min_length=1, description="Name of the measurement in prose.")
    unit: str | None = Field(default=None, description="Measurement unit, e.g. 'mg'.")

    @property
    def data_column(self) -> str:
        return self.column or self.name


class Covariate(_Measured):
    """A registered covariate: adjusted for at its mean, one common slope across cells, in
    the analyses of the outcomes it names (default: every outcome; a baseline of one
    outcome is no covariate of another)."""

    outcomes: tuple[str, ...] | None = Field(
        default=None, min_length=1, exclude_if=_is(None),
        description="Outcome names it adjusts (default: all outcomes).")

    def applies_to(self, outcome: str) -> bool:
        return self.outcomes is None or outcome in self.outcomes


class Design(_Frozen):
    """The model's terms: factors in plan order, listed interactions, covariates."""

    factors: tuple[Factor, ...] = Field(
        min_length=1, description="The factors; within each role, plan order is the order of terms and tables.")
    interactions: tuple[Interaction, ...] = Field(
        default=(), exclude_if=_is(()),
        description="Interactions, each a list of 2 or more factor names; none unless listed.")
    covariates: tuple[Covariate, ...] = Field(
        default=(), exclude_if=_is(()), description="Covariates, centred at their mean.")
    sums_of_squares: SumsOfSquaresType | None = Field(
        default=None, exclude_if=_is(None),
        description="1, 2 or 3; required for a design with more than one term.")


class Outcome(_Measured):
    """A registered outcome (response variable)."""

    role: Literal["primary", "secondary"]


class Repeated(_Frozen):
    """The registered rule for missing repeated observations of the within factors."""

    missing: Literal["complete-units"] = Field(
        default="complete-units",
        description="complete-units: a unit missing any cell of the within factors' grid is left out.")


class Outliers(_Frozen):
    """Flag units whose externally studentized residual exceeds `threshold` in absolute value."""

    method: Literal["studentized-residual"] = "studentized-residual"
    threshold: float = Field(default=3.0, gt=0, strict=True)


class Attested(_Frozen):
    """Properties of the design that data cannot show; the plan states how they hold."""

    random_allocation: str | None = Field(
        default=None, description="How units were allocated at random to groups."
    )
    independent_units: str | None = Field(
        default=None, description="Why observations on different units are independent."
    )


class Fallback(_Frozen):
    """A registered contingency: when `test` gives p < `threshold`, the analysis `use` is in force.

    Rules are evaluated in plan order per outcome; the first that fires wins.
    """

    when: Literal["unequal-variance", "non-normal"] = Field(
        description="The assumption in doubt: unequal-variance or non-normal.")
    test: Literal["brown-forsythe", "bartlett", "shapiro-wilk"] = Field(
        description="The registered diagnostic that decides (unequal-variance: brown-forsythe "
                    "or bartlett; non-normal: shapiro-wilk).")
    threshold: float = Field(default=0.05, gt=0, lt=1, strict=True,
                             description="The rule fires when the test's p is below this.")
    use: Literal["welch", "rank-based"] = Field(description="The analysis used when it fires.")


class Assumptions(_Frozen):
    """Which diagnostics to compute (always shown), and the registered fallbacks, if any."""

    normality: Literal["shapiro-wilk", "none"] = "shapiro-wilk"
    equal_variance: tuple[Literal["brown-forsythe", "bartlett"], ...] = (
        "brown-forsythe",
        "bartlett",
    )
    outliers: Outliers = Outliers()
    attested: Attested = Attested()
    fallbacks: tuple[Fallback, ...] = Field(
        default=(), description="Registered contingencies, evaluated in order; the first that fires wins.")


class Analysis(_Frozen):
    """The registered primary analysis of every outcome."""

    method: Literal["classical", "welch", "rank-based"] = Field(
        default="classical",
        description="classical (F test, pooled variance), welch (Welch's ANOVA, Welch–Satterthwaite "
                    "contrasts, Games–Howell pairs) or rank-based (Kruskal–Wallis, Dunn contrasts).")


class Contrast(_Frozen):
    """A registered contrast: one or more hypotheses over the levels of the factor.

    `weights` belong to kind custom only, `degree` and `spacing` to kind trend only (the
    cross-field checks say so); every other key applies to each kind.
    """

    id: ContrastId = Field(description="Unique across contrasts and exploratory analyses.")
    kind: ContrastKind = Field(
        description="custom, pairwise, versus-control, trend or helmert.")
    label: str = Field(min_length=1, description="The contrast in prose.")
    weights: dict[LevelText, Number] | None = Field(
        default=None,
        description="custom only: a weight per level name (missing levels weigh 0); sum 0.")
    alternative: Literal["two-sided", "greater", "less"] = Field(
        default="two-sided", description="greater: H1 says the estimate is above 0.")
    justification: str | None = Field(
        default=None, min_length=1, description="Why a one-sided test; required when one-sided.")
    outcomes: tuple[str, ...] | None = Field(
        default=None, min_length=1, description="Outcome names it applies to (default: all).")
    factor: str | None = Field(
        default=None,
        description="The treatment or within factor; required with more than one of them.")
    by: str | None = Field(
        default=None, exclude_if=_is(None),
        description="Another treatment or within factor: tested within each of its levels.")
    degree: int | None = Field(
        default=None, ge=1, strict=True,
        description="trend only: highest polynomial degree, 1 to k - 1 (default 1).")
    spacing: tuple[Number, ...] | None = Field(
        default=None,
        description="trend only: a strictly increasing number per level (default equal).")

    @property
    def trend_degree(self) -> int:
        """The degree a trend is fitted to: `degree`, or 1 when not given."""
        return 1 if self.degree is None else self.degree

    def applies_to(self, outcome: str) -> bool:
        return self.outcomes is None or outcome in self.outcomes

    def hypothesis_count(self, k: int) -> int:
        """How many hypotheses the contrast expands into over `k` levels.

        >>> Contrast(id="C", kind="pairwise", label="all pairs").hypothesis_count(4)
        6
        """
        return hypotheses_of_kind(self.kind, k, self.trend_degree)


class ExploratoryContrast(Contrast):
    """An analysis not in the registered plan: a contrast with the reason it is run."""

    reason: str = Field(min_length=1, description="Why it is run although not pre-registered.")


#: A node of a declared family: a contrast id, with ``@outcome`` when the family covers
#: more than one outcome (``C1@pain``).
NodeName = Annotated[str, StringConstraints(
    pattern=r"^[A-Za-z][A-Za-z0-9_.-]{0,31}(@[A-Za-z][A-Za-z0-9_]{0,62})?$")]


class Family(_Frozen):
    """A family of registered hypotheses tested together under one multiplicity method.

    Its members are the hypotheses of each listed contrast on each listed outcome it
    applies to; every registered contrast on every outcome belongs to exactly one family.
    `order` (fixed-sequence), `weights` and `transitions` (graphical) name the members by
    node: the contrast id, written ``contrast@outcome`` when the family covers more than
    one outcome.
    """

    id: ContrastId = Field(description="Unique among the families; names the family in the appendix.")
    label: str | None = Field(default=None, min_length=1, exclude_if=_is(None),
                              description="The family in prose, e.g. 'key secondary endpoints'.")
    contrasts: tuple[ContrastId, ...] = Field(
        min_length=1, description="Registered contrast ids whose hypotheses the family holds.")
    outcomes: tuple[str, ...] = Field(
        min_length=1, description="Outcome names; a contrast is a member on each of them it applies to.")
    method: MultiplicityMethod = Field(description="The family's multiplicity method.")
    order: tuple[NodeName, ...] | None = Field(
        default=None, min_length=1, exclude_if=_is(None),
        description="fixed-sequence only: every node of the family exactly once, in testing order.")
    weights: dict[NodeName, Number] | None = Field(
        default=None, exclude_if=_is(None),
        description="graphical only: each node's initial share of alpha (nodes left out weigh 0).")
    transitions: dict[NodeName, dict[NodeName, Number]] | None = Field(
        default=None, exclude_if=_is(None),
        description="graphical only: for a node, the share of its level passed to each other "
                    "node once it is rejected.")


class Multiplicity(_Frozen):
    """How the registered hypotheses are adjusted together: one `method` for a family per
    outcome (or one over the primary outcomes, `scope`), or declared `families`, each with
    its own method, optionally tested in a serial gatekeeping `sequence`."""

    method: MultiplicityMethod = Field(
        default="holm", description="The adjustment (benjamini-hochberg controls the FDR, not the FWER).")
    scope: Literal["per-outcome", "primary-family"] = Field(
        default="per-outcome",
        description="per-outcome, or primary-family: one family over every primary outcome.")
    order: tuple[ContrastId, ...] | None = Field(
        default=None, min_length=1,
        description="fixed-sequence only: every contrast id exactly once, in testing order; "
                    "each outcome's family follows it, skipping contrasts that do not apply to it.")
    weights: dict[ContrastId, Number] | None = Field(
        default=None, exclude_if=_is(None),
        description="graphical only: each contrast's initial share of alpha (contrasts left "
                    "out weigh 0); from 0 to 1 each, summing to more than 0 and at most 1.")
    transitions: dict[ContrastId, dict[ContrastId, Number]] | None = Field(
        default=None, exclude_if=_is(None),
        description="graphical only: for a contrast, the share of its level passed to each "
                    "other contrast once it is rejected; from 0 to 1 each, at most 1 in all.")
    families: tuple[Family, ...] | None = Field(
        default=None, min_length=1, exclude_if=_is(None),
        description="Declared families, each with its own method; with them, no top-level "
                    "method, scope, order, weights or transitions.")
    sequence: tuple[ContrastId, ...] | None = Field(
        default=None, min_length=2, exclude_if=_is(None),
        description="Family ids in testing order (serial gatekeeping): a family is tested only "
                    "when every hypothesis of the family before it was rejected.")

    @model_serializer(mode="wrap")
    def _without_unused_defaults(self, handler):
        # With declared families the top-level method and scope mean nothing; left out of
        # the canonical plan so that it states only what is in force. Plans without
        # families keep their canonical JSON (and hash).
        dumped = handler(self)
        if self.families is not None and isinstance(dumped, dict):
            for key in ("method", "scope", "order"):
                if dumped.get(key) == Multiplicity.model_fields[key].default:
                    dumped.pop(key, None)
        return dumped


class Acknowledgement(_Frozen):
    """A deviation from the registered plan that the plan acknowledges, with its justification.

    It matches a detected deviation of the same `kind` whose subject equals `subject`
    exactly (a key path such as ``alpha``, an outcome name, a level); an entry that
    matches nothing is itself reported, so a typo never silently acknowledges nothing.
    """

    kind: DeviationKind = Field(description="The kind of deviation, as the appendix names it.")
    subject: str = Field(min_length=1, description="What it concerns, exactly as the appendix "
                         "lists it (key path, outcome name, level, or 'plan').")
    justification: str = Field(min_length=1, description="Why the deviation is acceptable.")


class Plan(_Frozen):
    """A whole study file, format 1."""

    format: FormatNumber = Field(description="Version of the study-file format; this version reads 1.")
    study: Study = Field(description="The study's identifier and title.")
    data: Data = Field(description="Where the data are, how units are identified, exclusions.")
    alpha: float = Field(default=0.05, gt=0, lt=0.5, strict=True, description="Significance level.")
    design: Design = Field(description="The factors and their levels, interactions, covariates.")
    outcomes: tuple[Outcome, ...] = Field(min_length=1, description="The registered outcomes.")
    assumptions: Assumptions = Field(default=Assumptions(),
                                     description="Diagnostics to compute and registered fallbacks.")
    analysis: Analysis = Field(default=Analysis(), description="The registered primary analysis.")
    contrasts: tuple[Contrast, ...] = Field(default=(), description="The registered contrasts.")
    multiplicity: Multiplicity = Field(default=Multiplicity(),
                                       description="Multiplicity control of the registered contrasts.")
    exploratory: tuple[ExploratoryContrast, ...] = Field(
        default=(), description="Analyses not in the plan: reported apart, never in conclusions.")
    repeated: Repeated | None = Field(
        default=None, exclude_if=_is(None),
        description="With within factors only: the rule for missing repeated observations.")
    deviations: tuple[Acknowledgement, ...] = Field(
        default=(), exclude_if=_is(()),
        description="Acknowledged deviations from the registered plan, each with a justification; "
                    "never compared with the lock.")

    @model_validator(mode="before")
    @classmethod
    def _repeated_default(cls, data: object) -> object:
        # A within factor without `repeated` means the default rule; filling it in here
        # gives the written and the implied rule one canonical plan (and one hash).
        if not isinstance(data, dict) or data.get("repeated") is not None:
            return data
        factors = data.get("design", {}).get("factors") if isinstance(data.get("design"), dict) else None
        if isinstance(factors, (list, tuple)) and any(
                isinstance(f, dict) and f.get("role") == "within" for f in factors):
            return {**data, "repeated": {"missing": "complete-units"}}
        return data

    @model_validator(mode="after")
    def _consistent(self) -> Plan:
        # The loader runs the same checks on the raw file so that they are reported
        # together with field errors; this guards plans built in code.
        problems = consistency_problems(self.model_dump(mode="json"))
        if problems:
            text = "; ".join(f"{key_path(loc)}: {message}" for loc, message in problems)
            raise PydanticCustomError("plan_consistency", text)
        return self

    @property
    def factor(self) -> Factor:
        """The single treatment factor of a one-way plan; otherwise the first treatment
        factor, or, in a design of repeated measures alone, the first within factor."""
        return (self.treatments or self.within_factors)[0]

    @property
    def treatments(self) -> tuple[Factor, ...]:
        """The treatment factors, in plan order."""
        return tuple(f for f in self.design.factors if f.role == "treatment")

    @property
    def blocks(self) -> tuple[Factor, ...]:
        """The block factors, in plan order."""
        return tuple(f for f in self.design.factors if f.role == "block")

    @property
    def ss_type(self) -> int:
        """The type of sums of squares: as stated, else 2 (which a design whose one
        between-unit term makes every type agree on never needs to state)."""
        return self.design.sums_of_squares or 2

    @property
    def within_factors(self) -> tuple[Factor, ...]:
        """The within-unit (repeated-measures) factors, in plan order; every unit is observed
        at each cell of their crossed levels (the within grid, first factor slowest)."""
        return tuple(f for f in self.design.factors if f.role == "within")

    def is_within(self, name: str) -> bool:
        """Whether `name` is a within-unit factor of the design."""
        return any(f.name == name for f in self.within_factors)

    @property
    def within_cells(self) -> tuple[str, ...]:
        """The cells of the within grid, first within factor slowest, each named by its
        levels joined by ' × ' (a single within factor: its levels); empty without one."""
        if not self.within_factors:
            return ()
        return tuple(" \u00d7 ".join(levels) for levels in
                     itertools.product(*(f.levels for f in self.within_factors)))

    @property
    def between(self) -> tuple[Factor, ...]:
        """The between-unit factors (treatments and blocks), in plan order."""
        return tuple(f for f in self.design.factors if f.role != "within")

    def for_outcome(self, name: str) -> Plan:
        """The plan as the outcome called `name` sees it: its design holds only the
        covariates that apply to that outcome (`Covariate.outcomes`). Every stage that
        analyses, words or draws one outcome takes this plan, so there is one path.

        The copy is not validated again (its checks held on the whole plan)."""
        kept = self.covariates_for(name)
        if kept == self.design.covariates:
            return self
        return self.model_copy(update={"design": self.design.model_copy(update={"covariates": kept})})

    def covariates_for(self, name: str) -> tuple[Covariate, ...]:
        """The covariates that adjust the outcome called `name`, in plan order."""
        return tuple(c for c in self.design.covariates if c.applies_to(name))

    def factor_named(self, name: str) -> Factor:
        """The factor called `name`; KeyError when the design has none."""
        for factor in self.design.factors:
            if factor.name == name:
                return factor
        raise KeyError(name)

    @property
    def is_one_way(self) -> bool:
        """Exactly one factor (a treatment factor), no covariate and no interaction."""
        design = self.design
        return (len(design.factors) == 1 and design.factors[0].role == "treatment"
                and not design.covariates and not design.interactions)

    @property
    def data_route(self) -> Literal["one-factor", "design"]:
        """How the data stage reads this plan's data: ``one-factor`` (one treatment factor,
        nothing else: the compiled scan, the one-factor columns and aggregation out of core
        serve it) or ``design`` (every other design: the design's columns, else the rows)."""
        return "one-factor" if self.is_one_way else "design"

    @property
    def robust_absent(self) -> str | None:
        """None when the tests of the one-factor layout that assume neither equal variances
        (Welch) nor normal errors (Kruskal–Wallis) are defined for this design: one
        treatment factor, nothing else. Else why they are not computed, in one sentence."""
        if self.is_one_way:
            return None
        design = self.design
        has = [what for what, present in (
            ("more than one treatment factor", len(self.treatments) > 1),
            ("blocks", bool(self.blocks)),
            ("covariates", bool(design.covariates)),
            ("repeated measures", bool(self.within_factors))) if present]
        listed = ", ".join(has[:-1]) + (" and " if len(has) > 1 else "") + has[-1] if has else "another layout"
        return ("Welch's test and the Kruskal–Wallis test are defined for one treatment factor "
                f"without blocks, covariates or repeated measures; this design has {listed}, "
                "so they are not computed.")

    @property
    def model_terms(self) -> tuple[tuple[str, ...], ...]:
        """The between-unit model's terms in type 1 order.

        Covariates first, then blocks, then treatment factors (each in plan order), then
        the listed interactions among between-unit factors, lower orders first and in
        listed order within an order; the names of an interaction are put in plan order.
        """
        between = [f.name for f in self.between]
        interactions = [tuple(n for n in between if n in term) for term in self.design.interactions
                        if set(term) <= set(between)]
        return (*((c.name,) for c in self.design.covariates),
                *((f.name,) for f in self.blocks), *((f.name,) for f in self.treatments),
                *sorted(interactions, key=len))

    @property
    def within_strata(self) -> tuple[tuple[str, ...], ...]:
        """The within-unit error strata, each named by its term of within factors alone: every
        within factor (plan order), then the listed interactions among within factors only
        (lower orders first, names in plan order). A term's within factors name the
        stratum it is tested in (unit x those factors); an interaction of within factors
        that is not listed is no stratum, and nothing is tested in its contrasts."""
        within = [f.name for f in self.within_factors]
        crossed = [tuple(n for n in within if n in term) for term in self.design.interactions
                   if set(term) <= set(within)]
        return (*((n,) for n in within), *sorted(crossed, key=len))

    def stratum_terms(self, stratum: tuple[str, ...]) -> tuple[tuple[str, ...], ...]:
        """The terms tested in the within stratum `stratum`: the stratum's own term, then
        the listed interactions of between-unit factors with exactly its within factors
        (lower orders first, names in plan order)."""
        names = [f.name for f in self.design.factors]
        within = {f.name for f in self.within_factors}
        mixed = [tuple(n for n in names if n in term) for term in self.design.interactions
                 if set(term) & within == set(stratum) and not set(term) <= within]
        return (tuple(stratum), *sorted(mixed, key=len))

    @property
    def within_terms(self) -> tuple[tuple[str, ...], ...]:
        """The within-unit terms, stratum by stratum (`within_strata`, `stratum_terms`);
        empty without a within factor."""
        return tuple(term for stratum in self.within_strata for term in self.stratum_terms(stratum))

    def factor_of(self, contrast: Contrast) -> Factor:
        """The factor a contrast compares the levels of: its `factor`, else `Plan.factor`."""
        return self.factor if contrast.factor is None else self.factor_named(contrast.factor)

    def hypotheses_of(self, contrast: Contrast) -> int:
        """How many hypotheses a contrast expands into: per level of `by`, times those levels."""
        per_level = contrast.hypothesis_count(len(self.factor_of(contrast).levels))
        return per_level * (1 if contrast.by is None else len(self.factor_named(contrast.by).levels))

    def contrasts_for(self, outcome: str) -> tuple[Contrast, ...]:
        """The registered contrasts that apply to the outcome named `outcome`, in plan order."""
        return tuple(c for c in self.contrasts if c.applies_to(outcome))

    def exploratory_for(self, outcome: str) -> tuple[ExploratoryContrast, ...]:
        """The exploratory analyses that apply to the outcome named `outcome`, in plan order."""
        return tuple(c for c in self.exploratory if c.applies_to(outcome))

    @property
    def families(self):
        """The registered families of hypotheses, resolved from either form of
        `multiplicity` (`appendix.plan.family_plan`): a tuple of `FamilyPlan`."""
        from appendix.plan.family_plan import resolve

        return resolve(self)

    def hypothesis_count(self, outcome: str) -> int:
        """How many registered hypotheses the outcome named `outcome` is tested for."""
        return sum(self.hypotheses_of(c) for c in self.contrasts_for(outcome))
