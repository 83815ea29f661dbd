"""The appendix's length is proportionate to the study (issue 13, item 2), measured on the
layout WeasyPrint makes of each demo on A4 (`demo_layouts`, what the PDF is written from).

Budgets (the project's own, no outside source): the one-factor, two-outcome demo on at most
12 pages with everything registered still shown; each outcome after the first, of the same
design, at most 3 pages; no page under 40 % filled except the first (the front matter,
which ends with the only forced page break) and the last; a sentence of a table note or a
figure caption said once; the conclusions stated once."""

from __future__ import annotations

import html as markup
import re
from pathlib import Path

import pytest

from appendix.captions import sentence_key

REPO = Path(__file__).resolve().parents[2]

DEMOS = ("seed-coating", "greenhouse-split", "wound-dose")
# the boxes that hold content; sections, divs and the body stretch over what they hold
CONTENT = frozenset({"p", "li", "tr", "caption", "h1", "h2", "h3", "h4", "dt", "dd",
                     "figcaption", "svg"})


def fill(page) -> float:
    """(bottom of the lowest content box - top of the text block) / text block height."""
    bottoms = [b.bottom for b in page.boxes if b.tag in CONTENT and b.height > 0]
    return (max(bottoms) - page.top) / page.height if bottoms else 0.0


def spans(layout) -> dict[str, float]:
    """Pages each outcome section spans, from the top of its first part to the bottom of its
    last, whole pages counted between: gaps left by blocks kept whole count too."""
    ends: dict[str, tuple[float, float]] = {}
    for i, page in enumerate(layout.pages):
        for b in page.boxes:
            if b.tag == "section" and "outcome" in b.classes:
                start = ends.get(b.id, (i + (b.y - page.top) / page.height, 0.0))[0]
                ends[b.id] = (start, i + (b.bottom - page.top) / page.height)
    return {name: end - start for name, (start, end) in ends.items()}


def test_seed_coating_fits_twelve_pages(demo_layouts):
    assert len(demo_layouts["seed-coating"].pages) <= 12


def test_seed_coating_holds_everything_registered(rendered_demos, computed_demos):
    html = rendered_demos["seed-coating"].html
    results = computed_demos["seed-coating"].results
    ids = set(re.findall(r'\bid="([^"]+)"', html))
    for o in results.outcomes:
        assert {f"{o.name}-{part}" for part in (
            "descriptives", "figures", "variance", "robust", "contrasts", "contingencies",
            "effects", "diagnostics", "assumptions", "conclusion")} <= ids
        for family in o.contrasts:
            for h in family.hypotheses:
                assert h.id in html and markup.escape(h.label, quote=False) in html
        for a in o.diagnostics.assumptions:
            assert a.assumption in markup.unescape(html).lower()
    for key in rendered_demos["seed-coating"].figures:
        assert f'id="figure-{key}"' in html
    assert {"methods", "references", "reproducibility", "exploratory", "deviations",
            "findings", "unit-flow"} <= ids
    for item in results.inputs:
        assert item.sha256 in html
    # words compared as a reader sees them: tags dropped, spaces squashed (the page may
    # hold no-break spaces)
    def words(t):
        return " ".join(t.split())
    text = words(markup.unescape(re.sub(r"<[^>]+>", "", html)))
    for finding in results.findings:
        assert words(finding.message) in text


def test_each_further_outcome_of_the_one_factor_design_spans_at_most_three_pages(demo_layouts):
    # the budget is for the one-factor design of seed-coating; its second outcome is what one
    # more outcome costs (wound-dose, covariate-adjusted with a figure more, has no budget yet)
    measured = spans(demo_layouts["seed-coating"])
    first, *further = measured  # document order: the first outcome carries the notes
    for name in further:
        assert measured[name] <= 3.0, (name, round(measured[name], 2))


