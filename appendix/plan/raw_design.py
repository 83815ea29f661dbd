"""The design of a raw parsed study file, as the cross-field checks need to see it.

Only factors with a text name count (the first of each name); a factor whose role is
not one of the allowed ones is a field error and takes no part in role-based checks.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

from appendix.plan.choices import ROLES
from appendix.plan.raw import items, mapping, text, texts


@dataclass(frozen=True)
class RawFactor:
    """One factor of the raw file: its index in `design.factors` and the keys checks read."""

    index: int
    name: str
    role: object
    levels: tuple[str, ...]
    ordered: object
    control: object

    @property
    def loc(self) -> tuple[str | int, ...]:
        return ("design", "factors", self.index)


@dataclass(frozen=True)
class RawDesign:
    """The raw design: named factors, how many entries of each kind, whether roles are valid."""

    factors: tuple[RawFactor, ...]
    entries: int
    covariates: tuple[str, ...]
    interactions: int
    roles_valid: bool

    @classmethod
    def of(cls, raw: Mapping) -> RawDesign:
        design = mapping(raw.get("design"))
        entries = items(design.get("factors"))
        factors: dict[str, RawFactor] = {}
        for i, entry in entries:
            name = text(entry.get("name"))
            if name is not None and name not in factors:
                factors[name] = RawFactor(
                    index=i, name=name, role=entry.get("role", "treatment"),
                    levels=tuple(dict.fromkeys(texts(entry.get("levels")))),
                    ordered=entry.get("ordered", False), control=entry.get("control"))
        covariates = tuple(n for _, c in items(design.get("covariates"))
                           if isinstance(n := c.get("name"), str))
        listed = design.get("interactions")
        return cls(factors=tuple(factors.values()), entries=len(entries), covariates=covariates,
                   interactions=len(listed) if isinstance(listed, (list, tuple)) else 0,
                   roles_valid=all(e.get("role", "treatment") in ROLES for _, e in entries))

    def named(self, name: object) -> RawFactor | None:
        return next((f for f in self.factors if f.name == name), None)

    def with_role(self, *roles: str) -> tuple[RawFactor, ...]:
        return tuple(f for f in self.factors if f.role in roles)

    @property
    def contrastable(self) -> tuple[RawFactor, ...]:
        """The factors a contrast may compare or be split by: treatments and the within factor."""
        return self.with_role("treatment", "within")

    @property
    def is_one_way(self) -> bool:
        """One factor entry, a treatment factor, and no covariate."""
        return (self.entries == 1 and len(self.factors) == 1 and self.factors[0].role == "treatment"
                and not self.covariates)

    @property
    def has_several_terms(self) -> bool:
        """Two or more factors, or any covariate, or any interaction."""
        return self.entries > 1 or bool(self.covariates) or self.interactions > 0

    def extent(self) -> str:
        """What the design holds beyond one treatment factor, in words."""
        counts = [(len(self.with_role("treatment")), "treatment factor"),
                  (len(self.with_role("block")), "block factor"),
                  (len(self.with_role("within")), "within factor"),
                  (len(self.covariates), "covariate"), (self.interactions, "interaction")]
        parts = [f"{('an' if word[0] in 'aeiou' else 'a') if n == 1 else n} {word}"
                 f"{'' if n == 1 else 's'}" for n, word in counts if n]
        return ", ".join(parts[:-1]) + f" and {parts[-1]}" if len(parts) > 1 else "".join(parts)
