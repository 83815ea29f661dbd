"""make_figures: valid, deterministic, light SVG with one colour per level.

Data are the INVENTED fixtures of conftest.py, plus a seeded dense cloud made here.
"""

from __future__ import annotations

import dataclasses
import itertools
import re
import xml.etree.ElementTree as ET

import numpy as np
import pytest

from appendix.data.dataset import Dataset, OutcomeData, frozen_array
from appendix.figure_spec import FIGURE_KINDS, UNIT_FLOW_FIGURE
from appendix.figures import _DRAWERS, DENSE_POINTS, PALETTE, make_figures
from conftest import build_residuals

SVG = "{http://www.w3.org/2000/svg}svg"


def _with_row(outcome, **changes):
    """`outcome` with its factor's row of the variance table changed."""
    table = outcome.tables[0]
    row = dataclasses.replace(table.rows[0], **changes)
    return dataclasses.replace(outcome, tables=(dataclasses.replace(table, rows=(row,)),))


def test_every_figure_is_valid_svg(figures):
    expected = {f"sbp_change-{kind}" for kind in (*FIGURE_KINDS, "contrasts")}
    # the degenerate outcome has no F, residuals without spread and no contrast estimate
    expected |= {"pain-distribution", "pain-means", "pain-residuals"}
    expected.add(UNIT_FLOW_FIGURE)  # one per study, from the unit flow
    assert set(figures) == expected
    for svg in figures.values():
        assert ET.fromstring(svg.encode()).tag == SVG


def test_every_kind_the_page_shows_has_its_drawer_and_no_drawer_is_left_out():
    assert sorted(_DRAWERS) == sorted(FIGURE_KINDS)


def test_figures_are_deterministic_and_undated(dataset, study_results, figures, residuals):
    assert make_figures(dataset, study_results, residuals) == figures
    for svg in figures.values():
        assert "<dc:date>" not in svg


def test_ids_are_unique_across_figures(figures):
    ids = [i for svg in figures.values() for i in re.findall(r'\bid="([^"]+)"', svg)]
    assert len(ids) == len(set(ids))
    for stem, svg in figures.items():
        refs = re.findall(r'(?:href="#|url\(#)([^")]+)', svg)
        assert refs and all(r.startswith(stem + "-") for r in refs)


def test_text_stays_text_with_units_in_axis_labels(figures):
    texts = ET.fromstring(figures["sbp_change-distribution"].encode()).iter(
        "{http://www.w3.org/2000/svg}text")
    labels = [t.text for t in texts]
    assert "Change in systolic blood pressure (mmHg)" in " ".join(labels)
    assert {"placebo", "low dose", "high dose"} <= set(labels)
    assert "Residual (mmHg)" in figures["sbp_change-qq"]


def test_plan_and_data_strings_stay_plain_text(dataset, study_results, residuals):
    levels = ("<script>alert(1)</script>", "cost $5 & $6 -->", "x")
    primary = dataclasses.replace(study_results.outcomes[1], label="Cost ($) <b>", unit="$")
    figures = make_figures(dataclasses.replace(dataset, levels=levels),
                           dataclasses.replace(study_results, outcomes=(primary,)), residuals)
    svg = figures["sbp_change-distribution"]
    assert "<script" not in svg and "<b>" not in svg and "<!--" not in svg
    texts = [t.text for t in ET.fromstring(svg.encode()).iter("{http://www.w3.org/2000/svg}text")]
    assert "cost $5 & $6 -->" in texts and "Cost ($) <b> ($)" in texts


def test_f_figure_is_skipped_when_f_is_missing(dataset, study_results, residuals):
    primary = study_results.outcomes[1]
    no_f = _with_row(primary, statistic=None, p=None)
    results = dataclasses.replace(study_results, outcomes=(no_f,))
    figures = make_figures(dataset, results, residuals)
    assert "sbp_change-f-reference" not in figures
    assert "sbp_change-distribution" in figures


def test_huge_f_is_marked_off_scale(dataset, study_results, residuals):
    primary = study_results.outcomes[1]
    huge = _with_row(primary, statistic=412.5)
    svg = make_figures(dataset, dataclasses.replace(study_results, outcomes=(huge,)), residuals)[
        "sbp_change-f-reference"]
    assert "Observed F = 412.50 \u2192" in svg
    ticks = [float(t.text.replace("\u2212", "-")) for t in ET.fromstring(svg.encode()).iter(
        "{http://www.w3.org/2000/svg}text") if re.fullmatch(r"[\d.]+", t.text or "")]
    assert max(ticks) < 20  # the axis keeps the density's scale
    normal = make_figures(dataset, study_results, residuals)["sbp_change-f-reference"]
    assert "Observed F = 5.73" in normal and "\u2192" not in normal


