"""The fast CSV/TSV path: columns read by pyarrow's CSV reader, every check vectorised.

Only the columns the plan names are read, all as text, then trimmed, so each cell is the
same text the row-by-row reader (`appendix.data.readers`) would give. The path answers
one question cheaply: is this file clean? If any check finds a problem (a missing or
repeated unit, an unknown level, a cell that is not a number), or the file has a layout
this path does not vouch for, it returns None and the caller takes the row-by-row path,
which finds the same problems and words them with file, line, column and value. So the
messages a user sees are those of one implementation only.

Line numbers: a file without quotes or blank lines has one line per row; otherwise each
row's first line is found from the positions of newlines outside quoted cells (RFC 4180:
a newline is a record end when an even number of quotes precede it).

Cost: the file's bytes are swept once (blocked, cache-sized) for everything the layout
checks need; the columns stay in the reader's chunks, which the checks in
`appendix.data.vectorised` go through chunk by chunk on two threads.
"""

from __future__ import annotations

import csv
import mmap
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from appendix.data.values import MISSING_TEXTS

#: Unit identifiers up to this many bytes are checked for repeats through one 128-bit key.
_KEY_BYTES = 16


@dataclass(frozen=True)
class Columns:
    """Trimmed text columns (pyarrow string ChunkedArrays, no nulls, the chunks of all
    columns aligned: one per reader block) of a clean delimited file.

    `line_of[i]` is the 1-based line where data row i starts, or None when row i is on
    line ``i + 2`` (header on line 1, one line per row, no blank lines).
    """

    n_rows: int
    cells: dict[str, object]
    line_of: np.ndarray | None


def read_columns(path: Path, delimiter: str, names: list[str]) -> Columns | None:
    """The named columns of a CSV/TSV file, or None where the row-by-row reader must judge.

    None for: text that is not UTF-8, an unusable header (blank, repeated or missing
    names), rows of the wrong width, irregular quoting, or lone carriage returns.
    """
    import pyarrow as pa
    import pyarrow.compute as pc
    import pyarrow.csv as pcsv

    header = _header(path, delimiter)
    if header is None:
        return None
    header_line, header_end, raw = header
    stripped = [c.strip() for c in raw]
    if "" in stripped or len(set(stripped)) != len(stripped) or not set(names) <= set(stripped):
        return None
    raw_of = dict(zip(stripped, raw))
    if path.stat().st_size == 0:
        return None
    with path.open("rb") as handle:
        # Not closed explicitly: the arrays read from it may still view its pages; it is
        # released with the last of them.
        mapped = mmap.mmap(handle.fileno(), 0, access=mmap.ACCESS_READ)
    data = np.frombuffer(mapped, dtype=np.uint8)
    # controls: bytes below 0x20, newlines included; present: which of _SOUGHT occur
    top, controls, present = _byte_summary(data, mapped, _body_start(mapped, header_end))
    ascii_text = top < 0x80
    tabs = int(np.count_nonzero(data == 0x09)) if b"\t" in present else 0
    returns = int(np.count_nonzero(data == 0x0D)) if b"\r" in present else 0
    controls -= tabs + returns  # newlines and others
    layout = _layout(mapped, data, delimiter, header_line, header_end, ascii_text=ascii_text,
                     present=present)
    if layout is None:
        return None
    quoted, line_of = layout
    # ASCII text is valid UTF-8: read as bytes (no validation pass) and view them as text.
    kind = pa.binary() if ascii_text else pa.string()
    # Without quotes below a one-line header on line 1, the reader is given the header's
    # cells and told there are no quotes: its parser skips the quote handling (~5%).
    plain_body = not quoted and header_line == header_end == 1
    try:
        table = pcsv.read_csv(
            pa.BufferReader(pa.py_buffer(mapped)),
            read_options=pcsv.ReadOptions(use_threads=True, block_size=_READ_BLOCK,
                                          column_names=raw if plain_body else None,
                                          skip_rows=1 if plain_body else 0),
            parse_options=pcsv.ParseOptions(delimiter=delimiter, newlines_in_values=quoted,
                                            quote_char=False if plain_body else '"',
                                            double_quote=not plain_body),
            convert_options=pcsv.ConvertOptions(
                include_columns=[raw_of[n] for n in names],
                column_types={raw_of[n]: kind for n in names},
                strings_can_be_null=False, quoted_strings_can_be_null=False))
    except pa.ArrowException:
        return None
    if table.column_names != [raw_of[n] for n in names]:
        return None
    # Control bytes besides tab, CR and LF (\v, \f, \x1c-\x1f) are white space to Python's
    # strip: the row-by-row reader handles them. With one line per row the newlines are
    # known from the row count, which saves counting them.
    one_line_each = line_of is None and controls == table.num_rows + int(data[-1] == 0x0A)
    if not one_line_each:
        if controls != int(np.count_nonzero(data == 0x0A)):
            return None
        if line_of is None:  # blank lines were skipped: map rows to lines
            line_of = _layout(mapped, data, delimiter, header_line, header_end, force=True,
                              ascii_text=ascii_text, present=present)[1]
    if line_of is not None and line_of.size != table.num_rows:
        return None
    # The columns stay in the reader's chunks (no copy); the chunks of all columns align.
    cells = {n: _as_text(table.column(raw_of[n])) for n in names}
    if not ascii_text or b" " in present or (tabs and delimiter != "\t"):
        cells = {n: pc.utf8_trim_whitespace(c) for n, c in cells.items()}
    return Columns(n_rows=table.num_rows, cells=cells, line_of=line_of)


