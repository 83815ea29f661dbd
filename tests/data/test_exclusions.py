"""Exclusion rules set whole units aside, in plan order, the same way for the dataset and
for `appendix check`'s unit lists. Invented rows, small enough to count by hand."""

from __future__ import annotations

from pathlib import Path

from appendix.data.exclusions import apply_exclusions, exclusion_lines
from appendix.data.table import Table
from appendix.plan.model import Exclusion

# Three units seen on two visits each; u2 is flagged on its second visit only, u3 on both
# visits under two rules.
TABLE = Table(path=Path("visits.csv"), columns=("unit", "visit", "dropped", "late"),
              cells={"unit": ("u1", "u1", "u2", "u2", "u3", "u3"),
                     "visit": ("1", "2", "1", "2", "1", "2"),
                     "dropped": ("no", "no", "no", "yes", "yes", "yes"),
                     "late": ("no", "no", "no", "no", "yes", "no")},
              lines=(2, 3, 4, 5, 6, 7))
RULES = (Exclusion(id="X1", column="late", equals="yes", reason="seen late"),
         Exclusion(id="X2", column="dropped", equals="yes", reason="dropped out"))


def test_a_unit_is_set_aside_under_the_first_rule_any_of_its_rows_matches():
    rows_of = TABLE.rows_of("unit")
    assert rows_of == {"u1": [0, 1], "u2": [2, 3], "u3": [4, 5]}
    excluded_by, counts = apply_exclusions(TABLE, RULES, rows_of, {"u1": 0, "u2": 1, "u3": 1},
                                           ("a", "b"))
    assert excluded_by == {"u3": "X1", "u2": "X2"}
    assert [(c.rule, c.total, [n.n for n in c.by_level]) for c in counts] == [
        ("X1", 1, [0, 1]), ("X2", 1, [0, 1])]


def test_check_lists_each_excluded_unit_once_though_it_has_several_rows():
    assert exclusion_lines(TABLE, RULES, "unit") == ["units excluded by X1: u3",
                                                     "units excluded by X2: u2"]
