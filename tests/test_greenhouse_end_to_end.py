"""End to end: the second demo (blocked two-factor design, baseline covariate, repeated
visits) through the command line to a finished HTML and PDF appendix."""

from __future__ import annotations

import json
import shutil
from pathlib import Path

import pytest
from pypdf import PdfReader

from appendix.numbers import write_parts

from tests.conftest import REPO
from tests.test_cli import run_cli
from tests.test_end_to_end import _Ids

DEMO = REPO / "studies" / "greenhouse-split"
PARTS = ["descriptives", "figures", "variance", "sphericity", "slopes", "marginal", "contrasts",
         "diagnostics", "conclusion"]


@pytest.fixture(scope="module")
def run(tmp_path_factory) -> Path:
    folder = tmp_path_factory.mktemp("greenhouse")
    shutil.copytree(DEMO, folder / "study", ignore=shutil.ignore_patterns("__pycache__"))
    code, _, err = run_cli(["run", "study/study.yaml", "--out", "out"], folder)
    assert code == 0, err
    return folder / "out"


def test_every_section_is_there_and_every_link_lands(run):
    parser = _Ids()
    parser.feed((run / "appendix.html").read_text(encoding="utf-8"))
    for outcome in ("chlorophyll",):
        for part in PARTS:
            assert f"{outcome}-{part}" in parser.ids
    assert set(parser.links) <= parser.ids


def test_both_strata_sphericity_slopes_and_the_registered_family(run):
    results = json.loads((run / "results.json").read_text(encoding="utf-8"))
    (model,) = results["outcomes"]
    between, within = model["tables"]
    assert (between["stratum"], within["stratum"], between["ss_type"]) == ("between units",
                                                                           "within units", 3)
    assert [r["term"] for r in between["rows"]] == [["baseline"], ["bench"], ["coating"],
                                                    ["irrigation"], ["coating", "irrigation"]]
    assert [r["term"] for r in within["rows"]] == [["visit"], ["coating", "visit"]]
    assert all(r["gg_p"] is not None for r in within["rows"])
    assert model["n_units"] == 67  # 72 pots, 5 with a missed visit (complete units only)
    assert model["tables"][1]["sphericity"]["greenhouse_geisser"] <= 1.0
    assert [s["covariate"] for s in model["slopes"]] == ["baseline seedling height"]
    (family,) = model["contrasts"]
    assert family["multiplicity"] == "holm" and len(family["hypotheses"]) == 2 + 3 * 2
    # The generator builds a coating effect and a coating x visit interaction into the data.
    coating = next(r for r in between["rows"] if r["term"] == ["coating"])
    interaction = next(r for r in within["rows"] if r["term"] == ["coating", "visit"])
    assert coating["p"] < 0.001 and interaction["gg_p"] < 0.001
    # the residual figures are of the unit means; the profile plot takes the means' place
    # (and the study's unit-flow diagram)
    assert sorted(p.name for p in (run / "figures").iterdir()) == [
        f"chlorophyll-{kind}.svg" for kind in ("contrasts", "covariate-1", "distribution", "f-reference",
                                               "interaction-3", "profile", "qq", "residuals")
    ] + ["unit-flow.svg"]


def test_the_pdf_names_the_design_and_carries_the_caution(run):
    text = " ".join(" ".join(page.extract_text() for page in PdfReader(run / "appendix.pdf").pages).split())
    assert "Greenhouse–Geisser" in text and "Mauchly" in text
    assert "sum-to-zero coding" in text
    assert "not, a clinical or regulatory decision" in text


def test_an_interaction_with_the_within_factor_is_concluded_on_as_an_interaction(run):
    results = json.loads((run / "results.json").read_text(encoding="utf-8"))
    (model,) = results["outcomes"]
    sentences = [write_parts(c["parts"]) for c in model["conclusions"]]
    (visit,) = [s for s in sentences if s.startswith("Seed coating × visit")]
    assert "the hypothesis of no interaction is rejected" in visit


def test_every_tested_term_of_both_strata_has_cohens_f(run):
    # Cohen's f = sqrt(eta^2 / (1 - eta^2)) of the partial share (Cohen 1988, Statistical
    # Power Analysis, 2nd ed., ch. 8), its interval the image of the share's interval
    results = json.loads((run / "results.json").read_text(encoding="utf-8"))
    (model,) = results["outcomes"]
    rows = [row for table in model["tables"] for row in table["rows"]]
    assert {row["kind"] for row in rows} >= {"factor", "interaction"}
    for row in rows:
        share = row["partial_eta_squared"]
        assert row["cohens_f"] == pytest.approx((share / (1 - share)) ** 0.5, rel=1e-12)
        low, high = row["partial_eta_ci_low"], row["partial_eta_ci_high"]
        assert row["cohens_f_ci_low"] == pytest.approx((low / (1 - low)) ** 0.5, rel=1e-12)
        assert row["cohens_f_ci_high"] == pytest.approx((high / (1 - high)) ** 0.5, rel=1e-12)
