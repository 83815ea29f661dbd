"""The registered families of hypotheses, resolved from the plan: one model for every form.

A plan states its multiplicity control in one of two forms, and both resolve here into
the same `FamilyPlan` objects that the results stage tests:

- the top-level form, ``multiplicity: {method, scope, order, weights, transitions}``: with
  scope ``per-outcome`` one family per outcome (id: the outcome's name) holding every
  contrast that applies to it; with ``primary-family`` one family over the primary
  outcomes (id ``primary-family``, outcome after outcome in plan order) and one per
  secondary outcome. `order` and the graph name contrast ids, which stand for the
  contrast's node on the family's outcome.
- declared families, ``multiplicity: {families: [...], sequence: [...]}``: each family
  its own method over the listed contrasts on the listed outcomes (the nodes
  ``contrast@outcome``), and an optional serial gatekeeping sequence.

A node is one registered contrast on one outcome, standing for the contrast's
hypotheses there in their natural order (simple effects of a `by` contrast level after
level). The plan stage checks that every node belongs to exactly one family
(`appendix.plan.family_checks`), so the resolution below never meets a conflict.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import TYPE_CHECKING

if TYPE_CHECKING:  # the model imports this module lazily
    from appendix.plan.model import Plan

#: The id of the family over the primary outcomes under ``scope: primary-family`` (outcome
#: names cannot hold '-', so it never meets an outcome's family id).
PRIMARY_FAMILY = "primary-family"

#: Methods that adjust one outcome's levels from a joint law: their family is one outcome.
SINGLE_STEP = ("tukey", "dunnett")

#: Methods whose families may stand in a gated sequence: they control the family-wise error
#: rate, which the serial gate passes on (benjamini-hochberg controls the false discovery
#: rate, none nothing).
GATEABLE = ("bonferroni", "holm", "hochberg", "sidak", "tukey", "dunnett", "fixed-sequence",
            "graphical")


@dataclass(frozen=True, order=True)
class Node:
    """One registered contrast on one outcome: a member of a family."""

    contrast: str
    outcome: str

    @property
    def name(self) -> str:
        """``contrast@outcome``, the name a declared family's order and graph use."""
        return f"{self.contrast}@{self.outcome}"


@dataclass(frozen=True)
class FamilyPlan:
    """A registered family, resolved.

    `members` are its nodes in the order the appendix lists them (outcomes in plan order,
    contrasts in plan order within each); `order` the fixed-sequence testing order of its
    nodes (None under other methods); `weights` and `transitions` its graph by node (None
    unless graphical). `scope` is ``per-outcome`` or ``primary-family`` for the top-level
    form and ``declared`` for a family under ``multiplicity.families``; `index` is then
    its place in that list. `gate` names the family before it in the serial gatekeeping
    sequence (None when it is first or in none).
    """

    id: str
    method: str
    members: tuple[Node, ...]
    scope: str
    label: str | None = None
    order: tuple[Node, ...] | None = None
    weights: Mapping[Node, float] | None = None
    transitions: Mapping[Node, Mapping[Node, float]] | None = None
    gate: str | None = None
    index: int | None = None
    in_sequence: bool = field(default=False)

    @property
    def declared(self) -> bool:
        return self.scope == "declared"

    @property
    def outcomes(self) -> tuple[str, ...]:
        """The outcomes the family has members on, in plan order."""
        return tuple(dict.fromkeys(n.outcome for n in self.members))

    def on(self, outcome: str) -> tuple[str, ...]:
        """The contrast ids of the family's members on `outcome`, in plan order."""
        return tuple(n.contrast for n in self.members if n.outcome == outcome)

    def node_name(self, node: Node) -> str:
        """The node as the plan writes it: the contrast id alone when the family covers one
        outcome and is not declared, else ``contrast@outcome``."""
        return node.contrast if not self.declared else node.name


def node_of(name: str, outcomes: tuple[str, ...]) -> Node:
    """The node a family's key names: ``contrast@outcome``, or a contrast id alone in a
    family of one outcome (which the plan checks allow only there).

    >>> node_of("C1", ("pain",)), node_of("C2@sleep", ("pain", "sleep"))
    (Node(contrast='C1', outcome='pain'), Node(contrast='C2', outcome='sleep'))
    """
    contrast, _, outcome = name.partition("@")
    return Node(contrast, outcome or outcomes[0])


