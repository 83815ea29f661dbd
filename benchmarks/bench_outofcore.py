"""Out of core: a 100,000,000-row Parquet source reduced to its variance table, peak memory.

The file (invented data: unit id int64, a factor of 100 levels, one float64 outcome whose
level means differ a little) is generated once, row group by row group with pyarrow, in
the benchmark scratch folder outside the repo, and reused when its row count is right.
A fresh child process then runs `build_dataset_out_of_core` and the one-term model's
variance table (the design engine, as a one-factor outcome is fitted) on the full-data
cell summary; the child's peak resident set size (VmHWM from
/proc/self/status: it starts afresh at exec, whereas ru_maxrss inherits the RSS of the
forked parent, which `benchmarks/run.py` makes large) is compared with the 1 GiB
target. Wall time is printed beside it.

    python benchmarks/bench_outofcore.py
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))
sys.path.insert(0, str(HERE.parent))

from common import Measurement  # noqa: E402

ROWS = 100_000_000
LEVELS = 100
GROUP = 5_000_000
GIB = 1 << 30

STUDY = """\
format: 1
study: {id: bench-outofcore, title: Invented data for the out-of-core benchmark}
data:
  source: units-100m.parquet
  unit: unit_id
design:
  factors:
    - {name: arm, levels: [%s]}
outcomes:
  - {name: y, label: Invented outcome, role: primary}
"""

CHILD = """
import json, sys, time
start = time.perf_counter()


def peak_kib():
    # VmHWM belongs to this process image and starts afresh at exec; ru_maxrss would
    # carry over the RSS of the parent copy made by fork (a large parent inflates it).
    for line in open("/proc/self/status"):
        if line.startswith("VmHWM:"):
            return int(line.split()[1])
    raise RuntimeError("no VmHWM in /proc/self/status")


from pathlib import Path
from appendix.plan.load import load_plan
from appendix.data.outofcore import build_dataset_out_of_core
from appendix.stats.cells import cells_from_summary
from appendix.stats.design import Grid, design_cells_from_stats
from appendix.stats.linear import fit_linear
loaded = load_plan(Path(sys.argv[1]))
data = build_dataset_out_of_core(loaded).outcome("y")
s, labels = data.summary, loaded.plan.factor.levels
grid = Grid(("arm",), (tuple(labels),))
row = fit_linear(design_cells_from_stats(grid, cells_from_summary(s, labels)), [("arm",)], 2, 0.05).terms[0]
print(json.dumps({"seconds": time.perf_counter() - start, "n": int(s.n.sum()), "f": row.statistic,
                  "sample": int(data.values.size), "counts": s.n.tolist(),
                  "mean": s.mean.tolist(), "ssd": s.ssd.tolist(),
                  "peak_kib": peak_kib()}))
"""


def scratch() -> Path:
    default = Path(tempfile.gettempdir()) / "appendix-bench"
    folder = Path(os.environ.get("APPENDIX_BENCH_DIR") or default)
    folder.mkdir(parents=True, exist_ok=True)
    return folder


def level_names() -> list[str]:
    return [f"L{i:03d}" for i in range(LEVELS)]


def generate(path: Path) -> float:
    """Write the invented file in row groups of `GROUP` rows; seconds taken (0 if reused)."""
    import numpy as np
    import pyarrow as pa
    import pyarrow.parquet as pq

    if path.exists() and pq.ParquetFile(path).metadata.num_rows == ROWS:
        return 0.0
    start = time.perf_counter()
    rng = np.random.default_rng(20260214)
    names = pa.array(level_names())
    shifts = rng.normal(0.0, 0.05, LEVELS)
    schema = pa.schema([("unit_id", pa.int64()), ("arm", pa.dictionary(pa.int8(), pa.string())),
                        ("y", pa.float64())])
    partial = path.with_suffix(".partial")
    # Sequential ids compress to almost nothing with delta encoding; y is random doubles.
    with pq.ParquetWriter(partial, schema, compression="snappy",
                          use_dictionary=["arm"],
                          column_encoding={"unit_id": "DELTA_BINARY_PACKED"}) as writer:
        for first in range(0, ROWS, GROUP):
            codes = rng.integers(0, LEVELS, GROUP, dtype=np.int8)
            y = 100.0 + shifts[codes] + rng.standard_normal(GROUP)
            batch = pa.record_batch([
                pa.array(np.arange(first, first + GROUP, dtype=np.int64)),
                pa.DictionaryArray.from_arrays(pa.array(codes), names),
                pa.array(y)], schema=schema)
            writer.write_batch(batch, row_group_size=GROUP)
    partial.replace(path)
    return time.perf_counter() - start


def numpy_two_pass(path: Path):
    """Reference per-level n, mean and SSD: numpy bincount two-pass, one row group at a time."""
    import numpy as np
    import pyarrow.parquet as pq

    names = {name: i for i, name in enumerate(level_names())}

    def groups():
        for batch in pq.ParquetFile(path).iter_batches(batch_size=GROUP, columns=["arm", "y"]):
            arm = batch.column(0)
            recode = np.array([names[v] for v in arm.dictionary.to_pylist()])
            yield recode[arm.indices.to_numpy()], batch.column(1).to_numpy()

    n = np.zeros(LEVELS, dtype=np.int64)
    total = np.zeros(LEVELS)
    for codes, y in groups():
        n += np.bincount(codes, minlength=LEVELS)
        total += np.bincount(codes, weights=y, minlength=LEVELS)
    mean = total / n
    ssd = np.zeros(LEVELS)
    for codes, y in groups():
        ssd += np.bincount(codes, weights=(y - mean[codes]) ** 2, minlength=LEVELS)
    return n, mean, ssd


def agreeing_digits(got, reference) -> float:
    """Log relative error (LRE), -log10 |got - ref| / |ref|, the least over levels (15 cap)."""
    import numpy as np

    got, reference = np.asarray(got), np.asarray(reference)
    error = np.abs(got - reference) / np.abs(reference)
    return float(min(15.0, -np.log10(max(error.max(), 1e-15))))


def measurements() -> list[Measurement]:
    folder = scratch()
    data = folder / "units-100m.parquet"
    made = generate(data)
    study = folder / "study-100m.yaml"
    study.write_text(STUDY % ", ".join(level_names()), encoding="utf-8")
    env = dict(os.environ, PYTHONPATH=str(HERE.parent))
    done = subprocess.run([sys.executable, "-c", CHILD, str(study)], check=True,
                          capture_output=True, text=True, env=env)
    got = json.loads(done.stdout.strip().splitlines()[-1])
    peak = got["peak_kib"] * 1024 / GIB
    from appendix.data.outofcore import should_go_out_of_core

    detail = (f"N = {got['n']:,}, F = {got['f']:.4g}, {got['seconds']:.0f} s to variance table, "
              f"out of core chosen: {should_go_out_of_core(data)}, "
              f"sample {got['sample']}, file {data.stat().st_size / GIB:.2f} GiB"
              + (f", generated in {made:.0f} s" if made else ", reused"))
    n, mean, ssd = numpy_two_pass(data)
    digits = min(agreeing_digits(got["mean"], mean), agreeing_digits(got["ssd"], ssd))
    return [Measurement("out of core: 1e8-row Parquet -> variance table, peak RSS",
                        peak, 1.0, "lower", " GiB", detail),
            Measurement("out of core: per-level mean and SSD vs numpy two-pass, LRE",
                        digits, 12.0, "higher", "",
                        f"per-level n equal: {got['counts'] == n.tolist()}; least over the levels")]


if __name__ == "__main__":
    for row in measurements():
        print(row.line())
