"""The compiled kernels of `appendix.data.scan` (numba; imported only where used).

Byte values used: LF 0x0A, CR 0x0D, tab 0x09, space 0x20, quote 0x22, plus 0x2B,
minus 0x2D, point 0x2E, digits 0x30-0x39.
"""

from __future__ import annotations

import numba
import numpy as np

from appendix.data.scan import FACTOR, OUTCOME, UNIT

_JIT = dict(nogil=True, cache=True, boundscheck=False)

#: 10**d for d = 0..22, each an exact double.
_POWERS = np.array([10.0 ** d for d in range(23)], dtype=np.float64)

#: Mantissas must stay below this to be exact doubles (IEEE 754 binary64).
_EXACT = 1 << 53



@numba.njit(**_JIT)
def _missing(data, start, length):
    """Whether the cell is one of the missing texts (NA, N/A, NaN, nan, ., empty)."""
    if length == 0:
        return True
    if length == 1:
        return data[start] == 0x2E
    if length == 2:
        return data[start] == 0x4E and data[start + 1] == 0x41
    if length == 3:
        a, b, c = data[start], data[start + 1], data[start + 2]
        if a == 0x4E and b == 0x2F and c == 0x41:
            return True
        return b == 0x61 and ((a == 0x4E and c == 0x4E) or (a == 0x6E and c == 0x6E))
    return False


#: Byte classes: ordinary, a cell's end (delimiter or LF, set per call), CR, white space
#: (space, tab), and bytes no plain file holds (quotes, other controls, non-ASCII).
ORDINARY, SPACE, END, CR, BAD = 0, 1, 2, 3, 4


def byte_classes(delimiter: int) -> np.ndarray:
    """The class of every byte value, for a file with this delimiter."""
    classes = np.full(256, BAD, dtype=np.uint8)
    classes[0x21:0x80] = ORDINARY
    classes[[0x20, 0x09]] = SPACE
    classes[0x22] = BAD
    classes[[delimiter, 0x0A]] = END
    classes[0x0D] = CR
    return classes


@numba.njit(**_JIT)
def scan_part(data, start, stop, classes, role, slot, multiplier, shift, slots, words,
              level_lengths, row0, codes, tally, values, places, spans_start, spans_length):
    """One pass over data[start:stop] (whole lines; rows written from `row0` on): each
    row's level code (and the rows per code added to `tally`), outcome values and digits
    after the point, and the span (start, length) of each text cell (unit first). Returns (stop reason or 0, whether the unit
    texts rise in shortlex order: shorter first, then bytewise)."""
    ncol = role.size
    last = ncol - 1
    rising = True
    previous_length, previous_order, previous_next = -1, np.uint64(0), np.uint64(0)
    row, i = row0, start
    while i < stop:
        for column in range(ncol):
            kind = role[column]
            cell = i
            if kind == 0:  # skipped: any ordinary byte or white space
                while i < stop and classes[data[i]] <= SPACE:
                    i += 1
            elif kind == OUTCOME:
                if i >= stop:
                    return 5, rising
                negative = data[i] == 0x2D
                if negative or data[i] == 0x2B:
                    i += 1
                mantissa = 0
                first_digit = i
                while i < stop and np.uint8(data[i] - 0x30) <= 9:
                    mantissa = mantissa * 10 + (data[i] - 0x30)
                    i += 1
                after = 0
                if i < stop and data[i] == 0x2E:
                    i += 1
                    point = i
                    while i < stop and np.uint8(data[i] - 0x30) <= 9:
                        mantissa = mantissa * 10 + (data[i] - 0x30)
                        i += 1
                    after = i - point
                    digits = i - first_digit - 1
                else:
                    digits = i - first_digit
                if digits == 0 or digits > 15 and (digits > 18 or mantissa >= _EXACT) or after > 22:
                    return 5, rising
                value = mantissa / _POWERS[after]
                values[slot[column], row] = -value if negative else value
                places[slot[column], row] = after
            elif kind == FACTOR:
                word = np.uint64(0)
                while i < stop and classes[data[i]] == ORDINARY and i - cell < 8:
                    word |= np.uint64(data[i]) << np.uint64(8 * (i - cell))
                    i += 1
                length = i - cell
                code = slots[(word * multiplier) >> shift]
                if words[code] != word or level_lengths[code] != length:
                    return 4, rising
                codes[row] = code
                tally[code] += 1
            else:  # unit or text: its span; the unit's first 16 bytes in bytewise order
                order, following = np.uint64(0), np.uint64(0)
                while i < stop and classes[data[i]] == ORDINARY:
                    k = i - cell
                    if k < 8:
                        order = (order << np.uint64(8)) | np.uint64(data[i])
                    elif k < 16:
                        following = (following << np.uint64(8)) | np.uint64(data[i])
                    i += 1
                length = i - cell
                t = slot[column]
                spans_start[t, row] = cell
                spans_length[t, row] = length
                if kind == UNIT:
                    if length <= 3 and _missing(data, cell, length):
                        return 3, rising
                    if length < 8:  # zero bytes after the end: shorter texts first
                        order <<= np.uint64(8 * (8 - length))
                    elif length < 16:
                        following <<= np.uint64(8 * (16 - length))
                    if rising and row > row0:
                        if length < previous_length or length > 16:
                            rising = False
                        elif length == previous_length and order <= previous_order:
                            if order < previous_order or following <= previous_next:
                                rising = False
                    previous_length, previous_order, previous_next = length, order, following
            # The cell ends at the delimiter, or at the line's end after the last cell.
            if i >= stop:
                if column != last:
                    return 2, rising
            else:
                byte = data[i]
                if byte == 0x0D and column == last and i + 1 < stop and data[i + 1] == 0x0A:
                    i += 1
                elif classes[byte] != END or (byte == 0x0A) != (column == last):
                    if classes[byte] != END and byte != 0x0D:
                        return 1, rising
                    return 6 if column == 0 and i == cell else 2, rising
            i += 1
        row += 1
    return 0, rising


@numba.njit(**_JIT)
def span_hashes(data, starts, lengths):
    """A 64-bit hash of the bytes of every span (FNV-1a, then a final mix)."""
    out = np.empty(starts.size, dtype=np.uint64)
    for r in range(starts.size):
        h = np.uint64(0xCBF29CE484222325)
        for k in range(starts[r], starts[r] + lengths[r]):
            h = (h ^ np.uint64(data[k])) * np.uint64(0x100000001B3)
        h ^= h >> np.uint64(31)
        out[r] = h * np.uint64(0x9E3779B97F4A7C15)
    return out


@numba.njit(**_JIT)
def gather(data, starts, lengths, offsets, out):
    """The bytes of every span, one after another into `out`; offsets[r] where span r
    begins (offsets has one more entry: the end)."""
    at = 0
    for r in range(starts.size):
        offsets[r] = at
        for k in range(lengths[r]):
            out[at + k] = data[starts[r] + k]
        at += lengths[r]
    offsets[starts.size] = at
