"""Plan + clean columns -> `Dataset`, with array operations instead of loops over rows.

The rules are those of `appendix.data.build` (unit identifiers present and unique,
levels by text after trimming or, for number-like levels, by value
(`appendix.data.levels`), exclusions by `appendix.data.values.match_key`, missing
texts, plain decimal numbers); here they only decide clean or not. `build_vectorised`
returns None at the first problem so that the row-by-row path can report every problem
with its lines.
"""

from __future__ import annotations

import numpy as np

from appendix.data.columnar import (Columns, arrow_indices, chunks_of, distinct_from_keys,
                                    first_words, map_chunks, missing_mask, numpy_of, unit_keys)
from appendix.data.dataset import Dataset, OutcomeData
from appendix.data.decimals import PLAIN_PATTERN, all_plain, exact_places, plain_digits, plain_places
from appendix.data.flow import count_levels, flow_findings
from appendix.data.levels import LevelReading, merge_counts, reading_findings
from appendix.data.rows import LineRows, TextRows
from appendix.data.values import DECIMAL_PATTERN, match_key
from appendix.plan.load import LoadedPlan
from appendix.results import ExclusionCount, LevelCount, OutcomeFlow, UnitFlow


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
    levels = plan.factor.levels
    units = columns.cells[plan.data.unit]
    texts = [columns.cells[o.data_column] for o in plan.outcomes]
    # One pass over the reader's chunks on two threads does every per-row step: unit keys,
    # level codes, and each outcome's plain-decimal check and float parse.
    sweep = _sweep(units, columns.cells[plan.factor.name], texts, levels)
    if sweep is None:
        return None
    codes, keys, rising, plain_reads, respelled = sweep
    if not distinct_from_keys(units, keys, rising):
        return None
    return _build(plan, columns, codes, plain_reads, respelled=respelled)


def build_scanned(loaded: LoadedPlan, path, delimiter: str) -> Dataset | None:
    """The `Dataset` of a plain file read by the compiled pass (`appendix.data.scan`),
    its `inputs` left empty, or None when the pass does not apply or stops."""
    from appendix.data.columnar import _header
    from appendix.data.decimals import EXACT_LIMIT
    from appendix.data.scan import FACTOR, TEXT, UNIT, scan_plain

    plan = loaded.plan
    table = _level_table(plan.factor.levels)
    header = _header(path, delimiter)
    outcomes = [o.data_column for o in plan.outcomes]
    roles = {plan.data.unit: UNIT, plan.factor.name: FACTOR}
    roles |= {rule.column: TEXT for rule in plan.data.exclusions}
    if table is None or header is None or header[:2] != (1, 1):
        return None
    stripped = [c.strip() for c in header[2]]
    named = [plan.data.unit, plan.factor.name, *dict.fromkeys(r.column for r in plan.data.exclusions),
             *outcomes]
    if (len(set(named)) != len(named) or len(set(stripped)) != len(stripped)
            or not set(named) <= set(stripped) or "" in stripped):
        return None  # one column in two roles, or a header the pyarrow path judges
    scanned = scan_plain(path, delimiter, header[2], roles, outcomes, table)
    if isinstance(scanned, int):
        return None
    for values, places in zip(scanned.values, scanned.places):
        if values.size and max(values.max(), -values.min()) * 10.0**int(places.max()) >= EXACT_LIMIT / 2:
            return None  # near the exact limit: the pyarrow path decides from the texts
    if not scanned.distinct_units:
        return None
    cells = {name: spans if name == plan.data.unit else spans.arrow()
             for name, spans in scanned.texts.items()}  # exclusion columns as pyarrow arrays
    columns = Columns(n_rows=scanned.n_rows, cells=cells, line_of=None)
    return _build(plan, columns, scanned.codes, list(zip(scanned.values, scanned.places)),
                  level_n=scanned.level_n)


def _sweep(units, factor, texts: list, levels):
    """(level codes, unit keys and whether they rise per chunk, per outcome (values, most
    digits after the point) or None where some cell is not plain decimal text, cells read
    by value per (spelling, code)), or None when a unit is missing or a level unknown."""
    reading = LevelReading.of(levels)
    table = _level_table(levels)
    starts = np.cumsum([0] + [len(c) for c in chunks_of(units)])
    codes = np.empty(int(starts[-1]), dtype=np.int64)
    values = [np.empty(int(starts[-1]), dtype=np.float64) for _ in texts]

    def work(start, unit, level, *cells):
        if missing_mask(unit).any():
            return None
        respelled = read_codes_into(codes[start:start + len(unit)], level, reading, table)
        if respelled is None:
            return None
        return (*unit_keys(unit), [_plain_into(v[start:start + len(c)], c)
                                   for v, c in zip(values, cells)], respelled)

    found = map_chunks(work, list(starts[:-1]), units, factor, *texts)
    if any(f is None for f in found):
        return None
    keys = [f[0] for f in found]
    rising = [f[1] for f in found]
    reads = []
    for k, v in enumerate(values):
        digits = [f[2][k] for f in found]
        reads.append(None if None in digits else (v, max(digits, default=0)))
    return codes, keys, rising, reads, merge_counts(f[3] for f in found)


