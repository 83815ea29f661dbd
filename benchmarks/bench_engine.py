"""The numeric engine against a bare numpy two-pass and general-purpose libraries.

    python benchmarks/bench_engine.py      # prints its rows (about two minutes)

Every ratio is measured in this run on the same in-memory arrays (invented, seeded data:
100 levels, normal values), best of three wall-clock runs:

- engine variance table (`design_cells` + `fit_linear` of the one-term model, what the
  appendix computes for a one-factor outcome; float64 path) / a bare numpy
  `np.bincount` two-pass (counts, sums, means, then the bincount of squared deviations),
  10M rows; scipy `f_oneway` and pingouin `anova` over the same bare time, informational;
- statsmodels formula OLS + `anova_lm` / the engine, 1M rows;
- the exact-decimal path / the bare float two-pass, 10M rows of two-decimal data,
  informational (it does exact integer arithmetic, the bare pass does not);
- peak memory over the columns' bytes (values float64 + codes int64): the engine's own
  allocations (tracemalloc, which numpy reports to), and, in a fresh subprocess, the
  peak resident set while the engine runs (Linux /proc/self/status VmHWM, reset through
  /proc/self/clear_refs once the columns are built) minus the resident set before the
  columns existed: columns plus engine working memory.
"""

from __future__ import annotations

import subprocess
import sys
import tracemalloc
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE.parent))  # the package; this folder is on the path already

from appendix.stats.cells import cell_stats  # noqa: E402
from appendix.stats.design import Grid, design_cells  # noqa: E402
from appendix.stats.linear import fit_linear  # noqa: E402
from common import Measurement, best_time  # noqa: E402

BIG, MEDIUM = 10_000_000, 1_000_000  # rows
LEVELS = 100
INFORMATIONAL = None  # no target: the row is printed for comparison


def invented_data(rows: int, decimals: int | None = None, seed: int = 20261201):
    """Seeded invented one-way data: level effects plus normal noise, random order."""
    rng = np.random.default_rng(seed)
    codes = rng.integers(0, LEVELS, size=rows)
    values = 50.0 + rng.normal(0, 2, size=LEVELS)[codes] + rng.normal(0, 10, size=rows)
    if decimals is not None:
        values = np.round(values, decimals)
    return values, codes


def bare_two_pass(values: np.ndarray, codes: np.ndarray):
    """The baseline: per-level counts, sums, means, then sums of squared deviations."""
    n = np.bincount(codes, minlength=LEVELS)
    means = np.bincount(codes, weights=values, minlength=LEVELS) / n
    deviation = values - means[codes]
    return n, means, np.bincount(codes, weights=deviation * deviation, minlength=LEVELS)


GRID = Grid(("group",), (tuple(str(i) for i in range(LEVELS)),))


def engine(values: np.ndarray, codes: np.ndarray, decimals: int | None = None):
    """The one-term model's variance table, as the appendix fits a one-factor outcome."""
    cells = design_cells(GRID, [codes], values, decimals=decimals)
    return fit_linear(cells, (("group",),), 2, 0.05).terms[0]


def _check_same_table(values: np.ndarray, codes: np.ndarray) -> None:
    """Guard that both sides compute the same thing: F from the bare pass equals ours."""
    n, means, ssd = bare_two_pass(values, codes)
    grand = values.mean()
    f = (np.dot(n, (means - grand) ** 2) / (LEVELS - 1)) / (ssd.sum() / (values.size - LEVELS))
    if abs(engine(values, codes).statistic / f - 1) > 1e-9:
        raise RuntimeError("engine and bare two-pass disagree")


