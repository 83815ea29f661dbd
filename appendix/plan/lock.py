"""The registration lock: ``study.lock.json`` beside the study file, and plan-to-lock comparison.

`lock_plan` fixes the canonical plan (the JSON whose SHA-256 is `LoadedPlan.sha256`), its
hash, the time (UTC; SOURCE_DATE_EPOCH when set, else the injected clock), the tool
version and the SHA-256 of the data file when it exists at lock time. Locking the same
plan again changes nothing; a changed plan needs ``relock=True`` and a reason, and is
recorded as a revision (time, previous and new hash, reason, the changes key by key).
`read_lock` refuses a lock whose own hash does not match the plan it holds.
`compare_plans` lists the differences of two canonical plans by dotted key path; the
plan's `deviations` key (acknowledgements, written after the lock) is never compared.

>>> outcome = lock_plan(load_plan("studies/seed-coating/study.yaml"))  # doctest: +SKIP
>>> outcome.status, outcome.lock.plan_sha256[:12]                      # doctest: +SKIP
"""

from __future__ import annotations

import datetime as _dt
import json
import os
from collections.abc import Callable, Mapping
from dataclasses import dataclass, replace
from pathlib import Path
from typing import Any, Literal

from appendix import __version__
from appendix.errors import UserError
from appendix.hashing import sha256_and_size, sha256_text
from appendix.names import LOCK_FILE
from appendix.plan.load import LoadedPlan, canonical_json
from appendix.staging import write_atomically

__all__ = ["LOCK_FORMAT", "PlanChange", "DataAtLock", "Revision", "Lock",
           "LockOutcome", "lock_path", "read_lock", "lock_plan", "lock_text", "compare_plans",
           "lock_time"]

LOCK_FORMAT = 1

#: Statements of whether the data existed when the plan was locked.
BEFORE_DATA = "plan fixed before the data file existed"
WITH_DATA = "the data file existed at lock time"

#: Lists whose items are told apart by a key: compared item by item under that key.
_KEYED = {("outcomes",): "name", ("contrasts",): "id", ("exploratory",): "id",
          ("data", "exclusions"): "id", ("design", "factors"): "name",
          ("design", "covariates"): "name", ("multiplicity", "families"): "id",
          ("deviations",): None}
_NOT_COMPARED = ("deviations",)


class _Missing:
    def __repr__(self) -> str:
        return "not set"


_ABSENT = _Missing()


@dataclass(frozen=True)
class PlanChange:
    """One difference between the registered and the present plan.

    `key` is a dotted key path with list items named by their id (``alpha``,
    ``outcomes[dry_mass].role``, ``contrasts[C1].weights``, ``data.exclusions[X1]``);
    `kind` is ``outcome-added``, ``outcome-removed``, ``outcome-role-switched`` or
    ``plan-changed``; `registered` and `current` the values in words (None: not set).
    """

    key: str
    kind: str
    registered: str | None
    current: str | None
    message: str


@dataclass(frozen=True)
class DataAtLock:
    """Whether the data file existed at lock time, and its SHA-256 then."""

    existed: bool
    statement: str
    path: str
    sha256: str | None
    bytes: int | None


@dataclass(frozen=True)
class Revision:
    """A relock: when, from which hash to which, why, and what changed."""

    number: int
    time: str
    previous_sha256: str
    sha256: str
    reason: str
    changes: tuple[PlanChange, ...]
    data: DataAtLock
    tool_version: str


@dataclass(frozen=True)
class Lock:
    """The contents of ``study.lock.json``; `plan_json` is the canonical plan as last locked."""

    study: str
    locked_at: str
    tool_version: str
    plan_json: str
    plan_sha256: str
    data: DataAtLock
    revisions: tuple[Revision, ...] = ()

    @property
    def plan(self) -> dict[str, Any]:
        return json.loads(self.plan_json)

    @property
    def last_locked_at(self) -> str:
        return self.revisions[-1].time if self.revisions else self.locked_at


