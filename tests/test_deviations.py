"""Deviations from the registered plan: every kind created and its message asserted, the
plan's acknowledgements, unmatched acknowledgements, revisions of the lock, the cover line,
the banner in HTML and PDF, and ``appendix run --strict``.

The demo study and its data are invented (see studies/seed-coating/README.md); the
contingency study below is generated here from a seeded random generator.
"""

from __future__ import annotations

import csv
import datetime as _dt
import html as _html
import io
import re
from collections import Counter
from pathlib import Path

import numpy as np
import pypdf
import pytest

from appendix import api
from appendix.cli import main
from appendix.errors import PlanError
from appendix.plan.load import load_plan
from appendix.plan.lock import lock_plan

FIRST = {"SOURCE_DATE_EPOCH": "1771059600"}   # 2026-02-14T09:00:00Z
SECOND = {"SOURCE_DATE_EPOCH": "1772269200"}  # 2026-02-28T09:00:00Z
LEVELS = ("uncoated", "chitosan", "seaweed", "humic")
OUTCOMES = {"dry_mass": "shoot_dry_mass_mg", "chlorophyll": "chlorophyll_index"}
LABELS = {"dry_mass": "shoot dry mass at day 21", "chlorophyll": "leaf chlorophyll index at day 21"}
MISSING = {"", "NA", "N/A", "NaN", "nan", "."}  # the missing-value spellings of docs/study-file.md


def _edit(study: Path, old: str, new: str) -> None:
    text = study.read_text(encoding="utf-8")
    assert old in text
    study.write_text(text.replace(old, new, 1), encoding="utf-8")


def _append(study: Path, text: str) -> None:
    study.write_text(study.read_text(encoding="utf-8") + text, encoding="utf-8")


def _deviations(study: Path) -> list:
    return list(api.compute(study).results.deviations)


def _of(deviations, kind: str) -> list[tuple[str, str, bool]]:
    return [(d.subject, d.message, d.acknowledged) for d in deviations if d.kind == kind]


def _demo_counts(study: Path) -> dict[str, Counter]:
    """Analysed units per outcome and level, counted from the CSV here (rule X1 drops
    damaged == yes; a missing spelling leaves the unit out of that outcome)."""
    rows = list(csv.DictReader((study.parent / "data" / "units.csv").open(encoding="utf-8")))
    eligible = [r for r in rows if r["damaged"].strip() != "yes"]
    counts = {name: Counter(r["coating"] for r in eligible if r[column] not in MISSING)
              for name, column in OUTCOMES.items()}
    return counts | {"eligible": Counter(r["coating"] for r in eligible)}


def _with_minimum(study: Path, minimum: int = 12) -> None:
    """Register a minimum of analysed units per group beside the planned 12."""
    _edit(study, "    per_group: 12\n", f"    per_group: 12\n    minimum: {minimum}\n")


def _lock(study: Path, environ=FIRST) -> None:
    lock_plan(load_plan(study), environ=environ)


def _text(html: str, element_id: str) -> str:
    start = html.index(f'id="{element_id}"')
    chunk = html[start:html.index("</section>", start)]
    return re.sub(r"\s+", " ", _html.unescape(re.sub(r"<[^>]+>", " ", chunk))).strip()


def _banner(html: str) -> str | None:
    match = re.search(r'<div class="deviation-banner" role="alert">(.*?)</div>', html, re.S)
    if match is None:
        return None
    return re.sub(r"\s+", " ", _html.unescape(re.sub(r"<[^>]+>", " ", match.group(1)))).strip()


# --- plan not registered, plan against lock ----------------------------------------------


def test_a_run_without_a_lock_says_plan_not_registered(demo_study: Path):
    computed = api.compute(demo_study)
    assert computed.results.registration is None
    (found,) = _of(computed.results.deviations, "plan-not-registered")
    assert found == ("plan", "Plan not registered: no registration lock (study.lock.json) was "
                     "found beside the study file, so nothing shows that the plan was fixed "
                     "before the analysis.", False)
    html = api.render(computed).html
    assert "<dt>Plan registered</dt><dd class=\"not-registered\">plan not registered (no " \
           "study.lock.json beside the study file)</dd>" in html
    assert "Plan not registered: plan" in _banner(html)


