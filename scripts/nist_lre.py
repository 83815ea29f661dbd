"""Print the log relative error of the variance table on each NIST StRD ANOVA dataset.

Usage: python scripts/nist_lre.py   (from the repository root or anywhere)
LRE = -log10(|computed - certified| / |certified|), capped at 15 (McCullough 1998).
"""

from __future__ import annotations

import sys
from pathlib import Path

REPO = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(REPO / "tests" / "reference"))
sys.path.insert(0, str(REPO))

from appendix.stats.cells import cell_stats  # noqa: E402
from appendix.stats.oneway import variance_table  # noqa: E402
from nist import (  # noqa: E402
    HIGHER_DIFFICULTY, NAMES, engine_values, exact_sums_of_squares, lre, read_case)

COLUMNS = ("df_between", "ss_between", "ms_between", "f", "df_within", "ss_within",
           "ms_within", "r_squared", "residual_sd")


def _table(case):
    return variance_table(cell_stats(case.values, case.codes, case.k), alpha=0.05)


def main() -> int:
    print(f"{'dataset':<9} {'difficulty':<10} " + " ".join(f"{c:>11}" for c in COLUMNS))
    for name in NAMES:
        case = read_case(name)
        table = _table(case)
        got = engine_values(table)
        level = "higher" if name in HIGHER_DIFFICULTY else "low/avg"
        scores = " ".join(f"{lre(got[c], case.certified[c]):>11.1f}" for c in COLUMNS)
        print(f"{name:<9} {level:<10} {scores}")
    print()
    print("Ceiling: LRE of exact rational arithmetic on the same float64 data (what storing")
    print("the decimal data as float64 leaves), against the LRE reached by the engine.")
    print(f"{'dataset':<9} {'SSb exact':>10} {'SSb ours':>10} {'SSw exact':>10} {'SSw ours':>10}")
    for name in NAMES:
        case = read_case(name)
        table = _table(case)
        exact = exact_sums_of_squares(case)
        scores = (
            lre(exact[0], case.certified["ss_between"]),
            lre(table.rows[0].sum_of_squares, case.certified["ss_between"]),
            lre(exact[1], case.certified["ss_within"]),
            lre(table.rows[1].sum_of_squares, case.certified["ss_within"]),
        )
        print(f"{name:<9} " + " ".join(f"{c:>10.1f}" for c in scores))
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
