"""The reporting elements a reviewer looks for (CONSORT 2025 flow diagram and baseline
table; one overview of the registered hypotheses; lists of tables and figures), checked
on the three invented demos, each computed and rendered once per session.

The baseline means and the analysed counts are checked against pandas (2.x) reading the
demo's CSV file on its own: groupby on the rows the plan analyses, an oracle that is not
the code under test.
"""

from __future__ import annotations

import html as _html
import re
from pathlib import Path

import pandas as pd
import pytest

from appendix import numbers
from appendix.data.flow import with_shortfall
from appendix.figure_spec import UNIT_FLOW_FIGURE
from appendix.plan.model import PlannedN
from appendix.render import RenderOptions, render_html
from appendix.results import LevelCount, OutcomeFlow, UnitFlow, to_plain
from render_helpers import changed

STUDIES = Path(__file__).resolve().parents[2] / "studies"
DEMOS = ("seed-coating", "greenhouse-split", "wound-dose")


def _text(markup: str) -> str:
    return " ".join(_html.unescape(re.sub(r"<[^>]+>", " ", markup)).split())


def _element(page: str, start: str, end: str) -> str:
    i = page.index(start)
    return page[i:page.index(end, i)]


def _svg_lines(svg: str) -> list[str]:
    return [_html.unescape(t).strip() for t in re.findall(r"<text[^>]*>([^<]*)", svg)]


# --- the unit-flow diagram and table -------------------------------------------------


@pytest.mark.parametrize("name", DEMOS)
def test_flow_figure_boxes_carry_the_unit_flow_counts(computed_demos, rendered_demos, name):
    results = computed_demos[name].results
    flow = results.unit_flow
    svg = rendered_demos[name].figures[UNIT_FLOW_FIGURE]
    lines = _svg_lines(svg)
    text = " ".join(lines)
    assert lines[0] == f"Read from the data: {sum(c.n for c in flow.read)} units"
    excluded = sum(x.total for x in flow.exclusions)
    assert sum(c.n for c in flow.read) - sum(c.n for c in flow.eligible) == excluded
    if flow.exclusions:
        assert f"Excluded by a registered rule: {excluded}" in lines
        for x in flow.exclusions:
            assert f"{x.rule} (" in text and text.count(f"): {x.total}") >= 1
    else:
        assert "Excluded: 0 (the plan registers no exclusion" in text
    groups = lambda counts: ", ".join(f"{c.level}: {c.n}" for c in counts)  # noqa: E731
    assert (f"Eligible for analysis: {sum(c.n for c in flow.eligible)} units, by group "
            f"{groups(flow.eligible)}") in text
    labels = {o.name: o.label for o in results.outcomes}
    for o in flow.outcomes:
        label = labels[o.outcome]
        block = (f"Missing a value: {sum(c.n for c in o.missing)} Analysed: "
                 f"{sum(c.n for c in o.analysed)} units, by group {groups(o.analysed)}")
        assert block in text, (label, block)
    # drawn in the shipped sans, named as the other figures name it
    assert set(re.findall(r"font-family: ([^;\"]+)", svg)) == {"'Appendix Sans', sans-serif"}
    assert '<title id="unit-flow-title">Flow of units</title>' in svg


@pytest.mark.parametrize("name", DEMOS)
def test_flow_figure_sits_in_the_flow_section_with_its_number(rendered_demos, name):
    page = rendered_demos[name].html
    section = _element(page, '<section id="unit-flow">', "</section>")
    assert '<figure id="figure-unit-flow"' in section
    assert section.index('<figure id="figure-unit-flow"') < section.index('<table class="journal flow"')
    assert '<span class="figure-number">Figure 1.</span>' in section