def test_a_locked_unchanged_plan_shows_its_lock_on_the_cover(demo_study: Path):
    _lock(demo_study)
    computed = api.compute(demo_study)
    registration = computed.results.registration
    assert (registration.locked_at, registration.plan_sha256, registration.data_at_lock) == (
        "2026-02-14T09:00:00Z", load_plan(demo_study).sha256, "the data file existed at lock time")
    # the invented data fall short of the planned 12 per group, but the plan sets no
    # minimum: attrition, shown in the unit flow, is no deviation
    assert computed.results.deviations == ()
    cover = _text(api.render(computed).html, "cover")
    sha = registration.plan_sha256
    assert (f"Plan registered locked 2026-02-14T09:00:00Z; registered plan SHA-256 {sha[:12]} "
            f"{sha} (the plan analysed); the data file existed at lock time (the same file as "
            "analysed)") in cover
    assert f"Plan analysed, SHA-256 {sha[:12]} {sha} Study file" in cover
    # a data file corrected after the lock: the cover says the locked one was another file
    data = demo_study.parent / "data" / "units.csv"
    data.write_text(data.read_text(encoding="utf-8").replace(",no,", ",no ,", 1),
                    encoding="utf-8")
    cover = _text(api.render(api.compute(demo_study)).html, "cover")
    assert (f"the data file existed at lock time (SHA-256 "
            f"{registration.data_sha256_at_lock[:12]} then, not the file analysed)") in cover


def test_the_cover_says_which_plan_each_sha256_is_of(demo_study: Path):
    _lock(demo_study)
    _append(demo_study, "deviations:\n  - {kind: plan-not-registered, subject: plan, "
            "justification: none needed (invented)}\n")
    computed = api.compute(demo_study)
    locked, analysed = computed.results.registration.plan_sha256, computed.results.plan_sha256
    assert locked != analysed  # the acknowledgements are in the plan analysed, never locked
    cover = _text(api.render(computed).html, "cover")
    assert (f"registered plan SHA-256 {locked[:12]} {locked} (the plan as locked; the plan "
            "analysed has another SHA-256, below)") in cover
    assert (f"Plan analysed, SHA-256 {analysed[:12]} {analysed} (the canonical plan as run, "
            "its deviations acknowledgements included; not the registered plan's SHA-256 "
            "above)") in cover


def test_after_a_relock_the_cover_says_when_the_data_existed(demo_study: Path):
    data = demo_study.parent / "data" / "units.csv"
    kept = data.read_bytes()
    data.unlink()
    _lock(demo_study)  # before the data file existed
    data.write_bytes(kept)
    _edit(demo_study, "alpha: 0.05", "alpha: 0.01")
    lock_plan(load_plan(demo_study), relock=True, reason="stricter level (invented)",
              environ=SECOND)
    computed = api.compute(demo_study)
    registration = computed.results.registration
    assert registration.data_at_lock == ("at the first lock, plan fixed before the data file "
                                         "existed; at revision 1, the data file existed")
    assert registration.data_sha256_at_lock == next(
        i.sha256 for i in computed.results.inputs if i.role == "data")
    cover = _text(api.render(computed).html, "cover")
    assert ("(the plan analysed); at the first lock, plan fixed before the data file existed; "
            "at revision 1, the data file existed (the same file as analysed)") in cover


