"""`appendix diff` (appendix.compare) on runs of the invented demo studies: the demo's
corrected data flip a registered conclusion, and the diff names it and the changed units.
Expected data changes are read from the data files with Python's csv module."""

from __future__ import annotations

import csv
import html.parser
import importlib.util
import io
import json
import shutil
import statistics
from pathlib import Path

import numpy as np
import pandas as pd
import pingouin
import pytest
import scipy.stats

from appendix import api
from appendix.cli import main
from appendix.compare import (
    compare_runs,
    conclusions_of,
    flatten_plan,
    numbers_of,
    render_page,
    to_json,
)
from appendix.errors import UserError
from appendix.names import RECORDS_FILE
from appendix.records import write_records
from appendix.results import from_json
from appendix.tolerance import Tolerance

REPO = Path(__file__).resolve().parent.parent
DEMO = REPO / "studies" / "seed-coating"


def _run(study: Path, folder: Path) -> Path:
    """A run folder as `appendix run` makes it, with the records written into it."""
    api.run(study, out_dir=folder, pdf=False)
    computed = api.compute(study)
    write_records(folder, computed.loaded, computed.dataset)
    return folder


def _copy_demo(target: Path) -> Path:
    shutil.copytree(DEMO, target, ignore=shutil.ignore_patterns("__pycache__"))
    return target / "study.yaml"


@pytest.fixture(scope="module")
def demo_runs(tmp_path_factory):
    """Run A on the demo data, run B on the demo's corrected data (same plan)."""
    root = tmp_path_factory.mktemp("diff")
    study = _copy_demo(root / "study")
    before = _run(study, root / "before")
    shutil.copyfile(study.parent / "data" / "units-corrected.csv", study.parent / "data" / "units.csv")
    after = _run(study, root / "after")
    return before, after


def _csv(name: str) -> dict[str, dict[str, str]]:
    with (DEMO / "data" / name).open(newline="", encoding="utf-8") as handle:
        return {row["unit_id"]: row for row in csv.DictReader(handle)}


def _humic_mean(rows: dict[str, dict[str, str]]) -> float:
    return statistics.fmean(float(r["shoot_dry_mass_mg"]) for r in rows.values()
                            if r["coating"] == "humic" and r["damaged"] == "no" and r["shoot_dry_mass_mg"])


def diff_command(run_a: Path, run_b: Path, *options: str) -> tuple[int, io.StringIO]:
    """`appendix diff RUN_A RUN_B OPTIONS...`: its exit code and what it printed (no errors)."""
    out, err = io.StringIO(), io.StringIO()
    code = main(["diff", str(run_a), str(run_b), *options], stdout=out, stderr=err, cwd=run_a.parent)
    assert err.getvalue() == ""
    return code, out


def test_demo_diff_names_the_flipped_conclusion(demo_runs):
    code, out = diff_command(*demo_runs, "--json")
    assert code == 1
    diff = json.loads(out.getvalue())
    assert diff["conclusions_changed"] is True
    (flip,) = diff["conclusions"]
    assert (flip["outcome"], flip["kind"], flip["id"], flip["role"]) == (
        "dry_mass", "hypothesis", "C2:humic", "primary")
    assert (flip["a"]["decision"], flip["b"]["decision"]) == ("retain", "reject")
    assert flip["a"]["p"] > diff["a"]["alpha"] > flip["b"]["p"]
    assert "not rejected" in flip["a"]["sentence"] and "is rejected" in flip["b"]["sentence"]


def test_demo_diff_names_the_changed_units(demo_runs):
    diff = compare_runs(*demo_runs)
    before, after = _csv("units.csv"), _csv("units-corrected.csv")
    added = sorted(set(after) - set(before))
    assert [r.unit for r in diff.data.added] == added == ["P049"]
    assert diff.data.added[0].levels == {"coating": after["P049"]["coating"]}
    assert diff.data.removed == ()
    expected = [(u, col) for u in before for col in before[u] if before[u][col] != after[u][col]]
    assert expected == [("P024", "shoot_dry_mass_mg")]
    assert [(c.unit, c.column) for c in diff.data.changed] == expected
    (change,) = diff.data.changed
    assert (change.role, change.name) == ("outcome", "dry_mass")
    assert (change.text_a, change.text_b) == (before["P024"]["shoot_dry_mass_mg"],
                                              after["P024"]["shoot_dry_mass_mg"])
    assert (change.value_a, change.value_b) == (37.2, 47.2)
    assert (change.status_a, change.status_b) == ("analysed", "analysed")


