"""Results against the golden files (tests/golden/golden.py says how they are made), and
the typed reader `appendix.results.from_json` against the writer.

A golden file is a regression check, not an external one: the numbers in it are checked
against outside sources elsewhere (NIST StRD certified values in tests/reference, the
demos' reference tests against statsmodels and scipy). Here any change of a number beyond
the tolerance `verify` uses, or of any text, decision or count, fails until the golden file
is rewritten on purpose.
"""

from __future__ import annotations

import json

import pytest

from appendix.bundle import compare_results
from appendix.results import FORMAT_VERSION, ResultsFormatError, from_json, to_json
from tests.golden import golden


def _without_machine_keys(tree: dict) -> dict:
    return {k: v for k, v in tree.items() if k not in golden.MACHINE_KEYS}


@pytest.mark.parametrize("name", golden.DEMOS)
def test_demo_results_match_their_golden_file(computed_demos, name):
    expected = json.loads(golden.demo_path(name).read_text(encoding="utf-8"))
    actual = json.loads(to_json(computed_demos[name].results))
    assert compare_results(_without_machine_keys(expected), _without_machine_keys(actual)) == []


def test_nist_model_tables_match_their_golden_file():
    expected = json.loads(golden.nist_path().read_text(encoding="utf-8"))
    actual = json.loads(golden.nist_text())
    assert sorted(expected) == sorted(actual) and len(expected) == 11
    assert compare_results(expected, actual) == []


@pytest.mark.parametrize("name", golden.DEMOS)
def test_reading_back_gives_the_same_text(computed_demos, name):
    """to_json(from_json(text)) == text: every key has a declared type, and a float field
    holding a whole number is written as a float, so nothing changes on the way round."""
    text = to_json(computed_demos[name].results)
    typed = from_json(text)
    assert typed.outcomes[0].tables[0].rows[0].df == json.loads(text)["outcomes"][0]["tables"][0]["rows"][0]["df"]
    assert to_json(typed) == text


def test_the_golden_files_are_results_of_this_format():
    for name in golden.DEMOS:
        typed = from_json(golden.demo_path(name).read_text(encoding="utf-8"))
        assert typed.format_version == FORMAT_VERSION
        assert [o.name for o in typed.outcomes]


@pytest.mark.parametrize("change, words", [
    (lambda t: t.update(format_version=1), "results format 1; this version reads 2"),
    (lambda t: t.update(surprise=1), "surprise: Unexpected keyword argument"),
    (lambda t: t["outcomes"][0].pop("tables"), "outcomes.0.tables: Field required"),
    (lambda t: t["outcomes"][0]["tables"][0]["rows"][0].update(p="small"),
     "outcomes.0.tables.0.rows.0.p: Input should be a valid number"),
])
def test_a_results_text_that_does_not_fit_is_refused_with_the_key(change, words):
    tree = json.loads(golden.demo_path("seed-coating").read_text(encoding="utf-8"))
    change(tree)
    with pytest.raises(ResultsFormatError) as caught:
        from_json(json.dumps(tree))
    assert words in str(caught.value)


def test_text_that_is_not_json_is_refused():
    with pytest.raises(ResultsFormatError, match="not JSON"):
        from_json('{"format_version": 2')


def test_a_rewrite_keeps_stored_numbers_that_agree_within_the_tolerance():
    """Last-bit noise (here 0.31646568403707376 against 0.3164656840370737, the same
    eta squared from two CPU kernels) keeps the stored digits; a real change, a new key
    and changed text are taken."""
    stored = json.dumps({"eta": 0.3164656840370737, "p": 0.12, "rows": [1.5, 2.5], "w": "a"},
                        sort_keys=True, indent=2) + "\n"
    fresh = json.dumps({"eta": 0.31646568403707376, "p": 0.0284521, "rows": [1.5, 2.5000000001],
                        "w": "b", "new": 2.0}, sort_keys=True, indent=2) + "\n"
    tree = json.loads(golden.settled(stored, fresh))
    assert tree == {"eta": 0.3164656840370737, "p": 0.0284521, "rows": [1.5, 2.5], "w": "b",
                    "new": 2.0}
    assert golden.settled(fresh, fresh) == fresh


def test_rewriting_the_nist_golden_file_changes_nothing():
    stored = golden.nist_path().read_text(encoding="utf-8")
    assert golden.settled(stored, golden.nist_text()) == stored
