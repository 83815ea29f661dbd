"""The registration lock: first lock, no-op, refusal, relock with reason, revision history,
the data-hash statement, a tampered lock, and the key-by-key plan comparison.

Plans and data are the invented demo study (copied to a temporary folder) or variants of
it written here.
"""

from __future__ import annotations

import datetime as _dt
import hashlib
import io
import json
from pathlib import Path

import pytest

from appendix.cli import main
from appendix.errors import UserError
from appendix.plan.load import canonical_json, load_plan
from appendix.plan.lock import (BEFORE_DATA, WITH_DATA, compare_plans, lock_path, lock_plan,
                                lock_text, read_lock)

FIRST = {"SOURCE_DATE_EPOCH": "1771059600"}   # 2026-02-14T09:00:00Z
SECOND = {"SOURCE_DATE_EPOCH": "1772269200"}  # 2026-02-28T09:00:00Z
THIRD = {"SOURCE_DATE_EPOCH": "1773478800"}   # 2026-03-14T09:00:00Z


def _cli(*argv: str, cwd: Path) -> tuple[int, str, str]:
    out, err = io.StringIO(), io.StringIO()
    code = main(list(argv), stdout=out, stderr=err, cwd=cwd,
                clock=lambda: _dt.datetime(2026, 3, 1, 12, 0, tzinfo=_dt.timezone.utc))
    return code, out.getvalue(), err.getvalue()


def _edit(study: Path, old: str, new: str) -> None:
    text = study.read_text(encoding="utf-8")
    assert old in text
    study.write_text(text.replace(old, new, 1), encoding="utf-8")


def test_first_lock_holds_canonical_plan_hash_time_version_and_data_hash(demo_study: Path):
    loaded = load_plan(demo_study)
    outcome = lock_plan(loaded, environ=FIRST)
    assert outcome.status == "locked" and outcome.path == demo_study.parent / "study.lock.json"
    raw = json.loads(outcome.path.read_text(encoding="utf-8"))
    assert raw["plan"] == json.loads(canonical_json(loaded.plan))
    # the lock's hash is the plan's SHA-256 as the run reports it, recomputed here by hashlib
    assert raw["plan_sha256"] == loaded.sha256 == hashlib.sha256(
        canonical_json(loaded.plan).encode("utf-8")).hexdigest()
    assert raw["locked_at"] == "2026-02-14T09:00:00Z"
    assert raw["tool"] == {"name": "appendix", "version": "0.1.0"}
    data = (demo_study.parent / "data" / "units.csv").read_bytes()
    assert raw["data"] == {"existed": True, "statement": WITH_DATA, "path": "data/units.csv",
                           "sha256": hashlib.sha256(data).hexdigest(), "bytes": len(data)}
    assert raw["revisions"] == []
    # canonical, sorted JSON: the file is exactly its own sorted re-serialisation
    assert outcome.path.read_text(encoding="utf-8") == json.dumps(
        raw, sort_keys=True, indent=2, ensure_ascii=False) + "\n"
    assert outcome.message.endswith("the data file existed at lock time")


def test_lock_before_the_data_file_exists_says_so(demo_study: Path):
    (demo_study.parent / "data" / "units.csv").unlink()
    outcome = lock_plan(load_plan(demo_study), environ=FIRST)
    assert outcome.lock.data.existed is False
    assert outcome.lock.data.statement == BEFORE_DATA == "plan fixed before the data file existed"
    assert outcome.lock.data.sha256 is None


def test_the_clock_gives_the_time_without_source_date_epoch(demo_study: Path):
    noon = _dt.datetime(2026, 3, 1, 13, 30, 5, tzinfo=_dt.timezone(_dt.timedelta(hours=1)))
    lock = lock_plan(load_plan(demo_study), clock=lambda: noon, environ={}).lock
    assert lock.locked_at == "2026-03-01T12:30:05Z"  # written in UTC


def test_the_command_line_locks_and_says_so(demo_study: Path):
    code, out, err = _cli("lock", str(demo_study), cwd=demo_study.parent)
    assert (code, err) == (0, "")
    assert out == (f"locked the plan in {lock_path(demo_study)} (SHA-256 "
                   f"{load_plan(demo_study).sha256}); the data file existed at lock time\n")


