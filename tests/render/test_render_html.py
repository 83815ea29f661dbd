"""render_html: structure, safety, numbering and number formatting of the appendix HTML.

Values asserted come from the INVENTED fixture data of conftest.py (numpy computed them).
"""

from __future__ import annotations

import random
import re
import subprocess
import sys
from pathlib import Path

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from render_helpers import changed, floats_to_none, parse, squash

from appendix.methods import methods_used, references_for
from appendix.render import RenderOptions, render_html, template_root
from appendix.results import from_json, to_json

CSP = "default-src 'none'; style-src 'unsafe-inline'; img-src data:"


def _cells(page, row_class):
    rows = [e for e in page.elements if e.tag == "tr" and e.attrs.get("class") == row_class]
    index = page.elements.index(rows[0])
    cells = []
    for element in page.elements[index + 1:]:
        if element.tag == "tr":
            break
        if element.tag in {"td", "th"}:
            cells.append(squash(element.text))
    return cells


SECTION_IDS = [
    "cover", "contents", "summary", "unit-flow", "findings", "deviations", "methods",
    "references", "reproducibility",
    *(f"{prefix}{part}" for prefix in ("sbp_change-", "pain-") for part in (
        "descriptives", "figures", "variance", "robust", "contrasts", "contingencies",
        "effects", "diagnostics", "assumptions", "conclusion")),
    "outcome-sbp_change", "outcome-pain", "exploratory", "exploratory-E1",
]


def test_every_section_has_its_id_and_ids_are_unique(page):
    ids = page.ids()
    assert set(SECTION_IDS) <= set(ids)
    assert len(ids) == len(set(ids)), "duplicate id in the document"


def test_every_contents_link_has_a_target(page):
    links = [e.attrs["href"] for e in page.elements
             if e.tag == "a" and (e.attrs.get("href") or "").startswith("#")
             # an outcome's pointers to its conclusions and to its forest plot
             and e.attrs.get("class") not in ("summary-ref", "figure-ref")]
    sections = [link for link in links if not link.startswith(("#table-", "#figure-"))]
    assert len(sections) == len(SECTION_IDS) - 2  # cover and contents are not listed
    # the lists of tables and figures: one link per caption
    assert len(links) - len(sections) == (
        sum(e.attrs.get("class") == "table-number" for e in page.elements)
        + sum(e.attrs.get("class") == "figure-number" for e in page.elements))
    assert {link[1:] for link in links} <= set(page.ids())


def test_csp_present_no_script_and_no_external_url(page, html):
    metas = [e.attrs for e in page.by_tag("meta")
             if e.attrs.get("http-equiv") == "Content-Security-Policy"]
    assert metas == [{"http-equiv": "Content-Security-Policy", "content": CSP}]
    assert page.by_tag("script") == []
    fetched = [value for e in page.elements for name, value in e.attrs.items()
               if name in {"src", "href", "xlink:href"}]
    assert fetched and all(v.startswith(("#", "data:")) for v in fetched)
    assert "<link" not in html and "@import" not in html


def test_plan_and_data_strings_are_escaped(hostile_results, figures):
    html = render_html(hostile_results, figures, RenderOptions())
    assert "<script>alert(1)</script>" not in html
    assert "&lt;script&gt;alert(1)&lt;/script&gt;" in html
    assert "<b onmouseover" not in html and "<img src=x" not in html
    page = parse(html)
    assert page.by_tag("script") == [] and not page.by_tag("b")
    title = page.by_tag("title")[0].text
    assert title == "Statistics appendix: <script>alert(1)</script>"


def test_model_table_cells_are_formatted_apa_style(page):
    # between-groups row of the primary outcome: F(2, 21) = 5.73, p = .010
    cells = _cells(page, "between")
    assert cells == ["Between groups (Treatment arm)", "2", "240.2", "120.1", "5.73", ".010"]
    assert _cells(page, "within")[:4] == ["Within groups (residual)", "21", "440.2", "21.0"]
    notes = [squash(p.text) for p in page.by_tag("p") if p.attrs.get("class") == "table-note"]

    def first(start: str) -> str:  # the primary outcome comes first
        return next(n for n in notes if n.startswith(start))

    assert first("Note. The F statistic") == (
        "Note. The F statistic is referred to the F distribution F(2, 21), right tail; its "
        "critical value at \u03b1 = .05 is 3.47. R\u00b2 = .35; residual SD = 4.58 mmHg. "
        "In text: F(2, 21) = 5.73, p = .010.")
    assert first("Note. Welch's F").endswith("In text: Welch's F(2, 13.62) = 5.87, p = .015. "
                                             "Kruskal\u2013Wallis H(2, N = 24) = 8.04, p = .018.")
    assert first("Note. 95% confidence intervals, by inverting the noncentral F")