#: Bytes per block of pyarrow's reader: each becomes one chunk of every column. Larger than
#: its default (1 MiB), so that the per-chunk checks make fewer, longer numpy calls; the
#: reader is as fast (measured on a 10M-row file: 0.26 s from 1 to 8 MiB, slower beyond).
_READ_BLOCK = 8 << 20

#: Bytes per block of the one pass over the file: small enough to stay in the CPU cache.
_BLOCK = 1 << 18


#: Bytes whose presence anywhere in the file decides how it is read.
_SOUGHT = (b"\t", b"\r", b'"', b" ")


def _body_start(mapped, header_end: int) -> int:
    """Offset of the first byte after line `header_end` (the header's last line)."""
    body = 0
    for _ in range(header_end):
        body = mapped.find(b"\n", body) + 1
        if body == 0:
            return len(mapped)
    return body


def _byte_summary(data: np.ndarray, text, body: int = 0) -> tuple[int, int, frozenset[bytes]]:
    """(largest byte, number of bytes below 0x20, which of `_SOUGHT` occur, a quote only
    counted from offset `body` on) of `data`, whose bytes `text` also holds (bytes or mmap,
    for its `find`), in one blocked sweep:
    each block is scanned while it is in the CPU cache (whole-array comparisons would
    write a 0.2 GB temporary for a 10M-row file, and each search would be one more pass).

    >>> text = b'a,b\\n1,\\x01"2\\n'
    >>> top, controls, present = _byte_summary(np.frombuffer(text, dtype=np.uint8), text)
    >>> top, controls, sorted(present)
    (98, 3, [b'"'])
    """
    below = np.empty(min(_BLOCK, data.size), dtype=bool)
    top, controls, present = 0, 0, set()
    for start in range(0, data.size, _BLOCK):
        block = data[start:start + _BLOCK]
        hit = below[:block.size]
        np.less(block, 0x20, out=hit)
        controls += int(np.count_nonzero(hit))
        top = max(top, int(block.max()))
        present.update(b for b in _SOUGHT if b not in present
                       and text.find(b, max(start, body) if b == b'"' else start,
                                     start + block.size) >= 0)
    return top, controls, frozenset(present)


def _as_text(column):
    """A column read as bytes (ASCII text) viewed as strings, chunk by chunk, without a copy."""
    import pyarrow as pa

    if column.type == pa.string():
        return column
    return pa.chunked_array([chunk.view(pa.string()) for chunk in column.chunks], type=pa.string())


