"""Planned contrasts, registered contingencies, exploratory analyses and deviations in the
appendix HTML.

Values asserted are those of the INVENTED fixture of conftest.py, whose contrasts are
computed there with numpy/scipy by the textbook formulas; these tests check what the
appendix shows of them and how, not the statistics.
"""

from __future__ import annotations

import re

import dataclasses

import pytest
from render_helpers import at, changed, journal_tables, parse, squash

from appendix.methods import methods_used, references_for
from appendix.render import RenderOptions, render_html

M = "\u2212"
WELCH = ("Planned contrasts of Change in systolic blood pressure, Welch (unequal variances) "
         "analysis")
CLASSICAL = ("Planned contrasts of Change in systolic blood pressure, classical (pooled "
             "variance) analysis")
PAIN = "Planned contrasts of Pain score, classical (pooled variance) analysis"
EXPLORATORY = ("Exploratory contrasts of Change in systolic blood pressure, classical (pooled "
               "variance) analysis")
CONTRAST_KEYS = {"contrasts-classical", "contrasts-welch", "contrasts-rank", "trend", "helmert",
                 "tukey", "games-howell", "nemenyi", "dunnett", "dunnett-welch", "dunnett-rank",
                 "bonferroni", "sidak", "holm", "hochberg",
                 "benjamini-hochberg", "fixed-sequence", "graphical", "unadjusted", "hedges",
                 "one-sided"}


@pytest.fixture(scope="module")
def tables(page):
    return journal_tables(page)


def _body(rows, prefix="hypothesis"):
    return [cells for cls, cells in rows if cls and cls.startswith(prefix)]


def _notes(page, cls="table-note"):
    return [squash(p.text) for p in page.by_tag("p") if p.attrs.get("class") == cls]


def _section(page, section_id):
    return next(e for e in page.elements if e.attrs.get("id") == section_id)


def _without_contrasts(results):
    """The results of a one-way plan without contrasts, fallbacks or exploratory
    analyses (the shape of results before issue 3)."""
    outcomes = tuple(dataclasses.replace(o, contrasts=(), contingencies=(),
                                         hypothesis_conclusions=(), selected_method="classical")
                     for o in results.outcomes)
    return dataclasses.replace(results, outcomes=outcomes, exploratory=(), deviations=(),
                               multiplicity=None, multiplicity_scope=None)


def _with_hypotheses(results, path, family=None, **fields):
    """`results` with every hypothesis of the family at `path` changed by `fields`, and
    the family itself by `family`."""
    hypotheses = at(results, path).hypotheses
    return changed(results, path, **(family or {}), hypotheses=tuple(
        dataclasses.replace(h, **fields) for h in hypotheses))


def test_registered_family_rows_show_every_column_formatted(tables):
    assert _body(tables[WELCH]) == [
        ["active doses versus placebo C1", f"{M}5.29", f"[{M}9.14, {M}1.45]",
         f"t(17.38) = {M}2.90", ".010", ".010", f"{M}1.11", "rejected"],
        # the slope per step, half the high dose minus placebo difference (7.68 / 2)
        ["linear trend C2:linear one-sided, H1: estimate < 0", f"{M}3.84", f"[{M}\u221e, {M}1.97]",
         f"t(13.51) = {M}3.62", ".001", ".010", f"{M}0.81", "rejected"],
        [f"low dose {M} placebo C3:low dose", f"{M}2.91", f"[{M}7.84, 2.01]",
         f"t(12.86) = {M}1.28", ".223", ".223", f"{M}0.61", "not rejected"],
        [f"high dose {M} placebo C3:high dose", f"{M}7.68", f"[{M}12.24, {M}3.11]",
         f"t(13.51) = {M}3.62", ".003", "\u2014", f"{M}1.62", "not tested under the plan"],
    ]
    header = tables[WELCH][0][1]
    assert header == ["Hypothesis", "Estimate (mmHg)", "95% CI", "Test statistic", "p",
                      "Adjusted p", "Hedges' g", "Decision"]
    # the classical family: integer df of the pooled variance
    assert [row[3] for row in _body(tables[CLASSICAL])][:2] == [f"t(21) = {M}2.67",
                                                                 f"t(21) = {M}3.35"]


