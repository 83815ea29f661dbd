"""The closed choices of the study file that both the model and the cross-field checks use."""

from __future__ import annotations

from typing import Literal, get_args

FactorRole = Literal["treatment", "block", "within"]
ContrastKind = Literal["custom", "pairwise", "versus-control", "trend", "helmert"]
MultiplicityMethod = Literal["none", "bonferroni", "holm", "hochberg", "sidak",
                             "benjamini-hochberg", "tukey", "dunnett", "fixed-sequence",
                             "graphical"]
#: What a run reports as a deviation from the registered plan (see appendix.deviations).
DeviationKind = Literal["plan-not-registered", "plan-changed", "outcome-added", "outcome-removed",
                        "outcome-role-switched", "below-minimum-n", "below-minimum-total",
                        "level-without-units",
                        "missing-above-limit", "registered-contingency"]

ROLES: tuple[str, ...] = get_args(FactorRole)
KINDS: tuple[str, ...] = get_args(ContrastKind)
METHODS: tuple[str, ...] = get_args(MultiplicityMethod)
DEVIATION_KINDS: tuple[str, ...] = get_args(DeviationKind)


def hypotheses_of_kind(kind: str, k: int, degree: int = 1) -> int:
    """How many hypotheses a contrast of `kind` expands into over `k` levels.

    >>> hypotheses_of_kind("pairwise", 4)
    6
    """
    counts = {"custom": 1, "pairwise": k * (k - 1) // 2, "versus-control": k - 1,
              "trend": degree, "helmert": k - 1}
    return counts[kind]
