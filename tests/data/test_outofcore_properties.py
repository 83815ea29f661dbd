"""Property: on any small invented CSV the out-of-core stage agrees with the in-memory one.

Rows are drawn by hypothesis from cells that exercise every rule: exclusion values by
value and trimmed, case-sensitive text, each missing-value spelling, signed and
exponent decimals, levels left empty. Reference: `appendix.data.build.build_dataset`
(flow, findings, arrays) and numpy two-pass sums of its arrays (n, mean, SSD).
"""

from __future__ import annotations

import tempfile
from pathlib import Path

import numpy as np
from hypothesis import example, given, settings
from hypothesis import strategies as st

from appendix.data.build import build_dataset
from appendix.data.outofcore import build_dataset_out_of_core
from appendix.plan.load import load_plan
from tests.data.helpers import write_study

NUMBERS = ["1.5", "-2", "3e1", "+.5", "4.", "0.1", "7", "1e2", "-0.25"]
MISSING = ["", "NA", "N/A", "NaN", "nan", "."]
ROW = st.tuples(st.sampled_from(["placebo", "low", "high", " low "]),
                st.sampled_from(["no", "yes", " yes", "YES", "Yes"]),
                st.sampled_from(["5", "0", "0.0", "00", "0e0", "-0", "5.0"]),
                st.sampled_from(NUMBERS + MISSING),
                st.sampled_from(NUMBERS + MISSING[:2]))


@settings(max_examples=40, deadline=None)
@given(rows=st.lists(ROW, min_size=1, max_size=40), sample=st.integers(1, 50))
def test_out_of_core_agrees_with_in_memory(rows, sample):
    with tempfile.TemporaryDirectory() as folder:
        text = "unit_id,arm,violated,dose,pain,sleep\n" + "".join(
            f"U{i},{','.join(row)}\n" for i, row in enumerate(rows))
        (Path(folder) / "units.csv").write_text(text, encoding="utf-8")
        loaded = load_plan(write_study(Path(folder), "units.csv", planned=3))
        memory = build_dataset(loaded)
        outside = build_dataset_out_of_core(loaded, sample_size=sample)
        full = build_dataset_out_of_core(loaded, sample_size=len(rows))
    assert (outside.unit_flow, outside.findings) == (memory.unit_flow, memory.findings)
    for part, whole, reference in zip(outside.outcomes, full.outcomes, memory.outcomes):
        assert (whole.units, whole.lines) == (reference.units, reference.lines)
        np.testing.assert_array_equal(whole.values, reference.values)
        assert part.values.size == min(sample, reference.values.size) == len(part.units)
        assert set(part.units) <= set(reference.units)
        for i in range(3):
            values = reference.values[reference.codes == i]
            assert part.summary.n[i] == values.size
            if values.size:
                mean = values.mean()
                np.testing.assert_allclose(part.summary.mean[i], mean, rtol=1e-12, atol=1e-15)
                np.testing.assert_allclose(part.summary.ssd[i], ((values - mean) ** 2).sum(),
                                           rtol=1e-12, atol=1e-12)


FLOATS = st.one_of(st.none(), st.just(float("nan")),
                   st.floats(-1e6, 1e6, allow_nan=False).map(lambda v: round(v, 3)))


@settings(max_examples=30, deadline=None)
# Found by this test: a float column whose only non-NaN value is 0.0 has Parquet min/max
# statistics [0, 0], and DuckDB folded isnan() to false from them.
@example(rows=[("placebo", "no", 5.0, None, float("nan")), ("placebo", "no", 5.0, None, float("nan")),
               ("placebo", "no", 5.0, None, 0.0)])
@given(rows=st.lists(st.tuples(st.sampled_from(["placebo", "low", "high"]),
                               st.sampled_from(["no", "yes", None]),
                               st.sampled_from([5.0, 0.0, -0.0, None, float("nan"), 2.5]),
                               FLOATS, FLOATS), min_size=1, max_size=30))
def test_typed_parquet_agrees_with_in_memory(rows):
    import pyarrow as pa
    import pyarrow.parquet as pq

    names = ["arm", "violated", "dose", "pain", "sleep"]
    columns = {name: [row[j] for row in rows] for j, name in enumerate(names)}
    with tempfile.TemporaryDirectory() as folder:
        table = pa.table({"unit_id": pa.array(range(len(rows)), pa.int64()),
                          **{name: pa.array(values, pa.float64() if j > 1 else pa.string())
                             for j, (name, values) in enumerate(columns.items())}})
        pq.write_table(table, Path(folder) / "units.parquet")
        loaded = load_plan(write_study(Path(folder), "units.parquet", planned=3))
        memory = build_dataset(loaded)
        outside = build_dataset_out_of_core(loaded, sample_size=len(rows))
    assert (outside.unit_flow, outside.findings) == (memory.unit_flow, memory.findings)
    for got, reference in zip(outside.outcomes, memory.outcomes):
        assert (got.units, got.lines) == (reference.units, reference.lines)
        np.testing.assert_array_equal(got.values, reference.values)