def test_registered_and_comparison_families_are_marked(page):
    marks = [squash(e.text) for e in page.elements if e.attrs.get("class") == "table-mark"]
    # the secondary outcome has a single family and the exploratory one is apart: no mark
    assert marks == ["Registered result", "Shown for comparison, not the registered result"]
    text = squash(_section(page, "sbp_change-contrasts").text)
    assert "Analysis used: Welch (unequal variances), selected by a pre-specified fallback " \
           "rule (see below)." in text
    assert "in force" not in text and "contingency" not in text


def test_family_note_names_method_multiplicity_scope_and_interval_kind(page):
    note = next(n for n in _notes(page) if "Welch\u2013Satterthwaite" in n)
    assert note.startswith("Note. Estimates are weighted sums of the group means; t on "
                           "Welch\u2013Satterthwaite degrees of freedom")
    assert ("Adjusted p: fixed-sequence testing in the registered order, across this "
            "outcome's hypotheses; decisions at \u03b1 = .05 on the adjusted p.") in note
    assert ("95% confidence intervals are not adjusted for multiplicity (not simultaneous). No "
            "simultaneous intervals compatible with fixed-sequence testing are computed, so each "
            "interval is the unadjusted one at level 1 \u2212 \u03b1, from the reference "
            "distribution and degrees of freedom of the test beside it.") in note
    assert "their intervals are open (\u221e) on the side" in note
    assert "Not tested under the plan: the fixed sequence stopped" in note
    assert "(Hedges, 1981)." in note
    assert ("Trend estimates are not differences of means. Linear trend: the least-squares "
            "slope per step between adjacent levels of dose (mmHg per step). Their t and p do "
            "not depend on this scale.") in note


def test_simultaneous_intervals_are_stated(study_results, figures):
    family = study_results.outcomes[1].contrasts[0]
    tukey = _with_hypotheses(study_results, "outcomes[1].contrasts[0]",
                             {"multiplicity": "tukey"}, ci_simultaneous=True)
    note = next(n for n in _notes(parse(render_html(tukey, figures, RenderOptions())))
                if "Welch\u2013Satterthwaite" in n)
    assert "Adjusted p: Games\u2013Howell single-step, across this outcome's hypotheses" in note
    n = len(family.hypotheses)
    assert (f"95% confidence intervals hold simultaneously for all {n} hypotheses of the family, "
            "approximately (Games\u2013Howell).") in note
    assert "not simultaneous" not in note


def test_unavailable_hypothesis_shows_dashes_and_its_reason(tables, page):
    # no standardized effect anywhere in the family: no Hedges' g column
    assert tables[PAIN][0][1][-2:] == ["Adjusted p", "Decision"]
    assert _body(tables[PAIN]) == [["active doses versus placebo C1", "0.00", "\u2014",
                                    "\u2014", "\u2014", "\u2014", "unavailable"]]
    assert ("\u2014 Active doses versus placebo (unavailable): within-variance-zero: Every "
            "group's values are identical, so F is undefined.") in _notes(page, "table-note gap")
    # the forest plot's place is with the outcome's other figures
    missing = squash(_section(page, "pain-figures").text)
    assert "Not drawn: the forest plot of the contrasts" in missing


def test_rank_based_family_is_in_mean_ranks(study_results, figures):
    ranks = _with_hypotheses(study_results, "outcomes[1].contrasts[0]", {"method": "rank-based"},
                             statistic_name="z", df=None, standardized=None)
    page = parse(render_html(ranks, figures, RenderOptions()))
    title = WELCH.replace("Welch (unequal variances)", "rank-based (Dunn)")
    table = journal_tables(page)[title]
    assert table[0][1][1] == "Difference in mean ranks"
    assert _body(table)[0][3] == f"z = {M}2.90"
    note = next(n for n in _notes(page) if "mean ranks; z from Dunn's (1964)" in n)
    assert "Hedges" not in note


