"""Figures of designs beyond one factor: interaction, covariate and profile plots.

Every number here is INVENTED for the test (literals or a seeded generator); the
figures are read back by parsing their SVG: which groups, markers and bars it holds.
"""

from __future__ import annotations

import hashlib
import itertools
import os
import re
import subprocess
import sys
import xml.etree.ElementTree as ET

import numpy as np
import pytest

from appendix import figures
from appendix.figures import (
    DENSE_POINTS,
    PALETTE,
    covariate_scatter,
    interaction_plot,
    level_marker,
    profile_plot,
)
from test_render_figures import DEUTERANOPIA, PROTANOPIA, _lab, _linear

NS = "{http://www.w3.org/2000/svg}"
XLINK = "{http://www.w3.org/1999/xlink}href"

COATINGS = ("none", "thin", "thick")
REGIMES = ("steady", "pulsed")
# rows: irrigation regime; columns: coating (invented marginal means and intervals)
MEANS = [[31.0, 33.5, 35.0], [31.8, 34.9, 37.2]]
LOW = [[30.1, 32.6, 34.0], [30.9, 34.0, 36.1]]
HIGH = [[31.9, 34.4, 36.0], [32.7, 35.8, 38.3]]


def _interaction(**changes) -> str:
    args = {"x_levels": COATINGS, "trace_levels": REGIMES, "estimates": MEANS,
            "ci_low": LOW, "ci_high": HIGH, "x_label": "Seed coating",
            "trace_label": "Irrigation", "y_label": "Chlorophyll index (units)"}
    return interaction_plot(**{**args, **changes})


def _covariate_data(n: int = 60, seed: int = 7):
    rng = np.random.default_rng(seed)  # INVENTED units
    codes = np.arange(n) % 3
    x = rng.normal(40.0, 5.0, n)
    y = np.array([10.0, 12.0, 14.0])[codes] + 0.5 * (x - x.mean()) + rng.normal(0, 1, n)
    return x, y, codes


def _covariate(x=None, y=None, codes=None, **changes) -> str:
    if x is None:
        x, y, codes = _covariate_data()
    args = {"x": x, "y": y, "groups": codes, "group_labels": COATINGS, "slope": 0.5,
            "intercepts": [10.0, 12.0, 14.0], "x_label": "Baseline height (mm)",
            "y_label": "Dry mass (g)"}
    return covariate_scatter(**{**args, **changes})


def _profile(**changes) -> str:
    args = {"levels": ("day7", "day14", "day21"), "group_labels": COATINGS,
            "means": [[20.0, 24.0, 27.0], [20.5, 26.0, 30.0], [21.0, 27.5, 33.0]],
            "ci_low": [[19.0, 23.0, 26.0], [19.5, 25.0, 29.0], [20.0, 26.5, 32.0]],
            "ci_high": [[21.0, 25.0, 28.0], [21.5, 27.0, 31.0], [22.0, 28.5, 34.0]],
            "x_label": "Visit", "y_label": "Chlorophyll index (units)"}
    return profile_plot(**{**args, **changes})


def _root(svg: str) -> ET.Element:
    return ET.fromstring(svg.encode())


def _group(svg: str, gid: str) -> ET.Element | None:
    return _root(svg).find(f".//{NS}g[@id='{gid}']")


def _markers(group: ET.Element) -> list[ET.Element]:
    """The drawn marks of a line or point group: marker uses, or paths outside <defs>."""
    defs = {id(p) for d in group.iter(f"{NS}defs") for p in d.iter()}
    uses = list(group.iter(f"{NS}use"))
    return uses or [p for p in group.iter(f"{NS}path") if id(p) not in defs]


def _segments(group: ET.Element) -> list[list[tuple[float, float]]]:
    """The points of each <path> of a group of plain line segments (bars, lines)."""
    return [[(float(a), float(b)) for a, b in re.findall(r"([-\d.]+) ([-\d.]+)", p.get("d"))]
            for p in group.iter(f"{NS}path")]


def _ids(svg: str, pattern: str) -> list[str]:
    groups = _root(svg).iter(f"{NS}g")
    return [g.get("id") for g in groups if re.fullmatch(pattern, g.get("id", ""))]


def _texts(svg: str) -> list[str]:
    return [t.text for t in _root(svg).iter(f"{NS}text")]


# --- determinism, ids, accessible text -------------------------------------------------

@pytest.mark.parametrize("draw", [_interaction, _covariate, _profile],
                         ids=["interaction", "covariate", "profile"])