def test_flow_table_groups_each_outcome_with_counts_from_pandas(computed_demos, rendered_demos):
    """seed-coating: rule X1 drops damaged == yes; a missing value leaves the unit out of
    that outcome only; 12 planned per group."""
    frame = pd.read_csv(STUDIES / "seed-coating" / "data" / "units.csv", dtype=str,
                        keep_default_na=False)
    eligible = frame[frame["damaged"].str.strip() != "yes"]
    results = computed_demos["seed-coating"].results
    levels = list(results.factor.levels)
    table = _element(rendered_demos["seed-coating"].html, '<table class="journal flow"', "</table>")
    bodies = re.findall(r'<tbody class="flow-outcome">(.*?)</tbody>', table, re.S)
    assert len(bodies) == len(results.outcomes) == 2
    columns = {"dry_mass": "shoot_dry_mass_mg", "chlorophyll": "chlorophyll_index"}
    for body, o in zip(bodies, sorted(results.outcomes, key=lambda o: o.role != "primary")):
        rows = [_text(r) for r in re.findall(r"<tr.*?</tr>", body, re.S)]
        # the missing-value spellings of docs/study-file.md
        present = ~eligible[columns[o.name]].str.strip().isin(["", "NA", "N/A", "NaN", "nan", "."])
        analysed = eligible[present].groupby("coating").size().reindex(levels, fill_value=0)
        missing = eligible.groupby("coating").size().reindex(levels, fill_value=0) - analysed
        short = (12 - analysed).clip(lower=0)
        line = lambda s: " ".join(map(str, s.tolist())) + f" {int(s.sum())}"  # noqa: E731
        assert rows == [o.label[:1].upper() + o.label[1:], f"Missing a value {line(missing)}",
                        f"Analysed {line(analysed)}", f"Short of the planned number {line(short)}"]


def test_shortfall_is_computed_by_the_data_stage():
    flow = UnitFlow((), (), (), (OutcomeFlow("y", (), (LevelCount("a", 10), LevelCount("b", 13))),))
    per_group = with_shortfall(flow, PlannedN(per_group=12)).outcomes[0]
    assert per_group.short == (LevelCount("a", 2), LevelCount("b", 0)) and per_group.short_in_all == 2
    total = with_shortfall(flow, PlannedN(total=30)).outcomes[0]
    assert total.short == () and total.short_in_all == 7
    both = with_shortfall(flow, PlannedN(per_group=12, total=20)).outcomes[0]
    assert [c.n for c in both.short] == [2, 0] and both.short_in_all == 0
    assert with_shortfall(flow, None) is flow


def test_results_carry_the_shortfall(computed_demos):
    plain = to_plain(computed_demos["wound-dose"].results)
    for o in plain["unit_flow"]["outcomes"]:
        assert [c["n"] for c in o["short"]] == [max(12 - c["n"], 0) for c in o["analysed"]]
        assert o["short_in_all"] == sum(c["n"] for c in o["short"])


# --- every registered hypothesis in one table ------------------------------------------


@pytest.mark.parametrize("name", DEMOS)
def test_hypotheses_table_rows_equal_the_contrast_results(computed_demos, rendered_demos, name):
    results = computed_demos[name].results
    plain = to_plain(results)
    page = rendered_demos[name].html
    summary = _element(page, '<section id="summary">', "</section>")
    table = _element(summary, '<table class="journal hypotheses"', "</table>")
    rows = [_text(r) for r in re.findall(r'<tr class="hypothesis[^"]*">(.*?)</tr>', table, re.S)]
    words = {"reject": "rejected", "retain": "not rejected",
             "not-tested": "not tested under the plan", "unavailable": "unavailable"}
    outcomes = sorted(plain["outcomes"], key=lambda o: o["role"] != "primary")
    expected = [(h["label"], numbers.p_value(h["p_adjusted"]), words[h["decision"]], h["estimate"])
                for o in outcomes for f in o["contrasts"] if f["registered"] for h in f["hypotheses"]]
    assert len(rows) == len(expected) > 0
    for row, (label, p, decision, estimate) in zip(rows, expected):
        assert row.startswith(label + " ")
        assert row.endswith(f" {p} {decision}")
        shown = float(row[len(label):].split()[0].replace("\u2212", "-"))
        assert abs(shown - estimate) <= 0.051  # one decimal shown for these demos' means
    heads = [_text(h) for h in re.findall(r'<tr class="outcome-head">(.*?)</tr>', table, re.S)]
    assert [h.split(":")[0].strip() for h in heads] == [
        f"{o['role'].capitalize()}, {o['label']}" + (f" ({o['unit']})" if o["unit"] else "")
        for o in outcomes]
    assert all("p adjusted by" in h and "over this outcome's" in h for h in heads)


def test_an_outcome_without_contrasts_shows_its_omnibus_test(study_results, figures):
    bare = changed(study_results, "outcomes[0]", contrasts=())
    page = render_html(bare, figures, RenderOptions())
    table = _element(page, '<table class="journal hypotheses"', "</table>")
    rows = [_text(r) for r in re.findall(r'<tr class="omnibus[^"]*">(.*?)</tr>', table, re.S)]
    # the fixture's pain score: F undefined, so its decision is unavailable
    assert rows == ["Treatment arm: F test \u2014 \u2014 \u2014 (unadjusted) unavailable"]


# --- lists of tables and figures ---------------------------------------------------------