def test_demo_diff_sizes_the_moves(demo_runs):
    diff = compare_runs(*demo_runs)
    moves = {(m.outcome, m.quantity): m for m in diff.numbers}
    mean = moves[("dry_mass", "mean[humic].estimate")]
    a, b = _humic_mean(_csv("units.csv")), _humic_mean(_csv("units-corrected.csv"))
    assert mean.a == pytest.approx(a, rel=1e-12) and mean.b == pytest.approx(b, rel=1e-12)
    assert mean.change == pytest.approx(b - a, rel=1e-9)
    assert mean.relative_change == pytest.approx((b - a) / a, rel=1e-9)
    assert (moves[("dry_mass", "n_units")].a, moves[("dry_mass", "n_units")].b) == (43, 44)
    # a versus-control estimate is a difference of two means: only humic's moved
    assert moves[("dry_mass", "C2:humic.estimate")].change == pytest.approx(b - a, rel=1e-9)
    assert ("dry_mass", "C2:chitosan.estimate") not in moves
    assert ("dry_mass", "mean[uncoated].estimate") not in moves
    assert next(iter(moves)) == ("dry_mass", "units/coating.statistic")  # primary outcome, its factor's F first


LEVELS = ("uncoated", "chitosan", "seaweed", "humic")


def _groups(rows: dict[str, dict[str, str]], column: str) -> list[list[float]]:
    """The analysed values of `column` per coating in plan order: rule X1 sets damaged
    seedlings aside, an empty cell is missing."""
    return [[float(r[column]) for r in rows.values()
             if r["coating"] == level and r["damaged"] == "no" and r[column]] for level in LEVELS]