@dataclass(frozen=True)
class LockOutcome:
    """What `lock_plan` did: ``locked`` (first lock), ``unchanged`` or ``relocked``."""

    status: Literal["locked", "unchanged", "relocked"]
    path: Path
    lock: Lock
    changes: tuple[PlanChange, ...]
    message: str


def lock_path(study: Path) -> Path:
    """Where the lock of a study file lives: ``study.lock.json`` in the same folder."""
    return Path(study).parent / LOCK_FILE


def lock_time(clock: Callable[[], _dt.datetime] | None = None,
              environ: Mapping[str, str] | None = None) -> str:
    """The lock time as UTC ISO 8601 text (seconds): SOURCE_DATE_EPOCH when set (the
    reproducible-builds convention), else the clock (default: now)."""
    environ = os.environ if environ is None else environ
    epoch = environ.get("SOURCE_DATE_EPOCH")
    if epoch:
        try:
            moment = _dt.datetime.fromtimestamp(int(epoch), _dt.timezone.utc)
        except (ValueError, OverflowError, OSError):
            raise UserError(f"SOURCE_DATE_EPOCH must be whole seconds since 1970, got {epoch!r}") \
                from None
    else:
        moment = (clock or (lambda: _dt.datetime.now(_dt.timezone.utc)))()
    return moment.astimezone(_dt.timezone.utc).strftime("%Y-%m-%dT%H:%M:%SZ")


def _canonical(value: Any) -> str:
    return json.dumps(value, sort_keys=True, separators=(",", ":"), ensure_ascii=False,
                      allow_nan=False)


# --- comparison -------------------------------------------------------------------------


def _words(value: Any) -> str | None:
    if value is _ABSENT or value is None:
        return None
    if isinstance(value, str):
        return value
    return json.dumps(value, sort_keys=True, ensure_ascii=False, separators=(", ", ": "))


def _said(value: str | None) -> str:
    return "not set" if value is None else value


def _change(key: str, old: Any, new: Any) -> PlanChange:
    registered, current = _words(old), _words(new)
    if key.startswith("outcomes[") and key.endswith("]") and old is _ABSENT:
        return PlanChange(key, "outcome-added", None, current,
                          f"Outcome {key[9:-1]} is not in the registered plan; now: {current}.")
    if key.startswith("outcomes[") and key.endswith("]") and new is _ABSENT:
        return PlanChange(key, "outcome-removed", registered, None,
                          f"Registered outcome {key[9:-1]} is no longer in the plan; "
                          f"registered: {registered}.")
    if key.startswith("outcomes[") and key.endswith("].role"):
        name = key[9:key.index("]")]
        return PlanChange(key, "outcome-role-switched", registered, current,
                          f"Outcome {name} was registered as {_said(registered)} and is now "
                          f"{_said(current)}.")
    if old is _ABSENT:
        text = f"{key} added; now {current}."
    elif new is _ABSENT:
        text = f"{key} removed; registered {registered}."
    else:
        text = f"{key}: registered {registered}, now {current}."
    return PlanChange(key, "plan-changed", registered, current, text)


def _join(path: str, key: str) -> str:
    return f"{path}.{key}" if path else key


def _walk(path: str, loc: tuple, old: Any, new: Any, out: list[PlanChange]) -> None:
    if old == new:
        return
    id_key = _KEYED.get(loc)
    if id_key:
        old = [] if old is _ABSENT else old
        new = [] if new is _ABSENT else new
        if (isinstance(old, list) and isinstance(new, list)
                and all(isinstance(i, dict) and id_key in i for i in [*old, *new])):
            before = {str(i[id_key]): i for i in old}
            after = {str(i[id_key]): i for i in new}
            for name in [*before, *(n for n in after if n not in before)]:
                _walk(f"{path}[{name}]", (*loc, "item"), before.get(name, _ABSENT),
                      after.get(name, _ABSENT), out)
            kept_before = [n for n in before if n in after]
            kept_after = [n for n in after if n in before]
            if kept_before != kept_after:
                out.append(PlanChange(path, "plan-changed", ", ".join(kept_before),
                                      ", ".join(kept_after),
                                      f"Order of {path}: registered {', '.join(kept_before)}, "
                                      f"now {', '.join(kept_after)}."))
            return
    if isinstance(old, dict) and isinstance(new, dict):
        for key in sorted(set(old) | set(new)):
            _walk(_join(path, key), (*loc, key), old.get(key, _ABSENT), new.get(key, _ABSENT), out)
        return
    out.append(_change(path, old, new))


