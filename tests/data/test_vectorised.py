"""The vectorised CSV/TSV path gives the same Dataset as the row-by-row path, and decimals."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import appendix.data.columnar as columnar
from appendix.data.build import build_dataset
from appendix.data.columnar import all_distinct
from appendix.data.decimals import decimal_places
from appendix.data.rows import LineRows, TextRows
from appendix.plan.load import load_plan
from tests.data.helpers import ARM, invented_units, write_delimited, write_parquet, write_study

HEADER = "unit_id,arm,violated,dose,pain,sleep\n"


def _both(tmp_path, monkeypatch, text: str, name: str = "units.csv", arm: str = ARM):
    """(vectorised dataset, row-by-row dataset) of the same file; `arm`: the plan's levels."""
    (tmp_path / name).write_text(text, encoding="utf-8")
    loaded = load_plan(write_study(tmp_path, name, 1, arm=arm))
    fast = build_dataset(loaded)
    with monkeypatch.context() as patch:
        patch.setattr(columnar, "read_columns", lambda *args: None)
        slow = build_dataset(loaded)
    return fast, slow


def _same(fast, slow) -> None:
    assert fast.levels == slow.levels
    assert fast.unit_flow == slow.unit_flow
    assert fast.findings == slow.findings
    for a, b in zip(fast.outcomes, slow.outcomes, strict=True):
        np.testing.assert_array_equal(a.values, b.values)
        np.testing.assert_array_equal(a.codes, b.codes)
        assert (a.units, a.lines, a.decimals) == (b.units, b.lines, b.decimals)


def test_clean_file_takes_the_vectorised_path_and_agrees(tmp_path, monkeypatch):
    frame = invented_units(per_level=40)
    write_delimited(frame, tmp_path / "units.csv")
    fast, slow = _both(tmp_path, monkeypatch, (tmp_path / "units.csv").read_text())
    assert isinstance(fast.outcome("pain").units, TextRows)
    assert isinstance(slow.outcome("pain").units, tuple)
    _same(fast, slow)
    assert [o.decimals for o in fast.outcomes] == [2, 1]
    assert fast.outcome("pain").values.flags.writeable is False
    assert sum(c.total for c in fast.unit_flow.exclusions) > 0


def test_tsv_with_spaces_and_numeric_exclusion_spellings(tmp_path, monkeypatch):
    text = HEADER.replace(",", "\t") + "".join(
        f" u{i} \tplacebo\tno\t{dose}\t {y} \t7\n"
        for i, (dose, y) in enumerate([("5", "1.5"), ("0.0", "2"), ("-0", "3.25"), ("5.0", "NA")]))
    fast, slow = _both(tmp_path, monkeypatch, text, "units.tsv")
    assert isinstance(fast.outcome("pain").units, TextRows)
    _same(fast, slow)
    assert fast.unit_flow.exclusions[1].total == 2  # '0.0' and '-0' match 'equals: 0'
    assert fast.outcome("pain").units == ("u0",)
    assert fast.outcome("pain").decimals == 1


def test_quoted_cells_spanning_lines_and_blank_lines_keep_line_numbers(tmp_path, monkeypatch):
    text = ('"unit_id","arm","violated","dose","pain","sleep"\n\n'
            '"u1","placebo","no","5","1.5","7"\n'
            '"u2","low","no\nreally","5","2.5","8"\r\n\r\n'
            'u3,high,no,5,"3",9\n\n')
    fast, slow = _both(tmp_path, monkeypatch, text)
    assert isinstance(fast.outcome("pain").lines, LineRows)
    assert fast.outcome("pain").lines == (3, 4, 7)
    _same(fast, slow)


def test_blank_lines_without_quotes(tmp_path, monkeypatch):
    fast, slow = _both(tmp_path, monkeypatch,
                       HEADER + "u1,placebo,no,5,1,7\n\nu2,low,no,5,2,8\n\n\nu3,high,no,5,3,9")
    assert fast.outcome("sleep").lines == (2, 4, 7)
    _same(fast, slow)


@pytest.mark.parametrize("rows", [
    "u1,placebo,no,5,1,7\nu1,low,no,5,2,8\n",        # repeated unit
    "u1,placebo,no,5,1,7\nu2,Low,no,5,2,8\n",        # unknown level
    "u1,placebo,no,5,1 mg,7\n",                      # not a number
    "u1,placebo,no,5,1e999,7\n",                     # beyond double range
    'u1,placebo,no,5,"1"2,7\n',                      # irregular quoting
])
def test_problems_are_reported_by_the_row_by_row_path(tmp_path, monkeypatch, rows):
    from appendix.errors import DataError, UserError

    (tmp_path / "units.csv").write_text(HEADER + rows, encoding="utf-8")
    loaded = load_plan(write_study(tmp_path, "units.csv", 1))
    with pytest.raises((DataError, UserError)) as fast:
        build_dataset(loaded)
    monkeypatch.setattr(columnar, "read_columns", lambda *args: None)
    with pytest.raises((DataError, UserError)) as slow:
        build_dataset(loaded)
    assert (type(fast.value), str(fast.value)) == (type(slow.value), str(slow.value))


