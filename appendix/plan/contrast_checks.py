"""Cross-field checks of contrasts, exploratory analyses, multiplicity and fallbacks.

Run on the raw parsed study file (see `checks`): keys whose values have the wrong shape
are skipped here because field validation reports them. Defaults are those of the model,
so that a dumped plan and the file it came from give the same problems.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass

from appendix.plan.choices import KINDS, METHODS, hypotheses_of_kind
from appendix.plan.family_checks import RawContrast, family_problems
from appendix.plan.graph_checks import graphical_problems
from appendix.plan.raw import Found, items, mapping, number, repeats, text, unique
from appendix.plan.raw_design import RawDesign, RawFactor
from appendix.plan.wording import Loc, did_you_mean, one_of, show


#: Keys that belong to some kinds only.
_KIND_KEYS = {"weights": ("custom",), "degree": ("trend",), "spacing": ("trend",)}

#: Multiplicity methods that need every hypothesis of a family to come from one contrast kind.
_SINGLE_KIND = {"tukey": "pairwise", "dunnett": "versus-control"}

#: The diagnostics that may decide each fallback, and where the plan registers them.
_FALLBACK_TESTS = {"unequal-variance": ("brown-forsythe", "bartlett"), "non-normal": ("shapiro-wilk",)}
_ASSUMPTION_DEFAULTS = {"equal_variance": ["brown-forsythe", "bartlett"], "normality": "shapiro-wilk"}
_REGISTERED_IN = {"unequal-variance": "equal_variance", "non-normal": "normality"}


@dataclass(frozen=True)
class _Design:
    """What the contrast checks need to know of the design and outcomes."""

    design: RawDesign
    outcomes: tuple[str, ...]

    @classmethod
    def of(cls, raw: Mapping) -> _Design:
        names = tuple(o["name"] for _, o in items(raw.get("outcomes")) if isinstance(o.get("name"), str))
        return cls(design=RawDesign.of(raw), outcomes=names)


#: Stands for the factor when the contrast's factor is unknown: no level checks.
_UNKNOWN = RawFactor(index=0, name="", role=None, levels=(), ordered=None, control=None)


def contrast_problems(raw: Mapping) -> list[Found]:
    """Every cross-field problem of `contrasts`, `exploratory`, `multiplicity` and fallbacks."""
    design = _Design.of(raw)
    sections = [(("contrasts",), raw.get("contrasts")), (("exploratory",), raw.get("exploratory"))]
    found: list[Found] = []
    for loc, entries in sections:
        for i, entry in items(entries):
            found += _entry((*loc, i), entry, design)
    found += unique(sections, "id", "ids of contrasts and exploratory analyses")
    found += _multiplicity(raw, design)
    found += _fallbacks(raw)
    return found


def _entry(loc: Loc, entry: Mapping, design: _Design) -> list[Found]:
    factor, found = _factor(loc, entry, design.design)
    found += _by(loc, entry, design.design, factor)
    kind = entry.get("kind")
    if kind not in KINDS:
        return found + _common(loc, entry, design)
    found += _kind_keys(loc, entry, kind)
    if kind == "custom":
        found += _weights(loc, entry, factor)
    elif kind == "trend":
        found += _trend(loc, entry, factor)
    elif kind == "versus-control" and factor is not _UNKNOWN and factor.control is None:
        found.append(((*loc, "kind"),
                      f"got 'versus-control', but the factor {show(factor.name)} has no control "
                      f"level; allowed: 'versus-control' only when design.factors[{factor.index}]"
                      ".control names one"))
    return found + _common(loc, entry, design)


def _factor(loc: Loc, entry: Mapping, design: RawDesign) -> tuple[RawFactor, list[Found]]:
    """The factor whose levels the contrast compares, and the problems of its `factor` key."""
    name = entry.get("factor")
    eligible = design.contrastable
    names = [f.name for f in eligible]
    if name is None:
        if len(eligible) == 1:
            return eligible[0], []
        if len(eligible) > 1 and design.roles_valid:
            return _UNKNOWN, [((*loc, "factor"),
                               "required key is missing for a design with more than one "
                               f"treatment or within factor; allowed: {one_of(names)}")]
        return _UNKNOWN, []
    if not isinstance(name, str):
        return _UNKNOWN, []
    factor = design.named(name)
    if factor is not None and factor in eligible:
        return factor, []
    if factor is None and len(design.factors) == 1 and len(eligible) == 1:
        allowed = f"{show(names[0])}, the factor of the design"
    elif len(eligible) == 1:
        allowed = f"{show(names[0])}, the design's only treatment or within factor"
    else:
        allowed = f"one of the treatment or within factors {one_of(names)}"
    if factor is not None and factor.role == "block":
        return _UNKNOWN, [((*loc, "factor"), f"got {show(name)}, a block; allowed: {allowed} "
                                             "(blocks have no contrasts)")]
    if factor is not None or not names:
        return _UNKNOWN, []  # a factor whose role is itself a field error
    return _UNKNOWN, [((*loc, "factor"), f"got {show(name)}; allowed: {allowed}"
                                         f"{did_you_mean(name, names)}")]


def _by(loc: Loc, entry: Mapping, design: RawDesign, factor: RawFactor) -> list[Found]:
    """`by` names another treatment or within factor than the contrast's own."""
    name = entry.get("by")
    if not isinstance(name, str):
        return []
    by = design.named(name)
    others = [f.name for f in design.contrastable if f is not factor]
    if by is not None and by.role in ("treatment", "within") and by is not factor:
        return []
    if by is not None and by.role not in ("treatment", "within", "block"):
        return []  # its role is itself a field error
    if not others:
        allowed = "no 'by' in a design without a second treatment or within factor (remove it)"
    elif factor is _UNKNOWN:
        allowed = f"one of the treatment or within factors {one_of(others)}"
    else:
        allowed = f"a treatment or within factor other than {show(factor.name)}: {one_of(others)}"
    if by is None:
        got = f"got {show(name)}"
        allowed += did_you_mean(name, others)
    elif by is factor:
        got = f"got {show(name)}, the contrast's own factor"
    else:
        got = f"got {show(name)}, a block (blocks have no simple effects)"
    return [((*loc, "by"), f"{got}; allowed: {allowed}")]


