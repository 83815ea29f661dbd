"""The pipeline's layers, read from the code: every module imports only from its own layer
and the layers before it (DEVELOPERS.md, "The layers"); the ground floor imports nothing
of ours; rendering and diffing load no plotting library.

Imports are read with `ast`, wherever they stand: at the top, inside a function (a lazy
import is still a dependency) or under ``if TYPE_CHECKING``.
"""

from __future__ import annotations

import ast
import subprocess
import sys
from pathlib import Path

import pytest

PACKAGE = Path(__file__).resolve().parent.parent / "appendix"

#: The layers in pipeline order (plan -> data -> stats/engine -> conclusions -> results ->
#: render/figures -> publish/bundle, commands on top), each a name and its modules; a name
#: ending in ``.*`` stands for a package and every module in it.
LAYERS: tuple[tuple[str, tuple[str, ...]], ...] = (
    ("ground", ("appendix", "appendix.errors", "appendix.names", "appendix.hashing",
                "appendix.staging", "appendix.tolerance", "appendix.figure_spec",
                "appendix.numbers", "appendix.captions", "appendix.epoch", "appendix.typefaces")),
    ("contract", ("appendix.results", "appendix.methods", "appendix.versions")),
    ("plan", ("appendix.plan.*",)),
    ("data", ("appendix.data.*",)),
    ("stats", ("appendix.stats.*",)),
    ("engine", ("appendix.families", "appendix.models", "appendix.baselines", "appendix.nist",
                "appendix.selftest")),
    ("conclusions", ("appendix.conclude", "appendix.deviations")),
    ("results", ("appendix.runner", "appendix.records", "appendix.preview")),
    ("render", ("appendix.figures", "appendix.render")),
    ("publish", ("appendix.publish", "appendix.targets", "appendix.jsonread", "appendix.compare",
                 "appendix.bundle")),
    ("commands", ("appendix.api", "appendix.cli", "appendix.__main__", "appendix.commands.*")),
)

#: The small shared modules of the ground floor, which import nothing of ours at all.
GROUND_FLOOR = ("appendix.names", "appendix.hashing", "appendix.staging", "appendix.tolerance",
                "appendix.figure_spec", "appendix.numbers", "appendix.captions", "appendix.errors",
                "appendix.typefaces")

#: Modules that are handed plain values and reach no earlier stage than these layers: the
#: numeric core reads arrays (never the plan or a data-stage type), the renderer reads the
#: typed results and figures already drawn (never the engine, stats or figure code).
ONLY_FROM = {
    "appendix.stats.*": ("ground", "contract", "stats"),
    "appendix.render": ("ground", "contract"),
}

def _modules() -> dict[str, Path]:
    found = {}
    for path in sorted(PACKAGE.rglob("*.py")):
        parts = list(path.relative_to(PACKAGE.parent).with_suffix("").parts)
        if parts[-1] == "__init__":
            parts.pop()
        found[".".join(parts)] = path
    return found


MODULES = _modules()


def _imports(module: str) -> set[str]:
    """The modules of ours that `module` imports anywhere in its code."""
    path = MODULES[module]
    package = module if path.name == "__init__.py" else module.rpartition(".")[0]
    found = set()
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.Import):
            found.update(alias.name for alias in node.names)
        elif isinstance(node, ast.ImportFrom):
            if node.level:
                base = package.split(".")[:len(package.split(".")) - node.level + 1]
                source = ".".join(base + ([node.module] if node.module else []))
            else:
                source = node.module
            for alias in node.names:  # `from appendix import api` imports the module appendix.api
                name = f"{source}.{alias.name}"
                found.add(name if name in MODULES else source)
    return {name for name in found if name == "appendix" or name.startswith("appendix.")}


def layer_of(module: str) -> int:
    for index, (_, members) in enumerate(LAYERS):
        for member in members:
            package = member[:-2] if member.endswith(".*") else None
            if module in (member, package) or (package and module.startswith(package + ".")):
                return index
    raise LookupError(module)


def test_every_module_has_its_layer():
    unplaced = []
    for module in MODULES:
        try:
            layer_of(module)
        except LookupError:
            unplaced.append(module)
    assert unplaced == [], "add each new module to LAYERS here and in DEVELOPERS.md"


def _back_imports() -> set[tuple[str, str]]:
    return {(module, imported) for module in MODULES for imported in _imports(module)
            if imported in MODULES and layer_of(imported) > layer_of(module)}


def test_every_module_imports_only_from_its_own_and_earlier_layers():
    found = sorted(_back_imports())
    named = [f"{a} ({LAYERS[layer_of(a)][0]}) imports {b} ({LAYERS[layer_of(b)][0]})"
             for a, b in found]
    assert named == []


@pytest.mark.parametrize(("members", "allowed"), ONLY_FROM.items())
def test_stages_fed_plain_values_import_nothing_of_the_stages_before(members, allowed):
    group = [m for m in MODULES if m == members or
             (members.endswith(".*") and (m + ".").startswith(members[:-1]))]
    found = sorted(f"{m} imports {i}" for m in group for i in _imports(m)
                   if LAYERS[layer_of(i)][0] not in allowed)
    assert group and found == []


@pytest.mark.parametrize("module", GROUND_FLOOR)
def test_the_ground_floor_imports_nothing_of_ours(module):
    assert _imports(module) == set()


def test_the_reader_of_imports_sees_lazy_and_relative_imports():
    # appendix.api imports appendix.figures inside `render` only; appendix.cli imports the
    # package for its version
    assert "appendix.figures" in _imports("appendix.api")
    assert "appendix" in _imports("appendix.cli")
    assert layer_of("appendix.stats.cells") < layer_of("appendix.models") < layer_of("appendix.api")


@pytest.mark.parametrize("module", ["appendix.render", "appendix.compare"])
def test_rendering_and_diffing_load_no_plotting_library(module):
    code = (f"import sys, {module}; "
            "print(sorted(m for m in ('matplotlib', 'appendix.figures') if m in sys.modules))")
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                          check=True, cwd=PACKAGE.parent)
    assert done.stdout.strip() == "[]"
