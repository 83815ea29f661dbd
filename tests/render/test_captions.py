"""`captions.Captions`, the register of one rendering's tables, figures and note sentences:
numbers in the order asked for, the listings the contents show, and each long sentence of
a note or caption said once, later ones pointing back to where it stands. That the demos'
lists equal their captions is `test_reporting_elements`'s
`test_lists_of_tables_and_figures_follow_the_captions`."""

from __future__ import annotations

import jinja2
from markupsafe import Markup

from appendix.captions import Captions, ListGroup, Listed, first_clause, grouped, plain_text
from appendix.render import RenderOptions, render_html

DEFINITION = "SD = standard deviation (<i>n</i> &#8722; 1 divisor)."
CAVEAT = "Choosing an analysis by a preliminary test distorts its error rates."


def test_tables_and_figures_are_numbered_apart_in_the_order_asked_for():
    c = Captions()
    assert [c.table_number("a"), c.figure_number("f"), c.table_number("b"),
            c.table_number("a"), c.figure_number("g")] == [1, 1, 2, 1, 2]
    # a caption keeps the number a reference gave its table first
    assert c.table("b", "Second") == 2 and c.table("c", "Third") == 3


def test_captions_are_listed_under_the_outcome_section_they_stand_in():
    c = Captions()
    c.table("deviations", "Departures from the plan")
    c.within("yield")
    c.figure_number("yield-distribution")
    c.table("yield-descriptives", Markup("Yield by group &amp; block <i>n</i>"))
    c.figure("yield-distribution", Markup("\n  Yield by group. Boxes span the quartiles.\n"))
    c.within(None)
    c.table("software", "Software")
    assert c.tables == [Listed(1, "Departures from the plan", "table-1", None),
                        Listed(2, "Yield by group & block n", "table-2", "yield"),
                        Listed(3, "Software", "table-3", None)]
    assert c.figures == [Listed(1, "Yield by group", "figure-yield-distribution", "yield")]


def _outcome_tables(c: Captions, label: str, extra: str | None = None) -> None:
    c.within(label)
    c.table(f"{label}-descriptives", f"{label.capitalize()} by seed coating")
    c.table(f"{label}-variance", f"One-way analysis of variance of {label}")
    if extra:
        c.table(f"{label}-extra", extra)
    c.table(f"{label}-effects", "Effect sizes for the differences between the means")
    c.within(None)


def test_a_further_outcome_lists_by_number_the_entries_titled_as_an_earlier_ones():
    c = Captions()
    c.table("flow", "Number of units at each stage")
    _outcome_tables(c, "shoot dry mass")
    _outcome_tables(c, "leaf count", extra="Units with a large studentized residual")
    c.table("software", "Software")
    groups = c.table_groups()
    assert [g.outcome for g in groups] == [None, "shoot dry mass", "leaf count", None]
    first, second = groups[1:3]
    assert (first.alike, first.like, [e.number for e in first.entries]) == ((), None, [2, 3, 4])
    # "Leaf count by seed coating" is "Shoot dry mass by seed coating" with the other label,
    # whatever the case of its first letter; the outlier table has no like
    assert second.like == "shoot dry mass"
    assert [e.number for e in second.alike] == [5, 6, 8]
    assert [e.title for e in second.entries] == ["Units with a large studentized residual"]
    html = render_like(groups)
    assert 'Tables <a href="#table-5">5</a>, <a href="#table-6">6</a> and ' \
           '<a href="#table-8">8</a>: titled as for shoot dry mass' in html


def render_like(groups: list[ListGroup]) -> str:
    """The list macro of the contents on `groups`, as the page writes it."""
    from appendix.render import template_root

    env = jinja2.Environment(loader=jinja2.FileSystemLoader(str(template_root())),
                             autoescape=True)
    env.filters["upper_first"] = lambda s: s[:1].upper() + s[1:]
    module = env.get_template("listings.html.j2").make_module({"captions": Captions()})
    return str(module.listing(groups, "Table"))


def test_entries_are_set_against_an_earlier_outcome_only_when_two_or_more_are_alike():
    one = [Listed(1, "Yield by arm", "table-1", "yield", "\x00 by arm"),
           Listed(2, "Height by arm", "table-2", "height", "\x00 by arm"),
           Listed(3, "Tests of height", "table-3", "height", "Tests of \x00")]
    assert [(g.like, len(g.alike)) for g in grouped(one)] == [(None, 0), (None, 0)]
    # the pattern is made from the whole title when none was recorded
    two = [Listed(1, "Yield by arm", "table-1", "yield"), Listed(2, "Means of yield", "table-2", "yield"),
           Listed(3, "Height by arm", "table-3", "height"), Listed(4, "Means of height", "table-4", "height")]
    assert [(g.like, len(g.alike)) for g in grouped(two)] == [(None, 0), ("yield", 2)]


def test_a_table_captioned_twice_is_listed_once():
    c = Captions()
    c.table("a", "Means")
    c.table("a", "Means")
    assert c.tables == [Listed(1, "Means", "table-1", None)]


def test_a_sentence_said_before_gives_way_to_a_pointer():
    c = Captions()
    c.table("a", "Means")
    first = Markup(f"{DEFINITION} {CAVEAT}")
    assert c.note(first) == first  # nothing said before: as written
    c.table("b", "More means")
    assert c.note(Markup(f"{DEFINITION} Rows are blocks of the field trial.")) == \
        "Rows are blocks of the field trial. Other notes as for Table 1."
    c.figure_number("f")
    # a caption repeating only what was said: the pointer alone
    assert c.figure("f", Markup(CAVEAT)) == "As for Table 1."


def test_a_note_drawing_on_several_earlier_ones_names_each_once():
    c = Captions()
    c.table("a", "A")
    c.note(Markup(DEFINITION))
    c.figure_number("f")
    c.figure("f", Markup(CAVEAT))
    c.table("b", "B")
    assert c.note(Markup(f"{DEFINITION} {CAVEAT} {DEFINITION}")) == \
        "As for Table 1 and Figure 1."


def test_short_sentences_are_said_again_and_line_breaks_do_not_make_two_sentences_differ():
    c = Captions()
    c.table("a", "A")
    c.note(Markup(f"Blank cells: not applicable. {DEFINITION}"))
    c.table("b", "B")
    again = Markup("Blank cells: not applicable. " + DEFINITION.replace(" ", "\n  ", 2))
    assert c.note(again) == "Blank cells: not applicable. Other notes as for Table 1."


def test_plain_text_and_first_clause():
    assert plain_text(Markup("a&nbsp;<i>b</i>\n   c")) == "a\u00a0b c"
    assert plain_text("a &lt; b") == "a &lt; b"  # a plain string is shown escaped, as it is
    assert first_clause("Means of yield (raw, by group) with 95% CIs. Error bars") == \
        "Means of yield (raw, by group) with 95% CIs"
    assert first_clause("x" * 50 + " " + "y" * 60) == "x" * 50 + "\u2026"


def test_the_page_is_rendered_once(study_results, figures, monkeypatch):
    rendered = []
    original = jinja2.Template.render

    def counted(self, *args, **kwargs):
        rendered.append(self.name)
        return original(self, *args, **kwargs)

    monkeypatch.setattr(jinja2.Template, "render", counted)
    html = render_html(study_results, figures, RenderOptions())
    assert rendered == ["appendix.html.j2"]
    assert '<ol class="list-of">' in html