def test_same_input_gives_byte_identical_undated_svg(draw):
    first, second = draw(), draw()
    assert first == second
    assert "<dc:date>" not in first
    assert draw(title="Another title") != first  # the output does depend on its input


def test_svg_is_the_same_in_a_fresh_interpreter():
    code = ("import hashlib; from appendix.figures import interaction_plot as f; "
            f"print(hashlib.sha256(f({COATINGS!r}, {REGIMES!r}, {MEANS!r}, {LOW!r}, {HIGH!r}, "
            "x_label='Seed coating', trace_label='Irrigation', "
            "y_label='Chlorophyll index (units)').encode()).hexdigest())")
    fresh = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                           check=True, env={**os.environ, "PYTHONHASHSEED": "12345"})
    assert fresh.stdout.strip() == hashlib.sha256(_interaction().encode()).hexdigest()


@pytest.mark.parametrize("draw, stem", [(_interaction, "interaction"), (_covariate, "covariate"),
                                        (_profile, "profile")])
def test_every_id_carries_the_stem(draw, stem):
    svg = draw(stem="fig-7")
    ids = re.findall(r'\bid="([^"]+)"', svg)
    assert ids and all(i.startswith("fig-7-") for i in ids)
    assert len(ids) == len(set(ids))
    refs = re.findall(r'(?:href="#|url\(#)([^")]+)', svg)
    assert refs and all(r.startswith("fig-7-") for r in refs)
    assert f"{stem}-title" in draw()


def test_title_and_desc_come_first_and_stay_plain_text():
    svg = _interaction(title="Means <b>by</b> coating & regime", trace_label="Water $ & <x>")
    root = _root(svg)
    assert root.get("role") == "img"
    assert root.get("aria-labelledby") == "interaction-title interaction-desc"
    first, second = list(root)[:2]
    assert (first.tag, first.text) == (f"{NS}title", "Means <b>by</b> coating & regime")
    assert second.tag == f"{NS}desc"
    assert second.text == (
        "Interaction plot: marginal means of Chlorophyll index (units) at each level of Seed "
        "coating (none, thin, thick), one line per level of Water $ & <x> (steady, pulsed), "
        "each with its own colour, marker and line style. 6 of 6 estimates drawn; 6 with a "
        "confidence interval as a vertical bar.")
    assert "<b>" not in svg and "<x>" not in svg
    assert "Water $ & <x>" in _texts(svg)  # the legend title, dollar signs not maths


def test_default_titles_name_the_labels():
    assert _root(_interaction())[0].text == \
        "Chlorophyll index (units) by Seed coating and Irrigation"
    assert _root(_profile())[0].text == "Chlorophyll index (units) across Visit by Group"
    assert _root(_covariate())[0].text == "Dry mass (g) against Baseline height (mm) by group"


def test_a_title_from_labels_written_in_lower_case_starts_with_a_capital():
    svg = _interaction(y_label="leaf chlorophyll index (units)", x_label="seed coating",
                       trace_label="irrigation regime")
    assert _root(svg)[0].text == "Leaf chlorophyll index (units) by seed coating and irrigation regime"


# --- interaction plot ------------------------------------------------------------------

def test_interaction_plot_has_one_line_per_trace_level_with_its_points_and_bars():
    svg = _interaction()
    assert _ids(svg, r"interaction-line-\d+-means") == [
        "interaction-line-0-means", "interaction-line-1-means"]
    for j in range(2):
        line = _group(svg, f"interaction-line-{j}-means")
        assert len(_markers(line)) == 3  # one marker per coating
        assert len(_segments(_group(svg, f"interaction-line-{j}-ci"))) == 3  # one bar each
        assert len(_ids(svg, rf"interaction-line-{j}-cap-\d+")) == 2  # lower and upper caps
    assert {"none", "thin", "thick", "steady", "pulsed", "Seed coating", "Irrigation",
            "Chlorophyll index (units)"} <= set(_texts(svg))


def test_interaction_bars_span_the_given_interval_and_are_dodged():
    svg = _interaction()
    bars = [_segments(_group(svg, f"interaction-line-{j}-ci")) for j in range(2)]
    for i in range(3):
        (x0, _), (x1, _) = bars[0][i][0], bars[1][i][0]
        assert abs(x0 - x1) > 6  # points: wider apart than a marker (6 pt), never sharing an x
    # bar length in SVG units is proportional to the interval width (same y scale)
    heights = np.array([abs(s[0][1] - s[1][1]) for j in range(2) for s in bars[j]])
    widths = np.array([h - lo for j in range(2) for h, lo in zip(HIGH[j], LOW[j])])
    assert np.allclose(heights / widths, heights[0] / widths[0], rtol=1e-4)


