"""The study-file documentation's example is a valid plan, and names every key."""

from __future__ import annotations

import re
import typing
from pathlib import Path

from pydantic import BaseModel

from appendix.plan.load import load_plan
from appendix.plan.model import Plan

DOC = Path(__file__).resolve().parents[2] / "docs" / "study-file.md"


def _models(root: type[BaseModel]) -> list[type[BaseModel]]:
    """Every model reachable from `root` through field annotations."""
    found: list[type[BaseModel]] = []
    stack: list[object] = [root]
    while stack:
        item = stack.pop()
        if isinstance(item, type) and issubclass(item, BaseModel):
            if item not in found:
                found.append(item)
                stack += [info.annotation for info in item.model_fields.values()]
        else:
            stack += typing.get_args(item)
    return found


def _example() -> str:
    return re.search(r"```yaml\n(.*?)```", DOC.read_text(encoding="utf-8"), re.S).group(1)


def test_documented_example_loads(tmp_path):
    study = tmp_path / "study.yaml"
    study.write_text(_example(), encoding="utf-8")
    plan = load_plan(study).plan
    assert [c.kind for c in plan.contrasts] == ["custom", "versus-control", "pairwise", "helmert"]
    assert plan.assumptions.fallbacks[0].use == "welch"
    assert plan.exploratory[0].reason == "asked by the steering committee after unblinding"


def test_every_key_is_documented():
    text = DOC.read_text(encoding="utf-8")
    missing = sorted({f"{model.__name__}.{key}" for model in _models(Plan)
                      for key in model.model_fields if not re.search(rf"\b{key}\b", text)})
    assert missing == []


def test_documented_design_example_loads(tmp_path):
    examples = re.findall(r"```yaml\n(.*?)```", DOC.read_text(encoding="utf-8"), re.S)
    study = tmp_path / "study.yaml"
    study.write_text(examples[1], encoding="utf-8")
    plan = load_plan(study).plan
    assert [f.role for f in plan.design.factors] == ["treatment", "treatment", "block", "within"]
    assert plan.model_terms == (("seed_mass",), ("field_block",), ("coating",), ("variety",),
                                ("coating", "variety"))
    # The documented count: C1 2 versus uncoated, C2 3 pairs x 2 varieties, C3 1 linear trend.
    assert [plan.hypotheses_of(c) for c in plan.contrasts] == [2, 6, 1]
    assert plan.hypothesis_count("height") == 9
    assert plan.repeated.missing == "complete-units"


def test_documented_graph_loads(tmp_path):
    from tests.plan.plans import BASE

    text = DOC.read_text(encoding="utf-8")
    block = re.search(r"  ```\n(  multiplicity:\n.*?)  ```", text, re.S).group(1)
    contrasts = "".join(f"  - {{id: {cid}, kind: custom, label: {cid}, weights: {{placebo: -1, {level}: 1}}}}\n"
                        for cid, level in [("H1", "high"), ("H2", "low"), ("S1", "high"), ("S2", "low")])
    study = tmp_path / "study.yaml"
    study.write_text(BASE + "contrasts:\n" + contrasts + "\n".join(line[2:] for line in block.splitlines()) + "\n",
                     encoding="utf-8")
    settings = load_plan(study).plan.multiplicity
    assert settings.method == "graphical" and settings.weights == {"H1": 0.5, "H2": 0.5}
    assert settings.transitions == {"H1": {"S1": 1.0}, "H2": {"S2": 1.0}, "S1": {"H2": 1.0},
                                    "S2": {"H1": 1.0}}