@pytest.mark.parametrize("texts, places", [
    (["1.5", "2.25", "3"], 2), (["3", "-4", "+5"], 0), ([".5", "5."], 1), (["-0.125"], 3),
    (["1e3"], None), (["1.5", "2E-1"], None), ([], 0),
    # Scaled integers must stay below 2**53 = 9007199254740992 (IEEE 754 binary64).
    (["9007199254740991"], 0), (["9007199254740992"], None),
    (["900719925474099.1"], 1), (["-900719925474099.2"], None),
])
def test_decimal_places(texts, places):
    assert decimal_places(texts, np.array([float(t) for t in texts])) == places


def test_typed_formats_take_the_float_path(tmp_path):
    write_parquet(invented_units(), tmp_path / "units.parquet")
    dataset = build_dataset(load_plan(write_study(tmp_path, "units.parquet")))
    assert [o.decimals for o in dataset.outcomes] == [None, None]


@pytest.mark.parametrize("texts, distinct", [
    (["a", "b", "ab"], True), (["a", "b", "a"], False),
    (["x" * 30 + "1", "x" * 30 + "2"], True), (["x" * 30, "x" * 30], False),
    (["é1", "é2", "é1"], False), (["abc", "abc "[:3] + "d"], True), (["u"], True),
])
def test_all_distinct(texts, distinct):
    import pyarrow as pa

    assert all_distinct(pa.array(texts, type=pa.string())) is distinct


def test_row_sequences_behave_as_tuples():
    import pyarrow as pa

    units = TextRows(pa.array(["u1", "u2", "u3"]), np.array([2, 0]))
    assert (len(units), units[0], units[-1], units[:1], list(units)) == (2, "u3", "u1", ("u3",), ["u3", "u1"])
    assert units == ("u3", "u1") and ("u3", "u1") == units and units != ("u3",)
    assert LineRows(range(3), first=2) == (2, 3, 4)
    assert LineRows(np.array([1]), line_of=np.array([2, 9])) == (9,)


@pytest.mark.parametrize("rows", [
    "u1,placebo,no,5,1.5,7\r\nu2,low,no,5,\x1c2\x1c,8\r\n",  # \x1c is white space to str.strip
    "u1,placebo,no,5,1.5,7\r\nu2,low,no,5,2.0,8\r\n",          # CRLF line ends
    " u1 ,placebo,no,5,\t1.5,7\nu2,low,no,5,2.0 ,8\n",         # spaces and tabs around cells
])
def test_white_space_and_line_ends_as_the_row_by_row_path(tmp_path, monkeypatch, rows):
    fast, slow = _both(tmp_path, monkeypatch, HEADER + rows)
    _same(fast, slow)
    assert fast.outcome("pain").values.tolist() == [1.5, 2.0]


def test_leading_blank_lines_and_byte_order_mark(tmp_path, monkeypatch):
    text = "\ufeff\n\n" + HEADER + "u1,placebo,no,5,1.5,7\nu2,low,no,5,2.0,8\n"
    fast, slow = _both(tmp_path, monkeypatch, text)
    assert isinstance(fast.outcome("pain").units, TextRows)
    assert fast.outcome("pain").lines == (4, 5)
    _same(fast, slow)


@pytest.mark.parametrize("text", ["1", "-1.5", "+.5", "5.", "007", "1.5.1", "1-2", "+-1", "-", ".",
                                  "+.", "1e3", "1,5", " 1", "", "١"])
def test_plain_bytes_check_agrees_with_the_pattern(text):
    import re

    from appendix.data.columnar import text_array
    from appendix.data.decimals import PLAIN_PATTERN, all_plain

    # Reference: Python's re on the same pattern (the row-by-row rule).
    assert all_plain(text_array([text])) is bool(re.match(PLAIN_PATTERN, text))
    assert all_plain(text_array(["2", text, "3"])) is bool(re.match(PLAIN_PATTERN, text))