def test_each_trace_has_its_own_colour_marker_and_line_style():
    svg = _interaction()
    styles = [_group(svg, f"interaction-line-{j}-means").find(f"{NS}path").get("style")
              for j in range(2)]
    assert PALETTE[0].lower() in styles[0] and PALETTE[1].lower() in styles[1]
    assert "stroke-dasharray" not in styles[0] and "stroke-dasharray" in styles[1]
    shapes = []
    for j in range(2):
        use = _markers(_group(svg, f"interaction-line-{j}-means"))[0]
        shapes.append(_root(svg).find(f".//{NS}path[@id='{use.get(XLINK)[1:]}']").get("d"))
    assert shapes[0] != shapes[1]
    assert level_marker(0) != level_marker(1)


def test_missing_intervals_draw_no_bar_and_missing_estimates_no_point():
    low = [[30.1, None, 34.0], [float("nan"), 34.0, 36.1]]
    high = [[31.9, 34.4, None], [32.7, 35.8, 38.3]]
    means = [[31.0, 33.5, 35.0], [31.8, 34.9, None]]
    svg = _interaction(estimates=means, ci_low=low, ci_high=high)
    assert len(_segments(_group(svg, "interaction-line-0-ci"))) == 1  # only 'none' complete
    # only 'thin': 'thick' has no mean
    assert len(_segments(_group(svg, "interaction-line-1-ci"))) == 1
    assert len(_markers(_group(svg, "interaction-line-0-means"))) == 3
    assert len(_markers(_group(svg, "interaction-line-1-means"))) == 2
    assert "5 of 6 estimates drawn; 2 with a confidence interval" in svg
    nothing = [[None] * 3] * 2
    no_bars = _interaction(ci_low=nothing, ci_high=nothing)
    assert _ids(no_bars, r"interaction-line-\d+-(ci|cap-\d+)") == []
    assert len(_ids(no_bars, r"interaction-line-\d+-means")) == 2


def test_nothing_to_draw_gives_none_and_wrong_shapes_are_refused():
    empty = [[None, float("nan"), None]] * 2
    assert _interaction(estimates=empty) is None
    with pytest.raises(ValueError,
                       match=r"ci_low: expected 2 rows of 3 values .* got shape \(2, 2\)"):
        _interaction(ci_low=[[1.0, 2.0], [1.0, 2.0]])


def test_long_labels_are_wrapped_and_long_levels_slanted():
    long_level = "thick polymer coating, double layer"
    long_trace = "pulsed irrigation every six hours at night"
    svg = _interaction(x_levels=("none", "thin", long_level), trace_levels=("steady", long_trace),
                       y_label="Leaf chlorophyll index measured with a handheld meter (units)")
    texts = _texts(svg)
    # broken between words at 44 characters
    assert "Leaf chlorophyll index measured with a" in texts
    assert "handheld meter (units)" in texts
    assert long_trace not in texts  # legend entries break at 24 characters
    assert {"pulsed irrigation every", "six hours at night"} <= set(texts)
    slanted = [t for t in _root(svg).iter(f"{NS}text")
               if t.text == long_level and "rotate(-30" in t.get("transform", "")]
    assert len(slanted) == 1


def test_many_trace_levels_keep_bars_apart_and_cycle_colours():
    traces = tuple(f"t{j}" for j in range(9))
    means = [[float(j), j + 1.0] for j in range(9)]
    svg = interaction_plot(("a", "b"), traces, means, [[m - 0.5 for m in r] for r in means],
                           [[m + 0.5 for m in r] for r in means], x_label="x",
                           trace_label="trace", y_label="y")
    xs = [_segments(_group(svg, f"interaction-line-{j}-ci"))[0][0][0] for j in range(9)]
    assert np.all(np.diff(xs) > 3)  # dodged left to right in level order
    style = _group(svg, "interaction-line-8-means").find(f"{NS}path").get("style")
    assert PALETTE[0].lower() in style  # the ninth level cycles back to the first colour


# --- profile plot ----------------------------------------------------------------------