def test_contingencies_list_each_rule_and_whether_it_fired(page):
    contingency = journal_tables(page)[
        "Pre-specified fallback rules for Change in systolic blood pressure and whether they "
        "were applied"]
    assert contingency[0][1] == ["Rule", "Condition", "Test", "p", "Threshold", "Applied",
                                 "Analysis if applied"]
    assert _body(contingency, "contingency") == [
        ["assumptions.fallbacks[0]", "non-normal errors", "Shapiro\u2013Wilk", ".684", ".05",
         "not applied", "rank-based (Dunn)"],
        ["assumptions.fallbacks[1]", "unequal variances", "Brown\u2013Forsythe", ".031", ".05",
         "applied", "Welch (unequal variances)"],
    ]
    pain_rows = _body(journal_tables(page)[
        "Pre-specified fallback rules for Pain score and whether they were applied"],
        "contingency")
    assert [row[3:6] for row in pain_rows] == [["\u2014", ".05", "not evaluated"]] * 2
    pain = squash(_section(page, "pain-contingencies").text)
    assert "Not evaluated: the rule's test" in pain
    assert "Analysis used for this outcome: classical (pooled variance)." in pain
    assert not {"fire", "fired", "force"} & set(re.findall(r"\w+", pain))


def test_deviations_are_listed_with_acknowledgement(page, study_results, figures):
    rows = _body(journal_tables(page)[
        "Departures from the registered plan and pre-specified fallback rules applied"],
        "deviation")
    assert rows == [["Pre-specified fallback rule applied", "sbp_change",
                     "Brown\u2013Forsythe p = .031 < .05 on the primary outcome: the registered "
                     "fallback put the Welch analysis in force; the classical analysis is shown "
                     "for comparison.", "yes",
                     "Fallback assumptions.fallbacks[1] of the registered plan."]]
    pending = changed(study_results, "deviations[0]", acknowledged=False, justification=None)
    rows = _body(journal_tables(parse(render_html(pending, figures, RenderOptions())))[
        "Departures from the registered plan and pre-specified fallback rules applied"],
        "deviation")
    assert rows[0][3:] == ["no, not acknowledged", "none given"]


def test_hypothesis_conclusions_in_the_summary_once_but_not_exploratory(page, html):
    sentence = ("The hypothesis C3:high dose (high dose \u2212 placebo) is not tested under the "
                "fixed sequence.")
    summary = squash(_section(page, "summary").text)
    assert sentence in summary and html.count(sentence) == 1
    # the outcome's section sends the reader to the summary rather than repeating it
    assert squash(_section(page, "sbp_change-conclusion").text) == (
        "Conclusions The 5 conclusions on Change in systolic blood pressure are stated once, "
        "in the summary of conclusions, from the results above.")
    assert "The hypothesis C1 (active doses versus placebo) is rejected, adjusted p = .010." \
        in summary
    assert "E1" not in summary and "all pairs of arms" not in summary
    assert "steering committee" not in summary


def test_exploratory_section_gives_reason_and_table_after_the_outcomes(page, tables):
    section = squash(_section(page, "exploratory-E1").text)
    assert section.startswith("E1: all pairs of arms Reason stated: requested by the steering "
                              "committee after unblinding")
    rows = _body(tables[EXPLORATORY])
    assert [r[0] for r in rows] == [f"low dose {M} placebo E1:low dose-placebo",
                                    f"high dose {M} placebo E1:high dose-placebo",
                                    f"high dose {M} low dose E1:high dose-low dose"]
    assert len(rows[0]) == 7  # no adjusted p column without multiplicity adjustment
    note = next(n for n in _notes(page) if "No multiplicity adjustment" in n)
    assert "95% confidence intervals, unadjusted." in note
    heading = next(e for e in page.by_tag("h2") if e.text.startswith("Exploratory"))
    assert heading.text == "Exploratory analyses (not pre-registered)"