def _header(path: Path, delimiter: str) -> tuple[int, int, list[str]] | None:
    """(first line, last line, raw cells) of the first non-blank record, read as the
    row-by-row reader does."""
    try:
        with path.open("r", encoding="utf-8-sig", newline="") as handle:
            reader = csv.reader(handle, delimiter=delimiter, strict=True)
            start = 1
            for row in reader:
                if any(cell.strip() for cell in row):
                    return start, reader.line_num, row
                start = reader.line_num + 1
    except (UnicodeDecodeError, csv.Error):
        return None
    return None


def _layout(mapped: mmap.mmap, data: np.ndarray, delimiter: str, header_line: int,
            header_end: int, force: bool = False, ascii_text: bool | None = None,
            present: frozenset[bytes] | None = None) -> tuple[bool, np.ndarray | None] | None:
    """(rows hold quotes, line of each data row or None for one line per row), or None
    when the text is not UTF-8, has lone carriage returns, or quotes outside RFC 4180.
    `header_end` is the header's last line; quotes in the header alone do not count.
    `ascii_text` (every byte below 0x80) and `present` (which of `_SOUGHT` occur, a quote
    only after the header): when already known from `_byte_summary`."""
    body = _body_start(mapped, header_end)
    if present is None:
        present = frozenset(b for b in _SOUGHT if mapped.find(b, body if b == b'"' else 0) >= 0)
    if ascii_text is None:
        ascii_text = int(data.max()) < 0x80
    if not ascii_text:  # must be UTF-8
        try:
            str(mapped[:], "utf-8")
        except UnicodeDecodeError:
            return None
    if b"\r" in present and mapped[:].count(b"\r") != mapped[:].count(b"\r\n"):
        return None
    quoted = b'"' in present
    if not quoted and header_line == 1 and not force:
        return False, None
    newlines = np.flatnonzero(data == 0x0A)
    ends = newlines
    if quoted or mapped.find(b'"', 0, body) >= 0:
        quotes = np.flatnonzero(data == 0x22)
        if not _plain_quotes(data, quotes, ord(delimiter)):
            return None
        ends = newlines[np.searchsorted(quotes, newlines) % 2 == 0]
    bom = 3 if mapped[:3] == b"\xef\xbb\xbf" else 0  # not part of the first record
    starts = np.concatenate(([bom], ends + 1))
    stops = np.concatenate((ends, [data.size]))
    length = stops - starts
    # A blank record (empty, or a lone CR of a CRLF blank line) is skipped by both readers.
    safe = np.minimum(starts, data.size - 1)
    blank_record = (length == 0) | ((length == 1) & (data[safe] == 0x0D))
    kept = starts[~blank_record]
    lines = np.searchsorted(newlines, kept) + 1  # 1 + newlines before the record start
    return quoted, lines[1:]  # the first kept record is the header


def _plain_quotes(data: np.ndarray, quotes: np.ndarray, delimiter: int) -> bool:
    """Every quote opens a cell, closes one, or is half of a doubled quote (RFC 4180)."""
    if quotes.size == 0:
        return True
    bounds = np.array([delimiter, 0x0A, 0x0D, 0x22], dtype=np.uint8)
    before = np.where(quotes > 0, data[np.maximum(quotes - 1, 0)], 0x0A)
    after = np.where(quotes < data.size - 1, data[np.minimum(quotes + 1, data.size - 1)], 0x0A)
    first = quotes == 0
    return bool(np.all(first | np.isin(before, bounds) | np.isin(after, bounds)))


#: pyarrow type names and the numpy dtypes of the same bytes.
_NUMPY_TYPES = {"int8": "<i1", "int16": "<i2", "int32": "<i4", "int64": "<i8", "uint8": "<u1",
                "uint16": "<u2", "uint32": "<u4", "uint64": "<u8", "float": "<f4", "double": "<f8"}