def _listed(listing: str, word: str) -> tuple[dict[str, tuple[str, str, bool]], dict[str, str]]:
    """A list of the contents read back: by number, each entry's (anchor, title, False), or
    for an entry listed by number only (anchor, the outcome it is titled like, True); and by
    number, the outcome group each stands under."""
    titled: dict[str, tuple[str, str, bool]] = {}
    under: dict[str, str] = {}
    group = ""
    for item in re.findall(r"<li[^>]*>(.*?)</li>", listing, re.S):
        entry = re.fullmatch(rf'<a href="#([^"]+)"><span class="entry-number">{word} (\d+)</span> (.*?)</a>',
                             item.strip(), re.S)
        if entry:
            anchor, number, title = entry.groups()
            titled[number] = (anchor, _text(title), False)
            under[number] = group
        elif ": titled as for " in item:
            like = _text(item).split(": titled as for ")[1]
            for anchor, n in re.findall(r'<a href="#([^"]+)">(\d+)</a>', item):
                titled[n] = (anchor, like, True)
                under[n] = group
        else:
            group = _text(item)
    return titled, under


def _like(title: str, label: str) -> str:
    return re.sub(re.escape(label), "@", title, flags=re.IGNORECASE)


@pytest.mark.parametrize("name", DEMOS)
def test_lists_of_tables_and_figures_follow_the_captions(rendered_demos, name):
    page = rendered_demos[name].html
    contents = _element(page, '<nav id="contents"', "</nav>")
    body = page[page.index("</nav>"):]
    captions = re.findall(r'<caption id="(table-\d+)"><span class="table-number">Table (\d+)'
                          r'</span><span class="table-title">(.*?)</span>', body, re.S)
    lists = re.findall(r'<ol class="list-of">(.*?)</ol>', contents, re.S)
    assert len(lists) == 2
    tables, under = _listed(lists[0], "Table")
    # every table is listed once, in order: with its caption's title, or by number under
    # an outcome whose entry of the same title (that outcome's label for this one's) is listed
    assert sorted(tables, key=int) == [n for _, n, _ in captions] == \
        [str(i) for i in range(1, len(captions) + 1)]
    by_title = {n: _text(t) for _, n, t in captions}
    for anchor, number, _ in captions:
        listed_anchor, title, alike = tables[number]
        assert listed_anchor == anchor
        if not alike:
            assert title == by_title[number]
        else:
            pattern = _like(by_title[number], under[number])
            assert pattern in {_like(by_title[n], title) for n, g in under.items()
                               if g.lower() == title.lower() and not tables[n][2]}
    if name == "wound-dose":  # three outcomes of one design: the later two list mostly numbers
        assert sum(alike for _, _, alike in tables.values()) >= 10
    figures = re.findall(r'<figure id="([^"]+)"[^>]*>.*?<span class="figure-number">Figure (\d+)\.',
                         body, re.S)
    listed, _ = _listed(lists[1], "Figure")
    assert sorted(listed, key=int) == [n for _, n in figures]
    assert [(a, n) for n, (a, _, _) in sorted(listed.items(), key=lambda i: int(i[0]))] == \
        [(a, n) for a, n in figures]
    assert listed["1"][0] == "figure-unit-flow"


# --- baseline values by group -------------------------------------------------------------


def test_wound_dose_baselines_equal_pandas_groupby(computed_demos, rendered_demos):
    """Rule X1 drops dressing_lost == yes; an outcome's analysed units have its value."""
    frame = pd.read_csv(STUDIES / "wound-dose" / "data" / "animals.csv")
    eligible = frame[frame["dressing_lost"] != "yes"]
    results = computed_demos["wound-dose"].results
    columns = {"wound_area": "wound_area_d7_mm2", "reepithelialisation": "reepithelialisation_pct",
               "granulation": "granulation_um"}
    levels = list(results.factor.levels)
    assert [b.outcomes for b in results.baselines] == [("wound_area",), ("reepithelialisation",),
                                                       ("granulation",)]
    for b in results.baselines:
        analysed = eligible[eligible[columns[b.outcomes[0]]].notna()]
        grouped = analysed.groupby("dose")["wound_area_d0_mm2"]
        assert [g.level for g in b.groups] == levels
        assert [g.n for g in b.groups] == grouped.count().reindex(levels).tolist()
        assert [g.mean for g in b.groups] == pytest.approx(grouped.mean().reindex(levels).tolist(), rel=1e-12)
        assert [g.sd for g in b.groups] == pytest.approx(grouped.std(ddof=1).reindex(levels).tolist(), rel=1e-12)
    section = _text(_element(rendered_demos["wound-dose"].html, '<section id="baselines">', "</section>"))
    first = results.baselines[0].groups[0]
    assert (f"Wound area at day 0 (mm²): units analysed for wound area at day 7 Mean (SD) "
            f"{first.mean:.1f} ({first.sd:.1f})") in section