def _kind_keys(loc: Loc, entry: Mapping, kind: str) -> list[Found]:
    return [((*loc, key), f"got {show(entry[key])} for kind {show(kind)}; allowed: "
                          f"{show(key)} only with kind {one_of(kinds)} (remove it)")
            for key, kinds in _KIND_KEYS.items()
            if entry.get(key) is not None and kind not in kinds]


def _weights(loc: Loc, entry: Mapping, factor: RawFactor) -> list[Found]:
    weights = entry.get("weights")
    if weights is None:
        return [((*loc, "weights"), "required key is missing for kind 'custom' "
                                    "(a weight per level name, summing to 0)")]
    if not isinstance(weights, Mapping):
        return []
    found: list[Found] = []
    for key in weights:
        name = text(key)
        if factor.levels and name not in factor.levels:
            found.append(((*loc, "weights", key),
                          f"got {show(name)}; allowed: one of the levels {one_of(factor.levels)}"
                          f"{did_you_mean(name, factor.levels)}"))
    values = [number(value) for value in weights.values()]
    if None in values or not all(math.isfinite(v) for v in values):
        return found  # each non-number is a field error; a sum of them says nothing
    largest = max((abs(v) for v in values), default=0.0)
    # Summed relative to the largest so that weights near the float limit cannot overflow.
    total = math.fsum(v / largest for v in values) * largest if largest else 0.0
    if largest == 0:
        found.append(((*loc, "weights"), "got no weight other than 0; allowed: weights that "
                                         "are not all 0, summing to 0"))
    elif abs(total) > 1e-9 * largest:
        found.append(((*loc, "weights"), f"got weights summing to {total:.10g}; allowed: weights "
                                         "summing to 0 (levels not listed weigh 0)"))
    return found