@pytest.mark.filterwarnings("ignore:The inplace keyword in DataFrame.dropna is deprecated:Warning")
@pytest.mark.parametrize("side, data", [(0, "units.csv"), (1, "units-corrected.csv")])
def test_one_factor_numbers_are_its_terms_test_the_robust_tests_and_effect_sizes(demo_runs, side, data):
    # References on the CSV data: scipy.stats.f_oneway and scipy.stats.kruskal (scipy 1.17),
    # pingouin.welch_anova and pingouin.anova (np2, pingouin 0.7.0; its pandas deprecation
    # warning is ignored by name); omega squared (SS_b - df_b MS_w) / (SS_t + MS_w) and
    # Cohen's f = sqrt(eta^2 / (1 - eta^2)) as textbook formulas (Hays 1963; Cohen 1988,
    # ch. 8; from memory).
    results = from_json((demo_runs[side] / "results.json").read_text(encoding="utf-8"))
    reported = {key[1]: value for key, value in numbers_of(results).items() if key[0] == "dry_mass"}
    numbers = {quantity: (r.label, r.value) for quantity, r in reported.items()}
    # each number carries its kind, which says how the diff writes it
    assert {q: reported[q].kind for q in ("units/coating.statistic", "units/coating.p", "welch.p",
                                           "kruskal.statistic", "units/coating.partial_eta_squared.ci_low",
                                           "units/coating.partial_omega_squared.estimate",
                                           "units/coating.cohens_f.estimate", "n_units", "n[humic]",
                                           "mean[humic].estimate", "C2:humic.p_adjusted")} == {
        "units/coating.statistic": "statistic", "units/coating.p": "p", "welch.p": "p",
        "kruskal.statistic": "statistic", "units/coating.partial_eta_squared.ci_low": "share",
        "units/coating.partial_omega_squared.estimate": "share",
        "units/coating.cohens_f.estimate": "estimate", "n_units": "count", "n[humic]": "count",
        "mean[humic].estimate": "estimate", "C2:humic.p_adjusted": "p"}
    groups = _groups(_csv(data), "shoot_dry_mass_mg")
    frame = pd.DataFrame({"y": [y for g in groups for y in g],
                          "g": [level for level, g in zip(LEVELS, groups) for _ in g]})
    classical, welch = scipy.stats.f_oneway(*groups), pingouin.welch_anova(frame, dv="y", between="g")
    kruskal, eta = scipy.stats.kruskal(*groups), float(pingouin.anova(frame, dv="y", between="g")["np2"][0])
    assert numbers["units/coating.statistic"] == ("F, seed coating", pytest.approx(classical.statistic, rel=1e-10))
    assert numbers["units/coating.p"] == ("p, seed coating", pytest.approx(classical.pvalue, rel=1e-8))
    assert numbers["welch.statistic"] == ("F (Welch)", pytest.approx(float(welch["F"][0]), rel=1e-10))
    assert numbers["welch.p"] == ("p (Welch)", pytest.approx(float(welch["p_unc"][0]), rel=1e-8))
    assert numbers["kruskal.statistic"] == ("H (Kruskal–Wallis)", pytest.approx(kruskal.statistic, rel=1e-10))
    assert numbers["kruskal.p"] == ("p (Kruskal–Wallis)", pytest.approx(kruskal.pvalue, rel=1e-8))
    # one term in one table: its partial share is the share itself, and is called so
    label, value = numbers["units/coating.partial_eta_squared.estimate"]
    assert (label, value) == ("eta squared, seed coating", pytest.approx(eta, rel=1e-10))
    y = frame["y"].to_numpy()
    ss_within = sum(((np.asarray(g) - np.mean(g)) ** 2).sum() for g in groups)
    ms_within, ss_total = ss_within / (y.size - len(groups)), ((y - y.mean()) ** 2).sum()
    omega = (ss_total - ss_within - (len(groups) - 1) * ms_within) / (ss_total + ms_within)
    assert numbers["units/coating.partial_omega_squared.estimate"] == (
        "omega squared, seed coating", pytest.approx(omega, rel=1e-10))
    assert numbers["units/coating.cohens_f.estimate"] == (
        "Cohen's f, seed coating", pytest.approx(np.sqrt(eta / (1 - eta)), rel=1e-10))
    for measure in ("partial_eta_squared", "partial_omega_squared", "cohens_f"):
        low, high = (numbers[f"units/coating.{measure}.{end}"][1] for end in ("ci_low", "ci_high"))
        assert 0 <= low < numbers[f"units/coating.{measure}.estimate"][1] < high
    eta_low, eta_high = (numbers[f"units/coating.partial_eta_squared.{end}"][1] for end in ("ci_low", "ci_high"))
    assert (numbers["units/coating.cohens_f.ci_low"][1], numbers["units/coating.cohens_f.ci_high"][1]) == (
        pytest.approx(np.sqrt(eta_low / (1 - eta_low)), rel=1e-12),
        pytest.approx(np.sqrt(eta_high / (1 - eta_high)), rel=1e-12))
    assert numbers["n_units"] == ("units analysed", sum(len(g) for g in groups))
    assert "n_observations" not in numbers  # one observation per unit: the units say it
    # the conclusion is the factor's test under the analysis in force (classical here)
    (term,) = [(key, value) for key, value in conclusions_of(results).items()
               if key[:2] == ("dry_mass", "term")]
    assert term[0] == ("dry_mass", "term", "coating")
    role, label, decision = term[1].role, term[1].label, term[1].decision
    assert (role, label) == ("primary", "shoot dry mass at day 21: seed coating (F test)")
    assert term[1].outcome_label == "shoot dry mass at day 21"
    assert decision.decision == ("reject" if classical.pvalue < 0.05 else "retain")
    assert decision.p == pytest.approx(classical.pvalue, rel=1e-8)


@pytest.mark.parametrize("side", ["A", "B"])
def test_a_results_file_of_format_1_is_refused_with_one_sentence(demo_runs, tmp_path, side):
    old = tmp_path / "old"
    shutil.copytree(demo_runs[0], old)
    results = json.loads((old / "results.json").read_text(encoding="utf-8"))
    results["format_version"] = 1  # as an earlier version of appendix wrote it
    (old / "results.json").write_text(json.dumps(results), encoding="utf-8")
    runs = (old, demo_runs[1]) if side == "A" else (demo_runs[1], old)
    message = (f"{old / 'results.json'} is a results file of format 1, and this version of appendix "
               "compares results of format 2 only: rerun both studies with it, then compare the new "
               "run folders")
    with pytest.raises(UserError) as refused:
        compare_runs(*runs)
    assert str(refused.value) == message
    out, err = io.StringIO(), io.StringIO()
    assert main(["diff", str(runs[0]), str(runs[1])], stdout=out, stderr=err, cwd=tmp_path) == 2
    assert (out.getvalue(), err.getvalue()) == ("", f"error: {message}\n")


def test_demo_diff_plan_and_checksums(demo_runs):
    diff = compare_runs(*demo_runs)
    assert diff.plan.changed is False and diff.plan.compared is True and diff.plan.keys == ()
    inputs = {c.role: c for c in diff.checksums if c.kind == "input"}
    assert inputs["study"].changed is False
    assert inputs["data"].changed is True and inputs["data"].path == "data/units.csv"
    outputs = {c.path: c for c in diff.checksums if c.kind == "output"}
    assert outputs["results.json"].changed is True