@pytest.mark.parametrize("old, new, kind, subject, message", [
    ("alpha: 0.05", "alpha: 0.01", "plan-changed", "alpha", "alpha: registered 0.05, now 0.01."),
    ("    role: primary", "    role: secondary", "outcome-role-switched",
     "outcomes[dry_mass].role",
     "Outcome dry_mass was registered as primary and is now secondary."),
    ("  method: holm", "  method: bonferroni", "plan-changed", "multiplicity.method",
     "multiplicity.method: registered holm, now bonferroni."),
    ('      equals: "yes"', '      equals: "broken"', "plan-changed",
     "data.exclusions[X1].equals", "data.exclusions[X1].equals: registered yes, now broken."),
    ("    outcomes: [dry_mass]\n", "    outcomes: [dry_mass, chlorophyll]\n", "plan-changed",
     "contrasts[C1].outcomes",
     'contrasts[C1].outcomes: registered ["dry_mass"], now ["dry_mass", "chlorophyll"].'),
])
def test_each_change_of_the_plan_against_the_lock(demo_study: Path, old, new, kind, subject,
                                                  message):
    _lock(demo_study)
    _edit(demo_study, old, new)
    deviations = _deviations(demo_study)
    found = list(deviations)
    assert [(d.kind, d.subject, d.message, d.acknowledged) for d in found] == [
        (kind, subject, message, False)]
    assert found[0].detected.startswith("plan compared key by key with study.lock.json "
                                        "(locked 2026-02-14T09:00:00Z, SHA-256 ")


def test_an_outcome_removed_and_one_added(demo_study: Path):
    _lock(demo_study)
    _edit(demo_study, "  - name: chlorophyll\n    column: chlorophyll_index\n",
          "  - name: chlorophyll_late\n    column: chlorophyll_index\n")
    deviations = _deviations(demo_study)
    assert [(d.kind, d.subject) for d in deviations if d.kind.startswith("outcome-")] == [
        ("outcome-removed", "outcomes[chlorophyll]"),
        ("outcome-added", "outcomes[chlorophyll_late]")]
    added = next(d for d in deviations if d.kind == "outcome-added")
    assert added.message == (
        'Outcome chlorophyll_late is not in the registered plan; now: {"column": '
        '"chlorophyll_index", "label": "leaf chlorophyll index at day 21", "name": '
        '"chlorophyll_late", "role": "secondary", "unit": "index units"}.')


def test_revisions_are_listed_as_acknowledged_changes_with_their_reasons(demo_study: Path):
    _lock(demo_study)
    _edit(demo_study, "alpha: 0.05", "alpha: 0.01")
    lock_plan(load_plan(demo_study), relock=True, reason="stricter level asked by the DSMB",
              environ=SECOND)
    _edit(demo_study, "  method: holm", "  method: hochberg")
    computed = api.compute(demo_study)
    plan = [d for d in computed.results.deviations if d.kind == "plan-changed"]
    assert [(d.subject, d.acknowledged, d.justification, d.detected) for d in plan] == [
        ("multiplicity.method", False, None,
         "plan compared key by key with study.lock.json (locked 2026-02-28T09:00:00Z, SHA-256 "
         f"{computed.results.registration.plan_sha256[:12]})"),
        ("alpha", True, "stricter level asked by the DSMB",
         "recorded in study.lock.json as revision 1 on 2026-02-28T09:00:00Z"),
    ]
    (revision,) = computed.results.registration.revisions
    assert (revision.number, revision.reason) == (1, "stricter level asked by the DSMB")
    cover = _text(api.render(computed).html, "cover")
    assert "locked 2026-02-14T09:00:00Z, revised 1 time (last 2026-02-28T09:00:00Z)" in cover


@pytest.mark.parametrize("name", ["seed-coating", "greenhouse-split", "wound-dose"])
def test_every_demo_is_registered_and_opens_without_a_banner(computed_demos, name: str):
    from tests.conftest import REPO

    computed = computed_demos[name]
    study = REPO / "studies" / name / "study.yaml"
    assert computed.results.deviations == ()
    assert computed.results.registration.plan_sha256 == load_plan(study).sha256
    assert computed.results.registration.data_sha256_at_lock == next(
        i.sha256 for i in computed.results.inputs if i.role == "data")
    html = api.render(computed).html
    assert _banner(html) is None and "unacknowledged deviation" not in html