@pytest.fixture(scope="module")
def four_outcomes(tmp_path_factory):
    """Seed-coating's one-factor design with two more registered outcomes whose values are
    invented by a seeded generator, laid out on A4."""
    import csv

    import numpy as np
    import yaml

    from appendix import api
    from appendix.render import RenderOptions, typeset
    from page_layout import Layout

    demo = REPO / "studies" / "seed-coating"
    plan = yaml.safe_load((demo / "study.yaml").read_text(encoding="utf-8"))
    rows = list(csv.DictReader((demo / "data" / "units.csv").open(encoding="utf-8")))
    rng = np.random.default_rng(2026)
    shift = {"uncoated": 0.0, "chitosan": 0.6, "seaweed": 1.1, "humic": 0.3}
    for row in rows:
        row["root_length_cm"] = f"{12 + shift[row['coating']] + rng.normal(0, 1.2):.1f}"
        row["leaf_count"] = f"{5 + shift[row['coating']] / 2 + rng.normal(0, 0.8):.1f}"
    plan["outcomes"] += [
        {"name": "root_length", "column": "root_length_cm", "label": "root length at day 21",
         "unit": "cm", "role": "secondary"},
        {"name": "leaves", "column": "leaf_count", "label": "leaf count at day 21",
         "role": "secondary"}]
    # the exploratory analysis stays on the demo's outcomes: the budget is the registered
    # analysis an outcome adds, not analyses chosen after unblinding
    for analysis in plan["exploratory"]:
        analysis["outcomes"] = ["dry_mass", "chlorophyll"]
    tmp_path = tmp_path_factory.mktemp("four-outcomes")
    (tmp_path / "data").mkdir()
    with (tmp_path / "data" / "units.csv").open("w", encoding="utf-8", newline="") as out:
        writer = csv.DictWriter(out, fieldnames=list(rows[0]))
        writer.writeheader()
        writer.writerows(rows)
    (tmp_path / "study.yaml").write_text(yaml.safe_dump(plan, sort_keys=False), encoding="utf-8")

    rendered = api.render(api.compute(tmp_path / "study.yaml"))
    return Layout(typeset(rendered.html, RenderOptions(paper="A4")))


@pytest.mark.slow
def test_each_further_outcome_of_a_generated_study_spans_at_most_three_pages(four_outcomes):
    measured = spans(four_outcomes)
    assert len(measured) == 4
    first, *further = measured
    assert {name: round(measured[name], 2) for name in further if measured[name] > 3.0} == {}


@pytest.mark.slow
@pytest.mark.xfail(strict=True, reason="open in issue 13: two more outcomes add 7 pages, not 6: each "
                   "outcome section spans 2.85-2.94 pages (blocks kept whole leave its pages 75-90 % "
                   "full, so shorter figures alone move no break) and adds 0.3 page of summary and "
                   "0.1 of unit flow")
def test_each_further_outcome_adds_at_most_three_pages(four_outcomes, demo_layouts):
    assert len(four_outcomes.pages) - len(demo_layouts["seed-coating"].pages) <= 3 * 2


@pytest.mark.parametrize("demo", DEMOS)
def test_no_page_is_left_mostly_empty(demo_layouts, demo):
    pages = demo_layouts[demo].pages
    under = [(p.number, round(fill(p), 2)) for p in pages[1:-1] if fill(p) < 0.4]
    assert under == []


def _notes(html: str) -> list[str]:
    parts = re.findall(r'<p class="table-note">(.*?)</p>|<figcaption>(.*?)</figcaption>',
                       html, re.S)
    return [a or b for a, b in parts]


@pytest.mark.parametrize("demo", DEMOS)
def test_each_sentence_of_a_note_or_caption_is_said_once(rendered_demos, demo):
    seen: dict[str, int] = {}
    for note in _notes(rendered_demos[demo].html):
        note = note.strip().removeprefix("<i>Note.</i>")
        for sentence in re.split(r"(?<=\.)\s+(?=(?:<[^>]+>)*[A-Z\u0391-\u03a9])", note):
            key = sentence_key(sentence)
            if len(key) > 30:
                seen[key] = seen.get(key, 0) + 1
    assert [s for s, n in seen.items() if n > 1] == []
    # and later notes do point back (the demos have two outcomes or more)
    assert any("as for Table" in n or "as for Figure" in n for n in _notes(rendered_demos[demo].html))


@pytest.mark.parametrize("demo", DEMOS)
def test_conclusions_are_stated_once_in_the_summary(rendered_demos, computed_demos, demo):
    html = rendered_demos[demo].html
    summary = html.split('<section id="summary">')[1].split("</section>")[0]
    for o in computed_demos[demo].results.outcomes:
        section = html.split(f'<section id="{o.name}-conclusion">')[1].split("</section>")[0]
        assert f'href="#summary-{o.name}"' in section
        assert f'id="summary-{o.name}"' in summary
        summary_sentences = {sentence_key(s) for s in re.split(r"(?<=\.)\s+", summary)
                             if len(sentence_key(s)) > 30}
        assert not summary_sentences & {sentence_key(s) for s in re.split(r"(?<=\.)\s+", section)}
