"""The factorial engine (cell pass + type 3 fit) against statsmodels' row-level fit.

    python benchmarks/bench_factorial.py      # prints its row (well under a minute)

Invented, seeded data: three crossed factors of 3, 3 and 4 levels (36 cells), every
interaction in the model, N = 1,000,000 rows in random order, normal cell effects and
noise. Measured side by side in this run on the same in-memory arrays:

- statsmodels formula OLS (`C(x, Sum)` coding) + `anova_lm(typ=3)` on a pre-built
  pandas DataFrame, best of two wall-clock runs (the first also gives the table the
  check below uses), over
- appendix's `design_cells` (one grouped pass over the rows) + `fit_linear(..., 3, ...)`,
  best of three.

Before timing, both tables are checked to agree (every term's df and F).
"""

from __future__ import annotations

import gc
import sys
import time
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE.parent))  # the package; this folder is on the path already

from appendix.stats.design import Grid, design_cells  # noqa: E402
from appendix.stats.linear import fit_linear  # noqa: E402
from common import Measurement, best_time  # noqa: E402

ROWS = 1_000_000
SHAPE = (3, 3, 4)
NAMES = ("A", "B", "D")
TERMS = [("A",), ("B",), ("D",), ("A", "B"), ("A", "D"), ("B", "D"), ("A", "B", "D")]
GRID = Grid(NAMES, tuple(tuple(f"{n.lower()}{j + 1}" for j in range(k)) for n, k in zip(NAMES, SHAPE)))


def invented_data(rows: int = ROWS, seed: int = 20261202):
    """Seeded invented factorial data: per-factor level codes and the response."""
    rng = np.random.default_rng(seed)
    cell = rng.integers(0, GRID.n_cells, size=rows)
    codes = [c.astype(np.int64) for c in np.unravel_index(cell, SHAPE)]
    y = 50.0 + rng.normal(0, 1, size=GRID.n_cells)[cell] + rng.normal(0, 5, size=rows)
    return codes, y


def appendix_table(codes, y):
    return fit_linear(design_cells(GRID, codes, y), TERMS, 3, 0.05)


def statsmodels_table(frame):
    import statsmodels.formula.api as smf
    from statsmodels.stats.anova import anova_lm

    formula = "y ~ C(A, Sum) * C(B, Sum) * C(D, Sum)"
    return anova_lm(smf.ols(formula, data=frame).fit(), typ=3)


def _check_same_table(ours, reference) -> None:
    rows = reference.drop(index=["Intercept", "Residual"])
    for row, (_, expected) in zip(ours.terms, rows.iterrows()):
        if row.df != expected["df"] or abs(row.statistic / expected["F"] - 1) > 1e-8:
            raise RuntimeError(f"appendix and statsmodels disagree on {row.label}")


def measurements() -> list[Measurement]:
    import pandas as pd

    codes, y = invented_data()
    frame = pd.DataFrame({"y": y, **dict(zip(NAMES, codes))})
    times, tables = [], []
    for _ in range(2):
        gc.collect()
        start = time.perf_counter()
        tables.append(statsmodels_table(frame))
        times.append(time.perf_counter() - start)
    _check_same_table(appendix_table(codes, y), tables[0])
    reference = min(times)
    ours = best_time(lambda: appendix_table(codes, y))
    return [Measurement("1M rows, 3 x 3 x 4 with all interactions, type 3: statsmodels / appendix",
                        reference / ours, 100, "higher",
                        detail=f"statsmodels {_version('statsmodels')} {reference:.2f} s, "
                               f"appendix {1000 * ours:.1f} ms")]


def _version(name: str) -> str:
    from importlib.metadata import version

    return version(name)


if __name__ == "__main__":
    for row in measurements():
        print(row.line(), flush=True)