def test_demo_diff_text_for_people(demo_runs):
    code, out = diff_command(*demo_runs)
    assert code == 1
    text = out.getvalue()
    # in the appendix's number style (APA 7, from memory): p to three decimals without its
    # leading zero, said to be adjusted when it is
    # the plan's labels lead; its identifiers follow on the line below, for reference
    assert ("   shoot dry mass at day 21: humic − uncoated (primary outcome): not rejected "
            "(adjusted p = .121) -> rejected (adjusted p = .028)\n"
            "      hypothesis C2:humic of outcome dry_mass\n" in text)
    moved = text[text.index("2. Numbers"):text.index("3. Data")].splitlines()[1:]
    assert moved and not [line for line in moved if "e-0" in line or "0.120608" in line]
    assert "   units added: P049 (line 50; coating humic)" in text
    assert ("   P024  shoot_dry_mass_mg (outcome shoot dry mass at day 21): '37.2' (analysed) -> "
            "'47.2' (analysed)" in text)
    order = [text.index(h) for h in ("1. Conclusions", "2. Numbers", "3. Data", "4. Plan", "5. Checksums")]
    assert order == sorted(order)


def test_demo_diff_page(demo_runs, tmp_path):
    page_path = tmp_path / "diff.html"
    code, out = diff_command(*demo_runs, "--html", str(page_path))
    assert code == 1 and out.getvalue().endswith(f"wrote {page_path}\n")
    page = page_path.read_text(encoding="utf-8")
    assert page == render_page(compare_runs(*demo_runs))  # same inputs, same page
    assert ("<meta http-equiv=\"Content-Security-Policy\" content=\"default-src 'none'; "
            "style-src 'unsafe-inline'; img-src data:\">") in page
    assert "<script" not in page and "http://" not in page and "https://" not in page
    css = (REPO / "templates" / "appendix.css").read_text(encoding="utf-8")
    assert css.strip() in page  # the appendix's own style sheet, included
    assert "P049" in page and "P024" in page
    # readers see the plan's labels; its identifiers stay in title attributes
    seen = _visible_text(page)
    assert "Shoot dry mass at day 21 (primary)" in seen and "humic − uncoated" in seen
    decisions_and_numbers = seen[seen.index("1. Conclusions that changed\n"):seen.index("3. Data\n")]
    assert "C2:" not in decisions_and_numbers and "dry_mass" not in decisions_and_numbers
    assert "chlorophyll" not in decisions_and_numbers.lower().replace("leaf chlorophyll index", "")
    # a count moves by whole units
    assert "Shoot dry mass at day 21n, humic1112+1 (+9.1%)" in decisions_and_numbers
    assert ('<th scope="row" title="outcome dry_mass">Shoot dry mass at day 21 (primary)</th>'
            '<td class="text" title="hypothesis C2:humic">shoot dry mass at day 21: humic − uncoated</td>') in page
    assert '<td class="text" title="outcome dry_mass">outcome shoot dry mass at day 21</td>' in page
    assert "not a clinical or regulatory decision" in page
    assert "qualified, licensed statistician" in page


def _visible_text(page: str) -> str:
    """The text of a page's body as a reader sees it: tags and their attributes left out."""
    parser = _TextOnly()
    parser.feed(page[page.index("<body"):])
    return "".join(parser.parts)


class _TextOnly(html.parser.HTMLParser):
    def __init__(self) -> None:
        super().__init__()
        self.parts: list[str] = []

    def handle_data(self, data: str) -> None:
        self.parts.append(data)


def test_a_run_against_itself_changes_nothing(demo_runs):
    code, out = diff_command(demo_runs[0], demo_runs[0], "--json")
    assert code == 0
    diff = json.loads(out.getvalue())
    assert diff["conclusions"] == [] and diff["numbers"] == []
    assert diff["data"]["added"] == diff["data"]["removed"] == diff["data"]["changed"] == []
    assert not any(c["changed"] for c in diff["checksums"])
    assert json.dumps(diff, sort_keys=True, indent=2, ensure_ascii=False) + "\n" == out.getvalue()