def test_degenerate_f_is_an_explained_gap(page):
    between = [c for c in page.by_tag("tr") if c.attrs.get("class") == "between"]
    assert len(between) == 2
    start = page.elements.index(between[1])
    cells = [squash(e.text) for e in page.elements[start + 1:start + 8] if e.tag == "td"]
    assert cells[-2:] == ["\u2014", "\u2014"]
    notes = [squash(p.text) for p in page.by_tag("p") if p.attrs.get("class") == "table-note gap"]
    assert any("within-variance-zero: Every group's values are identical" in n for n in notes)
    # a test that could not be computed is neither referred to its F distribution nor quoted
    table_notes = [squash(p.text) for p in page.by_tag("p") if p.attrs.get("class") == "table-note"]
    assert sum(n.startswith("Note. The F statistic is referred") for n in table_notes) == 1
    assert not any("= \u2014" in n or "p \u2014" in n for n in table_notes)
    missing = [squash(p.text) for p in page.by_tag("p") if p.attrs.get("class") == "figure-missing"]
    assert any("reference F distribution" in m for m in missing)


def test_tiny_p_is_written_below_one_thousandth(study_results, figures):
    tiny = changed(study_results, "outcomes[1].tables[0].rows[0]", p=2.0e-7)
    page = parse(render_html(tiny, figures, RenderOptions()))
    assert _cells(page, "between")[-1] == "< .001"


def test_tables_and_figures_are_numbered_in_order(page):
    tables = [squash(e.text) for e in page.elements if e.attrs.get("class") == "table-number"]
    assert tables == [f"Table {i}" for i in range(1, len(tables) + 1)]
    # every registered hypothesis, flow, deviations; primary: 10 (two contrast families);
    # degenerate: 5 (no effect, diagnostics or assumption table); exploratory 1; inputs,
    # software
    assert len(tables) == 21
    figures = [squash(e.text) for e in page.elements if e.attrs.get("class") == "figure-number"]
    # the unit flow is the first, the forest plot the tenth
    assert figures == [f"Figure {i}." for i in range(1, 11)]


def test_descriptive_columns_keep_one_number_of_decimals(page):
    rows = [e for e in page.by_tag("tr") if e.attrs.get("class") is None]
    means = []
    for row in rows:
        start = page.elements.index(row)
        cells = [squash(e.text) for e in page.elements[start + 1:start + 14] if e.tag == "td"]
        if len(cells) == 11 and cells[5].startswith("["):
            means.append(cells[2])
    assert means[:3] == ["\u22123.41", "\u22126.32", "\u221211.09"]


def test_summary_puts_primary_first_and_quotes_each_conclusion(page):
    items = [squash(e.text) for e in page.by_tag("li")
             if "Primary," in e.text or "Secondary," in e.text]
    assert items[0].startswith("Primary, Change in systolic blood pressure. Mean change")
    assert items[1] == ("Secondary, Pain score. The pain score could not be compared: "
                        "every value was 2. The hypothesis C1 (active doses versus placebo) "
                        "could not be tested for the pain score: every value was 2.")


def test_cover_shows_checksums_short_and_full_and_the_caution(page, study_results):
    text = squash(" ".join(e.text for e in page.by_tag("p")))
    sha = study_results.inputs[1].sha256
    assert study_results.inputs[1].role == "data"
    header = [e for e in page.elements if e.attrs.get("class") == "running-data"]
    assert header and "running-header" in {e.attrs.get("class") for e in page.by_tag("p")}
    short = [e.text for e in page.elements if e.attrs.get("class") == "hash-short"]
    assert sha[:12] in short and study_results.plan_sha256[:12] in short
    codes = [e for e in page.elements if e.tag == "code" and e.attrs.get("class") == "hash"]
    assert len(codes) == 6  # plan, study and data file, on the cover and in the final table
    header_text = squash(" ".join(e.text for e in header))
    assert header_text == f"data SHA-256 {sha[:12]}"
    assert "not, a clinical or regulatory decision" in text
    assert "qualified, licensed statistician" in text


