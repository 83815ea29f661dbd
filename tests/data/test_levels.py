"""Number-like levels: a cell equal in value to exactly one plan level is read as it, with
a finding per spelling; otherwise the message points to a level equal or close in value.
Invented data, written here."""

from __future__ import annotations

import doctest

import pytest

import appendix.data.levels as levels_module
from appendix.data.levels import LevelReading, level_hint, reading_findings
from appendix.results import Finding


def test_docstring_examples_hold():
    result = doctest.testmod(levels_module)
    assert result.attempted > 0 and result.failed == 0


@pytest.mark.parametrize("levels, cell, code", [
    (["1", "2", "10"], "1", 0),             # the level's own text
    (["1", "2", "10"], "1.0", 0),
    (["1", "2", "10"], "01", 0),
    (["1", "2", "10"], "1.00", 0),
    (["1", "2", "10"], "+1", 0),
    (["1", "2", "10"], "1e1", 2),           # decimal notation with an exponent is a number too
    (["1", "2", "10"], "10.", 2),
    (["0", "0.5"], "-0", 0),
    (["0", "0.5"], ".50", 1),
    (["0.10", "0.25"], "0.1", 0),           # the level written with more digits
    (["1", "2", "10"], "1.0000001", -1),    # never rounded
    (["0.3", "1"], "0.30000000000000004", -1),
    (["1", "2", "10"], "1,0", -1),          # not decimal notation
    (["1", "2", "10"], "one", -1),
    (["1", "2", "10"], "", -1),
    (["1", "1.0", "2"], "1.00", -1),        # equal to two levels: neither
    (["1", "1.0", "2"], "1.0", 1),          # a level's own text wins
    (["1", "placebo"], "1.0", -1),          # a level that is not a number: text only
    (["1", "placebo"], "1", 0),
    (["1", "2"], "1e" + "9" * 20, -1),      # an exponent beyond decimal arithmetic
])
def test_cells_read_as_levels(levels, cell, code):
    assert LevelReading.of(levels).code(cell) == code


def test_reading_by_value_needs_every_level_a_number():
    assert LevelReading.of(["1", "2.5", "-3", "010"]).by_value is not None
    assert LevelReading.of(["1", "2", "high"]).by_value is None
    assert LevelReading.of(["1", "2", "1,5"]).by_value is None


def test_findings_per_spelling_in_plan_order_then_first_appearance():
    found = reading_findings("dose", ["1", "2"], {("2.0", 1): 3, ("1.0", 0): 12, ("01", 0): 1})
    assert found == (
        Finding("level-read-by-value",
                "dose: 12 cells written '1.0' were read as the plan's level '1' (equal in value)."),
        Finding("level-read-by-value",
                "dose: 1 cell written '01' was read as the plan's level '1' (equal in value)."),
        Finding("level-read-by-value",
                "dose: 3 cells written '2.0' were read as the plan's level '2' (equal in value)."),
    )


CLOSE_HINT = "(close in value but not equal; levels are never rounded)"


@pytest.mark.parametrize("cell, levels, hint", [
    ("1.0000001", ["1", "2", "10"], f"; did you mean '1'? {CLOSE_HINT}"),
    ("0.999", ["1", "2", "10"], f"; did you mean '1'? {CLOSE_HINT}"),
    ("9.995", ["1", "2", "10"], f"; did you mean '10'? {CLOSE_HINT}"),
    ("9.95", ["1", "2", "10"], ""),
    # Close means within 1% of the smaller of the level's size and the smallest gap.
    ("1.02", ["1", "2", "10"], ""),                      # and no level spelled alike ('10')
    ("0.001", ["0", "5"], f"; did you mean '0'? {CLOSE_HINT}"),
    ("1", ["0.001", "100"], ""),
    ("1.5", ["1", "2"], ""),
    ("1.00", ["1", "1.0", "2"], "; equal in value to the levels '1' and '1.0', so read as neither"),
    ("1.0", ["1", "placebo"],
     "; did you mean '1'? (equal in value, but cells are read by value only when every level is a number)"),
    ("1.0000001", ["1", "placebo"], f"; did you mean '1'? {CLOSE_HINT}"),
    ("10", ["1", "2", "5"], ""),
    ("10", ["1", "2", "ten"], ""),
    ("1O", ["1", "2", "5"], "; did you mean '1'?"),        # not a number: a near spelling
    ("placebo1", ["placebo", "1"], "; did you mean 'placebo'?"),
    ("Placebo", ["placebo", "1"], "; did you mean 'placebo'?"),
    ("1e" + "9" * 20, ["1", "2"], ""),
    ("1,0", ["1", "2", "10"], "; did you mean '1'? (numbers are written with a decimal point)"),
    ("2,5", ["1", "2.5", "high"], "; did you mean '2.5'? (numbers are written with a decimal point)"),
    ("1,5", ["1", "2", "10"], ""),
])
def test_hints_for_cells_read_as_no_level(cell, levels, hint):
    assert LevelReading.of(levels).code(cell) == -1
    assert level_hint(cell, levels) == hint

