"""The fastest CSV/TSV path: one compiled pass over the bytes of a large, plain file.

A file is plain when its header is one line and its body is ASCII without quotes, blank
lines or control bytes (besides the delimiter, tab and CRLF or LF line ends), every row
as wide as the header, and the cells the plan reads hold no white space. For such a
file one pass per part (the body cut at line ends, the parts on two threads) does every
per-row step that reading the columns and checking them would do in several passes:

- the unit cell: its span in the file (no copy), and whether the units rise in
  shortlex order, which proves them distinct (else 64-bit hashes are sorted and only
  rows of a repeated hash compared as texts);
- the factor cell: its level code, through the plan's collision-free level table
  (`appendix.data.vectorised._level_table`), and the count per level;
- each outcome cell: read as plain decimal text into its digits after the point and its
  float64, ``m / 10**d`` for the integer m of its digits: with m < 2**53 and d <= 22
  both are exact doubles and IEEE 754 division rounds once, so the value is the
  correctly rounded one that any conforming reader gives;
- each exclusion column's cell: its span.

Anything else stops the pass (a missing or unknown value, a quote, a stray byte, a
ragged row) and the caller takes the pyarrow path (`appendix.data.columnar`), which
handles every layout and leaves problems to the row-by-row reader to word. The kernels
are compiled by numba (cached on disk); importing numba costs about 0.3 s, so the pass
is used from `SCAN_MIN_BYTES` up, where it saves more than that.
"""

from __future__ import annotations

import mmap
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from appendix.data.rows import Spans

#: Files from this size up take the compiled pass (smaller ones: the pyarrow path).
SCAN_MIN_BYTES = 128 << 20

#: What the pass does with a column's cells.
SKIP, UNIT, FACTOR, TEXT, OUTCOME = 0, 1, 2, 3, 4

#: Why a pass stopped (for tests and benchmarks; the caller only needs "not clean").
STOPS = {1: "a byte the pass does not vouch for", 2: "a row not as wide as the header",
         3: "a missing unit", 4: "an unknown level", 5: "a cell that is not plain decimal text",
         6: "a blank line", 7: "the compiled kernels cannot be loaded here"}


@dataclass(frozen=True)
class Scanned:
    """What the pass found in a plain file, per row in file order: the level code (and
    `level_n`, the rows at each level); per outcome the values and their digits after
    the point; per text column (unit first) the cells as `Spans` of the mapped file; and
    whether the unit identifiers are distinct."""

    n_rows: int
    codes: np.ndarray
    level_n: np.ndarray
    values: tuple[np.ndarray, ...]
    places: tuple[np.ndarray, ...]
    texts: dict[str, Spans]
    distinct_units: bool