def test_plan_changes_key_by_key_and_role_switch(demo_runs, tmp_path):
    study = _copy_demo(tmp_path / "study")
    text = study.read_text(encoding="utf-8")
    text = text.replace("alpha: 0.05", "alpha: 0.01")
    text = text.replace("    unit: index units\n    role: secondary", "    unit: index units\n    role: primary")
    study.write_text(text, encoding="utf-8")
    changed = _run(study, tmp_path / "changed")
    diff = compare_runs(demo_runs[0], changed)
    keys = {k.key: (k.a, k.b) for k in diff.plan.keys}
    assert keys == {"alpha": (0.05, 0.01), "outcomes[chlorophyll].role": ("secondary", "primary")}
    assert diff.plan.role_switches == ("outcome chlorophyll switched from secondary to primary",)
    assert diff.a.alpha == 0.05 and diff.b.alpha == 0.01
    # at alpha .01 the Holm-adjusted C2:chitosan (p = .023 in the demo) is no longer rejected
    flipped = {(c.outcome, c.id) for c in diff.conclusions}
    assert ("dry_mass", "C2:chitosan") in flipped


def test_without_records_data_and_plan_fall_back_to_hashes(demo_runs, tmp_path):
    bare = tmp_path / "bare"
    shutil.copytree(demo_runs[1], bare)
    (bare / RECORDS_FILE).unlink()
    diff = compare_runs(demo_runs[0], bare)
    assert diff.data.compared is False
    assert diff.data.note == "run B holds no records.json; the data are compared by their checksums only"
    assert diff.plan.compared is False and diff.plan.changed is False
    assert [c.id for c in diff.conclusions] == ["C2:humic"]


def test_model_terms_pair_with_their_conclusions(tmp_path):
    study = REPO / "studies" / "greenhouse-split" / "study.yaml"
    run_a = _run(study, tmp_path / "a")
    text = (run_a / "results.json").read_text(encoding="utf-8")
    terms = {key[2]: value.decision.decision for key, value in conclusions_of(from_json(text)).items()
             if key[1] == "term"}
    # treatment and within terms only; the bench block and the baseline covariate adjust the model
    assert list(terms) == ["coating", "irrigation", "coating × irrigation", "visit", "coating × visit"]
    assert terms["coating × irrigation"] == "retain"
    # the same run with one term's decision edited: the diff names exactly that term
    run_b = tmp_path / "b"
    shutil.copytree(run_a, run_b)
    results = json.loads(text)
    model = results["outcomes"][0]
    model["conclusions"][2]["decision"] = "reject"
    (run_b / "results.json").write_text(json.dumps(results), encoding="utf-8")
    diff = compare_runs(run_a, run_b)
    assert [(c.kind, c.id, c.a.decision, c.b.decision) for c in diff.conclusions] == [
        ("term", "coating × irrigation", "retain", "reject")]
    assert diff.numbers == () and diff.data.changed == ()


def test_not_a_run_folder(tmp_path):
    with pytest.raises(UserError, match=r"not a run folder: .* has no results.json"):
        compare_runs(tmp_path, tmp_path)


@pytest.mark.parametrize(("a", "b", "moved"), [
    (1.0, 1.0, False),
    (1.0, 1.0 + 1e-12, False),   # floating-point noise
    (1.0, 1.0 + 1e-6, True),
    (0.0, 1e-13, False),         # below the absolute floor
    (0.0, 1e-9, True),
    (None, None, False),
    (None, 0.5, True),
    (0.5, None, True),
])
def test_tolerance(a, b, moved):
    assert Tolerance().moved(a, b) is moved


def test_flatten_plan_keys_lists_by_id_or_name():
    plan = {"alpha": 0.05, "outcomes": [{"name": "y", "role": "primary"}],
            "contrasts": [{"id": "C1", "weights": {"a": 1, "b": -1}}], "levels": ["a", "b"],
            "steps": [{"x": 1}, {"x": 2}]}
    assert flatten_plan(plan) == {
        "alpha": 0.05, "contrasts[C1].id": "C1", "contrasts[C1].weights.a": 1, "contrasts[C1].weights.b": -1,
        "levels": ["a", "b"], "outcomes[y].role": "primary", "outcomes[y].name": "y",
        "steps[0].x": 1, "steps[1].x": 2}


def test_json_is_canonical(demo_runs):
    text = to_json(compare_runs(*demo_runs))
    assert text == json.dumps(json.loads(text), sort_keys=True, indent=2, ensure_ascii=False) + "\n"
    assert set(json.loads(text)) == {"a", "b", "checksums", "conclusions", "conclusions_changed", "data",
                                    "format_version", "numbers", "plan", "tolerance"}


