"""The fast path for designs beyond one factor gives the same Dataset as the row-by-row
path on random invented files, and leaves every problem to it (same messages)."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import appendix.data.design_vectorised as fast
from appendix.data.build import build_dataset
from appendix.errors import DataError
from appendix.plan.load import load_plan
from tests.data.helpers import record_answers

STUDY = """\
format: 1
study: {{id: invented-fast, title: Invented data for tests}}
data:
  source: rows.csv
  unit: unit_id
  exclusions:
    - {{id: X1, column: flagged, equals: yes, reason: Protocol violated}}
design:
  factors:
    - {{name: arm, levels: {arm}}}
    - {{name: bench, role: block, levels: [B1, B2]}}
{within}  covariates: [{{name: base, label: Baseline}}]
  sums_of_squares: 2
outcomes:
  - {{name: y, label: Response, role: primary}}
  - {{name: z, label: Second, role: secondary}}
"""


@pytest.fixture
def taken(monkeypatch):
    """Whether the fast path answered, per build."""
    return record_answers(monkeypatch, fast, "build_design_vectorised")


def _both(tmp_path, monkeypatch, text: str, within: bool, arm: str = "[a, b, c]",
          visits: str = "[v1, v2]", study: str | None = None):
    """The Dataset (or DataError) of `text` by the fast path and by the row-by-row one;
    `study` replaces the plan built from STUDY."""
    (tmp_path / "rows.csv").write_text(text, encoding="utf-8")
    extra = f"    - {{name: visit, role: within, levels: {visits}}}\n" if within else ""
    (tmp_path / "study.yaml").write_text(study or STUDY.format(within=extra, arm=arm), encoding="utf-8")
    loaded = load_plan(tmp_path / "study.yaml")

    def built():
        try:
            return build_dataset(loaded)
        except DataError as error:
            return error

    first = built()
    with monkeypatch.context() as patch:
        patch.setattr(fast, "build_design_vectorised", lambda *args: None)
        second = built()
    return first, second


def _same(a, b) -> None:
    if isinstance(a, Exception) or isinstance(b, Exception):
        assert (type(a), str(a)) == (type(b), str(b))
        return
    assert (a.levels, a.unit_flow, a.findings) == (b.levels, b.unit_flow, b.findings)
    for x, y in zip(a.outcomes, b.outcomes, strict=True):
        np.testing.assert_array_equal(x.values, y.values)
        np.testing.assert_array_equal(x.codes, y.codes)
        assert (tuple(x.units), tuple(x.lines), x.decimals) == (tuple(y.units), tuple(y.lines), y.decimals)
        for f, g in zip(x.factors, y.factors, strict=True):
            np.testing.assert_array_equal(f, g)
        for f, g in zip(x.covariates, y.covariates, strict=True):
            np.testing.assert_array_equal(f, g)


HEADER = "unit_id,arm,bench,visit,flagged,base,y,z\n"


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(data=st.data())
def test_random_designs_agree_with_the_row_by_row_path(tmp_path, monkeypatch, taken, data):
    taken.clear()
    within = data.draw(st.booleans())
    n = data.draw(st.integers(1, 25))
    number = st.one_of(st.sampled_from(["", "NA"]), st.decimals(-50, 50, places=2).map(str))
    lines = []
    for u in data.draw(st.permutations(range(n))):
        arm, bench = data.draw(st.sampled_from("abc")), data.draw(st.sampled_from(["B1", "B2"]))
        base = data.draw(st.sampled_from(["1.5", "2", "", "3.25"]))
        flagged = data.draw(st.sampled_from(["no", "no", "yes"]))
        for visit in (data.draw(st.permutations(["v1", "v2"])) if within else ["v1"]):
            lines.append(f"U{u},{arm},{bench},{visit},{flagged},{base},{data.draw(number)},"
                         f"{data.draw(number)}\n")
    scanned, rowwise = _both(tmp_path, monkeypatch, HEADER + "".join(lines), within)
    _same(scanned, rowwise)
    assert taken == [True]  # clean by construction: the fast path must answer


@pytest.mark.parametrize("rows, within", [
    ("U1,a,B1,v1,no,1,2,3\nU1,a,B1,v1,no,1,2,3\n", True),    # a repeated (unit, visit)
    ("U1,a,B1,v1,no,1,2,3\nU1,b,B1,v2,no,1,2,3\n", True),    # the arm varies within a unit
    ("U1,a,B1,v1,no,1,2,3\nU1,a,B1,v2,no,2,2,3\n", True),    # the covariate varies
    ("U1,a,B1,v1,no,tall,2,3\n", False),                     # a covariate that is no number
    ("U1,d,B1,v1,no,1,2,3\n", False),                        # an unknown level
    ("U1,a,B1,v1,no,1,2 mg,3\n", False),                     # an outcome that is no number
    ("U1,a,B1,v1,no,1,2,3\nU1,a,B2,v1,no,1,2,3\n", False),   # a repeated unit
    (",a,B1,v1,no,1,2,3\n", False),                          # no unit identifier
])
def test_problems_are_worded_by_the_row_by_row_path(tmp_path, monkeypatch, taken, rows, within):
    scanned, rowwise = _both(tmp_path, monkeypatch, HEADER + rows, within)
    assert isinstance(scanned, DataError)
    _same(scanned, rowwise)
    assert taken == [False]


def test_an_excluded_unit_is_not_checked_and_the_fast_path_still_answers(tmp_path, monkeypatch, taken):
    rows = "U1,a,B1,v1,yes,1,not a number,3\nU2,b,B2,v1,no,2,4.5,6\n"
    scanned, rowwise = _both(tmp_path, monkeypatch, HEADER + rows, False)
    _same(scanned, rowwise)
    assert taken == [True]
    assert scanned.unit_flow.exclusions[0].total == 1


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(data=st.data())
def test_number_like_levels_written_any_way_agree(tmp_path, monkeypatch, taken, data):
    # A unit's arm may be written differently on its rows ('1', '1.0'): one level all the same.
    taken.clear()
    within = data.draw(st.booleans())
    n = data.draw(st.integers(1, 12))
    arms = {1: ["1", "1.0", "01"], 2: ["2", "2.00", "+2"], 3: ["3", "3e0"]}
    visits = {"1": ["1", "1.0"], "2": ["2", "02", "2."]}
    lines = []
    for u in range(n):
        arm = data.draw(st.sampled_from([1, 2, 3]))
        for visit in (data.draw(st.permutations(["1", "2"])) if within else ["1"]):
            lines.append(f"U{u},{data.draw(st.sampled_from(arms[arm]))},B1,"
                         f"{data.draw(st.sampled_from(visits[visit]))},no,1.5,{u}.5,2\n")
    scanned, rowwise = _both(tmp_path, monkeypatch, HEADER + "".join(lines), within,
                             arm="[1, 2, 3]", visits="[1, 2]")
    _same(scanned, rowwise)
    assert taken == [True]  # clean: the fast path answers


@pytest.mark.parametrize("rows, within", [
    ("U1,1,B1,1,no,1,2,3\nU2,1.0000001,B1,1,no,1,2,3\n", False),   # close to a level, not equal
    ("U1,1,B1,1,no,1,2,3\nU1,2.0,B1,2,no,1,2,3\n", True),          # the arm varies (1 and 2.0)
    ("U1,1,B1,1,no,1,2,3\nU1,1.0,B1,1.00,no,1,2,3\n", True),       # (unit, visit 1) twice
])
def test_number_like_level_problems_are_worded_by_the_row_by_row_path(tmp_path, monkeypatch, taken,
                                                                      rows, within):
    scanned, rowwise = _both(tmp_path, monkeypatch, HEADER + rows, within, arm="[1, 2, 3]",
                             visits="[1, 2]")
    assert isinstance(scanned, DataError)
    _same(scanned, rowwise)
    assert taken == [False]


TWO_WITHIN = """\
format: 1
study: {id: invented-fast-grid, title: Invented data for tests}
data: {source: rows.csv, unit: unit_id}
design:
  factors:
    - {name: arm, levels: [a, b]}
    - {name: visit, role: within, levels: [v1, v2]}
    - {name: hour, role: within, levels: [h1, h2, h3]}
  covariates: [{name: base, label: Baseline, outcomes: [y]}]
  sums_of_squares: 2
