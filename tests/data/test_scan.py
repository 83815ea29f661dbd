"""The compiled pass over plain CSV/TSV files gives the same Dataset as the pyarrow path
and the row-by-row path, and stops (leaving the file to them) on anything else."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import appendix.data.columnar as columnar
import appendix.data.scan as scan
import appendix.data.vectorised as vectorised
from appendix.data.build import build_dataset
from appendix.data.rows import Spans
from appendix.errors import DataError, UserError
from appendix.plan.load import load_plan
from tests.data.helpers import ARM, record_answers, write_study

HEADER = "unit_id,arm,violated,dose,pain,sleep"
LEVELS = ("placebo", "low", "high")


@pytest.fixture
def every_size(monkeypatch):
    """The compiled pass for files of any size, each call's answer recorded."""
    monkeypatch.setattr(scan, "SCAN_MIN_BYTES", 0)
    return record_answers(monkeypatch, vectorised, "build_scanned")


def _paths(tmp_path, monkeypatch, text: str, name: str = "units.csv", arm: str = ARM):
    """(compiled pass, pyarrow path, row-by-row path) datasets of one file; each is the
    DataError or UserError it raised instead, if any. `arm`: the arm's levels in the plan."""
    path = tmp_path / name
    path.write_bytes(text.encode("utf-8"))
    loaded = load_plan(write_study(tmp_path, name, 1, arm=arm))

    def built():
        try:
            return build_dataset(loaded)
        except (DataError, UserError) as error:
            return error

    first = built()
    with monkeypatch.context() as patch:
        patch.setattr(scan, "SCAN_MIN_BYTES", 1 << 62)
        second = built()
        patch.setattr(columnar, "read_columns", lambda *args: None)
        third = built()
    return first, second, third


def _same(a, b) -> None:
    if isinstance(a, Exception) or isinstance(b, Exception):
        assert (type(a), str(a)) == (type(b), str(b))
        return
    assert a.unit_flow == b.unit_flow
    assert a.findings == b.findings
    assert a.levels == b.levels
    for x, y in zip(a.outcomes, b.outcomes, strict=True):
        np.testing.assert_array_equal(x.values, y.values)
        np.testing.assert_array_equal(np.signbit(x.values), np.signbit(y.values))
        np.testing.assert_array_equal(x.codes, y.codes)
        assert (x.units, x.lines, x.decimals) == (y.units, y.lines, y.decimals)


def _rows(cells) -> str:
    return "".join(",".join(row) + "\n" for row in cells)


def test_a_clean_file_takes_the_compiled_pass_and_agrees(tmp_path, monkeypatch, every_size):
    rows = [(f"U{i}", LEVELS[i % 3], "yes" if i % 7 == 0 else "no", "0" if i % 11 == 0 else "5",
             f"{(i * 37) % 1000 / 100:.2f}", f"{-i / 10:.1f}") for i in range(1, 400)]
    scanned, arrow, rowwise = _paths(tmp_path, monkeypatch, HEADER + "\n" + _rows(rows))
    assert every_size == [True]  # the other two paths never try the pass
    assert isinstance(scanned.outcome("pain").units._column, Spans)
    _same(scanned, arrow)
    _same(scanned, rowwise)
    assert [o.decimals for o in scanned.outcomes] == [2, 1]
    assert sum(c.total for c in scanned.unit_flow.exclusions) > 0
    assert scanned.outcome("pain").units[5:7] == ("U6", "U8")  # U7 excluded (violated)


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(data=st.data())
def test_random_plain_files_agree_with_the_other_paths(tmp_path, monkeypatch, every_size, data):
    every_size.clear()
    n = data.draw(st.integers(1, 40))
    ids = data.draw(st.lists(st.text("AZaz09_-", min_size=1, max_size=20), min_size=n, max_size=n))
    number = st.builds(lambda sign, whole, point, frac: sign + whole + point + frac,
                       st.sampled_from(["", "-", "+"]), st.text("0123456789", max_size=6),
                       st.sampled_from(["", "."]), st.text("0123456789", max_size=4))
    rows = [(u, data.draw(st.sampled_from(LEVELS)), data.draw(st.sampled_from(["yes", "no"])),
             data.draw(st.sampled_from(["0", "5", "0.0"])), data.draw(number), data.draw(number))
            for u in ids]
    end = data.draw(st.sampled_from(["\n", "\r\n"]))
    text = HEADER + end + "".join(",".join(r) + end for r in rows)
    if data.draw(st.booleans()):
        text = text[:-len(end)]  # no line end after the last row
    scanned, arrow, rowwise = _paths(tmp_path, monkeypatch, text)
    _same(scanned, arrow)
    _same(scanned, rowwise)
    # Plain: distinct units (none can be a missing text here) and a digit in every number.
    plain = len(set(ids)) == n and all(any(c.isdigit() for c in r[4]) and any(c.isdigit() for c in r[5])
                                       for r in rows)
    assert every_size[0] is plain


