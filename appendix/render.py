"""The appendix as one self-contained HTML file, and that file as a PDF.

`render_html` reads only the typed results (`appendix.results.StudyResults`, what
results.json holds) and the figures' SVG text; the templates read their attributes, and
what a template needs derived from them is computed by the small functions below. A fresh
Jinja2 environment is made per call (autoescape on, undefined names are errors) with the
number filters of `appendix.numbers`, configured by `RenderOptions`; only the compiled
template code is kept between calls (`_CompiledTemplates`). `render_pdf` hands
the HTML to WeasyPrint with a fetcher that refuses every URL except ``data:``, and with the
``@font-face`` rules of the fonts the package ships (`font_faces`), so that no installed
font takes part in the layout.

The PDF is PDF/A-3b (ISO 19005-3, conformance level B) through WeasyPrint's
``pdf_variant``, and carries its evidence as associated files (`PdfAttachment`: the study
file, results.json, the run manifest). WeasyPrint 70 does not read SOURCE_DATE_EPOCH: the
document and attachment dates are the `dated` time passed in (none when None), the file
identifier is the MD5 of the PDF's objects (pydyf's ``identifier=True``), and attachment
media types are given explicitly, so the same HTML, attachments and date give
byte-identical PDFs.
"""

from __future__ import annotations

import base64
import contextlib
import datetime as _dt
import logging
import math
import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path
from types import MappingProxyType
from typing import Any, Literal

import jinja2
from jinja2.bccache import Bucket
from markupsafe import Markup

from appendix import numbers
from appendix.captions import Captions
from appendix.figure_spec import FIGURE_KINDS, PLOT_POINTS, UNIT_FLOW_FIGURE, cells_label, cells_words
from appendix.methods import (FALLBACK_CONDITIONS, TEST_NAMES, adjustment, methods_used,
                              references_for)
from appendix.results import (ContrastFamily, Diagnostics, HypothesisResult, LevelCount, ModelRow,
                              ModelTable, OutcomeResult, PlannedNumbers, RegisteredFamily,
                              StatWarning, StudyResults)
from appendix.typefaces import FONT_FACES, font_folder, template_root

PAPER_SIZES = ("A4", "Letter")


@dataclass(frozen=True)
class RenderOptions:
    """How the appendix is typeset.

    `decimals` fixes the decimals of every estimate column; None chooses them per column
    (`appendix.numbers.decimals_for`). `statistic_decimals` applies to F, H, W and
    chi-squared; `effect_decimals` to effect sizes and their intervals.
    """

    paper: Literal["A4", "Letter"] = "A4"
    decimals: int | None = None
    statistic_decimals: int = 2
    effect_decimals: int = 2

    def __post_init__(self) -> None:
        if self.paper not in PAPER_SIZES:
            raise ValueError(f"paper must be one of {PAPER_SIZES}, got {self.paper!r}")
        for name in ("decimals", "statistic_decimals", "effect_decimals"):
            value = getattr(self, name)
            if value is not None and not 0 <= value <= 10:
                raise ValueError(f"{name} must be between 0 and 10, got {value!r}")


class RefusedURL(ValueError):
    """The PDF renderer asked for a URL; the appendix is self-contained, so none is fetched."""