def resolve(plan: Plan) -> tuple[FamilyPlan, ...]:
    """The plan's registered families (see the module docstring); empty without contrasts."""
    if not plan.contrasts:
        return ()
    settings = plan.multiplicity
    if settings.families is not None:
        return _declared(plan)
    outcomes = [o for o in plan.outcomes]
    groups: list[tuple[str, str, list[str]]] = []
    if settings.scope == "primary-family":
        primary = [o.name for o in outcomes if o.role == "primary"]
        if primary:
            groups.append((PRIMARY_FAMILY, "primary-family", primary))
        groups += [(o.name, "per-outcome", [o.name]) for o in outcomes if o.role != "primary"]
    else:
        groups = [(o.name, "per-outcome", [o.name]) for o in outcomes]
    families = []
    for family_id, scope, names in groups:
        members = tuple(Node(c.id, name) for name in names for c in plan.contrasts_for(name))
        if not members:
            continue
        order = None
        if settings.method == "fixed-sequence" and settings.order:
            # each outcome's walk is the registered order restricted to its contrasts,
            # outcome after outcome
            rank = {cid: i for i, cid in enumerate(settings.order)}
            order = tuple(sorted(members, key=lambda n: (names.index(n.outcome),
                                                         rank.get(n.contrast, len(rank)))))
        weights = transitions = None
        if settings.method == "graphical":
            weights = {n: float(settings.weights.get(n.contrast, 0.0))
                       for n in members if settings.weights and n.contrast in settings.weights}
            transitions = {
                source: {target: float(row[target.contrast]) for target in members
                         if target.outcome == source.outcome and target.contrast in row}
                for source in members
                for row in [(settings.transitions or {}).get(source.contrast)] if row}
        families.append(FamilyPlan(id=family_id, method=settings.method, members=members,
                                   scope=scope, order=order, weights=weights,
                                   transitions=transitions))
    return tuple(families)


def _declared(plan: Plan) -> tuple[FamilyPlan, ...]:
    settings = plan.multiplicity
    sequence = list(settings.sequence or ())
    plan_outcomes = [o.name for o in plan.outcomes]
    families = []
    for index, family in enumerate(settings.families):
        listed = [name for name in plan_outcomes if name in family.outcomes]
        members = tuple(Node(c.id, name) for name in listed for c in plan.contrasts
                        if c.id in family.contrasts and c.applies_to(name))
        names = tuple(listed)
        order = (tuple(node_of(n, names) for n in family.order)
                 if family.method == "fixed-sequence" and family.order else None)
        weights = transitions = None
        if family.method == "graphical":
            weights = {node_of(n, names): float(w) for n, w in (family.weights or {}).items()}
            transitions = {node_of(source, names): {node_of(t, names): float(s) for t, s in row.items()}
                           for source, row in (family.transitions or {}).items()}
        place = sequence.index(family.id) if family.id in sequence else None
        families.append(FamilyPlan(
            id=family.id, label=family.label, method=family.method, members=members,
            scope="declared", order=order, weights=weights, transitions=transitions,
            gate=sequence[place - 1] if place else None, index=index,
            in_sequence=place is not None))
    return tuple(families)


def gate_order(families: tuple[FamilyPlan, ...]) -> tuple[FamilyPlan, ...]:
    """`families` with those of the gatekeeping sequence first, in its order (a gate is
    decided before the family it opens), then the others as listed."""
    chain: list[FamilyPlan] = []
    first = next((f for f in families if f.in_sequence and f.gate is None), None)
    while first is not None:
        chain.append(first)
        first = next((f for f in families if f.gate == first.id), None)
    return tuple(chain + [f for f in families if f not in chain])


def family_of(families: tuple[FamilyPlan, ...], contrast: str, outcome: str) -> FamilyPlan | None:
    """The family holding `contrast` on `outcome`, or None."""
    node = Node(contrast, outcome)
    return next((f for f in families if node in f.members), None)