# --- data against the plan --------------------------------------------------------------


def test_fewer_analysed_units_than_the_registered_minimum_per_group(demo_study: Path):
    _with_minimum(demo_study)
    counts = _demo_counts(demo_study)
    expected = []
    for level in LEVELS:
        per = [(name, counts[name][level]) for name in OUTCOMES]
        if min(n for _, n in per) < 12:
            words = (f"{per[0][1]} units analysed" if per[0][1] == per[1][1] else
                     "units analysed: " + ", ".join(f"{n} for {LABELS[name]}" for name, n in per))
            expected.append((level, f"Level '{level}' of seed coating: {words}; the plan's "
                                    "minimum is 12 per group.", False))
    assert len(expected) == 4  # every coating of the invented data falls short somewhere
    assert _of(_deviations(demo_study), "below-minimum-n") == expected
    # outcomes by their labels, not their names (dry_mass)
    assert expected[3][1] == ("Level 'humic' of seed coating: units analysed: 11 for shoot dry "
                              "mass at day 21, 12 for leaf chlorophyll index at day 21; the "
                              "plan's minimum is 12 per group.")


def test_a_lower_minimum_leaves_only_the_groups_below_it(demo_study: Path):
    _with_minimum(demo_study, 11)
    counts = _demo_counts(demo_study)
    below = [level for level in LEVELS if min(counts[name][level] for name in OUTCOMES) < 11]
    assert [s for s, _, _ in _of(_deviations(demo_study), "below-minimum-n")] == below
    assert len(below) < 4  # the invented data keep 11 analysed in some coating


def test_a_shortfall_without_a_minimum_is_attrition_in_the_unit_flow(demo_study: Path):
    _lock(demo_study)
    computed = api.compute(demo_study)
    assert computed.results.deviations == ()
    counts = _demo_counts(demo_study)
    flow = _text(api.render(computed).html, "unit-flow")
    assert "Planned 12 12 12 12 48 Read" in flow
    short = [12 - counts["dry_mass"][level] for level in LEVELS]
    analysed = [counts["dry_mass"][level] for level in LEVELS]
    missing = [counts["eligible"][level] - n for level, n in zip(LEVELS, analysed)]
    # one row group per outcome: its label, then its missing, analysed and short rows
    assert (f"Shoot dry mass at day 21 Missing a value {' '.join(map(str, missing))} "
            f"{sum(missing)} Analysed "
            f"{' '.join(map(str, analysed))} {sum(analysed)} Short of the planned number "
            f"{' '.join(map(str, short))} {sum(short)}") in flow
    assert ("The plan registers no minimum per group or in all, so a shortfall is not a "
            "deviation from it.") in flow


def test_a_shortfall_against_a_planned_total_is_no_deviation(demo_study: Path):
    _edit(demo_study, "    per_group: 12", "    total: 48")
    _lock(demo_study)
    computed = api.compute(demo_study)
    assert computed.results.deviations == ()
    dry = sum(_demo_counts(demo_study)["dry_mass"].values())
    flow = _text(api.render(computed).html, "unit-flow")
    assert "Planned \u2014 \u2014 \u2014 \u2014 48 Read" in flow
    assert (f"Short of the planned number \u2014 \u2014 \u2014 \u2014 {48 - dry}") in flow


