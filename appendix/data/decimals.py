"""How many digits after the point the analysed decimal texts need, for exact sums."""

from __future__ import annotations

from collections.abc import Sequence
from decimal import Decimal

import numpy as np

#: Plain decimal notation without an exponent (RE2 and Python read it alike).
PLAIN_PATTERN = r"^[+-]?(?:[0-9]+(?:\.[0-9]*)?|\.[0-9]+)$"

#: Scaled integers must stay below this for float64 to hold them exactly (IEEE 754).
EXACT_LIMIT = 2**53


def decimal_places(texts, values: np.ndarray) -> int | None:
    """The most digits after the point in `texts`, or None if exact sums are not possible.

    `texts` are the trimmed cells (a pyarrow string array, or a sequence of str) that
    `values` were parsed from, each already known to be a decimal number. None when any
    text has an exponent (``1e3``) or when some
    value times 10**d reaches 2**53, beyond which float64 no longer holds every integer.

    >>> import numpy as np
    >>> decimal_places(["1.5", "2.25", "3"], np.array([1.5, 2.25, 3.0]))
    2
    >>> decimal_places(["1e3"], np.array([1000.0])) is None
    True
    """
    import pyarrow as pa
    import pyarrow.compute as pc

    if not isinstance(texts, (pa.Array, pa.ChunkedArray)):
        from appendix.data.columnar import text_array

        texts = text_array(list(texts))
    if len(texts) == 0:
        return 0
    if not pc.all(pc.match_substring_regex(texts, PLAIN_PATTERN)).as_py():
        return None
    return plain_places(texts, values)


def all_plain(texts) -> bool:
    """Whether every text of the pyarrow string array `texts` (no nulls) matches
    `PLAIN_PATTERN`, decided on its bytes: only digits, point and sign; a sign only first;
    at most one point; at least one digit. Much cheaper than the regular expression.

    >>> from appendix.data.columnar import text_array
    >>> all_plain(text_array(["1.5", "-.5", "+3", "5."])), all_plain(text_array(["1.5.1"]))
    (True, False)
    """
    import pyarrow as pa
    import pyarrow.compute as pc

    from appendix.data.columnar import numpy_of

    if isinstance(texts, pa.ChunkedArray):
        texts = texts.combine_chunks()
    n = len(texts)
    if n == 0:
        return True
    offsets = np.frombuffer(texts.buffers()[1], dtype=np.int32)[texts.offset:texts.offset + n + 1]
    length = np.diff(offsets)
    if length.min() < 1:
        return False
    data = np.frombuffer(texts.buffers()[2], dtype=np.uint8)[offsets[0]:offsets[-1]]
    # Digits are 0x30-0x39; point, plus and minus are the only bytes allowed below them.
    points = np.count_nonzero(data == 0x2E)
    signs = np.count_nonzero(data == 0x2B) + np.count_nonzero(data == 0x2D)
    if data.max() > 0x39 or np.count_nonzero(data < 0x30) != points + signs:
        return False
    first = data[offsets[:-1] - offsets[0]]
    signed = (first == 0x2B) | (first == 0x2D)
    if signs != np.count_nonzero(signed):
        return False
    pointed = numpy_of(pc.find_substring(texts, ".")) >= 0
    if points != np.count_nonzero(pointed):
        return False
    return bool(np.all(length - signed - pointed >= 1))


def plain_places(texts, values: np.ndarray) -> int | None:
    """`decimal_places` of pyarrow `texts` already known to match `PLAIN_PATTERN`."""
    import pyarrow.compute as pc

    from appendix.data.columnar import arrow_indices, numpy_of

    if len(texts) == 0:
        return 0
    point = numpy_of(pc.find_substring(texts, "."))
    after = numpy_of(pc.binary_length(texts)) - point
    after -= 1
    after[point < 0] = 0
    digits = int(after.max())
    # float64 rounding is far below the factor 2 margin; near the limit, decide exactly.
    if max(values.max(), -values.min()) * 10.0**digits >= EXACT_LIMIT / 2:
        near = np.flatnonzero(np.abs(values) * 10.0**digits >= EXACT_LIMIT / 2)
        if not _fit_exactly(texts.take(arrow_indices(near)).to_pylist(), digits):
            return None
    return digits


def _fit_exactly(texts: Sequence[str], digits: int) -> bool:
    return all(abs(Decimal(t).scaleb(digits)) < EXACT_LIMIT for t in texts)
