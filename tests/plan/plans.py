"""A small valid study file, invented for tests, and a helper to write variants of it."""

from __future__ import annotations

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


