"""A sentence is a claim: every phrase of the appendix that says something was done, is
shown, or holds "as registered" must have the object behind it in the results and the page.

The three invented demos are rendered (no PDF), plus the greenhouse demo with its
missing-occasion rule taken out of the study file, so that it holds by default (its
sums-of-squares type must stay: a model of several terms requires it). For each outcome section each claim phrase is paired with what backs
it; the test fails on a phrase whose object is missing, whatever template or module wrote it.
"""

from __future__ import annotations

import re
import shutil
from pathlib import Path

import pytest

from appendix import api
from appendix.results import StudyResults

STUDIES = Path(__file__).resolve().parents[2] / "studies"


def _defaulted_greenhouse(folder: Path) -> Path:
    shutil.copytree(STUDIES / "greenhouse-split", folder, ignore=shutil.ignore_patterns("__pycache__"))
    study = folder / "study.yaml"
    text = study.read_text(encoding="utf-8")
    assert "repeated:\n  missing: complete-units\n" in text
    text = text.replace("repeated:\n  missing: complete-units\n", "")
    study.write_text(text, encoding="utf-8")
    return study


@pytest.fixture(scope="module")
def rendered(tmp_path_factory, computed_demos) -> dict[str, tuple[StudyResults, str]]:
    """Name -> (results, HTML) of each rendered study."""
    computed = dict(computed_demos)
    computed["greenhouse-defaulted"] = api.compute(
        _defaulted_greenhouse(tmp_path_factory.mktemp("g") / "g"))
    return {name: (c.results, api.render(c).html) for name, c in computed.items()}


def _sections(html: str) -> dict[str, str]:
    """Each outcome's section of the page, by outcome name."""
    starts = [(m.group(1), m.start()) for m in re.finditer(r'<section id="outcome-([^"]+)"', html)]
    ends = [s for _, s in starts[1:]] + [html.index('<section id="methods"') if 'id="methods"' in html
                                         else len(html)]
    return {name: html[start:end] for (name, start), end in zip(starts, ends)}


CASES = ("seed-coating", "greenhouse-split", "wound-dose", "greenhouse-defaulted")


@pytest.mark.parametrize("name", CASES)
def test_each_claim_of_an_outcome_has_its_object(rendered, name):
    results, html = rendered[name]
    sections = _sections(html)
    assert set(sections) == {o.name for o in results.outcomes}
    for outcome in results.outcomes:
        page = sections[outcome.name]
        key = outcome.name
        if "Welch's test is shown alongside" in page:
            assert outcome.robust is not None and f'id="{key}-robust"' in page
            assert "Welch's heteroscedastic" in page
        if "see also the normal Q-Q plot" in page:
            assert f'id="figure-{key}-qq"' in page
        if "see the homogeneity-of-slopes check" in page:
            assert outcome.slopes and f'id="{key}-slopes"' in page
        if "selected by a pre-specified fallback rule (see below)" in page:
            assert outcome.contingencies and f'id="{key}-contingencies"' in page
        if "(see Diagnostics)" in page:
            assert f'id="{key}-diagnostics"' in page
        if "They select the analysis only through the pre-specified fallback rules" in page:
            assert outcome.contingencies
        if "Contrasts of a within-unit factor are tested on the units' own contrast scores" in page:
            within = {f.name for f in results.factors if f.role == "within"}
            assert any(h.factor in within for f in outcome.contrasts for h in f.hypotheses)
        if "A simple effect compares the levels within one level" in page:
            assert any(h.within for f in outcome.contrasts for h in f.hypotheses)
        # every figure the page numbers is drawn on the page
        for figure in re.findall(r'<figure id="figure-([^"]+)"', page):
            assert re.search(rf'<figure id="figure-{re.escape(figure)}" class="figure(?: forest)?">\s*'
                             r'<div class="figure-art"><svg', page), figure


def _defaults(results: StudyResults) -> set[str]:
    return {s.key for s in results.plan_settings if not s.stated}


@pytest.mark.parametrize("name", CASES)
def test_settings_table_says_the_source_of_every_plan_level_setting(rendered, name):
    results, html = rendered[name]
    text = " ".join(re.sub(r"<[^>]+>", " ", html).split())
    block = html[html.index('<span class="table-title">Analysis settings, as the study file states them'):]
    block = block[:block.index("</table>")]
    rows = {key: (value, source) for key, value, source in re.findall(
        r'<code>([^<]+)</code></td><td class="text">([^<]*)</td><td class="text">'
        r'(as registered|by default)</td>', block)}
    top = {s.key: s for s in results.plan_settings if "[" not in s.key}
    assert top and set(rows) == set(top)
    for key, (value, source) in rows.items():
        assert (value, source) == (top[key].value, "as registered" if top[key].stated else "by default"), key
    alpha = "as registered" if top["alpha"].stated else "by default"
    # the clause typeset as the sentences' are: in a nowrap span, with no-break spaces
    plain = re.sub(r"<[^>]+>", "", html)
    assert f"Every test uses the significance level \u03b1\u00a0=\u00a0.05, {alpha}" in plain


@pytest.mark.parametrize("name", CASES)
def test_as_registered_only_for_what_the_study_file_states(rendered, name):
    results, html = rendered[name]
    defaults = _defaults(results)
    text = " ".join(re.sub(r"<[^>]+>", " ", html).split())
    stated_ss = "design.sums_of_squares" not in defaults
    said = re.findall(r"Sums of squares are type \d \([^)]*\), (as registered|by default)", text)
    several = any(len(t.rows) > 1 or t.stratum != "units"
                  for o in results.outcomes for t in o.tables)
    assert bool(said) == several  # one term: every type gives the same table, none is named
    assert set(said) <= {"as registered" if stated_ss else "by default"}
    if any(t.sphericity for o in results.outcomes for t in o.tables):
        rule = "as registered" if "repeated.missing" not in defaults else "by default"
        assert f"complete units only, {rule}" in text
        assert f"complete units only, {'by default' if rule == 'as registered' else 'as registered'}" not in text


def test_the_defaulted_variant_names_its_defaults(rendered):
    results, html = rendered["greenhouse-defaulted"]
    assert "repeated.missing" in _defaults(results)
    assert "by default (the plan states no rule for missing occasions)" in html
    stated, _ = rendered["greenhouse-split"]
    assert "design.sums_of_squares" not in _defaults(stated)
    assert "repeated.missing" not in _defaults(stated)