def numpy_of(array) -> np.ndarray:
    """A pyarrow array without nulls (numbers or booleans) as a numpy array, read from its
    buffers: pyarrow's own `to_numpy` imports pandas, a quarter second at start-up.

    >>> import pyarrow as pa
    >>> numpy_of(pa.array([True, False, True])).tolist(), numpy_of(pa.array([1.5, 2.0])).tolist()
    ([True, False, True], [1.5, 2.0])
    """
    import pyarrow as pa

    if isinstance(array, pa.ChunkedArray):
        array = array.combine_chunks()
    if array.null_count:
        raise ValueError("numpy_of needs an array without nulls")
    data = array.buffers()[1]
    n, start = len(array), array.offset
    if pa.types.is_boolean(array.type):
        bits = np.frombuffer(data, dtype=np.uint8) if data is not None else np.zeros(0, np.uint8)
        return np.unpackbits(bits, bitorder="little")[start:start + n].astype(bool)
    dtype = np.dtype(_NUMPY_TYPES[str(array.type)])
    if data is None:
        return np.zeros(0, dtype)
    return np.frombuffer(data, dtype=dtype)[start:start + n]


def arrow_indices(rows: np.ndarray):
    """Row indices (int64, numpy) as a pyarrow array over the same memory; `pa.array` of a
    numpy array would import pandas to check for pandas objects first."""
    import pyarrow as pa

    rows = np.ascontiguousarray(rows, dtype=np.int64)
    return pa.Array.from_buffers(pa.int64(), rows.size, [None, pa.py_buffer(rows)])


def text_array(texts) -> object:
    """A pyarrow string array of `texts` built from its buffers (`pa.array` would import
    pandas first).

    >>> text_array(["NA", "", "é"]).to_pylist()
    ['NA', '', 'é']
    """
    import pyarrow as pa

    encoded = [t.encode("utf-8") for t in texts]
    offsets = np.zeros(len(encoded) + 1, dtype=np.int32)
    np.cumsum([len(b) for b in encoded], out=offsets[1:])
    return pa.Array.from_buffers(pa.string(), len(encoded),
                                 [None, pa.py_buffer(offsets), pa.py_buffer(b"".join(encoded))])


def missing_mask(column) -> np.ndarray:
    """True where a trimmed cell is one of `appendix.data.values.MISSING_TEXTS`."""
    import pyarrow.compute as pc

    # Every missing text is at most this long, so only short cells need the set lookup.
    longest = max(len(t.encode()) for t in MISSING_TEXTS)
    short = numpy_of(pc.binary_length(column)) <= longest
    mask = np.zeros(len(column), dtype=bool)
    if short.any():
        rows = np.flatnonzero(short)
        found = pc.is_in(column.take(arrow_indices(rows)), value_set=text_array(sorted(MISSING_TEXTS)))
        mask[rows] = numpy_of(found)
    return mask


def chunks_of(column) -> list:
    """The chunks of a pyarrow ChunkedArray, [array] for a plain array; a list stays itself."""
    import pyarrow as pa

    if isinstance(column, list):
        return column
    return list(column.chunks) if isinstance(column, pa.ChunkedArray) else [column]


def map_chunks(function, *columns) -> list:
    """`function` of the aligned chunks of `columns` (one per chunk index), in chunk order,
    on two threads: pyarrow kernels and numpy release the interpreter lock."""
    from concurrent.futures import ThreadPoolExecutor

    parts = list(zip(*(chunks_of(c) for c in columns), strict=True))
    if len(parts) < 2:
        return [function(*p) for p in parts]
    with ThreadPoolExecutor(max_workers=2) as pool:
        return list(pool.map(lambda p: function(*p), parts))


def text_parts(array) -> tuple[np.ndarray, np.ndarray]:
    """(offsets, bytes) of a pyarrow string or binary array without nulls: cell i is
    ``data[offsets[i]:offsets[i + 1]]``; both are views of the array's buffers."""
    n = len(array)
    buffers = array.buffers()
    offsets = np.frombuffer(buffers[1], dtype=np.int32)[array.offset:array.offset + n + 1] \
        if buffers[1] is not None else np.zeros(1, np.int32)
    data = np.frombuffer(buffers[2], dtype=np.uint8) if buffers[2] is not None else np.zeros(0, np.uint8)
    return offsets, data


