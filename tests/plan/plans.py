"""A small valid study file, invented for tests, and a helper to write variants of it."""

from __future__ import annotations

from pathlib import Path

import pytest

from appendix.errors import PlanError
from appendix.plan.load import load_plan

# Line numbers matter: the broken-file tests assert them.
BASE = """\
format: 1
study:
  id: trial-07
  title: Invented study for tests
data:
  source: units.csv
  unit: unit_id
  exclusions:
    - {id: X1, column: violation, equals: yes, reason: Protocol violated}
alpha: 0.05
design:
  factors:
    - name: arm
      levels: [placebo, low, high]
      control: placebo
outcomes:
  - {name: pain, label: Pain score, role: primary}
  - {name: sleep, label: Sleep hours, role: secondary}
"""


def variant(old: str, new: str, base: str = BASE) -> str:
    """`base` with one exact, unique piece of text replaced (fails loudly otherwise)."""
    if base.count(old) != 1:
        raise ValueError(f"{old!r} occurs {base.count(old)} times in the base plan")
    return base.replace(old, new)



#: BASE with the factor ordered (so trends are allowed); every line from 17 on moves down one.
ORDERED = variant("      control: placebo\n", "      control: placebo\n      ordered: true\n")

#: BASE without a control level; every line from 15 on moves up one.
NO_CONTROL = variant("      control: placebo\n", "")


def expected_message(path: Path, lines: list[str]) -> str:
    """The PlanError text for problem lines written "line: path: message"."""
    head = f"{len(lines)} problem{'s' if len(lines) != 1 else ''} in the study file:"
    return "\n".join([head, *(f"  {path}:{line}" for line in lines)])


def assert_refused(path: Path, lines: list[str]) -> None:
    """Loading `path` fails with exactly these problems, in this order."""
    with pytest.raises(PlanError) as caught:
        load_plan(path)
    assert str(caught.value) == expected_message(path, lines)
    assert len(caught.value.problems) == len(lines)