def test_split_plot_baselines_count_each_unit_once(computed_demos):
    """greenhouse-split: complete units only (a pot missing a reading at any visit is left
    out); the baseline is one value per pot, repeated on each visit's row."""
    frame = pd.read_csv(STUDIES / "greenhouse-split" / "data" / "pots.csv")
    results = computed_demos["greenhouse-split"].results
    visits = frame["visit"].nunique()
    complete = frame.groupby("pot_id").filter(
        lambda pot: pot["chlorophyll_index"].notna().sum() == visits)
    per_pot = complete.groupby("pot_id").first()
    grouped = per_pot.groupby("coating")["baseline_height_mm"]
    levels = list(results.factor.levels)
    (b,) = results.baselines
    assert [g.n for g in b.groups] == grouped.count().reindex(levels).tolist()
    assert [g.mean for g in b.groups] == pytest.approx(grouped.mean().reindex(levels).tolist(), rel=1e-12)
    assert [g.sd for g in b.groups] == pytest.approx(grouped.std(ddof=1).reindex(levels).tolist(), rel=1e-12)


def test_no_baseline_table_without_covariates(computed_demos, rendered_demos):
    assert computed_demos["seed-coating"].results.baselines == ()
    assert 'id="baselines"' not in rendered_demos["seed-coating"].html


# --- exclusion rules in words, their conditions in Methods ----------------------------

#: Each demo's registered exclusion rule: its data column and the value that excludes, as
#: its study.yaml writes them (greenhouse-split registers none).
EXCLUSION_COLUMNS = {"seed-coating": ("damaged", "yes"), "wound-dose": ("dressing_lost", "yes")}


@pytest.mark.parametrize("name", sorted(EXCLUSION_COLUMNS))
def test_the_flow_names_exclusions_by_reason_and_methods_states_their_condition(
        computed_demos, rendered_demos, name):
    column, value = EXCLUSION_COLUMNS[name]
    (rule,) = computed_demos[name].results.unit_flow.exclusions
    page = rendered_demos[name].html
    flow = _text(_element(page, '<section id="unit-flow">', "</section>"))
    assert f"Excluded by X1: {rule.reason}" in flow
    assert column not in flow and f"= {value}" not in flow
    assert ("Each exclusion rule is named by its registered reason; Methods (Registered "
            "exclusion rules) states the data condition of each.") in flow
    # the excluded units counted by pandas on the demo's CSV file: one row per unit
    frame = pd.read_csv(STUDIES / name / computed_demos[name].loaded.plan.data.source, dtype=str)
    excluded = int((frame[column].str.strip() == value).sum())
    assert excluded == rule.total > 0
    methods = _text(_element(page, '<section id="methods">', "</section>"))
    assert (f"Registered exclusion rules. Units are set aside only by the exclusion rules the "
            f"plan registers, applied in plan order before any analysis, each unit under the "
            f"first rule it meets: rule X1 ({rule.reason}) sets aside every unit with a row "
            f"whose {column} cell reads “{value}”, {excluded} units here.") in methods


def test_methods_state_no_exclusion_rule_where_the_plan_registers_none(rendered_demos):
    page = rendered_demos["greenhouse-split"].html
    assert "Registered exclusion rules" not in page
    assert "The plan registers no exclusion rule." in page


# --- means named by the treatment factors ------------------------------------------------


@pytest.mark.parametrize("name, factors", [("seed-coating", "seed coating"), ("wound-dose", "dose of ZQ-118")])
def test_means_captions_name_the_treatment_factor_by_its_label(computed_demos, rendered_demos, name, factors):
    page = rendered_demos[name].html
    results = computed_demos[name].results
    assert [f.label for f in results.factors if f.role == "treatment"] == [factors]
    text = _text(page)
    titles = [_text(t) for t in re.findall(r"<(?:figcaption|caption|h[2-4])\b.*?</(?:figcaption|caption|h[2-4])>",
                                             page, re.S)]
    assert titles and not [t for t in titles if "group means" in t.lower() or "cell means" in t.lower()]
    for o in results.outcomes:
        assert f"Means of {o.label} by {factors}" in text
        if o.robust is not None:  # one factor: its effect sizes are of the differences of means
            assert f"Effect sizes for the differences between the means by {factors}" in text