def _filters(options: RenderOptions) -> dict[str, Any]:
    """Template filters: `appendix.numbers` with the options' decimals filled in."""

    def column_decimals(values) -> int:
        if options.decimals is not None:
            return options.decimals
        return numbers.decimals_for(list(values))

    def mean_decimals(outcome: OutcomeResult) -> int:
        """The decimals of an outcome's group means, which its differences of means (the
        contrast tables and the sentences about them) share."""
        return column_decimals(g.mean for g in outcome.descriptives.groups)

    def hypothesis_decimals(h: HypothesisResult, outcome: OutcomeResult) -> int:
        """The decimals of hypothesis `h`'s estimate in its family's table: those of the
        outcome's group means, or, for a rank-based family (differences in mean ranks), those
        its estimates choose as one column."""
        family = next((f for f in outcome.contrasts if any(x is h for x in f.hypotheses)), None)
        if family is not None and family.method == "rank-based":
            return column_decimals(x.estimate for x in family.hypotheses)
        return mean_decimals(outcome)

    def estimate_decimals(conclusion, outcome: OutcomeResult | None) -> int:
        """The decimals of the table that shows a conclusion's estimates: a registered
        hypothesis's family table (`hypothesis_decimals`), else the outcome's means."""
        if outcome is None:
            return 2 if options.decimals is None else options.decimals
        # the hypothesis conclusions follow the registered hypotheses one for one
        for said, h in zip(outcome.hypothesis_conclusions, _registered_hypotheses(outcome)):
            if said is conclusion:
                return hypothesis_decimals(h, outcome)
        return mean_decimals(outcome)

    def sentence(conclusion, outcome: OutcomeResult | None = None) -> Markup:
        """A conclusion typeset; its estimates with the decimals of the table that shows
        them (`estimate_decimals`)."""
        return numbers.write_parts(
            conclusion.parts, html=True, statistic_decimals=options.statistic_decimals,
            effect_decimals=options.effect_decimals,
            estimate_decimals=estimate_decimals(conclusion, outcome))

    return {
        "fixed": numbers.fixed,
        "stat": lambda v: numbers.fixed(v, options.statistic_decimals),
        "effect": lambda v: numbers.fixed(v, options.effect_decimals),
        # a statistic bounded by 1 (Mauchly's W, epsilon): the statistics' decimals, no leading zero
        "bounded_stat": lambda v: numbers.proportion(v, options.statistic_decimals),
        "proportion": lambda v, decimals=None: numbers.proportion(
            v, options.effect_decimals if decimals is None else decimals),
        "effect_interval": lambda lo, hi, bounded=False: numbers.tie(numbers.interval(
            lo, hi, options.effect_decimals, bounded)),
        "interval": lambda lo, hi, decimals=2, bounded=False: numbers.tie(
            numbers.interval(lo, hi, decimals, bounded)),
        "pvalue": numbers.p_value,
        "p_clause": lambda p: numbers.prose_html(numbers.p_clause(p)),
        "prose": numbers.prose_html,
        "breakable": numbers.breakable,
        "df": numbers.df_value,
        "percent": numbers.percent,
        "alpha": _alpha,
        # "α = .05" in running text, typeset as the sentences' number clauses are
        "alpha_clause": lambda a: numbers.prose_html(numbers.write_number("alpha", a)),
        "column_decimals": column_decimals,
        "sentence": sentence,
        "mean_decimals": mean_decimals,
        "hypothesis_decimals": hypothesis_decimals,
        "cells_label": cells_label,
        "cells_words": cells_words,
        "short_hash": lambda digest: digest[:12],
        "level_counts": _level_counts,
        "planned_counts": planned_counts,
        "upper_first": _upper_first,
        "contrast_interval": _contrast_interval,
        "error_bound": _error_bound,
        "adjustment": lambda family: adjustment(family.multiplicity, family.method),
        "words_list": _words_list,
        "word": _word,
        "squared_unit": _squared_unit,
    }


def _words_list(names) -> str:
    """``a``, ``a and b``, ``a, b and c``."""
    names = [str(n) for n in names]
    return ", ".join(names[:-1]) + (" and " if len(names) > 1 else "") + (names[-1] if names else "")


