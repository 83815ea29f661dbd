"""Print the log relative error of the variance table the appendix reports (the design
engine's one-term model, `appendix.nist.engine_table`) on each NIST StRD ANOVA dataset.

Usage: python scripts/nist_lre.py   (from the repository root or anywhere)
LRE = -log10(|computed - certified| / |certified|), capped at 15 (McCullough 1998).
Two paths: the exact one (decimals counted on the data text, summed exactly as scaled
integers: `one_factor_cells(case, exact=True)`) and the float64 two-pass path
(`exact=False`), and, for the sums of squares,
the ceiling of any float64 computation: exact rational arithmetic on the float64 data.
"""

from __future__ import annotations

import sys
from pathlib import Path

REPO = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(REPO))

from appendix.nist import (  # noqa: E402
    HIGHER_DIFFICULTY, NAMES, engine_table, engine_values, exact_sums_of_squares, lre,
    one_factor_cells, read_case)

COLUMNS = ("df_between", "ss_between", "ms_between", "f", "df_within", "ss_within",
           "ms_within", "r_squared", "residual_sd")


def _values(case, exact: bool) -> dict[str, float]:
    return engine_values(engine_table(one_factor_cells(case, exact=exact)))


def main() -> int:
    cases = [read_case(name) for name in NAMES]
    for exact, title in ((True, "exact path (decimals from the data text, exact integer sums)"),
                         (False, "float64 two-pass path (decimals=None)")):
        print(f"LRE, {title}")
        print(f"{'dataset':<9} {'difficulty':<10} " + " ".join(f"{c:>11}" for c in COLUMNS))
        for case in cases:
            got = _values(case, exact)
            level = "higher" if case.name in HIGHER_DIFFICULTY else "low/avg"
            scores = " ".join(f"{lre(got[c], case.certified[c]):>11.1f}" for c in COLUMNS)
            print(f"{case.name:<9} {level:<10} {scores}")
        print()
    print("Float64 ceiling: LRE of exact rational arithmetic on the float64 data")
    print(f"{'dataset':<9} {'SSb ceiling':>11} {'SSb float':>11} {'SSw ceiling':>11} {'SSw float':>11}")
    for case in cases:
        ceiling = exact_sums_of_squares(case)
        got = _values(case, exact=False)
        scores = (lre(ceiling[0], case.certified["ss_between"]), lre(got["ss_between"], case.certified["ss_between"]),
                  lre(ceiling[1], case.certified["ss_within"]), lre(got["ss_within"], case.certified["ss_within"]))
        print(f"{case.name:<9} " + " ".join(f"{c:>11.1f}" for c in scores))
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