#: Masks of the low k bytes of a 64-bit word, k = 0..8.
_LOW_BYTES = np.array([(1 << (8 * k)) - 1 for k in range(9)], dtype=np.uint64)


def _key_words(array) -> tuple[np.ndarray, np.ndarray, np.ndarray] | None:
    """(length, first 8 bytes, next 8 bytes) of every text of `array` (string, no nulls),
    the words little-endian and zero beyond the text's end; None if some text is longer
    than `_KEY_BYTES`. Texts are equal exactly when all three are.

    The words are loaded straight from the data buffer (an unaligned view with a stride of
    one byte): no padded copy of the column.
    """
    offsets, data = text_parts(array)
    n = offsets.size - 1
    starts = offsets[:-1].astype(np.int64)
    length = np.diff(offsets)
    if n == 0 or int(length.max()) > _KEY_BYTES:
        return None if n else (length, np.zeros(0, np.uint64), np.zeros(0, np.uint64))
    width = int(length.max())
    if int(length.min()) == width:  # texts of one width (P0001, ...): a byte matrix, no gather
        matrix = data[offsets[0]:offsets[0] + n * width].reshape(n, width)
        if width not in (8, _KEY_BYTES):
            padded = np.zeros((n, 8 if width < 8 else _KEY_BYTES), dtype=np.uint8)
            padded[:, :width] = matrix
            matrix = padded
        words = matrix.view("<u8")
        high = words[:, 1] if width > 8 else np.zeros(n, dtype=np.uint64)
        return length, words[:, 0], high
    # Rows whose 16 bytes from the start overrun the buffer are read from a padded copy
    # of the buffer's tail (a few rows at most).
    safe = int(np.searchsorted(starts, data.size - _KEY_BYTES, side="right"))
    tail_from = int(starts[safe]) if safe < n else data.size
    tail = np.zeros(data.size - tail_from + _KEY_BYTES + 8, dtype=np.uint8)
    tail[:data.size - tail_from] = data[tail_from:]
    low, high = np.empty(n, dtype=np.uint64), np.zeros(n, dtype=np.uint64)
    wide = width > 8
    for rows, source, base in ((slice(0, safe), data, 0), (slice(safe, n), tail, tail_from)):
        at = starts[rows] - base
        if at.size == 0:
            continue
        words = np.ndarray(shape=(source.size - 7,), dtype="<u8", buffer=source, strides=(1,))
        size = length[rows]
        low[rows] = words[at] & _LOW_BYTES[np.minimum(size, 8)]
        if wide:
            high[rows] = words[at + 8] & _LOW_BYTES[np.clip(size - 8, 0, 8)]
    return length, low, high


def first_words(array) -> tuple[np.ndarray, np.ndarray]:
    """(length, first 8 bytes) of every text of `array` (string or binary, no nulls), the
    word little-endian and zero beyond the text's end (texts longer than 8 bytes keep
    their first 8). Loaded straight from the data buffer: a strided view when every text
    has one width (no gather), else an unaligned gather at the offsets.

    >>> import pyarrow as pa
    >>> length, word = first_words(pa.array(["ab", "", "abcdefghij"]))
    >>> length.tolist(), [int(w).to_bytes(8, "little") for w in word]
    ([2, 0, 10], [b'ab\\x00\\x00\\x00\\x00\\x00\\x00', b'\\x00\\x00\\x00\\x00\\x00\\x00\\x00\\x00', b'abcdefgh'])
    """
    offsets, data = text_parts(array)
    n = offsets.size - 1
    length = np.diff(offsets)
    if n == 0:
        return length, np.zeros(0, np.uint64)
    starts = offsets[:-1]
    width = int(length.max())
    # Rows whose 8 bytes from the start overrun the buffer are read from a padded copy of
    # the buffer's tail (a few rows at most).
    safe = int(np.searchsorted(starts, data.size - 8, side="right"))
    tail_from = int(starts[safe]) if safe < n else data.size
    tail = np.zeros(data.size - tail_from + 16, dtype=np.uint8)
    tail[:data.size - tail_from] = data[tail_from:]
    word = np.empty(n, dtype=np.uint64)
    same = int(length.min()) == width
    for rows, source, base in ((slice(0, safe), data, 0), (slice(safe, n), tail, tail_from)):
        count = rows.stop - rows.start
        if count == 0:
            continue
        first = int(starts[rows.start]) - base
        if same and width:  # texts of one width: every width-th byte starts one
            words = np.ndarray(shape=(count,), dtype="<u8", buffer=source, offset=first,
                               strides=(width,))
            np.bitwise_and(words, _LOW_BYTES[min(width, 8)], out=word[rows])
        else:
            words = np.ndarray(shape=(source.size - 7,), dtype="<u8", buffer=source, strides=(1,))
            np.bitwise_and(words[starts[rows] - base], _LOW_BYTES[np.minimum(length[rows], 8)],
                           out=word[rows])
    return length, word