def _clean_rows(n: int, start: int = 1, pain=lambda i: f"{i % 7}.{i % 100:02d}") -> str:
    arms = ["placebo", "low", "high"]
    return "".join(f"U{i},{arms[i % 3]},no,5,{pain(i)},{i % 9}\n" for i in range(start, start + n))


@pytest.mark.parametrize("pain", [
    lambda i: f"{i % 7}.{i % 100:02d}",                       # every row plain: read by chunks
    lambda i: f"-{i % 7}.{i % 10}" if i % 5 else f"+{i}",     # signs, mixed digits after the point
    lambda i: "NA" if i % 11 == 0 else f"{i}.5",              # missing cells: the general path
    lambda i: f"{i}e-1" if i % 13 == 0 else f"{i}",            # an exponent: no exact decimals
])
def test_many_reader_chunks_agree_with_the_row_by_row_path(tmp_path, monkeypatch, pain):
    monkeypatch.setattr(columnar, "_READ_BLOCK", 1024)  # ~40 rows per chunk
    text = HEADER + _clean_rows(600, pain=pain)
    fast, slow = _both(tmp_path, monkeypatch, text)
    columns = columnar.read_columns(tmp_path / "units.csv", ",", ["unit_id", "pain"])
    assert columns.cells["pain"].num_chunks > 10
    assert isinstance(fast.outcome("pain").units, TextRows)
    _same(fast, slow)
    expected = slow.outcome("pain").decimals
    assert fast.outcome("pain").decimals == expected
    assert fast.outcome("pain").values.size == slow.outcome("pain").values.size > 500


def test_many_reader_chunks_repeated_unit_across_chunks_goes_row_by_row(tmp_path, monkeypatch):
    from appendix.errors import DataError

    monkeypatch.setattr(columnar, "_READ_BLOCK", 1024)
    text = HEADER + _clean_rows(300) + _clean_rows(1, start=17)  # U17 again, chunks apart
    (tmp_path / "units.csv").write_text(text, encoding="utf-8")
    loaded = load_plan(write_study(tmp_path, "units.csv", 1))
    with pytest.raises(DataError) as caught:
        build_dataset(loaded)
    assert str(caught.value).endswith(
        "units.csv:302: unit_id: unit 'U17' appears on lines 18, 302; each unit must appear once")
    assert str(caught.value).startswith("1 problem in the data:")


def _chunked(texts, cuts):
    import pyarrow as pa

    bounds = [0, *sorted(set(c for c in cuts if 0 < c < len(texts))), len(texts)]
    return pa.chunked_array([pa.array(texts[a:b], type=pa.string())
                             for a, b in zip(bounds, bounds[1:])], type=pa.string())


@pytest.mark.parametrize("texts, cuts, distinct", [
    ([f"U{i}" for i in range(1, 40)], [9, 10, 25], True),             # rising: no sort needed
    ([f"U{i}" for i in range(1, 40)] + ["U9"], [9, 30], False),        # rising, then a repeat
    ([f"U{i}" for i in range(40, 0, -1)], [12], True),                 # falling: hashed
    ([f"P{i:015d}" for i in range(30)], [7], True),                    # 16 bytes: two words
    ([f"P{i:015d}" for i in (3, 1, 2, 1)], [2], False),                # repeat across chunks
    ([f"P{i:016d}" for i in (3, 1, 2, 1)], [2], False),                # 17 bytes: exact count
    (["b", "a", "ab", "ba", ""], [1, 3], True),
    (["x\x00", "x"], [], True),                                        # zero bytes vs the end
    ([f"ABCD{i:04d}" for i in range(30)], [10], True),                 # one width (8): no gather
    ([f"AB{i}" for i in (1, 2, 3)] + ["X", "AB2"], [3], False),         # one width, then mixed
    ([f"Q{i:011d}" for i in (5, 9, 2, 9)], [2], False),                 # one width (12), repeat
    (["ab", "cd", "ef", "cd"], [], False),
])
def test_all_distinct_on_chunks(texts, cuts, distinct):
    assert all_distinct(_chunked(texts, cuts)) is distinct


def test_all_distinct_compares_texts_when_hashes_collide(monkeypatch):
    # Every key hashed alike: only the comparison of the texts themselves decides.
    monkeypatch.setattr(columnar, "_mixed", lambda length, low, high: np.zeros(length.size, np.uint64))
    assert all_distinct(_chunked(["b", "a", "c"], [1])) is True
    assert all_distinct(_chunked(["b", "a", "b"], [1])) is False