#: Words the templates show for the results' stable identifiers.
WORDS: Mapping[str, Mapping[Any, str]] = MappingProxyType({
    "analyses": MappingProxyType({
        "classical": "classical (pooled variance)", "welch": "Welch (unequal variances)",
        "rank-based": "rank-based (Dunn)", "marginal-means": "estimated marginal means"}),
    "analysis_notes": MappingProxyType({
        # our own markup (italic test statistics), so marked safe for the autoescaping templates
        "classical": Markup("Estimates are weighted sums of the group means; <i>t</i> on the "
                            "within-group degrees of freedom (pooled variance)."),
        "welch": Markup("Estimates are weighted sums of the group means; <i>t</i> on "
                        "Welch\u2013Satterthwaite degrees of freedom (group variances not "
                        "pooled)."),
        "rank-based": Markup("Estimates are contrasts of the groups' mean ranks; <i>z</i> from "
                             "Dunn's (1964) rank test, corrected for ties."),
        "marginal-means": Markup("Estimates are weighted sums of the model's estimated marginal "
                                 "means; <i>t</i> on the model's residual degrees of freedom."),
        # added by the contrasts template only when the family holds such hypotheses
        "marginal-means-simple": Markup("A simple effect compares the levels within one level "
                                        "of another factor."),
        "marginal-means-within": Markup("Contrasts of a within-unit factor are tested on the "
                                        "units' own contrast scores, which needs no "
                                        "sphericity.")}),
    "joint_laws": MappingProxyType({  # keys of ContrastFamily.joint
        "studentized-range": "the studentized range of the levels' means",
        "many-to-one": "Dunnett's joint law of the comparisons with the shared control",
        "multivariate-t": "the joint multivariate t distribution of the family's estimates",
        "multivariate-t-approximate": "an approximate joint multivariate t distribution of the "
                                      "family's estimates (see the notes below)"}),
    "residuals": MappingProxyType({  # keys of NormalityTest.residuals
        "model": "the model residuals",
        "unit-means": "the residuals of the unit means, on which the between-units tests rely",
        "within-units": "the within-units residuals (each value less its unit's mean and the "
                        "fitted within-unit effects), on which the within-units tests rely"}),
    "scopes": MappingProxyType({
        "per-outcome": "across this outcome's hypotheses",
        "primary-family": "across the hypotheses of every primary outcome",
        "declared": "over the whole registered family",
        "exploratory": "within this exploratory analysis"}),
    "decisions": MappingProxyType({
        "reject": "rejected", "retain": "not rejected",
        "not-tested": "not tested under the plan", "unavailable": "unavailable"}),
    # exploratory analyses test nothing that was registered: only a nominal reading
    "exploratory_decisions": MappingProxyType({
        "reject": "p < α (nominal)", "retain": "p ≥ α (nominal)",
        "not-tested": "not tested", "unavailable": "unavailable"}),
    "marks": MappingProxyType({
        "registered": "Registered result",
        "comparison": "Shown for comparison, not the registered result"}),
    "conditions": MappingProxyType(FALLBACK_CONDITIONS),
    "tests": MappingProxyType(TEST_NAMES),
    "deviations": MappingProxyType({  # keys of Deviation.kind
        "registered-contingency": "Pre-specified fallback rule applied",
        "plan-not-registered": "Plan not registered",
        "plan-changed": "Plan changed since registration",
        "outcome-added": "Outcome added",
        "outcome-removed": "Outcome removed",
        "outcome-role-switched": "Outcome switched between primary and secondary",
        "below-minimum-n": "Fewer units than the registered minimum",
        "below-minimum-total": "Fewer units in all than the registered minimum",
        "level-without-units": "Level without units",
        "missing-above-limit": "Missing data above the registered limit",
        "acknowledgement-unmatched": "Acknowledgement matches no deviation"}),
    "findings": MappingProxyType({  # keys of Finding.code
        "below-planned-n": "Fewer units analysed than planned",
        "level-without-units": "Level without units",
        "level-without-values": "Level without values",
        "level-read-by-value": "Level read by its value",
        "covariate-missing": "Covariate value missing",
        "incomplete-units": "Units without every repeated value"}),
    "input_roles": MappingProxyType({  # keys of InputFile.role
        "study": "Study file", "data": "Data file", "lock": "Registration lock"}),
    "factor_roles": MappingProxyType({  # keys of FactorInfo.role
        "treatment": "Treatment factor", "block": "Block factor", "within": "Within-unit factor"}),
    "sums_of_squares": MappingProxyType({  # values of ModelTable.ss_type
        1: "type 1 (sequential, in the order listed)",
        2: "type 2 (each term adjusted for every term that does not contain it)",
        3: "type 3 (each term adjusted for all others, sum-to-zero coding)"}),
    "variance_symbols": MappingProxyType({  # keys of VarianceTest.method: its statistic
        "brown-forsythe": "F", "bartlett": "\u03c7\u00b2"}),
    "bases": MappingProxyType({  # keys of AssumptionStatus.basis
        "checked": "Checked", "attested": "Attested by the plan", "not-attested": "Not attested",
        "by-construction": "By construction"}),
    "settings": MappingProxyType({  # keys of PlanSetting.key; an unlisted key is shown as is
        "alpha": "Significance level α",
        "design.sums_of_squares": "Type of sums of squares",
        "assumptions.normality": "Normality test",
        "assumptions.equal_variance": "Equal-variance tests",
        "assumptions.outliers.method": "Outlier rule",
        "assumptions.outliers.threshold": "Outlier threshold, |studentized residual|",
        "analysis.method": "Primary analysis",
        "multiplicity.method": "Multiplicity adjustment",
        "multiplicity.scope": "Multiplicity family",
        "repeated.missing": "Missing repeated observations"}),
})


