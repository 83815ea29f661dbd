"""Cross-field checks of declared families: ``multiplicity.families`` and ``sequence``.

Each family lists contrast ids and outcome names; its members (nodes) are the listed
contrasts on the listed outcomes they apply to, and every registered contrast on every
outcome it applies to must belong to exactly one family. A node is named by its contrast
id, written ``contrast@outcome`` when the family covers more than one outcome (the id
alone, or with its outcome, in a family of one outcome). Run on the raw parsed file from
`contrast_checks`; values of the wrong shape are field errors and are skipped here.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass

from appendix.plan.choices import KINDS, METHODS
from appendix.plan.family_plan import GATEABLE, SINGLE_STEP
from appendix.plan.graph_checks import share_problems
from appendix.plan.raw import Found, items, mapping, repeats, unique
from appendix.plan.wording import Loc, capped, did_you_mean, one_of, show

#: The one contrast kind each single-step method adjusts.
_KIND_OF = {"tukey": "pairwise", "dunnett": "versus-control"}

#: Top-level keys that a plan with declared families leaves to each family.
_TOP_LEVEL = ("method", "scope", "order", "weights", "transitions")

_ROOT: Loc = ("multiplicity", "families")


@dataclass(frozen=True)
class RawContrast:
    """What the family checks need of one registered contrast."""

    index: int
    id: str
    kind: object
    outcomes: tuple[str, ...]  # the plan's outcomes it applies to
    count: int | None  # hypotheses per outcome, None where the file does not tell


def family_problems(settings: Mapping, contrasts: Sequence[RawContrast],
                    exploratory: Sequence[object], outcomes: Sequence[str]) -> list[Found]:
    """Every problem of `families` and `sequence` (nothing when neither is given)."""
    families = settings.get("families")
    sequence = settings.get("sequence")
    if families is None:
        if sequence is None:
            return []
        return [(("multiplicity", "sequence"),
                 f"got {show(sequence)} without 'families'; allowed: 'sequence' only with "
                 "declared families (multiplicity.families), whose ids it lists")]
    found: list[Found] = [
        (("multiplicity", key), f"got {show(settings[key])} beside 'families'; allowed: no "
                                f"top-level {show(key)} when the plan declares families (each "
                                "family states its own)")
        for key in _TOP_LEVEL if settings.get(key) is not None]
    found += unique([(_ROOT, families)], "id", "family ids")
    by_id = {c.id: c for c in contrasts}
    owner: dict[tuple[str, str], str] = {}
    methods: dict[str, object] = {}
    for j, family in items(families):
        found += _family((*_ROOT, j), family, by_id, exploratory, outcomes, owner)
        if isinstance(family.get("id"), str):
            methods.setdefault(family["id"], family.get("method"))
    missing = [f"{show(c.id)} on {show(o)}" for c in contrasts for o in c.outcomes
               if (c.id, o) not in owner]
    if missing and isinstance(families, (list, tuple)):
        found.append((_ROOT, f"got no family for {capped(missing)}; allowed: every registered "
                             "contrast on every outcome it applies to in exactly one family"))
    return found + _sequence(sequence, methods)


def _family(loc: Loc, family: Mapping, by_id: Mapping[str, RawContrast],
            exploratory: Sequence[object], plan_outcomes: Sequence[str],
            owner: dict[tuple[str, str], str]) -> list[Found]:
    found: list[Found] = []
    listed = family.get("contrasts")
    listed = listed if isinstance(listed, (list, tuple)) else []
    outcome_names = family.get("outcomes")
    outcome_names = outcome_names if isinstance(outcome_names, (list, tuple)) else []
    name = family.get("id") if isinstance(family.get("id"), str) else f"families[{loc[-1]}]"
    for k, value in enumerate(outcome_names):
        if isinstance(value, str) and plan_outcomes and value not in plan_outcomes:
            found.append(((*loc, "outcomes", k), f"got {show(value)}; allowed: one of the outcomes "
                                                 f"{one_of(plan_outcomes)}{did_you_mean(value, plan_outcomes)}"))
    found += repeats((*loc, "outcomes"), outcome_names, "each outcome must be listed once")
    covered = [o for o in plan_outcomes if o in outcome_names]
    members: list[tuple[int, RawContrast, str]] = []  # (place in `contrasts`, contrast, outcome)
    for k, value in enumerate(listed):
        if not isinstance(value, str):
            continue
        where = (*loc, "contrasts", k)
        contrast = by_id.get(value)
        if contrast is None:
            found.append((where, _unknown_contrast(value, list(by_id), exploratory)))
            continue
        if listed.index(value) != k:
            continue  # a repeat, reported below
        on = [o for o in covered if o in contrast.outcomes]
        if covered and not on:
            found.append((where, f"got {show(value)}, which applies to {one_of(contrast.outcomes, 'and')} "
                                 f"only; allowed: a contrast that applies to at least one of the "
                                 f"family's outcomes ({one_of(covered, 'and')})"))
        taken = [o for o in on if (value, o) in owner]
        if taken:
            found.append((where, f"got {show(value)}, whose hypotheses on {one_of(taken, 'and')} "
                                 f"already belong to family {show(owner[(value, taken[0])])}; allowed: "
                                 "each contrast on each outcome in one family only"))
        for o in on:
            owner.setdefault((value, o), name)
            members.append((k, contrast, o))
    found += repeats((*loc, "contrasts"), listed, "each contrast id must be listed once")
    method = family.get("method")
    if not isinstance(method, str) or method not in METHODS:
        return found  # a field error
    nodes = _Nodes(tuple((c.id, o) for _, c, o in members), tuple(covered))
    if method in SINGLE_STEP:
        found += _single_step(loc, method, listed, by_id, outcome_names)
    found += _order(loc, family, method, nodes)
    found += _graph(loc, family, method, nodes, members, listed)
    return found


def _unknown_contrast(value: str, ids: list[str], exploratory: Sequence[object]) -> str:
    if value in exploratory:
        return (f"got {show(value)}, an exploratory analysis; allowed: registered contrast ids only "
                "(exploratory analyses are never adjusted with the plan)")
    if ids:
        return f"got {show(value)}; allowed: one of the contrast ids {one_of(ids)}{did_you_mean(value, ids)}"
    return f"got {show(value)}; allowed: ids of entries under 'contrasts' (there are none)"


def _single_step(loc: Loc, method: str, listed: Sequence[object], by_id: Mapping[str, RawContrast],
                 outcome_names: Sequence[object]) -> list[Found]:
    """Tukey and Dunnett: one outcome, contrasts of their one kind, one such contrast."""
    found: list[Found] = []
    kind = _KIND_OF[method]
    if len(outcome_names) > 1:
        found.append(((*loc, "outcomes"),
                      f"got {len(outcome_names)} outcomes with method {show(method)}; allowed: one "
                      "outcome (its simultaneous tests compare the levels of one outcome; declare "
                      "a family per outcome)"))
    first: str | None = None
    for k, value in enumerate(listed):
        contrast = by_id.get(value) if isinstance(value, str) else None
        if contrast is None or contrast.kind not in KINDS or listed.index(value) != k:
            continue
        if contrast.kind != kind:
            found.append(((*loc, "contrasts", k),
                          f"got {show(value)}, a {show(contrast.kind)} contrast, in a family with "
                          f"method {show(method)}; allowed: {show(kind)} contrasts only (give the "
                          "others a family of their own)"))
        elif first is None:
            first = value
        else:
            found.append(((*loc, "contrasts", k),
                          f"got {show(value)}, a second {show(kind)} contrast (first: {show(first)}) "
                          f"in a family with method {show(method)}; allowed: one {show(kind)} "
                          "contrast per family"))
    return found


@dataclass(frozen=True)
class _Nodes:
    """The nodes of one family, and how its keys name them."""

    members: tuple[tuple[str, str], ...]  # (contrast, outcome), in listing order
    outcomes: tuple[str, ...]

    def read(self, key: object) -> tuple[tuple[str, str] | None, str | None]:
        """The node a key names, or a sentence saying why it names none."""
        if not isinstance(key, str):
            return None, None  # a field error
        contrast, at, outcome = key.partition("@")
        names = self.names
        if not at and len(self.outcomes) > 1:
            choices = [n for n in names if n.startswith(f"{contrast}@")]
            allowed = one_of(choices) if choices else f"one of the family's nodes {one_of(names)}"
            return None, (f"got {show(key)}, a contrast id in a family of several outcomes; allowed: "
                          f"{allowed} ('contrast@outcome' names one node)")
        node = (contrast, outcome or (self.outcomes[0] if self.outcomes else ""))
        if node in self.members:
            return node, None
        if not names:
            return None, f"got {show(key)}; allowed: nodes of the family's members (it has none)"
        return None, (f"got {show(key)}; allowed: one of the family's nodes {one_of(names)}"
                      f"{did_you_mean(key, names)}")

    @property
    def names(self) -> list[str]:
        if len(self.outcomes) > 1:
            return [f"{c}@{o}" for c, o in self.members]
        return [c for c, _ in self.members]


def _order(loc: Loc, family: Mapping, method: str, nodes: _Nodes) -> list[Found]:
    order = family.get("order")
    where = (*loc, "order")
    if method != "fixed-sequence":
        if order is None:
            return []
        return [(where, f"got {show(order)} with method {show(method)}; allowed: 'order' only with "
                        "method 'fixed-sequence' (remove it, or choose that method)")]
    if order is None:
        return [(where, "required key is missing for method 'fixed-sequence' (every node of the "
                        "family exactly once, in testing order)")] if nodes.members else []
    if not isinstance(order, (list, tuple)):
        return []
    found: list[Found] = []
    seen: dict[tuple[str, str], int] = {}
    for j, key in enumerate(order):
        node, problem = nodes.read(key)
        if problem:
            found.append(((*where, j), problem))
        elif node in seen:
            found.append(((*where, j), f"got {show(key)} again; each node must be listed once "
                                       f"(first at order[{seen[node]}])"))
        elif node is not None:
            seen[node] = j
    if all(isinstance(key, str) for key in order):
        missing = [name for node, name in zip(nodes.members, nodes.names) if node not in seen]
        if missing:
            found.append((where, f"got a list without {one_of(missing, 'and')}; allowed: every node "
                                 "of the family exactly once"))
    return found


def _graph(loc: Loc, family: Mapping, method: str, nodes: _Nodes,
           members: Sequence[tuple[int, RawContrast, str]], listed: Sequence[object]) -> list[Found]:
    keys = ("weights", "transitions")
    if method != "graphical":
        return [((*loc, key), f"got {show(family[key])} with method {show(method)}; allowed: "
                              f"{show(key)} only with method 'graphical' (remove it, or choose that "
                              "method)")
                for key in keys if family.get(key) is not None]
    found: list[Found] = []
    weights = family.get("weights")
    if weights is None and nodes.members:
        found.append(((*loc, "weights"), "required key is missing for method 'graphical' (each "
                                         "node's initial share of alpha, summing to at most 1)"))
    if isinstance(weights, Mapping):
        found += _node_keys((*loc, "weights"), weights, nodes)
        found += share_problems((*loc, "weights"), weights, "weights",
                                "a sum of more than 0 and at most 1", empty_allowed=False)
    for source, row in mapping(family.get("transitions")).items():
        where = (*loc, "transitions", source)
        source_node, problem = nodes.read(source)
        if problem:
            found.append((where, problem))
        if not isinstance(row, Mapping):
            continue
        found += _node_keys(where, row, nodes, own=source_node)
        found += share_problems(where, row, "shares", "at most 1 in all (a rejected node passes on "
                                "at most its own level)", empty_allowed=True)
    reported: set[int] = set()
    for k, contrast, _ in members:
        if contrast.count is not None and contrast.count != 1 and k not in reported:
            reported.add(k)
            found.append(((*loc, "contrasts", k),
                          f"got {show(listed[k])}, a contrast of {contrast.count} hypotheses, in a "
                          "family with method 'graphical'; allowed: contrasts of one hypothesis "
                          "(custom, a trend of degree 1, or a comparison of two levels, without "
                          "'by'): each node of the graph is one hypothesis"))
    return found


def _node_keys(loc: Loc, values: Mapping, nodes: _Nodes,
               own: tuple[str, str] | None = None) -> list[Found]:
    """Each key names a node of the family, once, and not `own` (the row's node)."""
    found: list[Found] = []
    seen: dict[tuple[str, str], object] = {}
    for key in values:
        node, problem = nodes.read(key)
        if problem:
            found.append(((*loc, key), problem))
        elif node is not None and node == own:
            found.append(((*loc, key), f"got {show(key)}, the node itself; allowed: another node "
                                       "(a rejected node passes its level on to others)"))
        elif node in seen:
            found.append(((*loc, key), f"got {show(key)}, the node {show(seen[node])} names already; "
                                       "allowed: each node once"))
        elif node is not None:
            seen[node] = key
    return found


def _sequence(sequence: object, methods: Mapping[str, object]) -> list[Found]:
    if not isinstance(sequence, (list, tuple)):
        return []
    where = ("multiplicity", "sequence")
    found: list[Found] = []
    ids = list(methods)
    for j, name in enumerate(sequence):
        if not isinstance(name, str):
            continue
        if name not in methods:
            allowed = f"one of the family ids {one_of(ids)}{did_you_mean(name, ids)}" if ids else \
                "ids of entries under 'families'"
            found.append(((*where, j), f"got {show(name)}; allowed: {allowed}"))
        elif isinstance(methods[name], str) and methods[name] in METHODS and methods[name] not in GATEABLE:
            found.append(((*where, j), f"got {show(name)}, a family with method {show(methods[name])}; "
                                       "allowed: families whose method controls the family-wise error "
                                       "rate (a gate passes on only that control), not 'none' or "
                                       "'benjamini-hochberg'"))
    found += repeats(where, sequence, "each family must be listed once")
    return found