@pytest.mark.parametrize("rows, reason", [
    ("U1,low,no,5,1.5,7\nU2,low,no,5,,7\n", 5),              # a missing value
    ("U1,low,no,5,1.5,7\nU2,low,no,5,NA,7\n", 5),
    ("U1,low,no,5,1e3,7\n", 1),                              # an exponent
    ("U1,low,no,5,1.5.1,7\n", 1),
    ("U1,low,no,5,9007199254740992,7\n", 5),                 # 2**53: not exact in float64
    ("U1,Low,no,5,1.5,7\n", 4),                              # an unknown level
    ("U1,low ,no,5,1.5,7\n", 1),                             # white space in a read cell
    ("U1,low,no,5,1.5,7\n\nU2,low,no,5,1,7\n", 3),           # a blank line
    ("U1,low,no,5,1.5\n", 2),                                # a short row
    ("U1,low,no,5,1.5,7,8\n", 2),                            # a long row
    ('U1,low,no,5,"1.5",7\n', 5),                            # a quoted number
    ('U1,"low",no,5,1.5,7\n', 4),                            # a quoted level
    ('U1,low,"no",5,1.5,7\n', 1),                            # a quoted text
    ("U1,low,no,5,1.5,7\rU2,low,no,5,1,7\n", 2),             # a lone carriage return
    ("U1,low,no,5,1.5,7\nNA,low,no,5,1,7\n", 3),             # a missing unit
    ("U1,low,nö,5,1.5,7\n", 1),                              # not ASCII
])
def test_the_pass_stops_on_what_it_does_not_vouch_for(tmp_path, monkeypatch, every_size, rows, reason):
    path = tmp_path / "units.csv"
    path.write_bytes((HEADER + "\n" + rows).encode("utf-8"))
    from appendix.data.vectorised import _level_table

    names = HEADER.split(",")
    got = scan.scan_plain(path, ",", names, {"unit_id": scan.UNIT, "arm": scan.FACTOR,
                                             "violated": scan.TEXT, "dose": scan.TEXT},
                          ["pain", "sleep"], _level_table(list(LEVELS)))
    assert got == reason, scan.STOPS.get(got)
    scanned, arrow, rowwise = _paths(tmp_path, monkeypatch, HEADER + "\n" + rows)
    assert every_size[0] is False
    _same(scanned, arrow)
    _same(scanned, rowwise)


@pytest.mark.parametrize("ids", [
    ["U10", "U9", "U8"],                         # falling: checked through hashes
    ["U1", "U2", "U1"],                          # a repeat
    ["a" * 17, "a" * 16 + "b", "a" * 18],        # longer than 16 bytes
    ["x" * 20, "x" * 20],                        # a long repeat
    ["B1", "A2", "C3", "A2"],
])
def test_unit_identifiers_in_any_order_and_length(tmp_path, monkeypatch, every_size, ids):
    rows = [(u, "low", "no", "5", f"{i}.5", "7") for i, u in enumerate(ids)]
    scanned, arrow, rowwise = _paths(tmp_path, monkeypatch, HEADER + "\n" + _rows(rows))
    _same(scanned, arrow)
    _same(scanned, rowwise)
    assert every_size[0] is (len(set(ids)) == len(ids))
    if len(set(ids)) < len(ids):
        assert isinstance(scanned, DataError) and "each unit must appear once" in str(scanned)


def test_skipped_columns_may_hold_spaces_and_tabs(tmp_path, monkeypatch, every_size):
    text = "unit_id,note,arm,violated,dose,pain,sleep\n" + "".join(
        f"U{i},a note\twith tabs,high,no,5,{i}.25,{i}\n" for i in range(30))
    scanned, arrow, rowwise = _paths(tmp_path, monkeypatch, text)
    assert every_size[0] is True
    _same(scanned, arrow)
    _same(scanned, rowwise)


