"""Cross-field checks of the design: roles, interactions, covariates, the sums-of-squares
type, the repeated-measures rule, and analyses that need a one-way design.

Run on the raw parsed study file (see `checks`); values of the wrong shape are skipped
because field validation reports them.
"""

from __future__ import annotations

from collections.abc import Mapping
from itertools import combinations

from appendix.plan.raw import Found, items, mapping, repeats, unique
from appendix.plan.raw_design import RawDesign, RawFactor
from appendix.plan.wording import Loc, did_you_mean, one_of, show

#: What a design beyond one treatment factor cannot have, in the words of the messages.
ONE_WAY_ONLY = "for one treatment factor and nothing else: no second factor, block, covariate or within factor"


def design_problems(raw: Mapping) -> list[Found]:
    """Every cross-field problem of `design`, `repeated`, and the one-way-only analyses."""
    design = RawDesign.of(raw)
    section = mapping(raw.get("design"))
    found = unique([(("design", "factors"), section.get("factors"))], "name", "factor names")
    found += _roles(design)
    found += _interactions(section.get("interactions"), design)
    found += _covariates(section.get("covariates"), design, _outcome_names(raw))
    if design.roles_valid:
        found += _terms(section, raw, design)
    return found


def _roles(design: RawDesign) -> list[Found]:
    found: list[Found] = []
    for factor in design.with_role("block"):
        found += _block(factor)
    if (design.roles_valid and design.factors and not design.with_role("treatment")
            and not design.with_role("within")):
        roles = list(dict.fromkeys(str(f.role) for f in design.factors))
        found.append((("design", "factors"),
                      f"got only factors with role{'s' if len(roles) > 1 else ''} "
                      f"{one_of(roles, 'and')}; allowed: at least one factor with role "
                      "'treatment' (the default) or 'within'"))
    return found


def _block(factor: RawFactor) -> list[Found]:
    found: list[Found] = []
    if factor.control is not None:
        found.append(((*factor.loc, "control"),
                      f"got {show(factor.control)} for the block {show(factor.name)}; allowed: "
                      "no control on a block (remove it)"))
    if factor.ordered is True:
        found.append(((*factor.loc, "ordered"),
                      f"got true for the block {show(factor.name)}; allowed: false (a block's "
                      "levels are not ordered; remove it)"))
    return found


def term_text(names: tuple[str, ...] | list[str]) -> str:
    """An interaction as the study file writes it: ``[coating, variety]``."""
    return f"[{', '.join(names)}]"


def _interactions(listed: object, design: RawDesign) -> list[Found]:
    if not isinstance(listed, (list, tuple)):
        return []
    names = [f.name for f in design.factors]
    order = {name: j for j, name in enumerate(names)}
    found: list[Found] = []
    seen: dict[frozenset[str], int] = {}
    for i, entry in enumerate(listed):
        if not isinstance(entry, (list, tuple)):
            continue
        loc: Loc = ("design", "interactions", i)
        problems = _interaction_names(loc, entry, names, design.covariates)
        found += problems
        if problems or not all(isinstance(n, str) for n in entry) or len(set(entry)) < 2:
            continue
        term = frozenset(entry)
        if term in seen:
            found.append((loc, f"got {term_text(entry)} again; allowed: each interaction "
                               f"listed once, in any order (first at interactions[{seen[term]}])"))
        else:
            seen[term] = i
    for term, i in seen.items():
        ordered = sorted(term, key=order.__getitem__)
        missing = [term_text(sub) for size in range(2, len(ordered))
                   for sub in combinations(ordered, size) if frozenset(sub) not in seen]
        if missing:
            found.append((("design", "interactions", i),
                          f"got {term_text(ordered)} without {_and(missing)}; "
                          "allowed: an interaction only with every lower-order interaction it "
                          "contains listed too (add them)"))
    return found


def _and(words: list[str]) -> str:
    return f"{', '.join(words[:-1])} and {words[-1]}" if len(words) > 1 else words[0]


def _interaction_names(loc: Loc, entry: list | tuple, names: list[str],
                       covariates: tuple[str, ...]) -> list[Found]:
    found: list[Found] = []
    first: dict[str, int] = {}
    for j, name in enumerate(entry):
        if not isinstance(name, str):
            continue
        if name in first:
            found.append(((*loc, j), f"got {show(name)} again; each factor is named once in an "
                                     f"interaction (first at interactions[{loc[-1]}][{first[name]}])"))
            continue
        first[name] = j
        if name in names or not names:
            continue
        if name in covariates:
            found.append(((*loc, j), f"got {show(name)}, a covariate; allowed: factor names only "
                                     "(covariates interact with nothing; the homogeneity-of-slopes "
                                     "check is run on its own)"))
        else:
            found.append(((*loc, j), f"got {show(name)}; allowed: one of the factors "
                                     f"{one_of(names)}{did_you_mean(name, names)}"))
    return found


def _outcome_names(raw: Mapping) -> tuple[str, ...]:
    return tuple(o["name"] for _, o in items(raw.get("outcomes")) if isinstance(o.get("name"), str))


def _covariates(listed: object, design: RawDesign, outcomes: tuple[str, ...]) -> list[Found]:
    found = unique([(("design", "covariates"), listed)], "name", "covariate names")
    for i, entry in items(listed):
        found += _covariate_outcomes(("design", "covariates", i, "outcomes"), entry.get("outcomes"),
                                     outcomes)
        name = entry.get("name")
        # Without `column` the name is the column, and the column check reports it.
        if design.named(name) is not None and entry.get("column") is not None:
            found.append((("design", "covariates", i, "name"),
                          f"got {show(name)}, which names a factor; allowed: a name of its own "
                          "(terms are named by it)"))
    return found


def _covariate_outcomes(loc: Loc, named: object, outcomes: tuple[str, ...]) -> list[Found]:
    """A covariate's `outcomes` name registered outcomes, each once."""
    if not isinstance(named, (list, tuple)):
        return []
    found: list[Found] = [((*loc, j), f"got {show(name)}; allowed: one of the outcomes "
                                      f"{one_of(outcomes)}{did_you_mean(name, outcomes)}")
                          for j, name in enumerate(named)
                          if isinstance(name, str) and outcomes and name not in outcomes]
    return found + repeats(loc, named, "each outcome must be named once")


def _terms(section: Mapping, raw: Mapping, design: RawDesign) -> list[Found]:
    """The sums-of-squares type, `repeated`, and the analyses for one-way designs only."""
    found: list[Found] = []
    if design.has_several_terms and section.get("sums_of_squares") is None:
        found.append((("design", "sums_of_squares"),
                      f"required key is missing for a design with {design.extent()}; allowed: "
                      "1, 2 or 3 (the types differ once there is more than one term)"))
    repeated = raw.get("repeated")
    if repeated is not None and not design.with_role("within"):
        found.append((("repeated",),
                      f"got {show(repeated)}, but the design has no within factor; allowed: "
                      "'repeated' only with a factor of role 'within' (remove it)"))
    if design.factors and not design.is_one_way:
        method = mapping(raw.get("analysis")).get("method")
        if method in ("welch", "rank-based"):
            found.append((("analysis", "method"),
                          f"got {show(method)} for a design with {design.extent()}; allowed: "
                          f"'classical' (the {method} analysis is {ONE_WAY_ONLY})"))
        rules = mapping(raw.get("assumptions")).get("fallbacks")
        if isinstance(rules, (list, tuple)) and rules:
            found.append((("assumptions", "fallbacks"),
                          f"got {show(rules)} for a design with {design.extent()}; allowed: "
                          f"fallbacks only {ONE_WAY_ONLY}"))
    return found