outcomes:
  - {name: y, label: Response, role: primary}
  - {name: z, label: Second, role: secondary}
"""


def _both_grid(tmp_path, monkeypatch, text: str):
    return _both(tmp_path, monkeypatch, text, True, study=TWO_WITHIN)


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(data=st.data())
def test_two_within_factors_and_a_covariate_of_one_outcome_agree(tmp_path, monkeypatch, taken, data):
    # rows of a unit in any order, a cell of the grid left out now and then, a baseline
    # missing now and then (it adjusts y only, so z keeps the unit)
    taken.clear()
    number = st.one_of(st.sampled_from(["", "NA"]), st.decimals(-50, 50, places=2).map(str))
    lines = []
    for u in range(data.draw(st.integers(1, 12))):
        arm, base = data.draw(st.sampled_from("ab")), data.draw(st.sampled_from(["1.5", "", "3"]))
        cells = [(v, h) for v in ("v1", "v2") for h in ("h1", "h2", "h3")]
        for visit, hour in data.draw(st.permutations(cells))[:data.draw(st.sampled_from([6, 6, 5]))]:
            lines.append(f"U{u},{arm},{visit},{hour},{base},{data.draw(number)},{data.draw(number)}\n")
    scanned, rowwise = _both_grid(tmp_path, monkeypatch, "unit_id,arm,visit,hour,base,y,z\n" + "".join(lines))
    _same(scanned, rowwise)
    assert taken == [True]
    for outcome in scanned.outcomes:  # complete units only: six rows each, by grid cell
        assert outcome.values.size % 6 == 0
        assert len(outcome.covariates) == (1 if outcome.name == "y" else 0)


def test_a_unit_twice_at_one_cell_of_the_grid_is_worded_by_the_row_by_row_path(tmp_path, monkeypatch,
                                                                              taken):
    rows = "unit_id,arm,visit,hour,base,y,z\nU1,a,v1,h1,1,2,3\nU1,a,v1,h2,1,2,3\nU1,a,v1,h1,1,4,3\n"
    scanned, rowwise = _both_grid(tmp_path, monkeypatch, rows)
    _same(scanned, rowwise)
    assert taken == [False]
    assert ("rows.csv:4: unit_id: unit 'U1' at visit 'v1', hour 'h1' appears on lines 2, 4; each "
            "unit must appear once per cell of visit \u00d7 hour") in str(scanned)