def test_locking_the_same_plan_again_is_a_no_op(demo_study: Path):
    lock_plan(load_plan(demo_study), environ=FIRST)
    path = lock_path(demo_study)
    before = path.read_bytes(), path.stat().st_mtime_ns
    # comments and layout do not change the canonical plan
    demo_study.write_text(demo_study.read_text(encoding="utf-8") + "# a comment\n",
                          encoding="utf-8")
    code, out, err = _cli("lock", str(demo_study), cwd=demo_study.parent)
    assert (code, err) == (0, "")
    assert out.startswith("the plan is unchanged since it was locked (")
    assert out.rstrip().endswith("was left as it was")
    assert (path.read_bytes(), path.stat().st_mtime_ns) == before


def test_a_changed_plan_is_refused_naming_what_changed(demo_study: Path):
    lock_plan(load_plan(demo_study), environ=FIRST)
    before = lock_path(demo_study).read_bytes()
    _edit(demo_study, "alpha: 0.05", "alpha: 0.01")
    _edit(demo_study, "method: holm", "method: bonferroni")
    code, out, err = _cli("lock", str(demo_study), cwd=demo_study.parent)
    assert (code, out) == (2, "")
    assert err == (f"error: the plan differs from its registration lock {lock_path(demo_study)}:\n"
                   "  alpha: registered 0.05, now 0.01.\n"
                   "  multiplicity.method: registered holm, now bonferroni.\n"
                   "to register the change as a revision: appendix lock STUDY --relock "
                   "--reason TEXT\n")
    assert lock_path(demo_study).read_bytes() == before


@pytest.mark.parametrize("argv, message", [
    (["--relock"], "error: --relock needs --reason TEXT: a revision of a registered plan is "
                   "recorded with its reason\n"),
    (["--relock", "--reason", "  "], "error: --relock needs --reason TEXT: a revision of a "
                                     "registered plan is recorded with its reason\n"),
    (["--reason", "why"], "error: --reason goes with --relock: a first lock needs no reason\n"),
])
def test_relock_needs_a_reason(demo_study: Path, argv, message):
    lock_plan(load_plan(demo_study), environ=FIRST)
    _edit(demo_study, "alpha: 0.05", "alpha: 0.01")
    code, out, err = _cli("lock", str(demo_study), *argv, cwd=demo_study.parent)
    assert (code, out, err) == (2, "", message)
    assert read_lock(demo_study).revisions == ()


def test_relock_without_a_lock_is_refused(demo_study: Path):
    with pytest.raises(UserError, match=r"nothing to relock: .*study.lock.json does not exist"):
        lock_plan(load_plan(demo_study), relock=True, reason="r")
    assert not lock_path(demo_study).exists()


def test_relocks_build_a_revision_history(demo_study: Path):
    first = lock_plan(load_plan(demo_study), environ=FIRST).lock
    _edit(demo_study, "alpha: 0.05", "alpha: 0.01")
    second = lock_plan(load_plan(demo_study), relock=True, reason="stricter level asked by "
                       "the steering committee", environ=SECOND)
    assert second.status == "relocked"
    assert second.message.endswith("\n  alpha: registered 0.05, now 0.01.")
    _edit(demo_study, "    role: secondary", "    role: primary")
    third = lock_plan(load_plan(demo_study), relock=True, reason="second co-primary outcome",
                      environ=THIRD).lock
    assert third == read_lock(demo_study)
    assert third.locked_at == first.locked_at == "2026-02-14T09:00:00Z"
    assert third.plan_sha256 == load_plan(demo_study).sha256
    one, two = third.revisions
    assert (one.number, one.time, one.reason) == (
        1, "2026-02-28T09:00:00Z", "stricter level asked by the steering committee")
    assert (two.number, two.time, two.reason) == (2, "2026-03-14T09:00:00Z",
                                                  "second co-primary outcome")
    # the hashes chain: first lock -> revision 1 -> revision 2 = the plan now
    assert one.previous_sha256 == first.plan_sha256 and two.previous_sha256 == one.sha256
    assert two.sha256 == third.plan_sha256
    assert [(c.key, c.kind, c.registered, c.current) for c in one.changes] == [
        ("alpha", "plan-changed", "0.05", "0.01")]
    assert [(c.key, c.kind, c.registered, c.current) for c in two.changes] == [
        ("outcomes[chlorophyll].role", "outcome-role-switched", "secondary", "primary")]
    # relocking the same plan again is still a no-op
    assert lock_plan(load_plan(demo_study), relock=True, reason="x").status == "unchanged"