_AS_IS = object()


def _word(key: Any, group: str, default: Any = _AS_IS) -> Any:
    """The words `WORDS[group]` gives a stable identifier; an unlisted one is shown as it
    is, or as `default` when one is given."""
    return WORDS[group].get(key, key if default is _AS_IS else default)


#: A unit's square where its last symbol is already a power: mm² squared is mm⁴.
_SQUARED_POWERS = MappingProxyType({"\u00b2": "\u2074", "\u00b3": "\u2076"})


def _squared_unit(unit: str | None) -> str | None:
    """The unit of a sum of squares: ``mg²``, ``%²``, ``mm⁴`` for mm², and ``(mg/L)²``
    where the unit is several symbols; None without a unit."""
    if not unit:
        return None
    if unit[-1] in _SQUARED_POWERS:
        return unit[:-1] + _SQUARED_POWERS[unit[-1]]
    if any(mark in unit for mark in (" ", "/", "\u00b7")):
        return f"({unit})\u00b2"
    return unit + "\u00b2"


def _covariate_use(outcomes: Sequence[OutcomeResult]) -> list[tuple[str, list[str]]]:
    """Each covariate (by label, in order of first use) with the labels of the outcomes
    it adjusts."""
    adjusted: dict[str, list[str]] = {}
    for o in outcomes:
        for c in o.covariate_slopes:
            adjusted.setdefault(c.label, []).append(o.label)
    return list(adjusted.items())


def _sums_of_squares_table(outcomes: Sequence[OutcomeResult]) -> ModelTable | None:
    """The first between-units table of several terms, whose sums-of-squares type the
    cover states (with one term every type gives the same table); None without one."""
    return next((t for o in outcomes for t in o.tables if len(t.rows) > 1 and not t.within),
                None)


def _first_treatment_factor(results: StudyResults) -> str | None:
    """The name of the first treatment factor, None in a design without one."""
    return next((f.name for f in results.factors if f.role == "treatment"), None)


def _first_treatment_row(outcome: OutcomeResult, factor: str | None) -> ModelRow | None:
    """The row of `factor`'s own term in the outcome's first variance table (the F test
    the reference-F figure and the one-way table note speak of); None without it."""
    if factor is None or not outcome.tables:
        return None
    return next((row for row in outcome.tables[0].rows if row.term == (factor,)), None)


def _registered_hypotheses(outcome: OutcomeResult) -> list[HypothesisResult]:
    """The hypotheses of the outcome's registered families, family by family in plan order
    (what the forest plot draws)."""
    return [h for f in outcome.contrasts if f.registered for h in f.hypotheses]


