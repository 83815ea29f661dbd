"""Plan + clean columns -> `Dataset`, with array operations instead of loops over rows.

The rules are those of `appendix.data.build` (unit identifiers present and unique,
levels exact after trimming, exclusions by `appendix.data.values.match_key`, missing
texts, plain decimal numbers); here they only decide clean or not. `build_vectorised`
returns None at the first problem so that the row-by-row path can report every problem
with its lines.
"""

from __future__ import annotations

from concurrent.futures import ThreadPoolExecutor

import numpy as np

from appendix.data.columnar import (Columns, all_distinct, arrow_indices, chunks_of, map_chunks,
                                    missing_mask, numpy_of)
from appendix.data.dataset import Dataset, OutcomeData
from appendix.data.decimals import PLAIN_PATTERN, all_plain, exact_places, plain_digits, plain_places
from appendix.data.flow import count_levels, flow_findings
from appendix.data.rows import LineRows, TextRows
from appendix.data.values import DECIMAL_PATTERN, match_key
from appendix.plan.load import LoadedPlan
from appendix.results import ExclusionCount, OutcomeFlow, UnitFlow


def needed_columns(loaded: LoadedPlan) -> list[str]:
    """The data columns the plan names, each once, in a fixed order."""
    plan = loaded.plan
    names = [plan.data.unit, plan.factor.name, *(r.column for r in plan.data.exclusions),
             *(o.data_column for o in plan.outcomes)]
    return list(dict.fromkeys(names))


def build_vectorised(loaded: LoadedPlan, columns: Columns) -> Dataset | None:
    """The `Dataset` of a clean file (its `inputs` left empty for the caller to fill),
    or None if any row breaks a data rule."""
    plan = loaded.plan
    units = columns.cells[plan.data.unit]
    # The unit checks (none missing, none repeated) run beside the rest.
    with ThreadPoolExecutor(max_workers=1) as pool:
        distinct = pool.submit(lambda: not missing_mask(units).any() and all_distinct(units))
        built = _build(plan, columns, units)
        return built if distinct.result() else None


def _build(plan, columns: Columns, units) -> Dataset | None:
    import pyarrow as pa
    import pyarrow.compute as pc

    levels = plan.factor.levels
    codes = _level_codes(columns.cells[plan.factor.name], levels)
    if codes is None:
        return None
    read = count_levels(codes, levels)
    eligible = np.ones(columns.n_rows, dtype=bool)
    excluded = []
    for rule in plan.data.exclusions:
        hit = eligible & _matches(columns.cells[rule.column], match_key(rule.equals))
        eligible &= ~hit
        excluded.append(ExclusionCount(rule=rule.id, column=rule.column, equals=rule.equals,
                                       reason=rule.reason, by_level=count_levels(codes[hit], levels),
                                       total=int(hit.sum())))
    # Counting is a pass over every row: reuse a count when the rows are the same.
    everyone = bool(eligible.all())
    counted_eligible = read if everyone else count_levels(codes[eligible], levels)
    outcomes, flows = [], []
    for outcome in plan.outcomes:
        texts = columns.cells[outcome.data_column]
        # Common case first: every row eligible and every cell plain decimal text (then
        # none is missing: no missing text is plain), checked and read chunk by chunk.
        read_plain = _plain_values(texts) if everyone else None
        if read_plain is not None:
            values, digits = read_plain
            missing = np.zeros(columns.n_rows, dtype=bool)
            rows, kept, kept_codes, plain = range(columns.n_rows), texts, codes, True
        else:
            missing = missing_mask(texts)
            analysed = eligible & ~missing
            plain = all_plain(texts) or _all_where(pc.match_substring_regex(texts, PLAIN_PATTERN),
                                                   analysed)
            if not plain and not _all_where(pc.match_substring_regex(texts, DECIMAL_PATTERN),
                                            analysed):
                return None
            if everyone and not missing.any():
                rows, kept, kept_codes = range(columns.n_rows), texts, codes
            else:
                rows = np.flatnonzero(analysed)
                kept, kept_codes = texts.take(arrow_indices(rows)), codes[rows]
            values, digits = _floats(kept), None
            if values is None:
                return None
        outcomes.append(OutcomeData(
            name=outcome.name, values=_read_only(values), codes=_read_only(kept_codes),
            units=TextRows(units, rows), lines=LineRows(rows, 2, columns.line_of),
            decimals=(None if not plain else plain_places(kept, values) if digits is None
                      else exact_places(kept, values, digits))))
        gone = eligible & missing
        flows.append(OutcomeFlow(
            outcome=outcome.name, missing=count_levels(codes[gone], levels),
            analysed=counted_eligible if not gone.any() else count_levels(kept_codes, levels)))
    flow = UnitFlow(read=read, exclusions=tuple(excluded), eligible=counted_eligible,
                    outcomes=tuple(flows))
    return Dataset(levels=levels, inputs=(), unit_flow=flow, outcomes=tuple(outcomes),
                   findings=flow_findings(plan, flow))