def test_increasing_is_shortlex_order():
    from appendix.data.columnar import _increasing, _key_words

    def rises(texts):
        return _increasing(*_key_words(_chunked(texts, []).chunk(0)))

    assert rises(["U9", "V1", "U10", "U11", "A100"]) is True
    assert rises(["U10", "U9"]) is False and rises(["U1", "U1"]) is False
    assert rises(["P" + "0" * 10 + "1", "P" + "0" * 9 + "10"]) is True   # 12 bytes each
    assert rises(["P" + "0" * 9 + "10", "P" + "0" * 10 + "1"]) is False


def test_byte_summary_of_a_file_larger_than_a_block(monkeypatch):
    from appendix.data.columnar import _byte_summary

    monkeypatch.setattr(columnar, "_BLOCK", 7)
    text = b"unit,y\nu1,2\r\nu2,\x013\n" + b"a" * 20 + b'"\t'
    top, controls, present = _byte_summary(np.frombuffer(text, dtype=np.uint8), text)
    assert (top, controls, present) == (ord("y"), 6, frozenset({b"\r", b'"', b"\t"}))
    # Quotes count only from the body on (after a quoted header).
    quoted = b'"unit","y"\nu1,2\n'
    assert _byte_summary(np.frombuffer(quoted, dtype=np.uint8), quoted, 11)[2] == frozenset()
    assert _byte_summary(np.frombuffer(quoted, dtype=np.uint8), quoted, 9)[2] == {b'"'}


plain_texts = st.text(alphabet="0123456789.+-e", max_size=6)


@settings(max_examples=300, deadline=None)
@given(st.lists(plain_texts, min_size=1, max_size=12), st.lists(st.integers(0, 12), max_size=3))
def test_plain_digits_agree_with_the_pattern(texts, cuts):
    import re

    from appendix.data.decimals import PLAIN_PATTERN, plain_digits

    plain = all(re.match(PLAIN_PATTERN, t) for t in texts)
    found = [plain_digits(c) for c in _chunked(texts, cuts).chunks]
    assert (None not in found) is plain
    if plain:
        assert max(found) == max(len(t) - t.index(".") - 1 if "." in t else 0 for t in texts)


@settings(max_examples=300, deadline=None)
@given(st.lists(st.text(alphabet="Ua0\x001", max_size=18), max_size=15),
       st.lists(st.integers(0, 15), max_size=3), st.booleans())
def test_all_distinct_agrees_with_a_set(texts, cuts, in_order):
    if in_order:
        texts = sorted(set(texts), key=lambda t: (len(t.encode()), t.encode()))
    assert all_distinct(_chunked(texts, cuts)) is (len(set(texts)) == len(texts))


@pytest.mark.parametrize("head", [
    "\ufeff" + HEADER,                                   # byte order mark, header on line 1
    '"unit_id","arm","violated","dose","pain","sleep"\r\n',  # quoted header, body without quotes
])
def test_header_given_to_the_reader_when_the_body_has_no_quotes(tmp_path, monkeypatch, head):
    fast, slow = _both(tmp_path, monkeypatch, head + "u1,placebo,no,5,1.5,7\r\nu2,low,no,5,2.25,8\r\n")
    assert isinstance(fast.outcome("pain").units, TextRows)
    assert fast.outcome("pain").units == ("u1", "u2") and fast.outcome("pain").lines == (2, 3)
    assert fast.outcome("pain").values.tolist() == [1.5, 2.25]
    _same(fast, slow)


@pytest.mark.parametrize("levels, cells, known", [
    (["g00", "g01", "g99"], ["g01", "g99", "g00", "g01"], True),               # one width
    (["a", "ab", "abc", ""], ["abc", "", "a", "ab", "a"], True),               # mixed widths
    (["é", "ü1", "12345678"], ["12345678", "é", "ü1"], True),                  # 8 bytes, UTF-8
    (["g00", "g01"], ["g00", "g02"], False),                                   # unknown level
    (["a", "ab"], ["a", "abc"], False),                                        # longer text
    (["a", "ab"], ["a", "b"], False),                                          # one width, no match
    (["12345678"], ["123456789"], False),                                      # first 8 bytes match
    (["ab", "abc"], ["ab", "ab\x00"], False),                                  # zero byte at the end
])
def test_level_codes_by_first_words_agree_with_the_dictionary_path(levels, cells, known):
    import pyarrow as pa

    from appendix.data.vectorised import _codes_into, _level_table

    index = {level: i for i, level in enumerate(levels)}
    table = _level_table(levels)
    assert table is not None
    chunk = pa.array(["pad", *cells], type=pa.string()).slice(1)  # an offset into the buffers
    by_table, by_dictionary = np.full(len(cells), -9), np.full(len(cells), -9)
    assert _codes_into(by_table, chunk, index, table) is known
    assert _codes_into(by_dictionary, chunk, index) is known
    if known:
        assert by_table.tolist() == by_dictionary.tolist() == [index[c] for c in cells]