@dataclass(frozen=True)
class OverviewRow:
    """A row of the table of every registered hypothesis: a hypothesis of a registered
    contrast family (`hypothesis`, `family`, `adjusted_over` in words), or, for an
    outcome without registered contrasts, the test of its first treatment term in force
    (`test`: the variance table's row, or Welch's or the rank-based test where a
    registered fallback put it in force), its `p` unadjusted. `decision` is a
    `Conclusion.decision` or `HypothesisResult.decision`."""

    outcome: OutcomeResult
    label: str
    decision: str
    p: float | None
    hypothesis: HypothesisResult | None = None
    adjusted_over: str | None = None
    test: str | None = None


def _adjusted_over(family: ContrastFamily, record: RegisteredFamily | None) -> str:
    """Which registered family a hypothesis's p is adjusted over, in words."""
    name = adjustment(family.multiplicity, family.method).name
    if family.multiplicity == "none":
        return "not adjusted"
    n = record.hypotheses if record else len(family.hypotheses)
    if record is None or record.scope == "per-outcome":
        return f"{name} over this outcome's {n} hypotheses"
    if record.scope == "primary-family":
        return f"{name} over the {n} hypotheses of the primary outcomes"
    label = f" ({record.label})" if record.label else ""
    return f"{name} over the {n} hypotheses of family {record.id}{label}"


def _hypothesis_overview(results: StudyResults, outcomes: list[OutcomeResult]) -> list[OverviewRow]:
    """Every registered hypothesis, outcome by outcome (primary first), family by family
    in plan order; an outcome without registered contrasts gives the row of the test of
    its first treatment term in force (none in a design without a treatment factor)."""
    records = {f.id: f for f in results.families}
    rows: list[OverviewRow] = []
    factor = _first_treatment_factor(results)
    for o in outcomes:
        shares = [f for f in o.contrasts if f.registered]
        for f in shares:
            over = _adjusted_over(f, records.get(f.family) if f.family else None)
            rows.extend(OverviewRow(o, h.label, h.decision, h.p_adjusted, hypothesis=h,
                                    adjusted_over=over) for h in f.hypotheses)
        if any(f.hypotheses for f in shares):
            continue
        row = _first_treatment_row(o, factor)
        if row is None:
            continue
        test, p = "F", row.p
        if o.robust is not None and o.selected_method == "welch":
            test, p = "welch", o.robust.welch.p
        elif o.robust is not None and o.selected_method == "rank-based":
            test, p = "kruskal", o.robust.kruskal.p
        decision = "unavailable" if p is None else ("reject" if p < results.alpha else "retain")
        rows.append(OverviewRow(o, row.label, decision, p, test=test))
    return rows


def _diagnostic_warnings(diagnostics: Diagnostics) -> list[StatWarning]:
    """The warnings of the normality and equal-variance tests, in the order of their table."""
    tests = [t for t in (diagnostics.normality, diagnostics.within_normality) if t is not None]
    return [w for t in (*tests, *diagnostics.equal_variance) for w in t.warnings]


def _contrast_interval(h: HypothesisResult, decimals: int) -> str:
    """A contrast's CI in brackets; a one-sided interval's open end is written as infinity."""
    low, high = h.ci_low, h.ci_high
    if low is None and high is None:
        return numbers.DASH
    left = numbers.MINUS + "\u221e" if low is None and h.alternative == "less" else \
        numbers.fixed(low, decimals)
    right = "\u221e" if high is None and h.alternative == "greater" else \
        numbers.fixed(high, decimals)
    return numbers.tie(f"[{left}, {right}]")


def _error_bound(value: float) -> str:
    """The smallest power of ten at or above a positive error bound: 3.2e-5 -> ``.0001``."""
    exponent = max(math.ceil(math.log10(value)), -12) if value > 0 else -12
    return numbers.no_leading_zero(f"{10.0 ** exponent:.{max(-exponent, 0)}f}")