def test_many_levels_get_slanted_labels_and_cycle_colours(dataset, study_results):
    levels = tuple(f"dose {i}" for i in range(9))
    data = dataset.outcomes[0]
    codes = frozen_array(np.arange(len(data.values)) % 9)
    many = dataclasses.replace(dataset, levels=levels, outcomes=(dataclasses.replace(
        data, codes=codes, factors=(codes,)),))
    svg = make_figures(many, dataclasses.replace(
        study_results, outcomes=(study_results.outcomes[1],)), {})["sbp_change-distribution"]
    slanted = [t for t in ET.fromstring(svg.encode()).iter("{http://www.w3.org/2000/svg}text")
               if t.text in levels and "rotate(-30" in t.get("transform", "")]
    assert len(slanted) == 9
    assert PALETTE[7].lower() in svg.lower()  # eight colours used, the ninth level cycles


def test_each_level_keeps_its_colour(figures, residuals):
    for kind in ("distribution", "means", "qq", "residuals"):
        svg = figures[f"sbp_change-{kind}"].lower()
        for colour in PALETTE[:3]:
            assert colour.lower() in svg, (kind, colour)
        assert PALETTE[3].lower() not in svg  # no fourth level, no fourth colour


def test_dense_clouds_are_rasterised(study_results, figures, residuals):
    rng = np.random.default_rng(99)  # INVENTED dense data
    n = DENSE_POINTS + 600
    codes = np.arange(n) % 3
    values = rng.normal(0, 4, n) + np.array([-2.0, -7.0, -12.0])[codes]
    dense = Dataset(levels=study_results.factor.levels, inputs=(), unit_flow=None,
                    findings=(), outcomes=(OutcomeData(
                        "sbp_change", frozen_array(values), frozen_array(codes),
                        tuple(str(i) for i in range(n)), tuple(range(2, n + 2)),
                        factors=(frozen_array(codes),)),))
    results = dataclasses.replace(study_results, outcomes=(study_results.outcomes[1],))
    heavy = make_figures(dense, results, build_residuals(dense))
    for kind in ("distribution", "qq", "residuals"):
        assert heavy[f"sbp_change-{kind}"].count("data:image/png;base64,") == 1
        assert "<image" not in figures[f"sbp_change-{kind}"]
    # the raster replaces thousands of markers: the file stays small
    assert len(heavy["sbp_change-distribution"]) < 400_000
    assert "<image" not in heavy["sbp_change-f-reference"]


# --- palette under simulated colour vision deficiency ---------------------------------
# Machado, Oliveira & Fernandes (2009), IEEE TVCG 15(6), severity 1.0 matrices on linear
# RGB (values as published in the paper's table, from memory).
DEUTERANOPIA = np.array([[0.367322, 0.860646, -0.227968],
                         [0.280085, 0.672501, 0.047413],
                         [-0.011820, 0.042940, 0.968881]])
PROTANOPIA = np.array([[0.152286, 1.052583, -0.204868],
                       [0.114503, 0.786281, 0.099216],
                       [-0.003882, -0.048116, 1.051998]])


def _linear(colour: str) -> np.ndarray:
    c = np.array([int(colour[i:i + 2], 16) for i in (1, 3, 5)]) / 255
    return np.where(c <= 0.04045, c / 12.92, ((c + 0.055) / 1.055) ** 2.4)


def _lab(rgb: np.ndarray) -> np.ndarray:
    """CIE L*a*b* (D65) of linear sRGB."""
    m = np.array([[0.4124, 0.3576, 0.1805], [0.2126, 0.7152, 0.0722],
                  [0.0193, 0.1192, 0.9505]])
    xyz = m @ np.clip(rgb, 0, 1) / np.array([0.95047, 1.0, 1.08883])
    f = np.where(xyz > 0.008856, np.cbrt(xyz), 7.787 * xyz + 16 / 116)
    return np.array([116 * f[1] - 16, 500 * (f[0] - f[1]), 200 * (f[1] - f[2])])


@pytest.mark.parametrize("vision", [None, DEUTERANOPIA, PROTANOPIA],
                         ids=["typical", "deuteranopia", "protanopia"])