def compare_plans(registered: Mapping[str, Any],
                  current: Mapping[str, Any]) -> tuple[PlanChange, ...]:
    """Every difference between two canonical plans (``Plan.model_dump(mode="json")``),
    key by key, in sorted key order; `deviations` (acknowledgements) is left out.

    >>> [c.message for c in compare_plans({"alpha": 0.05}, {"alpha": 0.01})]
    ['alpha: registered 0.05, now 0.01.']
    """
    def view(plan: Mapping[str, Any]) -> dict[str, Any]:
        return {k: v for k, v in plan.items() if k not in _NOT_COMPARED}

    out: list[PlanChange] = []
    _walk("", (), view(registered), view(current), out)
    return tuple(out)


# --- the lock file ----------------------------------------------------------------------


def _data_at_lock(loaded: LoadedPlan) -> DataAtLock:
    path = loaded.data_path
    if not path.is_file():
        return DataAtLock(False, BEFORE_DATA, loaded.plan.data.source, None, None)
    return DataAtLock(True, WITH_DATA, loaded.plan.data.source, *sha256_and_size(path))


def _change_plain(change: PlanChange) -> dict[str, Any]:
    return {"key": change.key, "kind": change.kind, "registered": change.registered,
            "current": change.current, "message": change.message}


def _data_plain(data: DataAtLock) -> dict[str, Any]:
    return {"existed": data.existed, "statement": data.statement, "path": data.path,
            "sha256": data.sha256, "bytes": data.bytes}


def lock_text(lock: Lock) -> str:
    """The lock as the file holds it: canonical JSON (sorted keys, two-space indent)."""
    plain = {
        "format": LOCK_FORMAT,
        "tool": {"name": "appendix", "version": lock.tool_version},
        "study": lock.study,
        "locked_at": lock.locked_at,
        "plan": json.loads(lock.plan_json),
        "plan_sha256": lock.plan_sha256,
        "data": _data_plain(lock.data),
        "revisions": [
            {"number": r.number, "time": r.time, "previous_sha256": r.previous_sha256,
             "sha256": r.sha256, "reason": r.reason, "tool_version": r.tool_version,
             "changes": [_change_plain(c) for c in r.changes], "data": _data_plain(r.data)}
            for r in lock.revisions],
    }
    return json.dumps(plain, sort_keys=True, indent=2, ensure_ascii=False, allow_nan=False) + "\n"


def _refuse(path: Path, why: str) -> UserError:
    return UserError(f"cannot use the registration lock {path}: {why}; restore it from "
                     "version control or the registration record (a lock is never repaired "
                     "by hand)")


def _data_from(item: Any) -> DataAtLock:
    return DataAtLock(bool(item["existed"]), str(item["statement"]), str(item["path"]),
                      item["sha256"], item["bytes"])


def _parse(path: Path, raw: Any) -> Lock:
    if not isinstance(raw, dict) or raw.get("format") != LOCK_FORMAT:
        raise _refuse(path, f"not a format-{LOCK_FORMAT} lock file")
    try:
        plan_json = _canonical(raw["plan"])
        lock = Lock(
            study=str(raw["study"]), locked_at=str(raw["locked_at"]),
            tool_version=str(raw["tool"]["version"]), plan_json=plan_json,
            plan_sha256=str(raw["plan_sha256"]), data=_data_from(raw["data"]),
            revisions=tuple(Revision(
                number=int(r["number"]), time=str(r["time"]),
                previous_sha256=str(r["previous_sha256"]), sha256=str(r["sha256"]),
                reason=str(r["reason"]), tool_version=str(r["tool_version"]),
                changes=tuple(PlanChange(c["key"], c["kind"], c["registered"], c["current"],
                                         c["message"]) for c in r["changes"]),
                data=_data_from(r["data"])) for r in raw["revisions"]))
    except (KeyError, TypeError, ValueError) as error:
        raise _refuse(path, f"a required entry is missing or malformed ({error})") from None
    if sha256_text(plan_json) != lock.plan_sha256:
        raise _refuse(path, "its plan_sha256 does not match the plan it holds (the lock was "
                      "edited or damaged)")
    if lock.revisions and lock.revisions[-1].sha256 != lock.plan_sha256:
        raise _refuse(path, "its last revision's sha256 is not the plan it holds")
    return lock