#: Unicode bidirectional embedding, override and isolate controls (U+202A-U+202E,
#: U+2066-U+2069) and the invisible marks U+200E, U+200F, U+061C: in a label they can make
#: text read other than it is stored (Boucher & Anderson 2021, "Trojan Source").
_BIDI = re.compile("[\u202a-\u202e\u2066-\u2069\u200e\u200f\u061c]")


def visible_controls(value: Any) -> Any:
    """Every bidirectional control in a value shown as ``[U+202E]``, visibly, so that user
    text reads as stored; used as the templates' finalize hook, so it covers every value."""
    if not isinstance(value, str) or not _BIDI.search(value):
        return value
    shown = _BIDI.sub(lambda m: f"[U+{ord(m.group()):04X}]", str(value))
    return Markup(shown) if isinstance(value, Markup) else shown


def _upper_first(text: str) -> str:
    """Capitalise a sentence start only; `str.capitalize` would lower "HbA1c" to "Hba1c"."""
    return text[:1].upper() + text[1:]


def _level_counts(items: Sequence[LevelCount], levels: list[str]) -> list[int]:
    """Counts in registered level order; a level absent from `items` counts zero."""
    by_level = {item.level: item.n for item in items}
    return [by_level.get(level, 0) for level in levels]


def planned_counts(planned: PlannedNumbers | None, levels: list[str]) -> list[int | None] | None:
    """The unit flow's planned row: the planned number per group (None where the plan
    plans only a total), then the planned total; None without ``data.planned_n``."""
    if planned is None:
        return None
    per_group = [planned.per_group] * len(levels)
    total = planned.total if planned.total is not None else (
        planned.per_group * len(levels) if planned.per_group is not None else None)
    return [*per_group, total]


def _alpha(value: float) -> str:
    """A significance level as APA writes it: 0.05 -> ``.05``, 0.001 -> ``.001``."""
    return numbers.no_leading_zero(f"{value:g}")


_SVG_PROLOGUE = re.compile(r"^\s*(<\?xml[^>]*\?>\s*)?(<!DOCTYPE[^>]*>\s*)?", re.S)


def _inline_svg(svg: str) -> Markup:
    """SVG text from our own figure code, ready to sit inside HTML (prologue dropped)."""
    return Markup(_SVG_PROLOGUE.sub("", svg, count=1))


def _data_checksum(results: StudyResults) -> str:
    """SHA-256 of the data file (role ``data``, else the first input) for the header."""
    inputs = list(results.inputs)
    data = [i for i in inputs if i.role == "data"] or inputs
    return data[0].sha256 if data else ""


def _tool_version(results: StudyResults) -> str:
    for item in results.software:
        if item.name == "appendix":
            return item.version
    return "unknown"


def _ordered_outcomes(results: StudyResults) -> list[OutcomeResult]:
    """Outcomes with the primary ones first, otherwise in registered order."""
    return sorted(results.outcomes, key=lambda o: o.role != "primary")


class _CompiledTemplates(jinja2.BytecodeCache):
    """Compiled template code kept in memory for the life of the process.

    Jinja keys each entry by the template's name and a checksum of its source, so a changed
    template is compiled afresh; the environment, its filters and options are still made
    per call, so the cache holds no setting and cannot change what is rendered. Compiled
    code depends on the lexer and escaping settings, so only `render_html`, whose settings
    are fixed, uses it. Compiling the templates costs about twenty times as much as
    rendering them.
    """

    def __init__(self) -> None:
        self._code: dict[str, bytes] = {}

    def load_bytecode(self, bucket: Bucket) -> None:
        code = self._code.get(bucket.key)
        if code is not None:
            bucket.bytecode_from_string(code)

    def dump_bytecode(self, bucket: Bucket) -> None:
        self._code[bucket.key] = bucket.bytecode_to_string()


_COMPILED = _CompiledTemplates()