def _mixed(length: np.ndarray, low: np.ndarray, high: np.ndarray) -> np.ndarray:
    """A 64-bit hash of each (length, low, high) key."""
    with np.errstate(over="ignore"):
        mixed = low * np.uint64(0x9E3779B97F4A7C15)
        mixed ^= length.astype(np.uint64) * np.uint64(0xD6E8FEB86659FD93)
        mixed ^= (high + np.uint64(1)) * np.uint64(0xC2B2AE3D27D4EB4F)
        mixed ^= mixed >> np.uint64(31)
    return mixed


def _increasing(length: np.ndarray, low: np.ndarray, high: np.ndarray) -> bool:
    """Whether the keys rise strictly in shortlex order (shorter first, then bytewise):
    `U1, U2, ..., U10` or `P001, P002` do, and rising keys are distinct."""
    grows = np.diff(length)
    if grows.size == 0:
        return True
    if grows.min() < 0:
        return False
    first = low.byteswap()  # bytewise order = big-endian order
    later = (grows > 0) | (first[1:] > first[:-1])
    if not later.all():
        second = high.byteswap()
        later |= (first[1:] == first[:-1]) & (second[1:] > second[:-1])
    return bool(later.all())


def unit_keys(array) -> tuple[tuple | None, bool]:
    """(`_key_words` of one chunk, whether those keys rise): the per-chunk half of
    `all_distinct`, which `distinct_from_keys` completes."""
    keys = _key_words(array)
    return keys, keys is not None and _increasing(*keys)


def all_distinct(column) -> bool:
    """True when no text occurs twice in `column` (a pyarrow string array without nulls).

    Identifiers up to `_KEY_BYTES` bytes become (length, two words) keys, chunk by chunk
    on two threads. Keys that already rise (identifiers in order) are distinct with no
    sort; otherwise the keys are hashed to 64 bits and sorted: distinct hashes prove
    distinct texts, and only the rows of a repeated hash (a repeat, or a rare collision)
    are compared as texts.
    """
    if len(column) < 2:
        return True
    keys, rising = zip(*map_chunks(unit_keys, column))
    return distinct_from_keys(column, list(keys), list(rising))


def distinct_from_keys(column, keys: list, rising: list[bool]) -> bool:
    """`all_distinct` of `column` given `unit_keys` of each of its chunks."""
    import pyarrow.compute as pc

    n = len(column)
    if n < 2:
        return True
    if any(k is None for k in keys):
        return pc.count_distinct(column).as_py() == n
    keys = [k for k in keys if k[0].size]
    # Each chunk's first and last key, in shortlex order: last of one < first of the next.
    ends = [(int(size[i]), int(low[i].byteswap()), int(high[i].byteswap()))
            for size, low, high in keys for i in (0, -1)]
    if all(rising) and all(a < b for a, b in zip(ends[1:-1:2], ends[2::2])):
        return True
    hashes = np.concatenate(map_chunks(lambda k: _mixed(*k), keys))
    ordered = np.sort(hashes)
    same = ordered[1:] == ordered[:-1]
    if not same.any():
        return True
    rows = np.flatnonzero(np.isin(hashes, np.unique(ordered[1:][same])))
    texts = column.take(arrow_indices(rows)).to_pylist()
    return len(set(texts)) == len(texts)