def _speed_rows() -> list[Measurement]:
    import pandas as pd
    import pingouin
    from scipy import stats

    values, codes = invented_data(BIG)
    bare = best_time(lambda: bare_two_pass(values, codes))
    ours = best_time(lambda: engine(values, codes))
    groups = [values[codes == i] for i in range(LEVELS)]
    scipy_time = best_time(lambda: stats.f_oneway(*groups))
    frame = pd.DataFrame({"y": values, "g": codes})
    pingouin_time = best_time(lambda: pingouin.anova(data=frame, dv="y", between="g"))
    del groups, frame
    _check_same_table(values, codes)
    decimal_values, decimal_codes = invented_data(BIG, decimals=2)
    if cell_stats(decimal_values, decimal_codes, LEVELS, decimals=2).arithmetic != "exact-decimal":
        raise RuntimeError("the exact-decimal path was not taken")
    decimal_bare = best_time(lambda: bare_two_pass(decimal_values, decimal_codes))
    exact = best_time(lambda: engine(decimal_values, decimal_codes, decimals=2))
    return [
        Measurement("10M rows, 100 levels: engine / bare bincount two-pass", ours / bare, 1.5,
                    "lower", detail=f"engine {ours:.3f} s, bare {bare:.3f} s"),
        Measurement("10M rows: scipy.stats.f_oneway / bare two-pass", scipy_time / bare,
                    INFORMATIONAL, "lower",
                    detail=f"scipy {_version('scipy')}, groups pre-split"),
        Measurement("10M rows: pingouin.anova / bare two-pass", pingouin_time / bare,
                    INFORMATIONAL, "lower",
                    detail=f"pingouin {_version('pingouin')}, DataFrame pre-built"),
        Measurement("10M rows, 2 decimals: exact-decimal path / bare float two-pass",
                    exact / decimal_bare, INFORMATIONAL, "lower",
                    detail=f"exact {exact:.3f} s, bare {decimal_bare:.3f} s"),
    ]


def _statsmodels_row() -> Measurement:
    import pandas as pd
    import statsmodels.formula.api as smf
    from statsmodels.stats.anova import anova_lm

    values, codes = invented_data(MEDIUM)
    frame = pd.DataFrame({"y": values, "g": codes})
    reference = best_time(lambda: anova_lm(smf.ols("y ~ C(g)", data=frame).fit(), typ=1))
    ours = best_time(lambda: engine(values, codes))
    return Measurement("1M rows: statsmodels OLS + anova_lm / engine", reference / ours, 100,
                       "higher", detail=f"statsmodels {_version('statsmodels')} {reference:.2f} s, "
                                        f"engine {1000 * ours:.1f} ms")


def _tracemalloc_row() -> Measurement:
    values, codes = invented_data(BIG)
    columns = values.nbytes + codes.nbytes
    tracemalloc.start()
    engine(values, codes)
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    return Measurement("10M rows: engine's own peak allocation / column bytes", peak / columns,
                       2.0, "lower", detail=f"tracemalloc, {peak / 2**20:.1f} MiB over "
                                            f"{columns / 2**20:.0f} MiB of columns")


_CHILD = """
import sys
sys.path.insert(0, {repo!r}); sys.path.insert(0, {here!r})
import bench_engine as b

def status(key):
    with open("/proc/self/status") as f:
        return next(int(line.split()[1]) * 1024 for line in f if line.startswith(key))

before = status("VmRSS:")
values, codes = b.invented_data(b.BIG)
with open("/proc/self/clear_refs", "w") as f:
    f.write("5")  # reset the high-water mark: generating the data is not the engine's cost
b.engine(values, codes)
print(status("VmHWM:") - before, values.nbytes + codes.nbytes)
"""


def _rss_row() -> Measurement:
    child = _CHILD.format(repo=str(HERE.parent), here=str(HERE))
    out = subprocess.run([sys.executable, "-c", child], capture_output=True, text=True, check=True)
    peak, columns = (int(x) for x in out.stdout.split())
    return Measurement("10M rows: peak RSS (columns + engine) / column bytes",
                       peak / columns, 2.0, "lower",
                       detail=f"subprocess, Linux VmHWM (reset after building the columns) "
                              f"minus RSS before them: {peak / 2**20:.0f} MiB")


def _version(name: str) -> str:
    from importlib.metadata import version

    return version(name)


def measurements() -> list[Measurement]:
    return [*_speed_rows(), _statsmodels_row(), _tracemalloc_row(), _rss_row()]


if __name__ == "__main__":
    for row in measurements():
        print(row.line(), flush=True)