def render_html(results: StudyResults, figures: dict[str, str], options: RenderOptions) -> str:
    """The appendix as one self-contained HTML document (inline CSS and SVG, no scripts)
    of the typed `results`."""
    root = template_root()
    env = jinja2.Environment(
        loader=jinja2.FileSystemLoader(str(root)),
        bytecode_cache=_COMPILED,
        autoescape=True,
        undefined=jinja2.StrictUndefined,
        trim_blocks=True,
        lstrip_blocks=True,
        keep_trailing_newline=True,
        finalize=visible_controls,
    )
    env.filters.update(_filters(options))
    methods = methods_used(results)
    records = {f.id: f for f in results.families}
    # numbers, lists of tables and figures, and notes said once, as the templates write them
    captions = Captions()
    return env.get_template("appendix.html.j2").render(
        r=results,
        outcomes=_ordered_outcomes(results),
        figures={key: _inline_svg(svg) for key, svg in figures.items()},
        figure_kinds=FIGURE_KINDS,
        unit_flow_figure=UNIT_FLOW_FIGURE,
        plot_points=PLOT_POINTS,
        options=options,
        family_record=lambda family: records.get(family.family) if family.family else None,
        covariate_use=_covariate_use,
        sums_of_squares_table=_sums_of_squares_table,
        first_treatment_factor=_first_treatment_factor,
        first_treatment_row=_first_treatment_row,
        registered_hypotheses=_registered_hypotheses,
        hypothesis_overview=_hypothesis_overview(results, _ordered_outcomes(results)),
        diagnostic_warnings=_diagnostic_warnings,
        methods=methods,
        references=references_for(methods),
        data_sha256=_data_checksum(results),
        tool_version=_tool_version(results),
        captions=captions,
        table_number=captions.table_number,
        figure_number=captions.figure_number,
    )


def font_faces() -> str:
    """The ``@font-face`` rules of the shipped fonts (`appendix.typefaces.FONT_FACES`), each
    file inlined as a ``data:`` URL (the offline fetcher serves nothing else). Only the PDF
    carries them: the HTML's Content-Security-Policy loads no fonts, and a browser reflows
    the page anyway."""
    folder = font_folder()
    rules = []
    for family, weight, style, name in FONT_FACES:
        encoded = base64.b64encode((folder / name).read_bytes()).decode("ascii")
        rules.append(f'@font-face {{ font-family: "{family}"; font-weight: {weight}; '
                     f'font-style: {style}; src: url("data:font/ttf;base64,{encoded}"); }}')
    return "\n".join(rules)


def _offline_fetcher():
    """A WeasyPrint URL fetcher that serves ``data:`` URLs and refuses every other URL."""
    from weasyprint import URLFetcher

    class OfflineFetcher(URLFetcher):
        def fetch(self, url, headers=None):
            if url.startswith("data:"):
                return super().fetch(url, headers)
            raise RefusedURL(f"refused to fetch {url}: the appendix must be self-contained")

    return OfflineFetcher()


_SVG_STYLE = re.compile(
    r"^Ignored `(fill|stroke|clip|font|text|opacity|stop|marker|paint|mask|shape)[a-z-]*: "
    r"[^`]*` at \d+:\d+, unknown property\.$")


class _SvgStyleNotes(logging.Filter):
    """Drops WeasyPrint's notes that inline SVG's own style properties (``fill``, ``stroke-*``)
    are unknown to HTML CSS; its SVG renderer applies them, so they are false alarms and
    would bury real warnings. Every other record passes."""

    def filter(self, record: logging.LogRecord) -> bool:
        return not _SVG_STYLE.match(record.getMessage())


@contextlib.contextmanager
def _svg_notes_dropped():
    """WeasyPrint's logger without the SVG style false alarms, for one call only."""
    notes = _SvgStyleNotes()
    logger = logging.getLogger("weasyprint")
    logger.addFilter(notes)
    try:
        yield
    finally:
        logger.removeFilter(notes)


