"""Repeated measures on one group of units (a within factor and no treatment factor), end
to end: study file and CSV in, results, results.json and HTML out.

The data are invented here (numpy seeded): the last within level varies far more than the
others, so the Greenhouse–Geisser epsilon lies well below 1.
"""

from __future__ import annotations

import json
import re

import numpy as np
import pandas as pd

from appendix.api import compute, render
from appendix.results import to_json

STUDY = """\
format: 1
study: {{id: invented-within-only, title: Invented repeated measures without a treatment factor}}
data: {{source: visits.csv, unit: unit_id}}
design:
  factors:
    - {{name: visit, label: visit, role: within, levels: [{levels}]}}
  sums_of_squares: 2
outcomes:
  - {{name: index, label: leaf index, role: primary}}
"""


def _within_only(tmp_path, seed: int, levels: int = 4, shift: float = 1.5):
    """Invented data: 12 units at `levels` visits, the last visit's spread 13 times the
    others', its mean shifted by `shift`; returns the computed run."""
    rng = np.random.default_rng(seed)
    names = [f"day{7 * (j + 1)}" for j in range(levels)]
    sd = np.full(levels, 0.3)
    sd[-1] = 4.0
    mean = np.zeros(levels)
    mean[-1] = shift
    y = 30 + rng.normal(0, 2, size=(12, 1)) + mean + rng.normal(0, 1, size=(12, levels)) * sd
    rows = [(f"U{u:02d}", names[j], f"{y[u, j]:.3f}") for u in range(12) for j in range(levels)]
    pd.DataFrame(rows, columns=["unit_id", "visit", "index"]).to_csv(tmp_path / "visits.csv", index=False)
    (tmp_path / "study.yaml").write_text(STUDY.format(levels=", ".join(names)), encoding="utf-8")
    return compute(tmp_path / "study.yaml")


def _within_row(model):
    return next(r for r in model.tables[1].rows if r.term == ("visit",))


def test_the_effect_interval_is_on_the_corrected_df_and_the_appendix_says_so(tmp_path):
    decisions = set()
    for seed in range(12):
        computed = _within_only(tmp_path, seed)
        (model,) = computed.results.outcomes
        row = _within_row(model)
        assert model.tables[1].sphericity.greenhouse_geisser < 0.5
        (sentence,) = [c.sentence for c in model.conclusions]
        stated = re.search(r"partial η² = \S+ \(90% CI \[([.\d]+), ([.\d]+)\]\)", sentence)
        rejected = "is rejected" in sentence
        # the stated interval excludes zero exactly when the corrected test rejects
        assert (row.partial_eta_ci_low > 0) == rejected == (row.gg_p < 0.05), sentence
        assert stated is not None and "Greenhouse–Geisser corrected" in sentence
        assert row.effect_ci_df == row.gg_df
        decisions.add(rejected)
    assert decisions == {True, False}
    html = " ".join(render(computed).html.split())
    assert ("for within-unit terms on the Greenhouse–Geisser corrected degrees of freedom, "
            "those of the test used, so that each excludes zero exactly when its F test "
            "rejects") in html.replace("<i>F</i>", "F")
    assert "inverts the noncentral F distribution on those corrected" in html
    assert json.loads(to_json(computed.results))["outcomes"][0]["tables"][1]["rows"][0][
        "effect_ci_df"] == list(row.gg_df)


def test_two_levels_are_not_called_corrected_and_the_note_says_why(tmp_path):
    computed = _within_only(tmp_path, 1, levels=2)
    (model,) = computed.results.outcomes
    row = _within_row(model)
    assert (row.gg_df, row.gg_p, row.hf_df, row.hf_p) == (None, None, None, None)
    assert row.effect_ci_df == (1.0, 11.0)
    (sentence,) = [c.sentence for c in model.conclusions]
    assert sentence.startswith("Visit (leaf index): F(1, 11) = ")
    assert "corrected" not in sentence and "Greenhouse" not in sentence
    html = " ".join(render(computed).html.split())
    # no corrected column, note, claim or reference anywhere in the appendix
    assert "Greenhouse" not in html and "Huynh" not in html and "Mauchly, J. W." not in html
    assert ("With two levels of the within factor there is a single contrast between them, so "
            "sphericity holds trivially and the within-unit tests need no correction") in html
    assert "Visit has two levels, so there is a single contrast between them and sphericity holds trivially" in html
    assert "The within factor has two levels, so there is a single contrast" in html


def _warning_messages(node):
    """Every warning message anywhere in parsed results.json."""
    if isinstance(node, dict):
        for key, value in node.items():
            if key == "warnings":
                yield from (w["message"] for w in value)
            else:
                yield from _warning_messages(value)
    elif isinstance(node, list):
        for value in node:
            yield from _warning_messages(value)


def test_no_internal_name_reaches_the_warnings_of_a_design_without_a_treatment(tmp_path):
    # Without a treatment factor the engine groups all units in one cell of its own
    # making (named "all" in appendix/models.py); a reader must never meet that name.
    computed = _within_only(tmp_path, 2)
    results = json.loads(to_json(computed.results))
    messages = list(_warning_messages(results))
    assert all("'all'" not in m and "single level" not in m for m in messages), messages
    quoted = {name for m in messages for name in re.findall(r"[Ff]actor '([^']+)'", m)}
    assert quoted <= {"visit"}
    html = render(computed).html
    assert "'all'" not in html and "&#39;all&#39;" not in html and "single-level" not in html
