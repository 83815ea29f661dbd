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

#: ORDERED with every contrast kind, fixed-sequence multiplicity, an exploratory analysis
#: and both kinds of fallback; appended lines start at 20.
EVERY_KIND = ORDERED + """\
analysis: {method: classical}
contrasts:
  - {id: C1, kind: custom, label: active versus placebo, weights: {placebo: -2, low: 1, high: 1}}
  - {id: C2, kind: versus-control, label: each dose versus placebo, outcomes: [pain],
     alternative: less, justification: only a reduction in pain matters clinically}
  - {id: C3, kind: pairwise, label: all pairs, factor: arm}
  - {id: C4, kind: trend, label: dose trend, degree: 2, spacing: [0, 1, 4]}
  - {id: C5, kind: helmert, label: each level versus later ones, outcomes: [sleep]}
multiplicity: {method: fixed-sequence, scope: primary-family, order: [C4, C1, C2, C3, C5]}
exploratory:
  - {id: E1, kind: trend, label: linear only, reason: asked by the data monitoring committee}
assumptions:
  fallbacks:
    - {when: unequal-variance, test: bartlett, threshold: 0.01, use: welch}
    - {when: non-normal, test: shapiro-wilk, use: rank-based}
"""


#: BASE with a block factor (and so a sums-of-squares type); every line from 16 on moves
#: down two, appended lines start at 21.
BLOCKED = variant("      control: placebo\n", "      control: placebo\n"
                  "    - {name: site, role: block, levels: [north, south]}\n  sums_of_squares: 2\n")

#: An invented crossed design with every new design key; appended lines start at 23.
FACTORIAL = """\
format: 1
study:
  id: field-03
  title: Invented factorial study for tests
data:
  source: plots.csv
  unit: plot
design:
  factors:
    - {name: coating, levels: [none, thin, thick], control: none}
    - {name: variety, levels: [early, late]}
    - {name: field_block, role: block, levels: [B1, B2, B3, B4]}
    - {name: visit, role: within, levels: [day7, day14, day21], ordered: true}
  interactions:
    - [coating, variety]
    - [coating, visit]
  covariates:
    - {name: baseline, column: baseline_mass, label: Baseline dry mass, unit: g}
  sums_of_squares: 2
outcomes:
  - {name: mass, label: Shoot dry mass, unit: g, role: primary}
  - {name: height, label: Shoot height, unit: cm, role: secondary}
"""

#: FACTORIAL's factors in words, as messages list them.
FACTORIAL_EXTENT = ("2 treatment factors, a block factor, a within factor, a covariate "
                    "and 2 interactions")


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