def test_sections_come_in_order_and_contents_follow_them(page):
    ids = page.ids()
    for name in ("sbp_change", "pain"):
        parts = [ids.index(f"{name}-{part}") for part in (
            "robust", "contrasts", "contingencies", "effects")]
        assert parts == sorted(parts)
    assert (ids.index("findings") < ids.index("deviations") < ids.index("outcome-sbp_change")
            < ids.index("pain-conclusion") < ids.index("exploratory") < ids.index("methods"))
    links = [e.attrs["href"][1:] for e in page.elements
             if e.tag == "a" and (e.attrs.get("href") or "").startswith("#")
             and e.attrs.get("class") != "summary-ref"  # the contents' links to sections
             and not e.attrs["href"].startswith(("#table-", "#figure-"))]
    assert [i for i in links if "contrasts" in i or "contingencies" in i or "xplor" in i] == [
        "sbp_change-contrasts", "sbp_change-contingencies", "pain-contrasts",
        "pain-contingencies", "exploratory", "exploratory-E1"]
    assert [ids.index(link) for link in links] == sorted(ids.index(link) for link in links)


def _headings_have_content(page) -> None:
    for section in page.by_tag("section"):
        heading = next(e for e in page.elements[page.elements.index(section):]
                       if e.tag in {"h2", "h3"})
        assert len(squash(section.text)) > len(squash(heading.text)) + 10, section.attrs


def test_plan_without_contrasts_renders_as_before(study_results, page):
    bare = parse(render_html(_without_contrasts(study_results), {}, RenderOptions()))
    ids = bare.ids()
    assert not [i for i in ids if "contrasts" in i or "contingencies" in i or "xplor" in i]
    headings = {squash(e.text) for e in bare.elements if e.tag in {"h2", "h3"}}
    assert not {"Planned contrasts", "Pre-specified fallback rules",
                "Exploratory analyses (not pre-registered)"} & headings
    assert "None detected: no pre-specified fallback rule was applied." in squash(
        _section(bare, "deviations").text)
    assert not [e for e in bare.by_tag("ul") if e.attrs.get("class") == "hypothesis-conclusions"]
    tables = [e for e in bare.elements if e.attrs.get("class") == "table-number"]
    # as many as the one-way slice had, and the table of every hypothesis across outcomes
    assert len(tables) == 14
    _headings_have_content(bare)
    _headings_have_content(page)


def test_labels_reasons_and_messages_are_escaped(study_results, figures):
    hostile = changed(study_results, "outcomes[1].contrasts[0].hypotheses[0]",
                      label="<img src=x onerror=alert(4)>")
    hostile = changed(hostile, "outcomes[1].contingencies[0]", rule="<i>rule</i>")
    hostile = changed(hostile, "exploratory[0]", reason="<script>alert(5)</script>")
    hostile = changed(hostile, "deviations[0]", message="<b onclick=x>moved</b>")
    hostile = changed(hostile, "outcomes[1].hypothesis_conclusions[0]", parts=("<u>said</u>",))
    html = render_html(hostile, figures, RenderOptions())
    for raw in ("<img src=x", "<i>rule</i>", "<script>", "<b onclick", "<u>said"):
        assert raw not in html
    assert "&lt;img src=x onerror=alert(4)&gt;" in html
    assert "&lt;script&gt;alert(5)&lt;/script&gt;" in html
    page = parse(html)
    assert not page.by_tag("script") and not page.by_tag("img") and not page.by_tag("u")


def _set_families(results, multiplicity, method):
    def each(families):
        return tuple(dataclasses.replace(f, multiplicity=multiplicity, method=method)
                     for f in families)

    outcomes = tuple(dataclasses.replace(o, contrasts=each(o.contrasts)) for o in results.outcomes)
    exploratory = tuple(dataclasses.replace(e, families=each(e.families))
                        for e in results.exploratory)
    return dataclasses.replace(results, outcomes=outcomes, exploratory=exploratory)