def _read_only(array: np.ndarray) -> np.ndarray:
    """`array` made read-only in place: arrays made here are not shared, so no copy is needed
    (`frozen_array` would copy ten million values a second time)."""
    array.flags.writeable = False
    return array


def _all_where(matched, mask: np.ndarray) -> bool:
    """Whether the boolean pyarrow array `matched` is true at every row of `mask`."""
    return bool(numpy_of(matched)[mask].all())


def _plain_values(texts) -> tuple[np.ndarray, int] | None:
    """(float64 values, most digits after the point) of a column whose every cell is plain
    decimal text (`appendix.data.decimals.plain_digits`), else None. Chunks are checked and
    parsed on two threads, each into its part of one array."""
    import pyarrow as pa
    import pyarrow.compute as pc

    chunks = chunks_of(texts)
    starts = np.cumsum([0] + [len(c) for c in chunks])
    values = np.empty(int(starts[-1]), dtype=np.float64)

    def read(chunk, start: int) -> int | None:
        digits = plain_digits(chunk)
        if digits is None or len(chunk) == 0:
            return digits
        part = _floats(chunk)
        if part is None:
            return None
        values[start:start + part.size] = part
        return digits

    found = map_chunks(read, texts, list(starts[:-1]))
    if any(d is None for d in found):
        return None
    return values, max(found, default=0)


def _floats(texts) -> np.ndarray | None:
    """float64 of number texts (pyarrow), or None if one is unreadable or beyond range."""
    import pyarrow as pa
    import pyarrow.compute as pc

    try:
        values = numpy_of(pc.cast(texts, pa.float64()))
    except pa.ArrowInvalid:
        return None
    return values if np.isfinite(values).all() else None


def _level_codes(column, levels) -> np.ndarray | None:
    """Index into `levels` of every row, or None if some cell is not a plan level."""
    index = {level: i for i, level in enumerate(levels)}

    def codes_of(chunk) -> np.ndarray | None:
        import pyarrow.compute as pc

        encoded = pc.dictionary_encode(chunk)
        of_entry = np.array([index.get(t, -1) for t in encoded.dictionary.to_pylist()],
                            dtype=np.int64)
        if (of_entry < 0).any():
            return None
        return of_entry[numpy_of(encoded.indices)]

    parts = map_chunks(codes_of, column)
    if any(p is None for p in parts):
        return None
    return np.concatenate(parts) if parts else np.zeros(0, np.int64)


def _matches(column, target: str) -> np.ndarray:
    """Rows whose cell has the match key `target` (one `match_key` call per distinct text)."""
    def hits(chunk) -> np.ndarray:
        import pyarrow.compute as pc

        encoded = pc.dictionary_encode(chunk)
        hit = np.array([match_key(t) == target for t in encoded.dictionary.to_pylist()], dtype=bool)
        return hit[numpy_of(encoded.indices)] if hit.size else np.zeros(len(chunk), bool)

    parts = map_chunks(hits, column)
    return np.concatenate(parts) if parts else np.zeros(0, bool)