def test_fewer_analysed_units_in_all_than_the_registered_minimum_total(demo_study: Path):
    counts = _demo_counts(demo_study)
    dry, chlorophyll = (sum(counts[name].values()) for name in OUTCOMES)
    assert dry < chlorophyll < 48  # the invented data: each outcome loses a different number
    # a minimum between the two totals: only the outcome below it departs from the plan
    _edit(demo_study, "    per_group: 12\n", f"    per_group: 12\n    minimum_total: {chlorophyll}\n")
    computed = api.compute(demo_study)
    assert _of(computed.results.deviations, "below-minimum-total") == [
        ("dry_mass", f"Shoot dry mass at day 21: {dry} units analysed in all; the plan's minimum "
                     f"is {chlorophyll} in all.", False)]
    assert computed.results.planned_n.minimum_total == chlorophyll
    html = api.render(computed).html
    deviations = _text(html, "deviations")
    assert f"Shoot dry mass at day 21: {dry} units analysed in all" in deviations
    assert (f"It is a deviation from the plan only where fewer than the registered minimum of "
            f"{chlorophyll} units in all are analysed.") in _text(html, "unit-flow")


def test_a_minimum_total_at_or_below_the_analysed_totals_is_no_deviation(demo_study: Path):
    counts = _demo_counts(demo_study)
    lowest = min(sum(counts[name].values()) for name in OUTCOMES)
    _edit(demo_study, "    per_group: 12\n", f"    per_group: 12\n    minimum: 1\n    minimum_total: {lowest}\n")
    # (one unit per group: the sentence says "unit")
    computed = api.compute(demo_study)
    assert _of(computed.results.deviations, "below-minimum-total") == []
    assert (f"registered minimum of 1 unit per group, or of {lowest} units in all are "
            "analysed.") in _text(api.render(computed).html, "unit-flow")


@pytest.mark.parametrize("planned, line, message", [
    ("    per_group: 12\n    minimum_total: 49\n", "    minimum_total: 49",
     "data.planned_n.minimum_total: got 49, more than the 48 planned in all (12 per group in 4 "
     "groups); allowed: a whole number from 1 to the planned total"),
    ("    total: 40\n    minimum_total: 41\n", "    minimum_total: 41",
     "data.planned_n.minimum_total: got 41, more than the 40 planned in all; allowed: a whole "
     "number from 1 to the planned total"),
    ("    per_group: 12\n    minimum_total: 0\n", "    minimum_total: 0",
     "data.planned_n.minimum_total: got 0; allowed: a whole number at least 1"),
])
def test_a_minimum_total_above_the_planned_total_is_refused(demo_study: Path, planned, line, message):
    _edit(demo_study, "    per_group: 12\n", planned)
    with pytest.raises(PlanError) as caught:
        load_plan(demo_study)
    number = demo_study.read_text(encoding="utf-8").splitlines().index(line) + 1
    assert str(caught.value).endswith(f"study.yaml:{number}: {message}")
    out, err = io.StringIO(), io.StringIO()
    assert main(["check", str(demo_study)], stdout=out, stderr=err, cwd=demo_study.parent) == 2
    assert message in err.getvalue() and "Traceback" not in err.getvalue()


def test_a_minimum_above_the_planned_number_is_refused(demo_study: Path):
    _with_minimum(demo_study, 13)
    with pytest.raises(PlanError) as caught:
        load_plan(demo_study)
    line = demo_study.read_text(encoding="utf-8").splitlines().index("    minimum: 13") + 1
    assert str(caught.value).endswith(
        f"study.yaml:{line}: data.planned_n.minimum: got 13, more than the 12 planned per "
        "group; allowed: a whole number from 1 to per_group")


def test_a_plan_level_without_units(demo_study: Path):
    _edit(demo_study, "levels: [uncoated, chitosan, seaweed, humic]",
          "levels: [uncoated, chitosan, seaweed, humic, peat]")
    assert _of(_deviations(demo_study), "level-without-units") == [
        ("peat", "No eligible units at level 'peat' of seed coating (none in the data).", False)]


def test_a_level_whose_units_are_all_excluded(demo_study: Path):
    _edit(demo_study, "  exclusions:\n", "  exclusions:\n    - {id: X2, column: coating, "
          "equals: humic, reason: seed lot withdrawn (invented)}\n")
    n = _demo_counts(demo_study)["eligible"]["humic"]
    assert _of(_deviations(demo_study), "level-without-units") == [
        ("humic", f"No eligible units at level 'humic' of seed coating (all {n} excluded).",
         False)]