def test_profile_plot_has_a_line_per_group_across_the_visits():
    svg = _profile(group_label="Seed coating")
    assert len(_ids(svg, r"profile-line-\d+-means")) == 3
    for j in range(3):
        assert len(_markers(_group(svg, f"profile-line-{j}-means"))) == 3
        assert len(_segments(_group(svg, f"profile-line-{j}-ci"))) == 3
    texts = _texts(svg)
    assert [t for t in texts if t in ("day7", "day14", "day21")] == ["day7", "day14", "day21"]
    assert {"Visit", "Seed coating", "none", "thin", "thick"} <= set(texts)
    # means rise across visits: in SVG y grows downwards
    line = _segments(_group(svg, "profile-line-2-means"))[0]
    assert line[0][1] > line[1][1] > line[2][1]


def test_profile_plot_with_a_missing_visit_mean_breaks_the_line():
    means = [[20.0, None, 27.0], [20.5, 26.0, 30.0], [21.0, 27.5, 33.0]]
    svg = _profile(means=means)
    assert len(_markers(_group(svg, "profile-line-0-means"))) == 2
    assert len(_segments(_group(svg, "profile-line-0-ci"))) == 2
    assert "8 of 9 estimates drawn; 8 with a confidence interval" in svg


# --- covariate scatter -----------------------------------------------------------------

def test_covariate_scatter_draws_every_unit_and_parallel_lines():
    x, y, codes = _covariate_data()
    svg = _covariate(x, y, codes)
    for g in range(3):
        assert len(_markers(_group(svg, f"covariate-group-{g}-points"))) == 20
    fits = [_segments(_group(svg, f"covariate-group-{g}-fit"))[0] for g in range(3)]
    slopes = [(b[1] - a[1]) / (b[0] - a[0]) for a, b in fits]
    assert slopes == pytest.approx([slopes[0]] * 3, rel=1e-5)  # one common slope
    assert slopes[0] < 0  # a positive slope rises (SVG y grows downwards)
    # each line spans its own group's covariate range, read off through the x scale
    scale = (fits[1][1][0] - fits[1][0][0]) / (x[codes == 1].max() - x[codes == 1].min())
    for g in (0, 2):
        own = x[codes == g]
        assert (fits[g][1][0] - fits[g][0][0]) / scale == pytest.approx(own.max() - own.min(),
                                                                       rel=1e-4)
    texts = _texts(svg)
    assert f"Covariate mean = {x.mean():.4g}" in texts
    assert {"none", "thin", "thick", "Baseline height (mm)", "Dry mass (g)"} <= set(texts)
    (mean_line,) = _segments(_group(svg, "covariate-covariate-mean"))
    at = mean_line[0][0]
    # at the covariate mean the lines sit at the intercepts 10 < 12 < 14 (y grows downwards)
    heights = [a[1] + (at - a[0]) * slope for (a, _), slope in zip(fits, slopes)]
    assert heights[0] > heights[1] > heights[2]
    assert (heights[0] - heights[1]) == pytest.approx(heights[1] - heights[2], rel=1e-4)


def test_covariate_intercepts_are_taken_at_the_given_centre():
    x, y, codes = _covariate_data()
    at_mean = _segments(_group(_covariate(x, y, codes), "covariate-group-0-fit"))[0]
    # the same lines written with intercepts at x = 0 instead of at the covariate mean
    shifted = [c - 0.5 * x.mean() for c in (10.0, 12.0, 14.0)]
    at_zero = _segments(_group(_covariate(x, y, codes, intercepts=shifted, centre=0.0),
                               "covariate-group-0-fit"))[0]
    assert np.allclose(at_mean, at_zero, atol=1e-3)


def test_covariate_scatter_skips_missing_values_and_lines():
    x, y, codes = _covariate_data()
    x[0], y[3] = np.nan, np.nan  # two units of group 0
    svg = _covariate(x, y, codes, intercepts=[10.0, None, float("nan")])
    assert len(_markers(_group(svg, "covariate-group-0-points"))) == 18
    assert _ids(svg, r"covariate-group-\d+-fit") == ["covariate-group-0-fit"]
    assert "58 units in 3 groups" in svg and "fitted parallel lines (common slope): 1 of 3" in svg
    assert _ids(_covariate(x, y, codes, slope=None), r"covariate-group-\d+-fit") == []
    assert _covariate(np.full(3, np.nan), np.ones(3), np.zeros(3, int)) is None
    with pytest.raises(ValueError, match="intercepts one per group label"):
        _covariate(intercepts=[1.0, 2.0])
    with pytest.raises(ValueError, match=r"codes must index group_labels \(0 to 2\)"):
        _covariate(*_covariate_data(6)[:2], np.array([0, 1, 2, 3, 0, 1]))


