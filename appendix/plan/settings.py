"""The plan's settings, resolved once: every key with a default, its value, and whether
the study file states it ("as registered") or the default holds ("by default").

>>> [s.key for s in plan_settings(load_plan(path).plan, {})][:2]  # doctest: +SKIP
['alpha', 'design.factors[0].role']
"""

from __future__ import annotations

from collections.abc import Iterator, Mapping

from pydantic import BaseModel

from appendix.plan.model import Plan
from appendix.results import PlanSetting

#: Keys whose model default is "not stated" (None) but whose value the analysis resolves:
#: the type of sums of squares of a design whose one between-unit term makes every type agree.
_RESOLVED = {"design.sums_of_squares": lambda plan: plan.ss_type}

#: Sections whose settings apply only where the plan uses them.
_APPLIES = {"multiplicity": lambda plan: bool(plan.contrasts),
            # declared families each state their own method; the top-level keys then do not apply
            "multiplicity.method": lambda plan: not plan.multiplicity.families,
            "multiplicity.scope": lambda plan: not plan.multiplicity.families}


def plan_settings(plan: Plan, lines: Mapping[str, int]) -> tuple[PlanSetting, ...]:
    """Every setting of `plan` that has a value by default, in plan order: stated when
    its key path is among the study file's `lines`."""
    return tuple(PlanSetting(key, spell(value), key in lines) for key, value in _walk(plan, plan, ""))


def _walk(plan: Plan, model: BaseModel, prefix: str) -> Iterator[tuple[str, object]]:
    for name, field in type(model).model_fields.items():
        key = f"{prefix}{name}"
        value = getattr(model, name)
        if key in _APPLIES and not _APPLIES[key](plan):
            continue
        if key in _RESOLVED:
            yield key, _RESOLVED[key](plan)
        elif isinstance(value, BaseModel):
            yield from _walk(plan, value, f"{key}.")
        elif isinstance(value, tuple) and value and all(isinstance(v, BaseModel) for v in value):
            for i, item in enumerate(value):
                yield from _walk(plan, item, f"{key}[{i}].")
        elif not field.is_required() and field.default not in (None, ()) and value is not None:
            yield key, value


def spell(value: object) -> str:
    """A value as a study file writes it: true/false, 3 for 3.0, lists joined by commas."""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, float):
        return f"{value:g}"
    if isinstance(value, (tuple, list)):
        return ", ".join(spell(v) for v in value)
    return str(value)