def read_codes_into(out: np.ndarray, chunk, reading: LevelReading, table=None) -> dict | None:
    """Write the level code of every cell of `chunk` into `out` as `LevelReading.code`
    reads it; return the cells read by value per (spelling, code), in order of first
    appearance (empty when every cell is a level's text), or None if a cell is read as no
    level. Texts are tried first (through the `_level_table` if given); only a chunk with
    some other text is read again through its distinct texts."""
    import pyarrow.compute as pc

    if _codes_into(out, chunk, reading.index, table):
        return {}
    if reading.by_value is None:
        return None
    encoded = pc.dictionary_encode(chunk)
    entries = encoded.dictionary.to_pylist()
    of_entry = np.array([reading.code(t) for t in entries], dtype=np.int64)
    if (of_entry < 0).any():
        return None
    indices = numpy_of(encoded.indices)
    np.take(of_entry, indices, out=out)
    counts = np.bincount(indices, minlength=len(entries))
    return {(t, int(c)): int(n) for t, c, n in zip(entries, of_entry, counts) if t not in reading.index}


def _codes_into(out: np.ndarray, chunk, index: dict, table=None) -> bool:
    """Write the level code of every cell of `chunk` into `out`; False if one is unknown.
    With a `_level_table`, each cell's first 8 bytes and length are looked up in it (no
    hashing of the texts by pyarrow)."""
    import pyarrow.compute as pc

    if table is not None:
        return _table_codes_into(out, chunk, *table)
    encoded = pc.dictionary_encode(chunk)
    of_entry = np.array([index.get(t, -1) for t in encoded.dictionary.to_pylist()], dtype=np.int64)
    if (of_entry < 0).any():
        return False
    np.take(of_entry, numpy_of(encoded.indices), out=out)
    return True


#: Multipliers tried for the level table's hash (odd 64-bit constants), in this order.
_MULTIPLIERS = tuple(np.uint64(m) for m in (0x9E3779B97F4A7C15, 0xC2B2AE3D27D4EB4F,
                                            0xD6E8FEB86659FD93, 0x94D049BB133111EB,
                                            0xBF58476D1CE4E5B9, 0xFF51AFD7ED558CCD))


def _level_table(levels) -> tuple | None:
    """(multiplier, shift, slot -> level code or the sentinel len(levels), each code's word,
    each code's length) of a collision-free multiplicative hash of the levels' first 8
    bytes, or None when some level is longer than 8 bytes or no multiplier separates them.
    A text is level c exactly when its 8-byte word and length are those of level c (the
    word zero-padded beyond the length); the sentinel's length (-1) matches no text.

    >>> multiplier, shift, slots, words, lengths = _level_table(["a", "b", "ab"])
    >>> sorted(int(c) for c in slots if c < 3), lengths.tolist()
    ([0, 1, 2], [1, 1, 2, -1])
    >>> _level_table(["a" * 9]) is None
    True
    """
    encoded = [level.encode("utf-8") for level in levels]
    if not encoded or max(len(e) for e in encoded) > 8:
        return None
    words = np.array([int.from_bytes(e, "little") for e in encoded] + [0], dtype=np.uint64)
    lengths = np.array([len(e) for e in encoded] + [-1], dtype=np.int32)
    if np.unique(words[:-1]).size != len(levels):
        return None  # levels differing only by trailing zero bytes share a word
    bits = max((len(levels) - 1).bit_length() + 1, 4)
    for extra in range(6):
        shift = np.uint64(64 - bits - extra)
        for multiplier in _MULTIPLIERS:
            with np.errstate(over="ignore"):
                slot = (words[:-1] * multiplier) >> shift
            if np.unique(slot).size == len(levels):
                slots = np.full(1 << (bits + extra), len(levels), dtype=np.intp)
                slots[slot] = np.arange(len(levels))
                return multiplier, shift, slots, words, lengths
    return None


#: Rows per block of the level lookup: its few temporaries stay in the CPU cache.
_CODES_BLOCK = 1 << 15


def _table_codes_into(out: np.ndarray, chunk, *table) -> bool:
    """`_codes_into` through a `_level_table`, block by block."""
    return all(_block_codes_into(out[at:at + _CODES_BLOCK], chunk.slice(at, _CODES_BLOCK), *table)
               for at in range(0, len(chunk), _CODES_BLOCK))