def test_missing_data_above_the_registered_limit(demo_study: Path):
    _edit(demo_study, "    per_group: 12\n", "    per_group: 12\n  missing_limit: 0.05\n")
    counts = _demo_counts(demo_study)
    eligible = sum(counts["eligible"].values())
    found = []
    for name in OUTCOMES:
        missing = eligible - sum(counts[name].values())
        if missing > 0.05 * eligible:
            found.append((name, f"Outcome {name}: {missing} of {eligible} eligible units "
                                f"({missing / eligible:.1%}) have no value; the registered "
                                "limit is 5.0%.", False))
    assert found and _of(_deviations(demo_study), "missing-above-limit") == found
    _edit(demo_study, "missing_limit: 0.05", "missing_limit: 0.5")
    assert _of(_deviations(demo_study), "missing-above-limit") == []


def _contingency_study(folder: Path) -> Path:
    """An invented one-way study whose group SDs differ twentyfold (seeded), with a
    registered unequal-variance fallback to Welch."""
    rng = np.random.default_rng(20260214)
    lines = ["unit,dose,y"]
    for g, (level, sd) in enumerate(zip(("d0", "d1", "d2", "d3"), (0.25, 0.5, 2.5, 5.0))):
        for i, value in enumerate(rng.normal(10.0 + g, sd, 12)):
            lines.append(f"u{g}{i:02d},{level},{value:.3f}")
    (folder / "units.csv").write_text("\n".join(lines) + "\n", encoding="utf-8")
    study = folder / "study.yaml"
    study.write_text("""# Invented study for a test: data generated by a seeded generator.
format: 1
study: {id: invented-contingency, title: Invented contingency study}
data: {source: units.csv, unit: unit, planned_n: {per_group: 12}}
design:
  factors:
    - {name: dose, levels: [d0, d1, d2, d3]}
outcomes:
  - {name: y, label: response, role: primary}
assumptions:
  fallbacks:
    - {when: unequal-variance, test: brown-forsythe, threshold: 0.05, use: welch}
""", encoding="utf-8")
    return study


def test_a_registered_contingency_applied(tmp_path: Path):
    study = _contingency_study(tmp_path)
    _lock(study)
    results = api.compute(study).results
    (rule,) = results.outcomes[0].contingencies
    assert rule.fired and rule.p < 0.05
    (found,) = results.deviations
    assert (found.kind, found.subject, found.acknowledged, found.detected) == (
        "registered-contingency", "y", True,
        "the registered fallback rule's test on this run's data")
    # in words and in the appendix's number style: the test's name, p without a leading zero
    assert round(rule.p, 3) == 0.002
    assert found.message == ("Brown\u2013Forsythe p = .002 is below the pre-specified threshold "
                             ".05: the fallback rule for unequal variances selects the Welch "
                             "analysis for response.")


# --- acknowledgements, --strict and the banner -------------------------------------------


def test_an_acknowledgement_matches_kind_and_subject_exactly(demo_study: Path):
    _with_minimum(demo_study)
    _append(demo_study, "deviations:\n"
            "  - {kind: below-minimum-n, subject: humic, "
            "justification: two trays lost (invented)}\n"
            "  - {kind: below-minimum-n, subject: humik, justification: typo}\n"
            "  - {kind: plan-changed, subject: humic, justification: wrong kind}\n")
    deviations = _deviations(demo_study)
    humic = next(d for d in deviations if (d.kind, d.subject) == ("below-minimum-n", "humic"))
    assert (humic.acknowledged, humic.justification) == (True, "two trays lost (invented)")
    assert [d.acknowledged for d in deviations if d.kind == "below-minimum-n"] == [
        False, False, False, True]
    assert _of(deviations, "acknowledgement-unmatched") == [
        ("deviations[1]", "deviations[1] acknowledges below-minimum-n 'humik', but this run "
                          "detected no such deviation; did you mean 'humic'?; it acknowledges "
                          "nothing.", False),
        ("deviations[2]", "deviations[2] acknowledges plan-changed 'humic', but this run "
                          "detected no such deviation; 'humic' has a deviation of kind "
                          "below-minimum-n; it acknowledges nothing.", False)]


