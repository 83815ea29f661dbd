"""Plan choices the literature warns against: notes for `appendix check`, never refusals.

A plan may register any of these choices; the notes say what the published guidance
says, with the reference, so that the statistician decides knowingly.

>>> [note.code for note in lint(plan)]  # doctest: +SKIP
['pre-test-fallback', 'one-sided']
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from appendix.plan.model import Plan
from appendix.plan.wording import key_path, one_of

# Short citations, recalled from memory (author, year, journal, volume:pages); the EMA
# reference number was checked against the agency's document page. The appendix's methods
# section gives the full references.
ZIMMERMAN_2004 = "Zimmerman 2004, Br J Math Stat Psychol 57:173-181"
ROCHON_2012 = "Rochon, Gondan & Kieser 2012, BMC Med Res Methodol 12:81"
DELACRE_2019 = "Delacre, Leys, Mora & Lakens 2019, Int Rev Soc Psychol 32(1):13"
ICH_E9_MULTIPLICITY = ("ICH E9 1998, section 5.6; EMA 2017, guideline on multiplicity issues "
                       "in clinical trials, EMA/CHMP/44762/2017")
ICH_E9_ONE_SIDED = "ICH E9 1998, section 5.5"
# From memory, not checked against the texts here.
LANGSRUD_2003 = "Langsrud 2003, Stat Comput 13:163-167"
FOX_2016 = "Fox 2016, Applied Regression Analysis and Generalized Linear Models, 3rd ed., Sage"
HUITEMA_2011 = "Huitema 2011, The Analysis of Covariance and Alternatives, 2nd ed., Wiley"


@dataclass(frozen=True)
class Note:
    """One lint: a stable `code`, the key `path` it concerns, the `message` and its `reference`."""

    code: str
    path: str
    message: str
    reference: str

    def __str__(self) -> str:
        return f"{self.path}: {self.message} (see {self.reference})"


def lint(plan: Plan) -> tuple[Note, ...]:
    """Every note on the plan, in the order of the study file's sections."""
    return (*_sequential(plan), *_slopes(plan), *_pre_tests(plan), *_unadjusted(plan),
            *_separate_families(plan), *_one_sided(plan))


def _term(names: tuple[str, ...]) -> str:
    return " x ".join(names)


def _sequential(plan: Plan) -> list[Note]:
    """Type 1 sums of squares of a model with several terms depend on their order."""
    terms = plan.model_terms
    if plan.design.sums_of_squares != 1 or len(terms) < 2:
        return []
    return [Note(
        "sequential-sums-of-squares", "design.sums_of_squares",
        "type 1 sums of squares depend on the order of the terms: each term is adjusted for "
        f"the terms before it only; the order used is {', '.join(map(_term, terms))} "
        "(covariates, blocks, treatment factors, then interactions); register type 2 or 3 "
        "unless this order is itself part of the hypotheses",
        f"{LANGSRUD_2003}; {FOX_2016}")]


def _slopes(plan: Plan) -> list[Note]:
    """A covariate is adjusted for with one common slope; its homogeneity is only checked
    (and cannot be, in a design without treatment cells)."""
    if not plan.treatments:
        return [Note(
            "covariate-common-slope", key_path(("design", "covariates", i)),
            f"{covariate.name} is adjusted for with one common slope; the design has no "
            "treatment factor, so there are no treatment cells whose slopes could differ and "
            "the homogeneity-of-slopes check is not defined (the appendix says so)",
            HUITEMA_2011)
            for i, covariate in enumerate(plan.design.covariates)]
    return [Note(
        "covariate-common-slope", key_path(("design", "covariates", i)),
        f"{covariate.name} is adjusted for with one slope common to every treatment cell (the "
        "model has no covariate x treatment term); the homogeneity-of-slopes check (the "
        "covariate x treatment interaction, as a diagnostic) is always run and reported, "
        "and clearly different slopes make the adjusted differences depend on the covariate value",
        HUITEMA_2011)
        for i, covariate in enumerate(plan.design.covariates)]


