"""Deviations from the registered plan, detected on every run (pure: no I/O).

Kinds (stable identifiers, listed in `appendix.plan.choices.DEVIATION_KINDS`):

- ``plan-not-registered``: no ``study.lock.json`` beside the study file (subject ``plan``);
- ``plan-changed``, ``outcome-added``, ``outcome-removed``, ``outcome-role-switched``: the
  plan against the lock, key by key (subject: the dotted key path); changes recorded as
  revisions of the lock are listed too, acknowledged by the revision's reason;
- ``below-minimum-n``: fewer analysed units than ``data.planned_n.minimum`` at a level
  (or cell) that has eligible units, for some outcome (subject: the level); fewer than the
  planned number alone is attrition, shown in the unit flow, not a deviation;
- ``below-minimum-total``: fewer analysed units in all than ``data.planned_n.minimum_total``
  for an outcome (subject: the outcome); above it, attrition stays in the unit flow;
- ``level-without-units``: a plan level (or cell) with no eligible unit (subject: the level);
- ``missing-above-limit``: a larger share of eligible units without a value than
  ``data.missing_limit`` (subject: the outcome);
- ``registered-contingency``: a registered fallback rule fired (acknowledged by the plan);
- ``acknowledgement-unmatched``: an entry of the plan's ``deviations`` that matches no
  deviation of this run (never acknowledged itself).

An acknowledgement matches every deviation of the same kind whose subject equals its own
exactly; it marks them acknowledged with its justification.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Iterable, Sequence

from appendix.data.flow import analysed_in_all, analysed_words, groups_below, labelled
from appendix.names import LOCK_FILE
from appendix.plan.lock import Lock, PlanChange, compare_plans
from appendix.plan.model import Plan
from appendix.plan.wording import did_you_mean, show
from appendix.results import Deviation, PlanRevision, Registration, UnitFlow

UNMATCHED = "acknowledgement-unmatched"
NOT_REGISTERED = "plan-not-registered"


def registration(lock: Lock | None) -> Registration | None:
    """What the appendix shows of the lock: first lock time, last hash, revisions, and
    the data file at the first lock and, after a revision, at the last one (a relock
    made after the data existed must not read as "plan fixed before the data")."""
    if lock is None:
        return None
    data, statement = lock.data, lock.data.statement
    if lock.revisions:
        last = lock.revisions[-1]
        data = last.data
        then = "the data file existed" if last.data.existed else "the data file did not exist yet"
        statement = f"at the first lock, {lock.data.statement}; at revision {last.number}, {then}"
    return Registration(
        lock_file=LOCK_FILE, locked_at=lock.locked_at, plan_sha256=lock.plan_sha256,
        tool_version=lock.tool_version, data_at_lock=statement,
        data_sha256_at_lock=data.sha256,
        revisions=tuple(PlanRevision(r.number, r.time, r.previous_sha256, r.sha256, r.reason)
                        for r in lock.revisions))


def registration_summary(plan_json: dict, lock: Lock | None) -> list[str]:
    """Lines for ``appendix check``: whether the plan is registered and matches its lock.

    >>> registration_summary({}, None)[0]
    'registration: plan not registered (no study.lock.json); appendix lock STUDY registers it'
    """
    if lock is None:
        return ["registration: plan not registered (no study.lock.json); appendix lock STUDY "
                "registers it"]
    revised = (f", revised {len(lock.revisions)} time{'s' if len(lock.revisions) != 1 else ''}"
               if lock.revisions else "")
    head = f"registration: locked {lock.locked_at}{revised}, SHA-256 {lock.plan_sha256[:12]}"
    changes = compare_plans(lock.plan, plan_json)
    if not changes:
        return [f"{head}; the plan matches it"]
    return [f"{head}; the plan differs from it:", *(f"  {c.message}" for c in changes)]


def _from_change(change: PlanChange, detected: str, acknowledged: bool = False,
                 justification: str | None = None) -> Deviation:
    return Deviation(kind=change.kind, subject=change.key, message=change.message,
                     acknowledged=acknowledged, justification=justification, detected=detected,
                     registered=change.registered, current=change.current)


def plan_deviations(plan_json: dict, lock: Lock | None) -> tuple[Deviation, ...]:
    """The plan against its lock: each change since the last lock, then each change that
    a revision of the lock recorded (acknowledged by that revision's reason)."""
    if lock is None:
        return (Deviation(
            kind=NOT_REGISTERED, subject="plan",
            message="Plan not registered: no registration lock (study.lock.json) was found "
                    "beside the study file, so nothing shows that the plan was fixed before "
                    "the analysis.",
            acknowledged=False, detected="looked for study.lock.json beside the study file"),)
    when = lock.last_locked_at
    detected = (f"plan compared key by key with study.lock.json (locked {when}, "
                f"SHA-256 {lock.plan_sha256[:12]})")
    found = [_from_change(c, detected) for c in compare_plans(lock.plan, plan_json)]
    for revision in lock.revisions:
        note = f"recorded in study.lock.json as revision {revision.number} on {revision.time}"
        found += [_from_change(c, note, True, revision.reason) for c in revision.changes]
    return tuple(found)


def _grouping(plan: Plan) -> tuple[str, str]:
    """('level', factor in words) with one treatment factor (blocks and covariates make
    no cells of their own), ('cell', crossed factors) otherwise; the unit flow's words."""
    if len(plan.treatments) == 1:
        return "level", plan.factor.label or plan.factor.name
    names = [f.label or f.name for f in plan.treatments] or [plan.factor.label or plan.factor.name]
    return "cell", " \u00d7 ".join(names)


def data_deviations(plan: Plan, flow: UnitFlow) -> tuple[Deviation, ...]:
    """Levels without units, analysed numbers below the registered minimum, and missing
    values above the registered limit, from the unit flow."""
    level, grouping = _grouping(plan)
    found: list[Deviation] = []
    read = {c.level: c.n for c in flow.read}
    for count in flow.eligible:
        if count.n == 0:
            n_read = read.get(count.level, 0)
            why = "none in the data" if n_read == 0 else f"all {n_read} excluded"
            found.append(Deviation(
                "level-without-units", count.level,
                f"No eligible units at {level} {show(count.level)} of {grouping} ({why}).",
                False, detected="eligible units per level in the unit flow"))
    found += _below_minimum(plan, flow, level, grouping)
    found += _below_minimum_total(plan, flow)
    found += _missing_above_limit(plan, flow)
    return tuple(found)


def _below_minimum(plan: Plan, flow: UnitFlow, level: str, grouping: str) -> list[Deviation]:
    """Groups (cells) with eligible units whose analysed number is below the registered
    ``data.planned_n.minimum`` for some outcome. A shortfall against the planned number
    alone is attrition, which the unit flow shows by reason; it departs from no rule."""
    planned = plan.data.planned_n
    minimum = planned.minimum if planned is not None else None
    if minimum is None:
        return []
    detected = "analysed units in the unit flow compared with data.planned_n.minimum"
    per = "group" if level == "level" else "cell"
    return [Deviation("below-minimum-n", group,
                      f"{level.capitalize()} {show(group)} of {grouping}: "
                      f"{analysed_words(labelled(plan, counts))}; the plan's minimum is {minimum} "
                      f"per {per}.",
                      False, detected=detected)
            for group, counts in groups_below(flow, minimum)]


def _below_minimum_total(plan: Plan, flow: UnitFlow) -> list[Deviation]:
    """Outcomes whose analysed units in all are fewer than the registered
    ``data.planned_n.minimum_total``; fewer than the planned total alone is attrition."""
    planned = plan.data.planned_n
    minimum = planned.minimum_total if planned is not None else None
    if minimum is None:
        return []
    detected = "analysed units in the unit flow compared with data.planned_n.minimum_total"
    below = [(outcome, n) for outcome, n in analysed_in_all(flow) if n < minimum]
    return [Deviation("below-minimum-total", outcome,
                      f"{label[:1].upper()}{label[1:]}: {analysed_words([(label, n)])} in all; "
                      f"the plan's minimum is {minimum} in all.", False, detected=detected)
            for (outcome, n), (label, _) in zip(below, labelled(plan, below))]


def _missing_above_limit(plan: Plan, flow: UnitFlow) -> list[Deviation]:
    limit = plan.data.missing_limit
    eligible = sum(c.n for c in flow.eligible)
    if limit is None or eligible == 0:
        return []
    found = []
    for outcome in flow.outcomes:
        missing = sum(c.n for c in outcome.missing)
        if missing > limit * eligible:
            found.append(Deviation(
                "missing-above-limit", outcome.outcome,
                f"Outcome {outcome.outcome}: {missing} of {eligible} eligible units "
                f"({missing / eligible:.1%}) have no value; the registered limit is "
                f"{limit:.1%}.", False,
                detected="missing values in the unit flow compared with data.missing_limit"))
    return found


def acknowledge(plan: Plan, found: Iterable[Deviation]) -> tuple[Deviation, ...]:
    """Apply the plan's `deviations` acknowledgements; report those that match nothing."""
    found = list(found)
    for i, entry in enumerate(plan.deviations):
        matched = [j for j, d in enumerate(found)
                   if d.kind == entry.kind and d.subject == entry.subject]
        for j in matched:
            if not found[j].acknowledged:
                found[j] = dataclasses.replace(found[j], acknowledged=True,
                                               justification=entry.justification)
        if not matched:
            hint = did_you_mean(entry.subject, [d.subject for d in found if d.kind == entry.kind])
            other = sorted({d.kind for d in found if d.subject == entry.subject})
            if not hint and other:
                hint = f"; {show(entry.subject)} has a deviation of kind {', '.join(other)}"
            found.append(Deviation(
                UNMATCHED, f"deviations[{i}]",
                f"deviations[{i}] acknowledges {entry.kind} {show(entry.subject)}, but this "
                f"run detected no such deviation{hint}; it acknowledges nothing.", False,
                detected="the plan's deviations list matched against the deviations detected"))
    return tuple(found)


def unacknowledged(deviations: Iterable[Deviation]) -> tuple[Deviation, ...]:
    """The deviations that neither the plan nor a recorded revision acknowledges."""
    return tuple(d for d in deviations if not d.acknowledged)


def all_deviations(plan: Plan, plan_json: dict, lock: Lock | None, flow: UnitFlow,
                   contingencies: Sequence[Deviation]) -> tuple[Deviation, ...]:
    """Every deviation of a run, acknowledgements applied: registered contingencies
    first, then the plan against its lock, then the data against the plan."""
    contingent = [dataclasses.replace(
        d, detected=d.detected or "the registered fallback rule's test on this run's data")
        for d in contingencies]
    return acknowledge(plan, [*contingent, *plan_deviations(plan_json, lock),
                              *data_deviations(plan, flow)])