def test_an_unknown_kind_is_refused_with_a_suggestion(demo_study: Path):
    _append(demo_study, "deviations:\n  - {kind: below-minimun-n, subject: humic, "
            "justification: x}\n")
    with pytest.raises(PlanError) as caught:
        load_plan(demo_study)
    assert str(caught.value).endswith(
        "deviations[0].kind: got 'below-minimun-n'; allowed: 'plan-not-registered', "
        "'plan-changed', 'outcome-added', 'outcome-removed', 'outcome-role-switched', "
        "'below-minimum-n', 'below-minimum-total', 'level-without-units', 'missing-above-limit' or "
        "'registered-contingency'; did you mean 'below-minimum-n'?")


def _run(study: Path, *flags: str) -> tuple[int, str, str]:
    out, err = io.StringIO(), io.StringIO()
    code = main(["run", str(study), "--out", "run", *flags], stdout=out, stderr=err,
                cwd=study.parent,
                clock=lambda: _dt.datetime(2026, 3, 1, tzinfo=_dt.timezone.utc))
    return code, out.getvalue(), err.getvalue()


ACKNOWLEDGED = "".join(
    f"  - {{kind: below-minimum-n, subject: {level}, justification: units lost in handling "
    f"(invented)}}\n" for level in LEVELS)


def test_strict_exits_1_while_a_deviation_is_unacknowledged_and_the_pdf_shows_a_banner(
        demo_study: Path):
    _with_minimum(demo_study)
    _lock(demo_study)
    code, out, err = _run(demo_study, "--strict")
    assert code == 1 and out.startswith("wrote ")
    lines = err.splitlines()
    assert lines[0] == ("strict: 4 deviations from the registered plan not acknowledged (see "
                        "the plan's deviations key):")
    assert lines[1] == ("  below-minimum-n (uncoated): Level 'uncoated' of seed coating: 10 "
                        "units analysed; the plan's minimum is 12 per group.")
    assert [line.split(" (")[0] for line in lines[1:]] == ["  below-minimum-n"] * 4
    run = demo_study.parent / "run"
    assert (run / "appendix.pdf").is_file() and (run / "results.json").is_file()
    html = (run / "appendix.html").read_text(encoding="utf-8")
    assert _banner(html) == (
        "4 deviations from the registered plan not acknowledged "
        + " ".join(f"Fewer units than the registered minimum: {level}" for level in LEVELS)
        + " The plan neither provides for nor justifies these; see "
        "Deviations from the plan . Read the results with these departures in mind.")
    pages = [page.extract_text() for page in pypdf.PdfReader(run / "appendix.pdf").pages]
    assert "DEVIATIONS FROM THE REGISTERED PLAN NOT ACKNOWLEDGED" in pages[0].upper()
    assert "Fewer units than the registered minimum: humic" in pages[0]
    # and the running header of every page says so
    assert all("4 unacknowledged deviations" in " ".join(text.split()) for text in pages)


def test_strict_exits_0_once_every_deviation_is_acknowledged(demo_study: Path):
    _with_minimum(demo_study)
    _lock(demo_study)
    _append(demo_study, "deviations:\n" + ACKNOWLEDGED)
    code, _, err = _run(demo_study, "--strict", "--no-pdf")
    assert (code, err) == (0, "")
    html = (demo_study.parent / "run" / "appendix.html").read_text(encoding="utf-8")
    assert _banner(html) is None and "unacknowledged deviation" not in html
    table = _text(html, "deviations")
    assert ("Fewer units than the registered minimum humic Level 'humic' of seed coating: "
            "units analysed: 11 for shoot dry mass at day 21, 12 for leaf chlorophyll index at day "
            "21; the plan's minimum is 12 per group. analysed units in the unit "
            "flow compared with data.planned_n.minimum yes units lost in handling (invented)") in table