def _pre_tests(plan: Plan) -> list[Note]:
    """A fallback chosen by a pre-test is a two-stage rule (Zimmerman 2004; Rochon et al. 2012)."""
    notes = []
    for i, rule in enumerate(plan.assumptions.fallbacks):
        source = ZIMMERMAN_2004 if rule.when == "unequal-variance" else ROCHON_2012
        notes.append(Note(
            "pre-test-fallback", key_path(("assumptions", "fallbacks", i)),
            f"the switch to the {rule.use} analysis when {rule.test} gives p < {rule.threshold:g} "
            "is a two-stage rule: choosing the test by a pre-test distorts its type I error rate "
            "and power; consider registering analysis.method: welch outright",
            f"{source}; {DELACRE_2019}"))
    return notes


def _unadjusted(plan: Plan) -> list[Note]:
    """Several hypotheses on a primary outcome without adjustment (ICH E9 section 5.6).

    Each registered family under method none that holds two or more hypotheses on primary
    outcomes: a primary outcome's family, the primary family (scope primary-family), or a
    declared family.
    """
    primary = {o.name for o in plan.outcomes if o.role == "primary"}
    notes = []
    for family in plan.families:
        if family.method != "none":
            continue
        m = sum(plan.hypotheses_of(next(c for c in plan.contrasts if c.id == n.contrast))
                for n in family.members if n.outcome in primary)
        if m < 2:
            continue
        on = [o for o in family.outcomes if o in primary]
        if family.declared:
            what, path = f"family {family.id!r}", f"multiplicity.families[{family.index}].method"
        elif family.scope == "primary-family" and len(on) > 1:
            what, path = f"the primary family ({', '.join(map(repr, on))})", "multiplicity.method"
        else:
            what, path = f"primary outcome {on[0]!r}", "multiplicity.method"
        independent = -math.expm1(m * math.log1p(-plan.alpha))
        notes.append(Note(
            "no-multiplicity-control", path,
            f"method 'none' leaves the {m} hypotheses of {what} unadjusted: the chance of at "
            f"least one false rejection exceeds alpha {plan.alpha:g} ({independent:.3f} if the "
            f"{m} tests were independent)",
            ICH_E9_MULTIPLICITY))
    return notes


def _separate_families(plan: Plan) -> list[Note]:
    """Declared families outside a gatekeeping sequence are each tested at the full alpha."""
    families = [f for f in plan.families if f.declared]
    apart = [f.id for f in families if not f.in_sequence]
    if len(families) < 2 or not apart:
        return []
    which = (f"family {apart[0]!r} is" if len(apart) == 1
             else f"families {one_of(apart, 'and')} are")
    remedy = ("adding it to the gatekeeping sequence" if len(apart) == 1 else "adding them to the "
              "gatekeeping sequence") if plan.multiplicity.sequence else "a gatekeeping sequence"
    return [Note(
        "families-apart", "multiplicity.families",
        f"{which} tested at the full alpha {plan.alpha:g} apart from the other families: the "
        "family-wise error rate is controlled within each family, not across them; "
        f"{remedy} (multiplicity.sequence), or one graphical family over the hypotheses, "
        "controls it across families",
        ICH_E9_MULTIPLICITY)]


def _one_sided(plan: Plan) -> list[Note]:
    """One-sided tests at the registered alpha versus the half-alpha convention (ICH E9 5.5)."""
    notes = []
    for section, entries in (("contrasts", plan.contrasts), ("exploratory", plan.exploratory)):
        for i, contrast in enumerate(entries):
            if contrast.alternative == "two-sided":
                continue
            notes.append(Note(
                "one-sided", key_path((section, i, "alternative")),
                f"{contrast.id} is tested one-sided ({contrast.alternative}) at the registered "
                f"alpha {plan.alpha:g}; the regulatory convention is a one-sided level of half "
                f"the two-sided alpha ({plan.alpha / 2:g}); the appendix states the level used",
                ICH_E9_ONE_SIDED))
    return notes
