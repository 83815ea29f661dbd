"""Reading: a 10,000,000-row CSV to its variance table, against pyarrow's CSV reader alone.

    python benchmarks/bench_reading.py      # prints its rows (about a minute; first run
                                            # also writes a ~190 MB CSV once)

The file (invented, seeded data: a unit identifier, a factor of 100 levels, one outcome
written with two decimals) and a minimal study file are written once to
$APPENDIX_BENCH_DIR (default: <temp>/appendix-bench) and reused while the row count
matches. Best of three wall-clock runs each, the two interleaved, measured in this run:

- (a) `pyarrow.csv.read_csv` of the whole file with its default options (types inferred);
- (b) appendix's data stage and variance table: `load_plan`, `build_dataset` (for this
  file the compiled pass of `appendix.data.scan`), then
  `design_cells` (with `OutcomeData.decimals`, so the exact-decimal path when the data
  allow it) and `fit_linear` of the one-term model, as the appendix fits a one-factor
  outcome; printed as the ratio b / a, with the two parts' times.

The detail also gives, for the account of the data stage, pyarrow's reader as the data
stage calls it (the three columns as bytes) and the SHA-256 of the file, which the data
stage computes on a second thread beside the reading.
"""

from __future__ import annotations

import os
import sys
import tempfile
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))
sys.path.insert(0, str(HERE.parent))

from common import Measurement, best_time  # noqa: E402

ROWS = 10_000_000
LEVELS = 100
NAME = "reading-10m"


def scratch() -> Path:
    """The folder for generated files, outside the repository."""
    folder = Path(os.environ.get("APPENDIX_BENCH_DIR") or Path(tempfile.gettempdir()) / "appendix-bench")
    folder.mkdir(parents=True, exist_ok=True)
    return folder


def study_text(data_name: str) -> str:
    levels = ", ".join(f"g{i:02d}" for i in range(LEVELS))
    return (
        "format: 1\n"
        "study: {id: bench-reading, title: Invented data for the reading benchmark}\n"
        f"data:\n  source: {data_name}\n  unit: unit_id\n"
        f"design:\n  factors:\n    - {{name: group, levels: [{levels}]}}\n"
        "outcomes:\n  - {name: y, label: Response, role: primary}\n"
    )


def generated(rows: int = ROWS, seed: int = 20261201) -> Path:
    """The study file of a `rows`-row invented CSV, written once and reused."""
    import numpy as np
    import pyarrow as pa
    import pyarrow.compute as pc
    import pyarrow.csv as pcsv

    folder = scratch()
    data, study = folder / f"{NAME}.csv", folder / f"{NAME}.yaml"
    marker = folder / f"{NAME}.rows"
    if data.is_file() and marker.is_file() and marker.read_text() == f"{rows} {data.stat().st_size}":
        return study
    rng = np.random.default_rng(seed)
    group = rng.integers(0, LEVELS, size=rows)
    cents = np.clip(np.round(rng.normal(5000.0, 1000.0, size=rows)
                             + rng.normal(0.0, 200.0, size=LEVELS)[group]), 0, None).astype(np.int64)
    text = pc.binary_join_element_wise
    table = pa.table({
        "unit_id": text("U", pc.cast(pa.array(np.arange(1, rows + 1)), pa.string()), ""),
        "group": pc.take(pa.array([f"g{i:02d}" for i in range(LEVELS)]), pa.array(group)),
        "y": text(pc.cast(pa.array(cents // 100), pa.string()),
                  pc.utf8_lpad(pc.cast(pa.array(cents % 100), pa.string()), 2, "0"), "."),
    })
    pcsv.write_csv(table, data, pcsv.WriteOptions(quoting_style="none"))
    study.write_text(study_text(data.name), encoding="utf-8")
    marker.write_text(f"{rows} {data.stat().st_size}")
    return study


def measurements() -> list[Measurement]:
    import pyarrow as pa
    import pyarrow.csv as pcsv

    from appendix.data.build import build_dataset
    from appendix.hashing import sha256_and_size
    from appendix.plan.load import load_plan
    from appendix.stats.design import Grid, design_cells
    from appendix.stats.linear import fit_linear

    study = generated()
    data = study.with_suffix(".csv")
    parts: dict[str, float] = {}

    def appendix_stage():
        start = time.perf_counter()
        first = not parts
        loaded = load_plan(study)
        dataset = build_dataset(loaded)
        middle = time.perf_counter()
        outcome = dataset.outcomes[0]
        grid = Grid((loaded.plan.factor.name,), (dataset.levels,))
        cells = design_cells(grid, [outcome.codes], outcome.values, decimals=outcome.decimals)
        fit_linear(cells, loaded.plan.model_terms, 2, loaded.plan.alpha)
        end = time.perf_counter()
        if first:  # the process's first call also loads the compiled kernels
            parts["first"] = end - start
        if "total" not in parts or end - start < parts["total"]:
            parts.update(total=end - start, data=middle - start, stats=end - middle,
                         decimals=outcome.decimals, arithmetic=cells.arithmetic)

    # Interleaved (bare, ours, bare, ours, ...), best of each: on a shared machine a load
    # that comes and goes then falls on both sides rather than on one.
    bare, ours = map(min, zip(*((best_time(lambda: pcsv.read_csv(data), repeat=1),
                                 best_time(appendix_stage, repeat=1)) for _ in range(3))))
    # For the account of the data stage: the reader as the data stage calls it (the named
    # columns as bytes, no type inference) and the file's SHA-256 (beside it, on a thread).
    names = ["unit_id", "group", "y"]
    as_bytes = best_time(lambda: pcsv.read_csv(data, convert_options=pcsv.ConvertOptions(
        include_columns=names, column_types={n: pa.binary() for n in names})))
    hashing = best_time(lambda: sha256_and_size(data))
    detail = (f"pyarrow read_csv {bare:.2f} s; appendix {ours:.2f} s = data stage "
              f"{parts['data']:.2f} s + design_cells/fit_linear {parts['stats']:.2f} s "
              f"({parts['arithmetic']}, decimals={parts['decimals']}); within the data stage: "
              f"read_csv of the columns as bytes {as_bytes:.2f} s, SHA-256 {hashing:.2f} s "
              f"(beside it); first call in this process {parts['first']:.2f} s (imports numba, "
              f"loads or compiles the reading kernels); {ROWS:,} rows")
    return [Measurement("reading: 10M-row CSV to variance table / pyarrow read_csv",
                        ours / bare, 1.5, "lower", detail=detail)]


if __name__ == "__main__":
    for row in measurements():
        print(row.line(), flush=True)