PDF_VARIANT = "pdf/a-3b"

#: PDF/A-3 AFRelationship values we use (ISO 19005-3 / ISO 32000-2 section 7.11.3).
RELATIONSHIPS = ("Source", "Data", "Supplement")


@dataclass(frozen=True)
class PdfAttachment:
    """A file embedded in the PDF as a PDF/A-3 associated file.

    `relationship` is the AFRelationship: ``Source`` (what the document was made from,
    e.g. the study file), ``Data`` (results.json) or ``Supplement`` (the run manifest).
    """

    name: str
    content: bytes
    media_type: str
    description: str
    relationship: str = "Data"

    def __post_init__(self) -> None:
        if self.relationship not in RELATIONSHIPS:
            raise ValueError(f"relationship must be one of {RELATIONSHIPS}, "
                             f"got {self.relationship!r}")


def _w3c_date(moment: _dt.datetime) -> str:
    """A UTC time in the W3C date profile WeasyPrint's metadata expects."""
    return moment.astimezone(_dt.timezone.utc).strftime("%Y-%m-%dT%H:%M:%SZ")


def _weasy_attachment(item: PdfAttachment, fetcher, dated: _dt.datetime):
    """A WeasyPrint Attachment served as a ``data:`` URL, so its media type is ours and
    not the platform's guess, with fixed dates (WeasyPrint would use the clock)."""
    from weasyprint import Attachment

    url = f"data:{item.media_type};base64,{base64.b64encode(item.content).decode('ascii')}"
    utc = dated.astimezone(_dt.timezone.utc)
    return Attachment(url=url, url_fetcher=fetcher, name=item.name,
                      description=item.description, created=utc, modified=utc,
                      relationship=item.relationship)


def _unique_associated_files(_document, pdf) -> None:
    """WeasyPrint 70 lists each attachment twice in the catalog's AF array (once from the
    EmbeddedFiles names, once from the file specifications); keep each one once."""
    listed = pdf.catalog.get("AF")
    if listed:
        listed[:] = list(dict.fromkeys(listed))


def typeset(html: str, options: RenderOptions):
    """Lay `html` out on the options' paper with the shipped fonts: WeasyPrint's
    Document, whose pages and layout boxes the PDF is written from (tests measure them)."""
    # imported here: commands that write no PDF should not pay for loading WeasyPrint
    from weasyprint import CSS, HTML
    from weasyprint.text.fonts import FontConfiguration

    fetcher = _offline_fetcher()
    paper = CSS(string=f"@page {{ size: {options.paper}; }}", url_fetcher=fetcher)
    fonts = FontConfiguration()
    faces = CSS(string=font_faces(), url_fetcher=fetcher, font_config=fonts)
    with _svg_notes_dropped():
        return HTML(string=html, url_fetcher=fetcher).render(
            stylesheets=[faces, paper], font_config=fonts)


def render_pdf(html: str, out_path: Path, options: RenderOptions, *,
               attachments: Sequence[PdfAttachment] = (),
               dated: _dt.datetime | None = None) -> None:
    """Typeset `html` as a PDF/A-3b file at `out_path` on the options' paper size.

    `attachments` are embedded as associated files; `dated` sets the creation and
    modification dates of the document and its attachments (pass the run time, which
    is SOURCE_DATE_EPOCH when that is set). Without `dated` the PDF carries no date;
    attachments need one.
    """
    if attachments and dated is None:
        raise ValueError("attachments need a date: pass dated=")
    document = typeset(html, options)
    if dated is not None:
        document.metadata.created = document.metadata.modified = _w3c_date(dated)
    fetcher = _offline_fetcher()
    with _svg_notes_dropped():
        document.write_pdf(
            Path(out_path), finisher=_unique_associated_files,
            pdf_variant=PDF_VARIANT, pdf_identifier=True,
            attachments=[_weasy_attachment(a, fetcher, dated) for a in attachments])