@pytest.mark.parametrize(("multiplicity", "method", "keys", "reference"), [
    ("tukey", "classical", ["contrasts-classical", "tukey"], "kramer1956"),
    ("tukey", "welch", ["contrasts-welch", "games-howell"], "games1976"),
    ("tukey", "rank-based", ["contrasts-rank", "nemenyi"], "nemenyi1963"),
    ("dunnett", "classical", ["contrasts-classical", "dunnett"], "dunnett1955"),
    ("dunnett", "welch", ["contrasts-welch", "dunnett-welch"], "hasler2008"),
    ("dunnett", "rank-based", ["contrasts-rank", "dunnett-rank"], "dunn1964"),
    ("bonferroni", "classical", ["contrasts-classical", "bonferroni"], "dunn1961"),
    ("sidak", "welch", ["contrasts-welch", "sidak"], "sidak1967"),
    ("holm", "rank-based", ["contrasts-rank", "holm"], "holm1979"),
    ("hochberg", "classical", ["contrasts-classical", "hochberg"], "hochberg1988"),
    ("benjamini-hochberg", "classical", ["contrasts-classical", "benjamini-hochberg"],
     "benjamini1995"),
    ("fixed-sequence", "welch", ["contrasts-welch", "fixed-sequence"], "westfall2001"),
    ("graphical", "classical", ["contrasts-classical", "graphical"], "bretz2009"),
    ("none", "classical", ["contrasts-classical", "unadjusted"], "ich1998"),
])
def test_methods_name_exactly_the_contrast_methods_used(study_results, multiplicity, method,
                                                        keys, reference):
    methods = methods_used(_set_families(study_results, multiplicity, method))
    used = [m.key for m in methods if m.key in CONTRAST_KEYS]
    assert used == [keys[0], "trend", keys[1], "hedges", "one-sided"]
    assert reference in {r.key for r in references_for(methods)}


def test_methods_without_contrasts_keep_the_one_way_list(study_results):
    keys = [m.key for m in methods_used(_without_contrasts(study_results))]
    assert not CONTRAST_KEYS & set(keys)
    assert keys[-2:] == ["pretest", "reporting"] and "contingency" not in keys
    refs = {r.key for r in references_for(methods_used(study_results))}
    assert {"zimmerman2004", "rochon2012", "maurer1995", "hedges1981", "welch1947",
            "satterthwaite1946", "fisher1938", "kirk2013"} <= refs


def test_helmert_contrasts_are_described(study_results):
    helmert = changed(study_results, "outcomes[1].contrasts[0].hypotheses[0]", kind="helmert")
    assert "helmert" in [m.key for m in methods_used(helmert)]


def test_chapter_and_diacritic_references_are_set_and_filed(study_results, figures, html):
    assert ("Maurer, W., Hothorn, L. A., &amp; Lehmacher, W. (1995). Multiple comparisons in "
            "drug clinical trials and preclinical assays: A-priori ordered hypotheses. In J. "
            "Vollmar (Ed.), <i>Biometrie in der chemisch-pharmazeutischen Industrie: Vol. 6. "
            "Testing principles in clinical and preclinical trials</i> (pp. 3\u201318). Gustav "
            "Fischer.") in html
    keys = [r.key for r in references_for(methods_used(
        _set_families(study_results, "sidak", "classical")))]
    # APA files Šidák under S, between Shapiro and Steiger
    assert keys.index("shapiro1965") + 1 == keys.index("sidak1967") == keys.index("steiger2004") - 1


def _forest_caption(page) -> str:
    return next(squash(e.text) for e in page.by_tag("figcaption")
                if "registered hypotheses" in e.text)


def test_forest_caption_says_what_the_intervals_are(page, study_results, figures):
    caption = _forest_caption(page)
    assert caption.startswith("Figure 7. Estimates of the registered hypotheses for Change in "
                              "systolic blood pressure under the Welch (unequal variances) "
                              "analysis, the registered result, with 95% confidence "
                              "intervals, not adjusted for multiplicity (not simultaneous);")
    assert "An arrow marks an interval open" in caption and "labelled gaps" in caption
    assert ("Trend estimates are on their own scales, slopes or polynomial coefficients over "
            "the level scores, which the table note states.") in caption
    # pairs under welch: Games–Howell
    tukey = _with_hypotheses(study_results, "outcomes[1].contrasts[0]", {"multiplicity": "tukey"},
                             alternative="two-sided", decision="reject", ci_simultaneous=True)
    caption = _forest_caption(parse(render_html(tukey, figures, RenderOptions())))
    assert ("95% confidence intervals, simultaneous for the family (Games\u2013Howell, "
            "approximately);") in caption
    assert "Tukey" not in caption
    assert "arrow" not in caption and "gaps" not in caption