def test_lowercase_labels_start_sentences_capitalised(study_results, figures):
    lower = changed(study_results, "outcomes[1]", label="change in HbA1c")
    page = parse(render_html(lower, figures, RenderOptions()))
    titles = [squash(e.text) for e in page.elements if e.attrs.get("class") == "table-title"]
    assert "Change in HbA1c by Treatment arm" in titles
    assert "One-way analysis of variance of change in HbA1c" in titles
    # the unit flow's and the hypotheses table's row groups of the outcome
    rows = [squash(e.text) for e in page.by_tag("th")
            if e.attrs.get("scope") == "rowgroup" and "HbA1c" in e.text]
    assert rows == ["Primary, change in HbA1c (mmHg): p adjusted by fixed-sequence over this "
                    "outcome's 4 hypotheses", "Change in HbA1c"]


def test_methods_follow_what_was_run(study_results):
    names = [m.key for m in methods_used(study_results)]
    assert names == ["exclusions", "descriptives", "anova", "welch", "kruskal", "effect_sizes", "shapiro",
                     "brown-forsythe", "bartlett", "outliers", "float64", "contrasts-classical",
                     "contrasts-welch", "custom", "trend", "fixed-sequence", "unadjusted", "hedges",
                     "one-sided", "contingency", "reporting"]
    stripped = study_results
    for i in range(len(stripped.outcomes)):
        stripped = changed(stripped, f"outcomes[{i}].diagnostics", normality=None)
        stripped = changed(stripped, f"outcomes[{i}].robust.welch", statistic=None)
    keys = [m.key for m in methods_used(stripped)]
    assert "shapiro" not in keys and "welch" not in keys
    # no registered exclusion rule, no paragraph on exclusion rules
    assert "exclusions" not in [m.key for m in methods_used(changed(stripped, "unit_flow", exclusions=()))]
    refs = [r.key for r in references_for(methods_used(stripped))]
    assert "shapiro1965" not in refs and "welch1951" not in refs and "fisher1925" in refs


def test_methods_name_the_arithmetic_path_and_the_subsample(study_results):
    exact = changed(study_results, "outcomes[0]", arithmetic="exact-decimal")
    keys = [m.key for m in methods_used(exact)]
    assert keys.index("exact-decimal") < keys.index("float64")  # second outcome stays float
    assert "subsample" not in keys
    sampled = changed(exact, "outcomes[1]", sample_of=100_000_000)
    assert "subsample" in [m.key for m in methods_used(sampled)]
    refs = [r.key for r in references_for(methods_used(sampled))]
    assert "mccullough1998" in refs and "chan1983" in refs


def test_reference_list_is_alphabetical_with_dois(page):
    refs = [squash(e.text) for e in page.by_tag("li")
            if re.match(r"[A-Z][a-z]+, [A-Z]\.|American", e.text)]
    assert refs == sorted(refs) and len(refs) == 26  # with Maxwell & Delaney (2004) for trends
    assert any(r.startswith("Welch, B. L. (1951).") and "10.1093/biomet/38.3-4.330" in r
               for r in refs)


def test_references_are_set_in_apa_style(html):
    assert ("Welch, B. L. (1951). On the comparison of several mean values: An alternative "
            "approach. <i>Biometrika</i>, <i>38</i>(3\u20134), 330\u2013336. "
            '<span class="doi">https://doi.org/10.1093/biomet/38.3-4.330</span>') in html
    assert ("Cohen, J. (1988). <i>Statistical power analysis for the behavioral sciences</i> "
            "(2nd ed.). Lawrence Erlbaum Associates.") in html
    # a corporate author that publishes its own work is not named twice
    assert ("American Psychological Association. (2020). <i>Publication manual of the American "
            "Psychological Association</i> (7th ed.). <span") in html


def test_paper_option_reaches_the_page_rule(study_results, figures):
    html = render_html(study_results, figures, RenderOptions(paper="Letter"))
    assert "@page { size: Letter; }" in html
    with pytest.raises(ValueError, match="paper must be one of"):
        RenderOptions(paper="A5")


def test_fixed_decimals_option_overrides_per_column_choice(study_results, figures):
    page = parse(render_html(study_results, figures, RenderOptions(decimals=3)))
    assert _cells(page, "between")[2:4] == ["240.186", "120.093"]


def test_templates_are_found_and_weasyprint_is_not_imported(tmp_path: Path, study_results):
    # results.json read back as typed results renders, and rendering loads no PDF library
    assert (template_root() / "appendix.html.j2").is_file()
    source = tmp_path / "results.json"
    source.write_text(to_json(study_results), encoding="utf-8")
    code = ("import sys; from pathlib import Path; from appendix.results import from_json; "
            "from appendix.render import render_html, RenderOptions; "
            f"html = render_html(from_json(Path({str(source)!r}).read_text(encoding='utf-8')), "
            "{}, RenderOptions()); "
            "print('weasyprint' in sys.modules, len(html) > 1000)")
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                          check=True, cwd=Path(__file__).resolve().parents[2])
    assert done.stdout.split() == ["False", "True"]