def test_acknowledgements_are_never_locked(demo_study: Path):
    lock_plan(load_plan(demo_study), environ=FIRST)
    demo_study.write_text(demo_study.read_text(encoding="utf-8") + (
        "deviations:\n  - {kind: below-minimum-n, subject: humic, justification: lost trays}\n"),
        encoding="utf-8")
    outcome = lock_plan(load_plan(demo_study))
    assert outcome.status == "unchanged"
    assert "(only its deviations acknowledgements differ, and they are never locked)" in \
        outcome.message


@pytest.mark.parametrize("tamper, why", [
    (lambda raw: raw["plan"].update(alpha=0.01),
     "its plan_sha256 does not match the plan it holds (the lock was edited or damaged)"),
    (lambda raw: raw.update(plan_sha256="0" * 64),
     "its plan_sha256 does not match the plan it holds (the lock was edited or damaged)"),
    (lambda raw: raw.update(format=2), "not a format-1 lock file"),
    (lambda raw: raw.pop("locked_at"), "a required entry is missing or malformed ('locked_at')"),
])
def test_a_tampered_lock_is_refused(demo_study: Path, tamper, why):
    lock_plan(load_plan(demo_study), environ=FIRST)
    path = lock_path(demo_study)
    raw = json.loads(path.read_text(encoding="utf-8"))
    tamper(raw)
    path.write_text(json.dumps(raw), encoding="utf-8")
    with pytest.raises(UserError) as caught:
        read_lock(demo_study)
    assert str(caught.value) == (f"cannot use the registration lock {path}: {why}; restore it "
                                 "from version control or the registration record (a lock is "
                                 "never repaired by hand)")
    code, out, err = _cli("run", str(demo_study), "--no-pdf", "--out", "run",
                          cwd=demo_study.parent)
    assert (code, out) == (2, "") and why in err
    assert not (demo_study.parent / "run").exists()


def test_a_lock_that_is_not_json_is_refused(demo_study: Path):
    lock_path(demo_study).write_text("{not json", encoding="utf-8")
    with pytest.raises(UserError, match=r"it is not valid JSON \(line 1\)"):
        read_lock(demo_study)


def test_a_revision_whose_hash_breaks_the_chain_is_refused(demo_study: Path):
    lock_plan(load_plan(demo_study), environ=FIRST)
    _edit(demo_study, "alpha: 0.05", "alpha: 0.01")
    lock_plan(load_plan(demo_study), relock=True, reason="r", environ=SECOND)
    path = lock_path(demo_study)
    raw = json.loads(path.read_text(encoding="utf-8"))
    raw["revisions"][0]["sha256"] = "f" * 64
    path.write_text(json.dumps(raw), encoding="utf-8")
    with pytest.raises(UserError, match="its last revision's sha256 is not the plan it holds"):
        read_lock(demo_study)


def test_lock_text_round_trips(demo_study: Path):
    lock = lock_plan(load_plan(demo_study), environ=FIRST).lock
    assert lock_text(read_lock(demo_study)) == lock_text(lock) == \
        lock_path(demo_study).read_text(encoding="utf-8")


# --- key-by-key comparison -------------------------------------------------------------


def _plan(demo_study: Path) -> dict:
    return json.loads(canonical_json(load_plan(demo_study).plan))


def _changes(registered: dict, current: dict) -> list[tuple[str, str, str | None, str | None]]:
    return [(c.key, c.kind, c.registered, c.current) for c in compare_plans(registered, current)]


def test_the_same_plan_compares_equal(demo_study: Path):
    assert compare_plans(_plan(demo_study), _plan(demo_study)) == ()