def _trend(loc: Loc, entry: Mapping, factor: RawFactor) -> list[Found]:
    found: list[Found] = []
    k = len(factor.levels)
    if factor.ordered is False:
        found.append(((*loc, "kind"),
                      f"got 'trend', but the factor {show(factor.name)} is not ordered; allowed: "
                      "a trend only over a factor with 'ordered: true'"))
    degree = entry.get("degree")
    if isinstance(degree, int) and not isinstance(degree, bool) and k >= 2 and degree > k - 1:
        found.append(((*loc, "degree"), f"got {degree}; allowed: a whole number from 1 to {k - 1} "
                                        f"(k - 1 for the {k} levels)"))
    spacing = entry.get("spacing")
    if not isinstance(spacing, (list, tuple)):
        return found
    values = [number(value) for value in spacing]
    if None in values:
        return found
    if k >= 2 and len(values) != k:
        found.append(((*loc, "spacing"), f"got {len(values)} number{'s' if len(values) != 1 else ''}; "
                                         f"allowed: {k} numbers, one per level in registered order"))
    for j in range(1, len(values)):
        if not values[j] > values[j - 1]:
            found.append(((*loc, "spacing", j), f"got {show(spacing[j])} after {show(spacing[j - 1])}; "
                                                "allowed: numbers strictly increasing in level order"))
    return found


def _common(loc: Loc, entry: Mapping, design: _Design) -> list[Found]:
    """Checks that hold for every kind: one-sided justification, outcomes."""
    found: list[Found] = []
    alternative = entry.get("alternative")
    if alternative in ("greater", "less") and entry.get("justification") is None:
        found.append(((*loc, "alternative"),
                      f"got {show(alternative)} without a justification; allowed: a one-sided "
                      "alternative only with 'justification' saying why, or 'two-sided'"))
    outcomes = entry.get("outcomes")
    if isinstance(outcomes, (list, tuple)):
        for j, name in enumerate(outcomes):
            if isinstance(name, str) and design.outcomes and name not in design.outcomes:
                found.append(((*loc, "outcomes", j),
                              f"got {show(name)}; allowed: one of the outcomes {one_of(design.outcomes)}"
                              f"{did_you_mean(name, design.outcomes)}"))
        found += repeats((*loc, "outcomes"), outcomes, "each outcome must be named once")
    return found


def _applies(entry: Mapping, outcome: str) -> bool:
    outcomes = entry.get("outcomes")
    return not isinstance(outcomes, (list, tuple)) or outcome in outcomes


def _multiplicity(raw: Mapping, design: _Design) -> list[Found]:
    settings = mapping(raw.get("multiplicity"))
    method = settings.get("method", "holm")
    contrasts = items(raw.get("contrasts"))
    registered = [RawContrast(index=i, id=entry["id"], kind=entry.get("kind"),
                              outcomes=tuple(o for o in design.outcomes if _applies(entry, o)),
                              count=_hypothesis_count(("contrasts", i), entry, design.design))
                  for i, entry in contrasts if isinstance(entry.get("id"), str)]
    found = family_problems(settings, registered,
                            [entry.get("id") for _, entry in items(raw.get("exploratory"))],
                            design.outcomes)
    if settings.get("families") is not None:
        return found  # the top-level keys are refused beside families; each family is checked
    if isinstance(method, str) and method in _SINGLE_KIND:
        found += _single_kind(method, contrasts, design)
        if settings.get("scope") == "primary-family":
            found.append((("multiplicity", "scope"),
                          f"got 'primary-family' with method {show(method)}; allowed: 'per-outcome' "
                          "(its simultaneous tests compare the levels of one outcome)"))
    order = settings.get("order")
    where = ("multiplicity", "order")
    if method == "fixed-sequence":
        if order is None and contrasts:
            found.append((where, "required key is missing for method 'fixed-sequence' "
                                 "(every contrast id exactly once, in testing order)"))
        elif isinstance(order, (list, tuple)):
            found += _order(order, contrasts, raw)
    elif order is not None and method in METHODS:
        found.append((where, f"got {show(order)} with method {show(method)}; allowed: 'order' only "
                             "with method 'fixed-sequence' (remove it, or choose that method)"))
    if method in METHODS:
        counts = {i: _hypothesis_count(("contrasts", i), entry, design.design) for i, entry in contrasts}
        exploratory = [entry.get("id") for _, entry in items(raw.get("exploratory"))]
        found += graphical_problems(settings, method, contrasts, counts, exploratory, design.outcomes)
    return found


def _hypothesis_count(loc: Loc, entry: Mapping, design: RawDesign) -> int | None:
    """How many hypotheses a contrast expands into on one outcome; None when the file
    does not tell (its factor, kind, degree or `by` is itself a problem)."""
    factor, _ = _factor(loc, entry, design)
    kind, degree = entry.get("kind"), entry.get("degree", 1)
    if (factor is _UNKNOWN or len(factor.levels) < 2 or kind not in KINDS
            or not isinstance(degree, int) or isinstance(degree, bool)):
        return None
    count = hypotheses_of_kind(kind, len(factor.levels), degree)
    by = entry.get("by")
    if by is None:
        return count
    by_factor = design.named(by)
    if by_factor is None or by_factor is factor or not by_factor.levels:
        return None
    return count * len(by_factor.levels)