def test_without_strict_the_run_exits_0_but_the_banner_shows(demo_study: Path):
    _with_minimum(demo_study)
    code, _, err = _run(demo_study, "--no-pdf")
    assert (code, err) == (0, "")
    html = (demo_study.parent / "run" / "appendix.html").read_text(encoding="utf-8")
    assert _banner(html).startswith("5 deviations from the registered plan not acknowledged "
                                    "Plan not registered: plan Fewer units than the registered minimum:")
    # unacknowledged first in the table, the header has its How detected column
    assert "<th class=\"text\">How detected</th>" in html


def test_crossed_factors_report_cells_below_the_minimum(tmp_path: Path):
    import shutil

    import pandas as pd

    from tests.conftest import REPO

    target = tmp_path / "greenhouse"
    shutil.copytree(REPO / "studies" / "greenhouse-split", target,
                    ignore=shutil.ignore_patterns("__pycache__"))
    _with_minimum(target / "study.yaml")
    # Complete units counted here with pandas: a pot with a chlorophyll reading at each of
    # the three visits (the registered complete-units rule), per coating x irrigation cell.
    pots = pd.read_csv(target / "data" / "pots.csv")
    complete = pots.groupby("pot_id").filter(
        lambda unit: unit["chlorophyll_index"].notna().sum() == 3)
    per_cell = complete.drop_duplicates("pot_id").groupby(["coating", "irrigation"]).size()
    short = [(f"{c} \u00d7 {i}", int(per_cell.get((c, i), 0)))
             for c in ("none", "thin", "thick") for i in ("steady", "pulsed")
             if per_cell.get((c, i), 0) < 12]
    assert short  # the invented data fall short in some cell
    assert _of(_deviations(target / "study.yaml"), "below-minimum-n") == [
        (cell, f"Cell '{cell}' of seed coating \u00d7 irrigation regime: {n} units analysed; "
               "the plan's minimum is 12 per cell.", False) for cell, n in short]


def test_an_unregistered_plan_can_be_acknowledged(demo_study: Path):
    _append(demo_study, "deviations:\n  - {kind: plan-not-registered, subject: plan, "
            "justification: pilot run before registration (invented)}\n")
    (found,) = [d for d in _deviations(demo_study) if d.kind == "plan-not-registered"]
    assert (found.acknowledged, found.justification) == (
        True, "pilot run before registration (invented)")


@pytest.mark.parametrize("old, new, message", [
    ("    per_group: 12\n", "    per_group: 12\n  missing_limit: 1\n",
     "data.missing_limit: got 1; allowed: a number at least 0 and less than 1"),
    ("    per_group: 12\n", "    per_group: 12\n  missing_limit: '10%'\n",
     "data.missing_limit: got '10%'; allowed: a number at least 0 and less than 1"),
])
def test_a_missing_limit_outside_its_range_is_refused(demo_study: Path, old, new, message):
    _edit(demo_study, old, new)
    with pytest.raises(PlanError) as caught:
        load_plan(demo_study)
    line = demo_study.read_text(encoding="utf-8").splitlines().index(
        next(t for t in new.splitlines() if "missing_limit" in t)) + 1
    assert str(caught.value).endswith(f"study.yaml:{line}: {message}")


def test_an_acknowledgement_without_justification_is_refused(demo_study: Path):
    _append(demo_study, "deviations:\n  - {kind: below-minimum-n, subject: humic}\n")
    with pytest.raises(PlanError) as caught:
        load_plan(demo_study)
    last = len(demo_study.read_text(encoding="utf-8").splitlines())  # the entry's own line
    assert str(caught.value).endswith(f"study.yaml:{last}: deviations[0].justification: "
                                      "required key is missing (Why the deviation is "
                                      "acceptable.)")
