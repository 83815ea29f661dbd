"""The data stage for designs beyond one factor: several factors, covariates, one row per
unit and visit. Invented data, written here."""

from __future__ import annotations

import numpy as np
import pytest

from appendix.data.build import build_dataset
from appendix.errors import DataError
from appendix.plan.load import load_plan

STUDY = """\
format: 1
study: {id: invented-design, title: Invented data for tests}
data:
  source: rows.csv
  unit: unit_id
  exclusions:
    - {id: X1, column: flagged, equals: yes, reason: Protocol violated}
design:
  factors:
    - {name: arm, levels: [a, b]}
    - {name: visit, role: within, levels: [v1, v2]}
  covariates: [{name: base, label: Baseline}]
  interactions: [[arm, visit]]
  sums_of_squares: 2
outcomes:
  - {name: y, label: Response, role: primary}
"""

HEADER = "unit_id,arm,visit,flagged,base,y\n"


def _dataset(tmp_path, rows: str):
    (tmp_path / "rows.csv").write_text(HEADER + rows, encoding="utf-8")
    (tmp_path / "study.yaml").write_text(STUDY, encoding="utf-8")
    return build_dataset(load_plan(tmp_path / "study.yaml"))


def test_units_by_visit_with_exclusions_missing_and_covariates(tmp_path):
    rows = ("u1,a,v1,no,1.5,10\nu1,a,v2,no,1.5,11\n"
            "u2,b,v2,no,2.0,13\nu2,b,v1,no,2.0,12\n"      # rows in any order
            "u3,a,v1,no,,9\nu3,a,v2,no,,9.5\n"            # no covariate: not analysed
            "u4,b,v1,no,1.0,8\nu4,b,v2,no,1.0,NA\n"       # a missed visit: left out
            "u5,b,v1,no,3.0,7\nu5,b,v2,yes,3.0,7.5\n")    # one flagged row excludes the unit
    dataset = _dataset(tmp_path, rows)
    (y,) = dataset.outcomes
    assert dataset.levels == ("a", "b")
    assert [(c.level, c.n) for c in dataset.unit_flow.read] == [("a", 2), ("b", 3)]
    assert dataset.unit_flow.exclusions[0].total == 1
    assert [(c.level, c.n) for c in dataset.unit_flow.outcomes[0].analysed] == [("a", 1), ("b", 1)]
    assert [(c.level, c.n) for c in dataset.unit_flow.outcomes[0].missing] == [("a", 1), ("b", 1)]
    assert y.units == ("u1", "u1", "u2", "u2")
    np.testing.assert_array_equal(y.values, [10, 11, 12, 13])      # u2 sorted by visit
    np.testing.assert_array_equal(y.factors[1], [0, 1, 0, 1])
    np.testing.assert_array_equal(y.covariates[0], [1.5, 1.5, 2.0, 2.0])
    assert y.lines == (2, 3, 5, 4)
    assert y.decimals == 0
    codes = {f.code for f in dataset.findings}
    assert {"covariate-missing", "incomplete-units"} <= codes


@pytest.mark.parametrize("rows, message", [
    ("u1,a,v1,no,1,1\nu1,a,v1,no,1,2\n",
     "rows.csv:3: unit_id: unit 'u1' at visit 'v1' appears on lines 2, 3; each unit must appear "
     "once per level of visit"),
    ("u1,a,v1,no,1,1\nu1,b,v2,no,1,2\n",
     "rows.csv:3: arm: unit 'u1' has 'a' and 'b' on lines 2, 3; a unit's between-unit factors "
     "and covariates must be the same on all its rows"),
    ("u1,a,v1,no,1,1\nu1,a,v2,no,2,2\n",
     "rows.csv:3: base: unit 'u1' has '1' and '2' on lines 2, 3; a unit's between-unit factors "
     "and covariates must be the same on all its rows"),
    ("u1,a,v1,no,tall,1\nu1,a,v2,no,tall,2\n",
     "rows.csv:2: base: got 'tall'; allowed: a number, or an empty cell or NA for a missing value "
     "(covariate base)"),
    ("u1,a,v3,no,1,1\n",
     "rows.csv:2: visit: got 'v3' on line 2; allowed: one of the plan's levels 'v1' or 'v2'"),
])
def test_data_problems_are_located(tmp_path, rows, message):
    with pytest.raises(DataError) as caught:
        _dataset(tmp_path, rows)
    assert message in str(caught.value)