def test_tab_separated_files(tmp_path, monkeypatch, every_size):
    text = HEADER.replace(",", "\t") + "\n" + "".join(
        f"U{i}\thigh\tno\t5\t-{i}.125\t+{i}\n" for i in range(30))
    scanned, arrow, rowwise = _paths(tmp_path, monkeypatch, text, "units.tsv")
    assert every_size[0] is True
    _same(scanned, arrow)
    _same(scanned, rowwise)
    assert scanned.outcome("pain").decimals == 3


def test_values_near_the_exact_limit_leave_it_to_the_texts(tmp_path, monkeypatch, every_size):
    # 2**52 = 4503599627370496: near the 2**53 limit of exact scaled integers (IEEE 754).
    rows = [("U1", "low", "no", "5", "450359962737049.6", "7"), ("U2", "low", "no", "5", "1.5", "7")]
    scanned, arrow, rowwise = _paths(tmp_path, monkeypatch, HEADER + "\n" + _rows(rows))
    assert every_size[0] is False
    _same(scanned, arrow)
    assert scanned.outcome("pain").decimals == 1


def test_an_exclusion_on_the_unit_column_leaves_the_file_to_the_pyarrow_path(tmp_path, monkeypatch,
                                                                            every_size):
    rows = [(f"U{i}", "low", "no", "5", "1.5", "7") for i in range(5)]
    path = tmp_path / "units.csv"
    path.write_text(HEADER + "\n" + _rows(rows), encoding="utf-8")
    study = write_study(tmp_path, "units.csv", 1)
    study.write_text(study.read_text().replace("column: violated", "column: unit_id"))
    dataset = build_dataset(load_plan(study))
    assert every_size == [False]
    assert dataset.unit_flow.exclusions[0].total == 0


def test_spans_read_back_their_texts():
    data = np.frombuffer(b"ab,cde,\nfg", dtype=np.uint8)
    spans = Spans(data, np.array([0, 3, 7, 8]), np.array([2, 3, 0, 2]))
    assert [spans.text(i) for i in range(4)] == ["ab", "cde", "", "fg"]
    assert spans.arrow().to_pylist() == ["ab", "cde", "", "fg"]


#: Number-like levels of the arm, and ways of writing cells for them.
NUMBER_LEVELS = "[1, 2, 10], control: 1"
SPELLINGS = ["1", "1.0", "01", "+1", "2", "2.00", "10", "1e1", "10.0", "1.0000001", "0.5"]


@pytest.mark.parametrize("arms, scanned_itself", [
    (["1", "2", "10", "2"], True),                  # every cell a level's text: the pass reads it
    (["1", "1.0", "10", "01", "2.00"], False),      # read by value: the pass stops, pyarrow reads it
    (["1", "1.0", "1.0000001"], False),             # no level: the row-by-row path words it
])
def test_number_like_levels_agree_on_every_path(tmp_path, monkeypatch, every_size, arms, scanned_itself):
    arrow_answers = record_answers(monkeypatch, vectorised, "build_vectorised")
    rows = [(f"U{i}", arm, "no", "5", f"{i}.5", "7") for i, arm in enumerate(arms)]
    scanned, arrow, rowwise = _paths(tmp_path, monkeypatch, HEADER + "\n" + _rows(rows),
                                     arm=NUMBER_LEVELS)
    _same(scanned, arrow)
    _same(scanned, rowwise)
    assert every_size[0] is scanned_itself
    clean = "1.0000001" not in arms
    assert arrow_answers[0] is clean  # a clean file is never left to the row-by-row path
    if clean:
        read = {spelling: arms.count(spelling) for spelling in arms if spelling not in ("1", "2", "10")}
        assert [f.message.split(" cell")[0] for f in scanned.findings
                if f.code == "level-read-by-value"] == [f"arm: {n}" for n in read.values()]


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(data=st.data())
def test_random_spellings_of_number_like_levels_agree(tmp_path, monkeypatch, every_size, data):
    every_size.clear()
    arms = data.draw(st.lists(st.sampled_from(SPELLINGS), min_size=1, max_size=30))
    rows = [(f"U{i}", arm, "no", "5", f"{i}.25", "7") for i, arm in enumerate(arms)]
    scanned, arrow, rowwise = _paths(tmp_path, monkeypatch, HEADER + "\n" + _rows(rows),
                                     arm=NUMBER_LEVELS)
    _same(scanned, arrow)
    _same(scanned, rowwise)
    assert every_size[0] is all(arm in ("1", "2", "10") for arm in arms)