def test_level_table_needs_short_distinct_words():
    from appendix.data.vectorised import _level_table

    assert _level_table(["123456789", "a"]) is None      # a level beyond 8 bytes
    assert _level_table(["a", "a\x00"]) is None          # one word for two levels
    multiplier, shift, slots, words, lengths = _level_table([f"L{i}" for i in range(300)])
    assert sorted(int(c) for c in slots if c < 300) == list(range(300))


def test_first_words_near_the_end_of_the_buffer():
    import pyarrow as pa

    from appendix.data.columnar import first_words

    for texts in (["abc", "de", "f"], ["xyz"] * 5, ["abcdefghijk", "z"], [""]):
        length, word = first_words(pa.array(texts, type=pa.string()))
        assert length.tolist() == [len(t) for t in texts]
        assert [int(w).to_bytes(8, "little") for w in word] == [t.encode()[:8].ljust(8, b"\0")
                                                                for t in texts]


@pytest.mark.parametrize("arm, cells", [
    ("[1, 2, 10], control: 1", ["1", "1.0", "2", "01", "10.0", "1.0", "+2", "1e1"]),
    ("[1000000000, 2.5]", ["1000000000", "1000000000.0", "2.50", "1e9"]),     # beyond the 8-byte table
    ("[-1, 0, 0.5]", ["-1.0", "0", "-0", ".5", "0.50", "-1"]),
])
def test_number_like_levels_read_by_value_on_the_vectorised_path(tmp_path, monkeypatch, arm, cells):
    import appendix.data.vectorised as vectorised
    from tests.data.helpers import record_answers

    answers = record_answers(monkeypatch, vectorised, "build_vectorised")
    text = HEADER + "".join(f"u{i}, {c} ,no,5,{i}.5,7\n" for i, c in enumerate(cells))
    fast, slow = _both(tmp_path, monkeypatch, text, arm=arm)
    assert answers == [True]  # the pyarrow path answered (the row-by-row build never asks it)
    _same(fast, slow)
    assert any(f.code == "level-read-by-value" for f in fast.findings)


def test_number_like_levels_over_many_reader_chunks(tmp_path, monkeypatch):
    monkeypatch.setattr(columnar, "_READ_BLOCK", 1024)  # ~40 rows per chunk
    spellings = ["1", "1.0", "2", "10", "2.0", "01"]
    arms = [spellings[i % 6] if i % 7 else "10.00" for i in range(600)]
    text = HEADER + "".join(f"U{i},{arm},no,5,{i}.5,{i % 9}\n" for i, arm in enumerate(arms))
    fast, slow = _both(tmp_path, monkeypatch, text, arm="[1, 2, 10], control: 1")
    assert columnar.read_columns(tmp_path / "units.csv", ",", ["arm"]).cells["arm"].num_chunks > 10
    assert isinstance(fast.outcome("pain").units, TextRows)
    _same(fast, slow)
    # Each spelling counted over every chunk, levels in plan order (Python's count as reference).
    assert [f.message for f in fast.findings] == [
        f"arm: {arms.count(spelling)} cells written '{spelling}' were read as the plan's level "
        f"'{level}' (equal in value)."
        for spelling, level in (("1.0", "1"), ("01", "1"), ("2.0", "2"), ("10.00", "10"))]


@pytest.mark.parametrize("levels, cells, codes, read", [
    (["1", "2"], ["1", "2", "1"], [0, 1, 0], {}),
    (["1", "2"], ["1.0", "2", "1.0", "02"], [0, 1, 0, 1], {("1.0", 0): 2, ("02", 1): 1}),
    (["1", "2"], ["1", "1.5"], None, None),
    (["1", "b"], ["1", "1.0"], None, None),                  # some level is not a number
    (["1", "1.0"], ["1", "1.00"], None, None),               # equal to two levels
    (["123456789", "2"], ["123456789.0", "2"], [0, 1], {("123456789.0", 0): 1}),
])
def test_read_codes_into(levels, cells, codes, read):
    import pyarrow as pa

    from appendix.data.levels import LevelReading
    from appendix.data.vectorised import _level_table, read_codes_into

    out = np.full(len(cells), -9)
    chunk = pa.array(["pad", *cells], type=pa.string()).slice(1)
    got = read_codes_into(out, chunk, LevelReading.of(levels), _level_table(levels))
    assert got == read
    if codes is not None:
        assert out.tolist() == codes