def test_first_six_colours_stay_apart(vision):
    seen = [_lab(_linear(c) if vision is None else vision @ _linear(c)) for c in PALETTE[:6]]
    closest = min(np.linalg.norm(a - b) for a, b in itertools.combinations(seen, 2))
    assert closest >= 15.0
    white = _lab(np.ones(3))
    assert min(np.linalg.norm(c - white) for c in seen) >= 20.0  # visible on paper


# --- forest plot of the registered contrasts -------------------------------------------

def _texts(svg: str) -> list[ET.Element]:
    return list(ET.fromstring(svg.encode()).iter("{http://www.w3.org/2000/svg}text"))


def _with_registered(study_results, **changes):
    """The fixture with the primary outcome's registered family changed."""
    primary = study_results.outcomes[1]
    family = dataclasses.replace(primary.contrasts[0], **changes)
    outcome = dataclasses.replace(primary, contrasts=(family,) + primary.contrasts[1:])
    return dataclasses.replace(study_results, outcomes=(outcome,))


def test_forest_labels_hypotheses_top_to_bottom_in_plan_order(figures, study_results):
    texts = _texts(figures["sbp_change-contrasts"])
    labels = [h.label for h in study_results.outcomes[1].contrasts[0].hypotheses]
    ys = {t.text: float(t.get("y")) for t in texts if t.text in labels}
    assert sorted(ys, key=ys.get) == labels  # SVG y grows downwards
    words = [t.text for t in texts]
    assert "Contrast estimate (mmHg)" in words
    # C3:high dose is not tested under the fixed sequence: a labelled gap in its row
    gap = next(t for t in texts if t.text == "not tested under the plan")
    assert float(gap.get("y")) == pytest.approx(ys["high dose \u2212 placebo"], abs=4)


def test_forest_draws_an_open_bound_as_an_arrow(dataset, study_results, figures, residuals):
    def patches(svg):
        return len(re.findall(r'<g id="[^"]*-patch_\d+"', svg))

    one_sided = study_results.outcomes[1].contrasts[0].hypotheses[1]
    assert one_sided.alternative == "less" and one_sided.ci_low is None
    closed = dataclasses.replace(one_sided, ci_low=one_sided.ci_high - 5.0)
    hypotheses = list(study_results.outcomes[1].contrasts[0].hypotheses)
    hypotheses[1] = closed
    svg = make_figures(dataset, _with_registered(study_results, hypotheses=tuple(hypotheses)), residuals)[
        "sbp_change-contrasts"]
    assert patches(figures["sbp_change-contrasts"]) == patches(svg) + 1  # the arrow head


def test_forest_axis_of_a_rank_based_family(dataset, study_results, residuals):
    svg = make_figures(dataset, _with_registered(study_results, method="rank-based"), residuals)[
        "sbp_change-contrasts"]
    assert "Difference in mean ranks" in [t.text for t in _texts(svg)]


def test_forest_only_when_the_outcome_has_drawable_contrasts(dataset, study_results, residuals):
    primary = study_results.outcomes[1]
    bare = dataclasses.replace(study_results, outcomes=(
        dataclasses.replace(primary, contrasts=()),))
    assert "sbp_change-contrasts" not in make_figures(dataset, bare, residuals)
    gaps = tuple(dataclasses.replace(h, decision="unavailable")
                 for h in primary.contrasts[0].hypotheses)
    assert "sbp_change-contrasts" not in make_figures(
        dataset, _with_registered(study_results, hypotheses=gaps), residuals)
    # one gap among drawn rows is labelled in its row
    some = (gaps[0],) + primary.contrasts[0].hypotheses[1:]
    svg = make_figures(dataset, _with_registered(study_results, hypotheses=some), residuals)[
        "sbp_change-contrasts"]
    assert "unavailable" in [t.text for t in _texts(svg)]


def test_forest_labels_stay_plain_text(dataset, study_results, residuals):
    hypotheses = list(study_results.outcomes[1].contrasts[0].hypotheses)
    hypotheses[0] = dataclasses.replace(hypotheses[0], label="<script>x</script> $a$")
    svg = make_figures(dataset, _with_registered(study_results, hypotheses=tuple(hypotheses)), residuals)[
        "sbp_change-contrasts"]
    assert "<script>" not in svg
    assert "<script>x</script> $a$" in [t.text for t in _texts(svg)]
