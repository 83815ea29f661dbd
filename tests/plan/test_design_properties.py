"""The JSON Schema accepts every plan the model accepts, over generated designs (hypothesis).

The designs are invented by the strategies below; the study, data and outcomes are those
of the invented test plan `BASE`.
"""

from __future__ import annotations

from itertools import combinations

import jsonschema
from hypothesis import given, settings
from hypothesis import strategies as st
from pydantic import ValidationError

from appendix.plan.model import Plan
from appendix.plan.schema import study_schema
from appendix.plan.yamltree import read_tree
from tests.plan import test_properties
from tests.plan.plans import BASE, FACTORIAL

_SCHEMA = study_schema()
_LEVEL = st.one_of(st.text("abcxyz", min_size=1, max_size=3), st.integers(0, 99))


@st.composite
def _factor(draw, name: str, role: str) -> dict:
    levels = draw(st.lists(_LEVEL, min_size=2, max_size=4, unique_by=str))
    factor: dict = {"name": name, "levels": levels}
    if role != "treatment" or draw(st.booleans()):
        factor["role"] = role
    if role != "block":
        if draw(st.booleans()):
            factor["control"] = draw(st.sampled_from(levels))
        if draw(st.booleans()):
            factor["ordered"] = draw(st.booleans())
    return factor


def _closed(terms: list[frozenset[str]]) -> list[list[str]]:
    """The interactions with every lower-order one they contain added (the hierarchy rule)."""
    closed: list[frozenset[str]] = []
    for term in sorted(terms, key=len):
        for size in range(2, len(term) + 1):
            for sub in combinations(sorted(term), size):
                if frozenset(sub) not in closed:
                    closed.append(frozenset(sub))
    return [sorted(t) for t in closed]


@st.composite
def designs(draw) -> dict:
    """A valid plan: factors of every role, interactions, covariates, contrasts with `by`."""
    roles = ["treatment"] + draw(st.lists(st.sampled_from(["treatment", "block", "within"]),
                                          max_size=3))
    if roles.count("within") > 1:
        roles = [r for r in roles if r != "within"] + ["within"]
    roles = draw(st.permutations(roles))
    names = [f"f{i}" for i in range(len(roles))]
    factors = [draw(_factor(n, r)) for n, r in zip(names, roles)]
    pairs = [frozenset(t) for size in range(2, len(names) + 1) for t in combinations(names, size)]
    interactions = _closed(draw(st.lists(st.sampled_from(pairs), max_size=3, unique=True))
                           if pairs else [])
    covariates = [{"name": f"c{i}", "label": f"covariate {i}"}
                  for i in range(draw(st.integers(0, 2)))]
    design: dict = {"factors": factors}
    if interactions:
        design["interactions"] = interactions
    if covariates:
        design["covariates"] = covariates
    several = len(factors) > 1 or covariates or interactions
    if several or draw(st.booleans()):
        design["sums_of_squares"] = draw(st.sampled_from([1, 2, 3]))
    plan = read_tree(BASE).value
    plan["design"] = design
    if "within" in roles and draw(st.booleans()):
        plan["repeated"] = {"missing": "complete-units"}
    plan["contrasts"] = draw(st.lists(_contrast(factors), max_size=3))
    for i, entry in enumerate(plan["contrasts"]):
        entry["id"] = f"C{i}"
    return plan


@st.composite
def _contrast(draw, factors: list[dict]) -> dict:
    eligible = [f for f in factors if f.get("role", "treatment") != "block"]
    factor = draw(st.sampled_from(eligible))
    kinds = ["pairwise", "helmert"] + (["versus-control"] if "control" in factor else [])
    entry = {"kind": draw(st.sampled_from(kinds)), "label": "invented contrast"}
    if len(eligible) > 1 or draw(st.booleans()):
        entry["factor"] = factor["name"]
    others = [f["name"] for f in eligible if f is not factor]
    if others and draw(st.booleans()):
        entry["by"] = draw(st.sampled_from(others))
    return entry


@settings(max_examples=100, deadline=None)
@given(designs())
def test_generated_designs_are_valid_for_model_and_schema(plan):
    loaded = Plan.model_validate(plan)
    jsonschema.validate(plan, _SCHEMA)
    assert [f.name for f in loaded.design.factors] == [f["name"] for f in plan["design"]["factors"]]
    assert len(loaded.model_terms) == (len(loaded.between) + len(plan["design"].get("covariates", []))
                                       + sum(set(t) <= {f.name for f in loaded.between}
                                             for t in loaded.design.interactions))


_EDITS = [("design", "factors", 1, "role"), ("design", "factors", 2, "levels"),
          ("design", "factors", 3, "ordered"), ("design", "interactions"),
          ("design", "interactions", 0), ("design", "interactions", 1, 0), ("design", "covariates"),
          ("design", "covariates", 0, "column"), ("design", "covariates", 0, "name"),
          ("design", "sums_of_squares"), ("repeated",), ("repeated", "missing")]
_VALUES = st.one_of(st.none(), st.booleans(), st.integers(-1, 4), st.sampled_from(
    ["treatment", "block", "within", "coating", "visit", "complete-units", "x"]),
    st.lists(st.sampled_from(["coating", "variety", "visit", "field_block"]), max_size=3))


@settings(max_examples=100, deadline=None)
@given(st.lists(st.tuples(st.sampled_from(_EDITS), _VALUES), min_size=1, max_size=3))
def test_schema_accepts_every_edited_design_the_model_accepts(edits):
    plan = read_tree(FACTORIAL).value
    for path, value in edits:
        target = plan
        for key in path[:-1]:
            if isinstance(target, dict):
                target = target.setdefault(key, {})
            elif isinstance(target, list) and isinstance(key, int) and key < len(target):
                target = target[key]
            else:
                break
        else:
            last = path[-1]
            if isinstance(target, dict) if isinstance(last, str) else (
                    isinstance(target, list) and last < len(target)):
                target[last] = value
    try:
        Plan.model_validate(plan)
    except ValidationError:
        return  # the loader's tests cover refusals; this property is about acceptance
    jsonschema.validate(plan, _SCHEMA)


_CONTRAST_EDITS = [("contrasts", 0, "factor"), ("contrasts", 0, "by"), ("contrasts", 1, "kind"),
                   ("contrasts", 1, "weights"), ("analysis", "method"), ("assumptions",)]
_LOADED = FACTORIAL + """\
contrasts:
  - {id: C1, factor: coating, kind: pairwise, by: variety, label: pairs per variety}
  - {id: C2, factor: variety, kind: custom, label: late minus early, weights: {early: -1, late: 1}}
"""


@settings(max_examples=100, deadline=None)
@given(st.lists(st.tuples(st.sampled_from(_EDITS + _CONTRAST_EDITS), test_properties._VALUES),
                min_size=1, max_size=4))
def test_any_edit_of_a_design_loads_or_lists_located_problems(tmp_path_factory, edits):
    test_properties._edit_and_load(tmp_path_factory, _LOADED, edits)
