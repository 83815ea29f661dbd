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
    `PLAIN_PATTERN`, decided on its bytes (`plain_digits`, chunk by chunk).

    >>> from appendix.data.columnar import text_array
    >>> all_plain(text_array(["1.5", "-.5", "+3", "5."])), all_plain(text_array(["1.5.1"]))
    (True, False)
    """
    from appendix.data.columnar import chunks_of

    return all(plain_digits(chunk) is not None for chunk in chunks_of(texts))


def plain_digits(texts) -> int | None:
    """The most digits after the point in the pyarrow string array `texts` (no nulls,
    one chunk) if every text matches `PLAIN_PATTERN`, else None; decided on its bytes, much
    cheaper than the regular expression: only digits, point and sign; a sign only first;
    at most one point; at least one digit.

    >>> from appendix.data.columnar import text_array
    >>> plain_digits(text_array(["1.5", "-.25", "+3", "5."])), plain_digits(text_array(["1e3"]))
    (2, None)
    """
    import pyarrow.compute as pc

    from appendix.data.columnar import numpy_of, text_parts

    offsets, data = text_parts(texts)
    n = offsets.size - 1
    if n == 0:
        return 0
    length = np.diff(offsets)
    if length.min() < 1:
        return None
    data = data[offsets[0]:offsets[-1]]
    if data.max() > 0x39:
        return None
    # Digits are 0x30-0x39; point, plus and minus are the only bytes allowed below them.
    points = np.count_nonzero(data == 0x2E)
    below = np.count_nonzero(data < 0x30)
    signed = None
    if below != points:
        signs = np.count_nonzero(data == 0x2B) + np.count_nonzero(data == 0x2D)
        if below != points + signs:
            return None
        first = data[offsets[:-1] - offsets[0]]
        signed = (first == 0x2B) | (first == 0x2D)
        if signs != np.count_nonzero(signed):
            return None
    point = numpy_of(pc.find_substring(texts, "."))
    pointed = point >= 0
    n_pointed = np.count_nonzero(pointed)
    if points != n_pointed:
        return None
    # At least one digit: only cells of one or two bytes can lack one ('.', '+', '-.').
    short = np.flatnonzero(length <= 2)
    if short.size:
        digits = length[short] - pointed[short]
        if signed is not None:
            digits -= signed[short]
        if digits.min() < 1:
            return None
    if n_pointed == 0:
        return 0
    after = length - point
    return int(after.max() if n_pointed == n else after[pointed].max()) - 1


def plain_places(texts, values: np.ndarray) -> int | None:
    """`decimal_places` of pyarrow `texts` already known to match `PLAIN_PATTERN`."""
    from appendix.data.columnar import chunks_of

    if len(texts) == 0:
        return 0
    return exact_places(texts, values, max(plain_digits(c) for c in chunks_of(texts) if len(c)))


def exact_places(texts, values: np.ndarray, digits: int) -> int | None:
    """`digits`, or None when some value of `values` (read from `texts`, at most `digits`
    digits after the point) times 10**digits reaches 2**53."""
    from appendix.data.columnar import arrow_indices

    if values.size == 0:
        return digits
    # float64 rounding is far below the factor 2 margin; near the limit, decide exactly.
    if max(values.max(), -values.min()) * 10.0**digits >= EXACT_LIMIT / 2:
        near = np.flatnonzero(np.abs(values) * 10.0**digits >= EXACT_LIMIT / 2)
        if not _fit_exactly(texts.take(arrow_indices(near)).to_pylist(), digits):
            return None
    return digits


def _fit_exactly(texts: Sequence[str], digits: int) -> bool:
    return all(abs(Decimal(t).scaleb(digits)) < EXACT_LIMIT for t in texts)