def _block_codes_into(out: np.ndarray, chunk, multiplier, shift, slots, words, lengths) -> bool:
    length, word = first_words(chunk)
    if length.size == 0:
        return True
    width = int(length.max())
    one_width = int(length.min()) == width
    if one_width:  # only the levels of that width can match: the others' slots emptied
        slots = np.where(lengths[slots] == width, slots, lengths.size - 1)
    with np.errstate(over="ignore"):
        slot = word * multiplier
    slot >>= shift
    code = np.take(slots, slot, out=out)  # when False, out is dropped by the caller
    if not np.array_equal(words[code], word):
        return False
    return one_width or bool(np.array_equal(lengths[code], length))


def _plain_into(out: np.ndarray, chunk) -> int | None:
    """Most digits after the point of `chunk`, its values written into `out`; None if
    some cell is not plain decimal text or not a finite double."""
    digits = plain_digits(chunk)
    if digits is None or len(chunk) == 0:
        return digits
    part = _floats(chunk)
    if part is None:
        return None
    out[:] = part
    return digits


def _build(plan, columns: Columns, codes: np.ndarray, plain_reads: list,
           level_n: np.ndarray | None = None, respelled: dict | None = None) -> Dataset | None:
    """`level_n`: the rows at each level, when already counted; `respelled`: cells read
    as a level by value, per (spelling, code)."""
    import pyarrow.compute as pc

    levels = plan.factor.levels
    read = (count_levels(codes, levels) if level_n is None
            else tuple(LevelCount(level=level, n=int(m)) for level, m in zip(levels, level_n)))
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
    units = columns.cells[plan.data.unit]
    for outcome, read_plain in zip(plan.outcomes, plain_reads):
        texts = columns.cells.get(outcome.data_column)
        # Common case first: every cell plain decimal text (then none is missing: no
        # missing text is plain), checked and read by the sweep over the chunks. Digits
        # after the point come as the most of all rows, or per row (the compiled pass,
        # which keeps no outcome texts and has ruled out values near the exact limit).
        if read_plain is not None:
            values, digits = read_plain
            missing = None
            rows, kept, kept_codes, plain = range(columns.n_rows), texts, codes, True
            if not everyone:  # digits are counted over the analysed cells only
                rows = np.flatnonzero(eligible)
                kept_codes, values = codes[rows], values[rows]
                if isinstance(digits, np.ndarray):
                    digits = digits[rows]
                else:
                    kept, digits = texts.take(arrow_indices(rows)), None
            if isinstance(digits, np.ndarray):
                digits = int(digits.max(initial=0))
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
        kept_codes = _read_only(kept_codes)
        outcomes.append(OutcomeData(
            name=outcome.name, values=_read_only(values), codes=kept_codes, factors=(kept_codes,),
            units=TextRows(units, rows), lines=LineRows(rows, 2, columns.line_of),
            decimals=(None if not plain else plain_places(kept, values) if digits is None
                      else exact_places(kept, values, digits))))
        gone = eligible & missing if missing is not None else None
        if gone is None or not gone.any():  # every eligible row analysed: counts known
            missing_counts, analysed_counts = count_levels(codes[:0], levels), counted_eligible
        else:
            missing_counts, analysed_counts = (count_levels(codes[gone], levels),
                                               count_levels(kept_codes, levels))
        flows.append(OutcomeFlow(outcome=outcome.name, missing=missing_counts,
                                 analysed=analysed_counts))
    flow = UnitFlow(read=read, exclusions=tuple(excluded), eligible=counted_eligible,
                    outcomes=tuple(flows))
    return Dataset(levels=levels, inputs=(), unit_flow=flow, outcomes=tuple(outcomes),
                   findings=reading_findings(plan.factor.name, levels, respelled or {})
                   + flow_findings(plan, flow))


def _read_only(array: np.ndarray) -> np.ndarray:
    """`array` made read-only in place: arrays made here are not shared, so no copy is needed
    (`frozen_array` would copy ten million values a second time)."""
    array.flags.writeable = False
    return array


def _all_where(matched, mask: np.ndarray) -> bool:
    """Whether the boolean pyarrow array `matched` is true at every row of `mask`."""
    return bool(numpy_of(matched)[mask].all())


def _floats(texts) -> np.ndarray | None:
    """float64 of number texts (pyarrow), or None if one is unreadable or beyond range."""
    import pyarrow as pa
    import pyarrow.compute as pc

    try:
        values = numpy_of(pc.cast(texts, pa.float64()))
    except pa.ArrowInvalid:
        return None
    return values if np.isfinite(values).all() else None


def _matches(column, target: str) -> np.ndarray:
    """Rows whose cell has the match key `target` (one `match_key` call per distinct text)."""
    def hits(chunk) -> np.ndarray:
        import pyarrow.compute as pc

        encoded = pc.dictionary_encode(chunk)
        hit = np.array([match_key(t) == target for t in encoded.dictionary.to_pylist()], dtype=bool)
        return hit[numpy_of(encoded.indices)] if hit.size else np.zeros(len(chunk), bool)

    parts = map_chunks(hits, column)
    return np.concatenate(parts) if parts else np.zeros(0, bool)