def test_covariate_points_are_thinned_beyond_the_plot_limit(monkeypatch):
    monkeypatch.setattr(figures, "PLOT_POINTS", 45)  # small, so that markers can be counted
    x, y, codes = _covariate_data(300, seed=11)
    svg = _covariate(x, y, codes)
    drawn = sum(len(_markers(_group(svg, f"covariate-group-{g}-points"))) for g in range(3))
    assert drawn == 45
    # the lines and the mean still use every unit
    assert f"Covariate mean = {x.mean():.4g}" in _texts(svg)
    assert "300 units in 3 groups" in svg


def test_dense_covariate_clouds_are_rasterised():
    x, y, codes = _covariate_data(DENSE_POINTS + 300, seed=3)
    svg = _covariate(x, y, codes)
    assert svg.count("data:image/png;base64,") == 1
    assert "<image" not in _covariate()


# --- colours under simulated colour vision deficiency ----------------------------------

def _line_colours(svg: str) -> set[str]:
    return {c.upper() for c in re.findall(r"(?:stroke|fill): (#[0-9a-fA-F]{6})", svg)}


@pytest.mark.parametrize("vision", [None, DEUTERANOPIA, PROTANOPIA],
                         ids=["typical", "deuteranopia", "protanopia"])
def test_colours_of_the_new_figures_stay_apart(vision):
    # Machado, Oliveira & Fernandes (2009) simulation, as in test_render_figures.py
    neutral = {"#000000", "#FFFFFF"}
    six = [[20.0 + g, 24.0 + g, 27.0 + g] for g in range(6)]  # a profile of six groups
    wide = _profile(group_labels=tuple(f"g{g}" for g in range(6)), means=six,
                    ci_low=[[m - 1 for m in r] for r in six],
                    ci_high=[[m + 1 for m in r] for r in six])
    used = set().union(*(_line_colours(s) for s in (_interaction(), _covariate(), wide)))
    assert used - neutral == set(PALETTE[:6])  # no colour outside the checked palette
    seen = [_lab(_linear(c) if vision is None else vision @ _linear(c))
            for c in sorted(used - neutral)]
    assert min(np.linalg.norm(a - b) for a, b in itertools.combinations(seen, 2)) >= 15.0


def test_covariate_points_are_adjusted_for_the_blocks_as_the_lines_are(computed_demos, monkeypatch):
    """In the wound-dose demo the model adjusts for cohort (blocks): each point drawn is the
    unit's partial residual (its cell's line at its covariate value plus its residual,
    Larsen & McCleary 1972), which, with the same residuals, must regress on the covariate
    with exactly the model's common slope; the raw values would not. Checked with numpy's
    least squares on the points drawn."""
    from appendix import figures

    computed = computed_demos["wound-dose"]
    drawn = {}

    def capture(x, y, groups, labels, slope, intercepts, **kwargs):
        drawn[kwargs["stem"]] = (np.asarray(x, float), np.asarray(y, float), np.asarray(groups),
                                 slope, kwargs["x_label"])
        return "<svg/>"

    monkeypatch.setattr(figures, "covariate_scatter", capture)
    figures.make_figures(computed.dataset, computed.results, computed.residuals)
    x, y, groups, slope, x_label = drawn["wound_area-covariate-1"]
    assert x_label == "wound area at day 0 (mm\u00b2)"  # the covariate's unit on its axis
    within = np.column_stack([np.eye(groups.max() + 1)[groups], x])
    fitted_slope = np.linalg.lstsq(within, y, rcond=None)[0][-1]
    assert fitted_slope == pytest.approx(slope, rel=1e-9)
    raw = computed.dataset.outcome("wound_area").values
    assert not np.allclose(y, raw)  # the cohort effects are taken out of the points


def test_the_covariate_caption_names_what_the_points_are_adjusted_for(computed_demos):
    from appendix import api

    html = api.render(computed_demos["wound-dose"]).html
    sentence = ("Each point is adjusted for cohort: its cell's line at its covariate value "
                "plus its model residual.")
    captions = re.findall(r'<figure id="figure-[a-z_]+-covariate-1" class="figure">.*?'
                          r'Figure (\d+)\.</span>(.*?)</figcaption>', html, re.S)
    assert len(captions) == 3  # one covariate figure per outcome
    # said under the first; the others point to it (captions.Captions.note)
    (first, text), *later = captions
    assert sentence in text and html.count(sentence) == 1
    assert all(f"Other notes as for Figure {first}." in other for _, other in later)