def scan_plain(path: Path, delimiter: str, header: list[str], roles: dict[str, int],
               outcomes: list[str], table) -> Scanned | int:
    """The `Scanned` of the plain file at `path` (its one-line `header` already read, raw
    cells), or the number of the `STOPS` reason that stopped the pass.

    `roles` gives the role of each named column (stripped header name -> UNIT, FACTOR or
    TEXT; one UNIT); `outcomes` the outcome columns in plan order; `table` the level
    table (multiplier, shift, slots, words, lengths) of `_level_table`.
    """
    from concurrent.futures import ThreadPoolExecutor

    try:
        from appendix.data import scan_kernels as kernels
    except (ImportError, RuntimeError):  # no numba, or no folder to cache the kernels in
        return 7
    names = [cell.strip() for cell in header]
    text_names = [n for n, r in roles.items() if r == UNIT] + [n for n, r in roles.items() if r == TEXT]
    column_role = np.zeros(len(names), dtype=np.int64)
    column_slot = np.zeros(len(names), dtype=np.int64)
    for i, name in enumerate(names):
        if name in outcomes:
            column_role[i], column_slot[i] = OUTCOME, outcomes.index(name)
        elif name in roles:
            column_role[i] = roles[name]
            column_slot[i] = text_names.index(name) if name in text_names else 0
    with path.open("rb") as handle:
        # Not closed explicitly: the spans view its pages; released with the last of them.
        mapped = mmap.mmap(handle.fileno(), 0, access=mmap.ACCESS_READ)
    data = np.frombuffer(mapped, dtype=np.uint8)
    body = mapped.find(b"\n") + 1
    if body == 0 or body == data.size:
        return 6
    bounds = _parts(mapped, body, data.size)
    with ThreadPoolExecutor(max_workers=2) as pool:
        counts = list(pool.map(lambda b: _rows_in(data, *b), bounds))
    n = sum(counts)
    first_rows = [sum(counts[:p]) for p in range(len(bounds))]
    codes = np.empty(n, dtype=np.int64)
    values = np.empty((len(outcomes), n), dtype=np.float64)
    places = np.empty((len(outcomes), n), dtype=np.int8)
    starts = np.empty((len(text_names), n), dtype=np.int64)
    lengths = np.empty((len(text_names), n), dtype=np.int32)
    multiplier, shift, slots, words, level_lengths = table
    classes = kernels.byte_classes(ord(delimiter))
    tallies = np.zeros((len(bounds), words.size), dtype=np.int64)  # levels, then unused

    def part(p: int):
        return kernels.scan_part(data, *bounds[p], classes, column_role, column_slot,
                                 np.uint64(multiplier), np.uint64(shift), slots, words,
                                 level_lengths.astype(np.int64), first_rows[p], codes,
                                 tallies[p], values, places, starts, lengths)

    with ThreadPoolExecutor(max_workers=2) as pool:
        found = list(pool.map(part, range(len(bounds))))
    for stop, _ in found:
        if stop:
            return int(stop)
    texts = {name: Spans(data, starts[t], lengths[t]) for t, name in enumerate(text_names)}
    units = texts[text_names[0]]
    ends = [(first_rows[p], first_rows[p] + counts[p] - 1) for p in range(len(bounds)) if counts[p]]
    rising = all(r for _, r in found) and all(
        _shortlex(units.text(a), units.text(b)) for (_, a), (b, _) in zip(ends, ends[1:]))
    return Scanned(n_rows=n, codes=codes, level_n=tallies.sum(axis=0)[:words.size - 1],
                   values=tuple(values), places=tuple(places), texts=texts,
                   distinct_units=rising or _distinct(units))


#: Bytes per block of the line count: its comparison stays in the CPU cache.
_BLOCK = 1 << 18


def _rows_in(data: np.ndarray, start: int, stop: int) -> int:
    """Rows in data[start:stop]: its line ends, plus one for a last line without one."""
    hit = np.empty(min(_BLOCK, stop - start), dtype=bool)
    rows = 0
    for at in range(start, stop, _BLOCK):
        block = data[at:min(at + _BLOCK, stop)]
        np.equal(block, 0x0A, out=hit[:block.size])
        rows += int(np.count_nonzero(hit[:block.size]))
    return rows + int(stop > start and data[stop - 1] != 0x0A)


def _shortlex(a: str, b: str) -> bool:
    """Whether `a` comes strictly before `b`: shorter first, then bytewise."""
    return (len(a), a.encode()) < (len(b), b.encode())


def _distinct(spans: Spans) -> bool:
    """Whether no text of `spans` occurs twice: 64-bit hashes sorted, and only the texts
    of a repeated hash (a repeat, or a rare collision) compared as texts."""
    from appendix.data import scan_kernels as kernels

    hashes = kernels.span_hashes(spans.data, spans.starts, spans.lengths)
    ordered = np.sort(hashes)
    same = ordered[1:] == ordered[:-1]
    if not same.any():
        return True
    rows = np.flatnonzero(np.isin(hashes, np.unique(ordered[1:][same])))
    texts = [spans.text(int(r)) for r in rows]
    return len(set(texts)) == len(texts)


def _parts(mapped, body: int, end: int, count: int = 2) -> list[tuple[int, int]]:
    """The body cut into `count` parts (fewer for a short body), each ending just after
    a line end (the last at the end of the file)."""
    bounds, start = [], body
    for k in range(1, count):
        target = body + (end - body) * k // count
        cut = mapped.find(b"\n", max(target, start)) + 1
        if cut == 0:
            break
        if cut > start:
            bounds.append((start, cut))
            start = cut
    bounds.append((start, end))
    return [b for b in bounds if b[1] > b[0]] or [(body, end)]
