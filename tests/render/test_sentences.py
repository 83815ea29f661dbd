"""Conclusions are stored as words and numbers and worded at render time, so that the
render options' decimals reach the sentences as they reach the tables."""

from __future__ import annotations

import re

from appendix import api
from appendix.numbers import write_number, write_parts
from appendix.render import RenderOptions
from appendix.results import Number


def test_a_conclusion_keeps_its_numbers_as_numbers(computed_demos):
    (conclusion,) = computed_demos["seed-coating"].results.outcomes[0].conclusions
    row = computed_demos["seed-coating"].results.outcomes[0].tables[0].rows[0]
    numbers = [p for p in conclusion.parts if isinstance(p, Number)]
    assert Number("statistic", row.statistic) in numbers and Number("p", row.p) in numbers
    assert Number("proportion", row.partial_eta_squared) in numbers
    assert all(isinstance(p, (str, Number)) for p in conclusion.parts)


def test_statistic_and_effect_decimals_apply_to_the_sentences(computed_demos):
    computed = computed_demos["seed-coating"]
    outcome = computed.results.outcomes[0]
    row = outcome.tables[0].rows[0]
    html = api.render(computed, RenderOptions(statistic_decimals=4, effect_decimals=3)).html
    f_text = f"{row.statistic:.4f}"  # four decimals, as asked, not the default two
    # no leading zero (APA 7, from memory); a nowrap span keeps the point with its digits
    eta = "." + f"{row.partial_eta_squared:.3f}"[2:]
    summary = html.split('<section id="summary">')[1].split("</section>")[0]
    sentence = next(s for s in re.findall(r'<li id="summary-dry_mass">(.*?)<ul', summary, re.S))
    assert f"<i>F</i>(3,\u00a039)\u00a0=\u00a0{f_text}" in sentence
    assert f'<span class="nobreak">\u03b7\u00b2\u00a0=\u00a0{eta}' in sentence
    # the variance table shows it too
    assert f_text in html.split('<section id="dry_mass-variance">')[1].split("</section>")[0]


def test_estimate_decimals_follow_the_decimals_option(computed_demos):
    computed = computed_demos["seed-coating"]
    (family,) = computed.results.outcomes[0].contrasts
    estimate = family.hypotheses[0].estimate
    html = api.render(computed, RenderOptions(decimals=3)).html
    assert f"was estimated at {write_number('estimate', estimate, estimate_decimals=3)} mg" in html


def test_parts_read_back_from_results_json_word_the_same():
    parts = [{"kind": "statistic", "value": 7.891, "high": None}, " and ",
             Number("proportion-interval", 0.141, 0.502), ", ",
             {"kind": "lower-limit", "value": None, "high": None}]
    assert write_parts(parts, statistic_decimals=1) == "7.9 and [.14, .50], \u2212\u221e"


def test_a_rank_based_hypothesis_is_said_with_the_decimals_of_its_table(computed_demos):
    """Seed-coating's dry-mass family put under a rank-based analysis (differences in mean
    ranks, invented here; the sentences worded by `conclude.hypothesis_conclusion` as a run
    words them): each sentence gives its estimate with the decimals of the family table's
    estimate column, chosen from the mean ranks, not those of the group means in mg."""
    import dataclasses

    from appendix import conclude
    from appendix.numbers import decimals_for
    from appendix.render import render_html

    computed = computed_demos["seed-coating"]
    results = computed.results
    outcome = results.outcomes[0]
    (family,) = outcome.contrasts
    mean_ranks = (10.0625, 4.5, -7.25, 0.0625)  # invented mean-rank differences
    ranked = dataclasses.replace(family, method="rank-based", hypotheses=tuple(
        dataclasses.replace(h, method="rank-based", estimate=d, ci_low=d - 3.0, ci_high=d + 3.0,
                            statistic_name="z", df=None, standardized=None)
        for h, d in zip(family.hypotheses, mean_ranks)))
    plan = computed.loaded.plan.for_outcome(outcome.name)
    planned = next(o for o in plan.outcomes if o.name == outcome.name)
    sentences = tuple(conclude.hypothesis_conclusion(plan, planned, h, ranked.multiplicity)
                      for h in ranked.hypotheses)
    changed = dataclasses.replace(results, outcomes=(dataclasses.replace(
        outcome, contrasts=(ranked,), hypothesis_conclusions=sentences), *results.outcomes[1:]))
    html = render_html(changed, {}, RenderOptions())
    ranks = decimals_for(list(mean_ranks))
    means = decimals_for([g.mean for g in outcome.descriptives.groups])
    assert (ranks, means) == (4, 1)  # three significant digits of .0625; means above 10 mg
    summary = html.split('<li id="summary-dry_mass">')[1].split("</li>\n  <li id=")[0]
    for d in mean_ranks:
        shown = write_number("estimate", abs(d), estimate_decimals=ranks)
        assert f"{shown} higher" in summary or f"{shown} lower" in summary \
            or f"estimated at {write_number('estimate', d, estimate_decimals=ranks)}" in summary
    # the family table and the table of every hypothesis show the same figures
    for d in mean_ranks:
        assert html.count(f'<td class="num">{write_number("estimate", d, estimate_decimals=ranks)}</td>') == 2
