"""Read-only row sequences over arrays: unit identifiers and line numbers of analysed rows.

A data set of ten million rows would spend seconds building Python tuples of unit
identifiers and line numbers that are only ever looked up a few at a time (an outlier's
unit, an error's line). These sequences hold the arrays and give each item on demand;
they compare equal to the tuple of the same items, so code written against tuples keeps
working.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np


class _Rows(Sequence):
    """Items `_item(rows[i])` for a fixed array of row indices."""

    __slots__ = ("_rows",)

    def __init__(self, rows: np.ndarray | range) -> None:
        if not isinstance(rows, range):  # a range stands for every row, at no cost
            rows = np.array(rows, dtype=np.int64, copy=True)
            rows.flags.writeable = False
        self._rows = rows

    def _item(self, row: int):
        raise NotImplementedError

    def __len__(self) -> int:
        return len(self._rows)

    def __getitem__(self, index):
        if isinstance(index, slice):
            return tuple(self._item(int(r)) for r in self._rows[index])
        return self._item(int(self._rows[index]))

    def __iter__(self):
        return (self._item(int(r)) for r in self._rows)

    def __eq__(self, other: object) -> bool:
        if isinstance(other, _Rows) or isinstance(other, (tuple, list)):
            return len(self) == len(other) and all(a == b for a, b in zip(self, other))
        return NotImplemented

    def __hash__(self) -> int:
        return hash(tuple(self))

    def __repr__(self) -> str:
        shown = ", ".join(repr(x) for x in self[:5])
        return f"{type(self).__name__}({shown}{', ...' if len(self) > 5 else ''}; {len(self)} rows)"


class Spans:
    """Texts held as spans of one ASCII buffer (a mapped file): text i is
    ``data[starts[i]:starts[i] + lengths[i]]``. The compiled reading pass leaves unit
    identifiers there rather than copying ten million of them out.

    >>> spans = Spans(np.frombuffer(b"u1,u22", np.uint8), np.array([0, 3]), np.array([2, 3]))
    >>> spans.text(1), len(spans), spans.arrow().to_pylist()
    ('u22', 2, ['u1', 'u22'])
    """

    __slots__ = ("data", "starts", "lengths")

    def __init__(self, data: np.ndarray, starts: np.ndarray, lengths: np.ndarray) -> None:
        self.data, self.starts, self.lengths = data, starts, lengths

    def __len__(self) -> int:
        return len(self.starts)

    def text(self, row: int) -> str:
        start = int(self.starts[row])
        return self.data[start:start + int(self.lengths[row])].tobytes().decode("ascii")

    def arrow(self):
        """The texts as one pyarrow string array (copied out)."""
        import pyarrow as pa

        offsets = np.zeros(len(self) + 1, dtype=np.int64)
        np.cumsum(self.lengths, out=offsets[1:])
        out = np.empty(int(offsets[-1]), dtype=np.uint8)
        if len(self) > 1000:
            from appendix.data.scan_kernels import gather

            gather(self.data, self.starts, self.lengths, offsets, out)
        else:
            for start, length, at in zip(self.starts.tolist(), self.lengths.tolist(), offsets.tolist()):
                out[at:at + length] = self.data[start:start + length]
        return pa.Array.from_buffers(pa.large_string(), len(self),
                                     [None, pa.py_buffer(offsets), pa.py_buffer(out)])


class TextRows(_Rows):
    """The text of `column` (a pyarrow string array, or `Spans`) at each of `rows`.

    >>> import pyarrow as pa
    >>> TextRows(pa.array(["u1", "u2", "u3"]), [2, 0]) == ("u3", "u1")
    True
    """

    __slots__ = ("_column",)

    def __init__(self, column, rows: np.ndarray | range) -> None:
        super().__init__(rows)
        self._column = column

    def _item(self, row: int) -> str:
        column = self._column
        return column.text(row) if isinstance(column, Spans) else column[row].as_py()


class LineRows(_Rows):
    """The file line of each of `rows`: ``line_of[row]`` when a map is given (quoted cells
    spanning lines, blank lines), else ``row + first`` (one line per row).

    >>> LineRows([0, 3], first=2) == (2, 5)
    True
    """

    __slots__ = ("_line_of", "_first")

    def __init__(self, rows: np.ndarray | range, first: int = 2, line_of: np.ndarray | None = None) -> None:
        super().__init__(rows)
        self._line_of = line_of
        self._first = first

    def _item(self, row: int) -> int:
        return int(self._line_of[row]) if self._line_of is not None else row + self._first