@pytest.mark.parametrize("change, expected", [
    (lambda p: p.update(alpha=0.025), [("alpha", "plan-changed", "0.05", "0.025")]),
    (lambda p: p["outcomes"][0].update(role="secondary"),
     [("outcomes[dry_mass].role", "outcome-role-switched", "primary", "secondary")]),
    (lambda p: p["outcomes"].pop(1),
     [("outcomes[chlorophyll]", "outcome-removed",
       '{"column": "chlorophyll_index", "label": "leaf chlorophyll index at day 21", '
       '"name": "chlorophyll", "role": "secondary", "unit": "index units"}', None)]),
    (lambda p: p["outcomes"].append({"name": "height", "label": "height", "role": "secondary",
                                     "column": None, "unit": "cm"}),
     [("outcomes[height]", "outcome-added", None,
       '{"column": null, "label": "height", "name": "height", "role": "secondary", '
       '"unit": "cm"}')]),
    (lambda p: p["contrasts"][0]["weights"].update(humic=2, uncoated=-4),
     [("contrasts[C1].weights.humic", "plan-changed", "1.0", "2"),
      ("contrasts[C1].weights.uncoated", "plan-changed", "-3.0", "-4")]),
    (lambda p: p["contrasts"].reverse(), [("contrasts", "plan-changed", "C1, C2", "C2, C1")]),
    (lambda p: p["multiplicity"].update(method="hochberg"),
     [("multiplicity.method", "plan-changed", "holm", "hochberg")]),
    (lambda p: p["data"]["exclusions"][0].update(equals="broken"),
     [("data.exclusions[X1].equals", "plan-changed", "yes", "broken")]),
    (lambda p: p["design"].update(interactions=[["coating", "tray"]], sums_of_squares=3),
     [("design.interactions", "plan-changed", None, '[["coating", "tray"]]'),
      ("design.sums_of_squares", "plan-changed", None, "3")]),
    (lambda p: p.update(deviations=[{"kind": "plan-changed", "subject": "alpha",
                                     "justification": "j"}]), []),
])
def test_each_change_is_named_by_its_key_path(demo_study: Path, change, expected):
    registered, current = _plan(demo_study), _plan(demo_study)
    change(current)
    assert _changes(registered, current) == expected


@pytest.mark.parametrize("where, key", [(("contrasts",), "contrasts[C1]"),
                                        (("data", "exclusions"), "data.exclusions[X1]")])
def test_a_removed_item_is_named_by_its_id_with_its_registered_value(demo_study: Path, where,
                                                                      key):
    registered, current = _plan(demo_study), _plan(demo_study)
    items = current[where[0]] if len(where) == 1 else current[where[0]][where[1]]
    removed = items.pop(0)
    (found,) = compare_plans(registered, current)
    assert (found.key, found.kind, found.current) == (key, "plan-changed", None)
    assert json.loads(found.registered) == removed
    assert found.message.startswith(f"{key} removed; registered {{")


def test_change_messages_are_in_words(demo_study: Path):
    registered, current = _plan(demo_study), _plan(demo_study)
    current["outcomes"][0]["role"] = "secondary"
    current["outcomes"][1]["role"] = "primary"
    current["alpha"] = 0.01
    assert [c.message for c in compare_plans(registered, current)] == [
        "alpha: registered 0.05, now 0.01.",
        "Outcome dry_mass was registered as primary and is now secondary.",
        "Outcome chlorophyll was registered as secondary and is now primary.",
    ]


def test_check_says_whether_the_plan_is_registered_and_matches(demo_study: Path):
    code, out, _ = _cli("check", str(demo_study), cwd=demo_study.parent)
    assert code == 0 and out.splitlines()[-2:] == [
        "registration: plan not registered (no study.lock.json); appendix lock STUDY "
        "registers it", "nothing was written"]
    lock_plan(load_plan(demo_study), environ=FIRST)
    sha = load_plan(demo_study).sha256[:12]
    code, out, _ = _cli("check", str(demo_study), cwd=demo_study.parent)
    assert out.splitlines()[-2] == (f"registration: locked 2026-02-14T09:00:00Z, SHA-256 {sha}; "
                                    "the plan matches it")
    _edit(demo_study, "alpha: 0.05", "alpha: 0.01")
    code, out, _ = _cli("check", str(demo_study), cwd=demo_study.parent)
    assert out.splitlines()[-3:] == [
        f"registration: locked 2026-02-14T09:00:00Z, SHA-256 {sha}; the plan differs from it:",
        "  alpha: registered 0.05, now 0.01.", "nothing was written"]


def test_the_command_line_relocks_with_a_reason(demo_study: Path):
    lock_plan(load_plan(demo_study), environ=FIRST)
    before = load_plan(demo_study).sha256
    _edit(demo_study, "alpha: 0.05", "alpha: 0.01")
    code, out, err = _cli("lock", str(demo_study), "--relock", "--reason",
                          "stricter level (invented)", cwd=demo_study.parent)
    assert (code, err) == (0, "")
    after = load_plan(demo_study).sha256
    assert out == (f"recorded revision 1 in {lock_path(demo_study)} (SHA-256 {before} -> "
                   f"{after}):\n  alpha: registered 0.05, now 0.01.\n")
    (revision,) = read_lock(demo_study).revisions
    assert (revision.reason, revision.previous_sha256, revision.sha256) == (
        "stricter level (invented)", before, after)