def test_demo_generator_rewrites_both_data_files_byte_for_byte(tmp_path):
    spec = importlib.util.spec_from_file_location("seed_coating_generate", DEMO / "generate.py")
    generate = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(generate)
    data = generate.rows(np.random.default_rng(generate.SEED))
    generate.write(tmp_path / "units.csv", data)
    fixed = generate.corrected(data, np.random.default_rng(generate.CORRECTION_SEED))
    generate.write(tmp_path / "units-corrected.csv", fixed)
    for name in ("units.csv", "units-corrected.csv"):
        assert (tmp_path / name).read_bytes() == (DEMO / "data" / name).read_bytes()


def test_data_diff_follows_a_unit_into_an_exclusion_and_a_missing_cell(tmp_path):
    from appendix.compare import compare_data
    from appendix.records import read_records

    study = _copy_demo(tmp_path / "study")
    data = study.parent / "data" / "units.csv"
    folders = []
    for name in ("a", "b"):
        if name == "b":  # P001 marked damaged (rule X1), P005's chlorophyll cell blanked
            text = data.read_text(encoding="utf-8")
            text = text.replace("P001,1,uncoated,no,41.5,36.5", "P001,1,uncoated,yes,41.5,36.5")
            text = text.replace("P005,1,uncoated,no,39.6,33.4", "P005,1,uncoated,no,39.6,")
            data.write_text(text, encoding="utf-8")
        computed = api.compute(study)
        (tmp_path / name).mkdir()
        write_records(tmp_path / name, computed.loaded, computed.dataset)
        folders.append(read_records(tmp_path / name))
    diff = compare_data(*folders)
    assert diff.added == diff.removed == ()
    found = {(c.unit, c.column, c.role):
             (c.text_a, c.text_b, c.value_a, c.value_b, c.status_a, c.status_b) for c in diff.changed}
    assert found == {
        ("P001", "shoot_dry_mass_mg", "outcome"): ("41.5", "41.5", 41.5, None, "analysed", "excluded"),
        ("P001", "chlorophyll_index", "outcome"): ("36.5", "36.5", 36.5, None, "analysed", "excluded"),
        ("P001", "damaged", "exclusion"): ("no", "yes", None, None, None, None),
        ("P001", "", "exclusion-rule"): (None, "X1", None, None, None, None),
        ("P005", "chlorophyll_index", "outcome"): ("33.4", "", 33.4, None, "analysed", "missing"),
    }


def test_fields_the_results_format_gives_a_default_may_be_absent(demo_runs, tmp_path):
    """A results file without the keys whose fields have defaults (robust tests, contrasts,
    Cohen's f, strata, ...) is valid; diff reads it as the defaults say, no crash."""
    import dataclasses

    from appendix.results import ModelRow, ModelTable, OutcomeResult

    def defaulted(kind) -> set[str]:
        return {f.name for f in dataclasses.fields(kind)
                if f.default is not dataclasses.MISSING or f.default_factory is not dataclasses.MISSING}

    bare = tmp_path / "bare"
    shutil.copytree(demo_runs[1], bare)
    results = json.loads((bare / "results.json").read_text(encoding="utf-8"))
    for outcome in results["outcomes"]:
        for table in outcome["tables"]:
            for row in table["rows"]:
                for key in defaulted(ModelRow):
                    del row[key]
            for key in defaulted(ModelTable):
                del table[key]
        for key in defaulted(OutcomeResult):
            del outcome[key]
    (bare / "results.json").write_text(json.dumps(results), encoding="utf-8")
    diff = compare_runs(demo_runs[0], bare)
    # the registered hypotheses are gone with the contrasts, and the terms' conclusions with
    # theirs: each is a conclusion of run A only
    gone = {(c.outcome, c.kind, c.id) for c in diff.conclusions if c.b is None}
    run_a = json.loads((demo_runs[0] / "results.json").read_text(encoding="utf-8"))
    assert gone == {(o["name"], "hypothesis", h["id"]) for o in run_a["outcomes"]
                    for f in o["contrasts"] if f["registered"] for h in f["hypotheses"]} | {
        (o["name"], "term", "coating") for o in run_a["outcomes"]}
    moved = {(m.outcome, m.quantity): m for m in diff.numbers}
    assert moved[("dry_mass", "welch.statistic")].b is None and moved[("dry_mass", "units/coating.cohens_f.estimate")].b is None
    assert moved[("dry_mass", "units/coating.statistic")].b is not None
