"""The variance table the appendix reports for a one-factor outcome (the design engine's
one-term model, `appendix.nist.engine_table`) against the NIST StRD one-way ANOVA
certified values.

Source of every expected value: NIST Statistical Reference Datasets, ANOVA
(https://www.itl.nist.gov/div898/strd/anova/anova.html), certified values read from the
header of each .dat file as installed with scipy 1.17 (scipy/stats/tests/data/nist_anova).
Accuracy is the log relative error (LRE) of McCullough (1998, Am. Stat. 52:358-366).
"""

from __future__ import annotations

import pytest

from appendix.nist import (HIGHER_DIFFICULTY, NAMES, engine_table, engine_values,
                           exact_sums_of_squares, lre, one_factor_cells, read_case)

# Exact path (decimals counted on the data text, exact integer sums): every value to the
# certified 15 digits, up to the rounding of the certified value itself (AtmWtAg: 14.5).
# The issue asks for >= 12; the engine reaches 14, which is what is guarded.
EXACT_FLOOR = 14.0
# Float64 path (decimals=None), lower and average difficulty: at least 9 digits.
LOW_AVERAGE_FLOOR = 9.0
# Float64 path, higher difficulty (13 constant leading digits): float64 cannot hold the
# data to better than ~1e-4 absolute, so ~4 digits is the ceiling; exact rational
# arithmetic on the same float64 inputs reaches LRE 4.0 (SS between) and 4.3 (SS within)
# on SmLs07. The float path reaches that ceiling; the floor guards against regressions.
HIGHER_FLOOR = 3.8


def _scores(name: str, exact: bool) -> dict[str, float]:
    case = read_case(name)
    cells = one_factor_cells(case, exact=exact)
    assert cells.arithmetic == ("exact-decimal" if exact else "float64")
    table = engine_table(cells)
    assert [row.term for row in table.rows] == [("group",)]
    got = engine_values(table)
    scores = {key: lre(got[key], certified) for key, certified in case.certified.items()}
    print(name, "exact" if exact else "float64",
          " ".join(f"{key}={score:.1f}" for key, score in sorted(scores.items())))
    return scores


@pytest.mark.parametrize("name", NAMES)
def test_lre_of_the_exact_path(name: str) -> None:
    scores = _scores(name, exact=True)
    low = {key: score for key, score in scores.items() if score < EXACT_FLOOR}
    assert not low, f"{name}: LRE below {EXACT_FLOOR}: {low}"


@pytest.mark.parametrize("name", NAMES)
def test_lre_of_the_float64_path(name: str) -> None:
    floor = HIGHER_FLOOR if name in HIGHER_DIFFICULTY else LOW_AVERAGE_FLOOR
    scores = _scores(name, exact=False)
    assert scores["df_between"] == 15 and scores["df_within"] == 15
    low = {key: score for key, score in scores.items() if score < floor}
    assert not low, f"{name}: LRE below {floor}: {low}"


def test_parser_reads_certified_values_of_sirstv() -> None:
    # Values copied by hand from SiRstv.dat lines 41-47 (NIST StRD).
    case = read_case("SiRstv")
    assert case.certified["ss_between"] == 5.11462616000000e-02
    assert case.certified["f"] == 1.18046237440255e00
    assert case.certified["residual_sd"] == 1.04076068334656e-01
    assert case.k == 5 and case.values.size == 25
    assert case.values[0] == 196.3052 and case.codes[-1] == 4
    assert case.decimals == 4  # data lines read "196.3052", "196.1240", ...: four decimals


@pytest.mark.parametrize("name", ["SiRstv", "SmLs01", "SmLs04", "SmLs07", "AtmWtAg"])
def test_float64_path_matches_exact_arithmetic_on_the_same_inputs(name: str) -> None:
    # Oracle: exact rational arithmetic (fractions.Fraction) on the float64 data. The
    # float path should lose almost nothing beyond the float64 storage of the data itself.
    case = read_case(name)
    table = engine_table(one_factor_cells(case, exact=False))
    exact_between, exact_within = exact_sums_of_squares(case)
    assert lre(table.rows[0].sum_of_squares, exact_between) >= 12
    assert lre(table.residual_ss, exact_within) >= 12