def read_lock(study: Path | str) -> Lock | None:
    """The lock beside the study file, or None when there is none; `UserError` when it
    cannot be read or its hash does not match its plan."""
    path = lock_path(Path(study))
    try:
        text = path.read_text(encoding="utf-8")
    except FileNotFoundError:
        return None
    except (OSError, UnicodeDecodeError) as error:
        raise _refuse(path, f"it cannot be read ({error})") from None
    try:
        raw = json.loads(text)
    except json.JSONDecodeError as error:
        raise _refuse(path, f"it is not valid JSON (line {error.lineno})") from None
    except RecursionError:
        raise _refuse(path, "it is nested too deeply to be read") from None
    return _parse(path, raw)


def _write(path: Path, lock: Lock) -> None:
    write_atomically(path, lock_text(lock).encode("utf-8"))


def lock_plan(loaded: LoadedPlan, *, relock: bool = False, reason: str | None = None,
              clock: Callable[[], _dt.datetime] | None = None,
              environ: Mapping[str, str] | None = None) -> LockOutcome:
    """Register the plan: write ``study.lock.json``, leave it as it is, or record a revision.

    Raises `UserError` (exit 2) for a changed plan without `relock` (naming each change),
    for `relock` without a reason, and for `relock` when nothing is locked yet.
    """
    path = lock_path(loaded.path)
    current = json.loads(canonical_json(loaded.plan))
    existing = read_lock(loaded.path)
    reason = (reason or "").strip() or None
    if existing is None:
        if relock:
            raise UserError(f"nothing to relock: {path} does not exist; lock the plan first "
                            "(appendix lock STUDY)")
        lock = Lock(study=loaded.plan.study.id, locked_at=lock_time(clock, environ),
                    tool_version=__version__, plan_json=canonical_json(loaded.plan),
                    plan_sha256=loaded.sha256, data=_data_at_lock(loaded))
        _write(path, lock)
        return LockOutcome("locked", path, lock, (), f"locked the plan in {path} "
                           f"(SHA-256 {loaded.sha256}); {lock.data.statement}")
    changes = compare_plans(existing.plan, current)
    if not changes:
        note = ("" if loaded.sha256 == existing.plan_sha256 else
                " (only its deviations acknowledgements differ, and they are never locked)")
        return LockOutcome("unchanged", path, existing, (),
                           f"the plan is unchanged since it was locked ({existing.plan_sha256})"
                           f"{note}; {path} was left as it was")
    listed = "\n".join(f"  {c.message}" for c in changes)
    if not relock:
        raise UserError(f"the plan differs from its registration lock {path}:\n{listed}\n"
                        "to register the change as a revision: appendix lock STUDY --relock "
                        "--reason TEXT")
    if reason is None:
        raise UserError("--relock needs --reason TEXT: a revision of a registered plan is "
                        "recorded with its reason")
    revision = Revision(number=len(existing.revisions) + 1, time=lock_time(clock, environ),
                        previous_sha256=existing.plan_sha256, sha256=loaded.sha256,
                        reason=reason, changes=changes, data=_data_at_lock(loaded),
                        tool_version=__version__)
    lock = replace(existing, plan_json=canonical_json(loaded.plan), plan_sha256=loaded.sha256,
                   tool_version=__version__, revisions=(*existing.revisions, revision))
    _write(path, lock)
    return LockOutcome("relocked", path, lock, changes,
                       f"recorded revision {revision.number} in {path} "
                       f"(SHA-256 {existing.plan_sha256} -> {loaded.sha256}):\n{listed}")