def test_every_missing_statistic_renders_as_a_dash(study_results):
    empty = floats_to_none(study_results, keep=lambda path: path.endswith(
        ("alpha", "confidence_level", "threshold")))
    page = parse(render_html(empty, {}, RenderOptions()))
    assert _cells(page, "between")[2:] == ["\u2014"] * 4
    missing = [p for p in page.by_tag("p") if p.attrs.get("class") == "figure-missing"]
    assert len(missing) == 12  # five kinds and the forest plot for two outcomes, none drawn
    assert "\u2014" in squash(page.by_tag("body")[0].text)


@settings(max_examples=25, derandomize=True, deadline=None)
@given(st.integers(min_value=0, max_value=2**31 - 1))
def test_any_pattern_of_missing_statistics_renders(study_results, seed):
    chooser = random.Random(seed)
    partial = floats_to_none(study_results, keep=lambda path: path.endswith(
        ("alpha", "confidence_level", "threshold")) or chooser.random() < 0.5)
    page = parse(render_html(partial, {}, RenderOptions()))
    assert set(SECTION_IDS) <= set(page.ids())


def test_same_inputs_give_identical_html(study_results, figures, html):
    assert render_html(study_results, figures, RenderOptions()) == html


def test_results_read_back_from_results_json_render_the_same_page(study_results,
                                                                  computed_demos):
    # the renderer reads the typed results a run holds; what results.json gives back
    # (ints of float fields as floats, tuples rebuilt, NaN as None) must read the same
    runs = {"fixture": study_results, **{n: c.results for n, c in computed_demos.items()}}
    for name, results in runs.items():
        page = render_html(results, {}, RenderOptions())
        assert render_html(from_json(to_json(results)), {}, RenderOptions()) == page, name


def test_installed_templates_win_over_the_repository(tmp_path, monkeypatch):
    import appendix.render as render
    import appendix.typefaces as typefaces

    (tmp_path / "templates").mkdir()
    monkeypatch.setattr(typefaces.importlib.resources, "files", lambda package: tmp_path)
    assert render.template_root() == tmp_path / "templates"
    assert typefaces.font_folder() == tmp_path / "templates" / "fonts"
    (tmp_path / "templates").rmdir()
    assert render.template_root() == Path(render.__file__).resolve().parents[1] / "templates"


def test_exploratory_decisions_read_as_nominal(html):
    exploratory = html[html.index('id="exploratory"'):]
    assert "(nominal)" in exploratory
    planned = html[:html.index('id="exploratory"')]
    assert "(nominal)" not in planned


@pytest.mark.parametrize("unit, squared", [("mmHg", "mmHg²"), ("mm²", "mm⁴"), ("%", "%²"),
                                           ("mg/L", "(mg/L)²"), ("index units", "(index units)²")])
def test_sums_of_squares_carry_the_squared_unit(study_results, figures, unit, squared):
    # a square of a squared unit is a fourth power (mm² squared is mm⁴), never "mm²²"
    page = parse(render_html(changed(study_results, "outcomes[1]", unit=unit), figures, RenderOptions()))
    headers = [squash(e.text) for e in page.by_tag("th") if "Sum of squares" in e.text]
    assert f"Sum of squares ({squared})" in headers


def test_findings_are_introduced_in_words_not_by_their_code(page, html):
    # every code the data stage can write (read from its source) has its words, and the
    # page shows those words, not the code
    from appendix.render import WORDS

    sources = (Path(__file__).parents[2] / "appendix" / "data").glob("*.py")
    codes = {code for path in sources
             for code in re.findall(r'Finding\(\s*"([a-z-]+)"', path.read_text(encoding="utf-8"))}
    assert "below-planned-n" in codes and codes <= set(WORDS["findings"])
    kinds = [squash(e.text) for e in page.by_tag("span") if e.attrs.get("class") == "finding-kind"]
    assert kinds == ["Fewer units analysed than planned."]
    start = html.index('<section id="findings">')
    findings = html[start:html.index("</section>", start)]
    assert "Level &#39;placebo&#39; of Treatment arm: units analysed: 8; 10 planned per group." in findings
    assert "below-planned-n" not in findings