def _single_kind(method: str, contrasts: list[tuple[int, Mapping]], design: _Design) -> list[Found]:
    """Tukey and Dunnett adjust one family of all pairs / all versus control per outcome."""
    kind = _SINGLE_KIND[method]
    found: list[Found] = []
    for i, entry in contrasts:
        if entry.get("kind") in KINDS and entry.get("kind") != kind:
            found.append((("contrasts", i, "kind"),
                          f"got {show(entry.get('kind'))} under multiplicity method {show(method)}; "
                          f"allowed: only {show(kind)} contrasts, one per outcome (or declare "
                          f"multiplicity.families: a {show(method)} family beside families of "
                          "other methods for the other contrasts)"))
    reported: set[int] = set()
    for outcome in design.outcomes:
        first: int | None = None
        for i, entry in contrasts:
            if entry.get("kind") != kind or not _applies(entry, outcome):
                continue
            if first is None:
                first = i
            elif i not in reported:
                reported.add(i)
                found.append((("contrasts", i, "kind"),
                              f"got a second {show(kind)} contrast for outcome {show(outcome)} "
                              f"(first at contrasts[{first}]) under multiplicity method "
                              f"{show(method)}; allowed: one {show(kind)} contrast per outcome"))
    return found


def _order(order: list, contrasts: list[tuple[int, Mapping]], raw: Mapping) -> list[Found]:
    ids = [entry["id"] for _, entry in contrasts if isinstance(entry.get("id"), str)]
    exploratory = [entry.get("id") for _, entry in items(raw.get("exploratory"))]
    found: list[Found] = []
    for j, name in enumerate(order):
        if not isinstance(name, str) or name in ids:
            continue
        if name in exploratory:
            message = (f"got {show(name)}, an exploratory analysis; allowed: registered contrast "
                       "ids only (exploratory analyses are never adjusted with the plan)")
        elif ids:
            message = f"got {show(name)}; allowed: one of the contrast ids {one_of(ids)}{did_you_mean(name, ids)}"
        else:
            message = f"got {show(name)}; allowed: ids of entries under 'contrasts' (there are none)"
        found.append((("multiplicity", "order", j), message))
    found += repeats(("multiplicity", "order"), order, "each contrast id must be listed once")
    missing = [name for name in ids if name not in order]
    if missing:
        found.append((("multiplicity", "order"),
                      f"got a list without {one_of(missing, 'and')}; allowed: every contrast id "
                      "exactly once"))
    return found


def _fallbacks(raw: Mapping) -> list[Found]:
    assumptions = mapping(raw.get("assumptions"))
    rules = assumptions.get("fallbacks")
    method = mapping(raw.get("analysis")).get("method", "classical")
    found: list[Found] = []
    if isinstance(rules, (list, tuple)) and rules and method in ("welch", "rank-based"):
        found.append((("assumptions", "fallbacks"),
                      f"got {show(rules)} with analysis method {show(method)}; allowed: fallbacks only "
                      "with analysis method 'classical' (the robust analysis is already registered)"))
    for i, rule in items(rules):
        when, test = rule.get("when"), rule.get("test")
        if not isinstance(when, str) or when not in _FALLBACK_TESTS or not isinstance(test, str):
            continue
        loc = ("assumptions", "fallbacks", i, "test")
        if test not in _FALLBACK_TESTS[when]:
            if test in _FALLBACK_TESTS["unequal-variance"] + _FALLBACK_TESTS["non-normal"]:
                found.append((loc, f"got {show(test)} for when {show(when)}; allowed: "
                                   f"{one_of(_FALLBACK_TESTS[when])}"))
            continue
        key = _REGISTERED_IN[when]
        registered = assumptions.get(key, _ASSUMPTION_DEFAULTS[key])
        listed = registered if isinstance(registered, (list, tuple)) else [registered]
        if test not in listed:
            found.append((loc, f"got {show(test)}, but assumptions.{key} does not register it; "
                               f"allowed: a test the plan computes (add it to assumptions.{key})"))
    return found
