"""Properties of the YAML reader over generated documents (hypothesis)."""

from __future__ import annotations

import yaml
from hypothesis import given
from hypothesis import strategies as st

from appendix.plan.yamltree import _plain_tag, read_tree
from tests.plan.plans import BASE, EVERY_KIND

_STR = "tag:yaml.org,2002:str"


def _typed_alike(text: str) -> bool:
    """False for text that YAML 1.1 reads as a string but the 1.2 core schema as a number.

    PyYAML writes such text unquoted (e.g. ``0E0``: a 1.1 float needs a '.', a 1.2 float
    does not), so a 1.2 reader rightly reads a number back; that is the versions'
    difference, not a reader bug.
    """
    v11 = yaml.resolver.Resolver().resolve(yaml.ScalarNode, text, (True, False))
    return not (v11 == _STR and _plain_tag(text) != _STR)


_SCALARS = st.one_of(st.none(), st.booleans(), st.integers(),
                     st.text(max_size=12).filter(_typed_alike), st.floats(allow_nan=False))
_VALUES = st.recursive(_SCALARS, lambda inner: st.one_of(
    st.lists(inner, max_size=4), st.dictionaries(st.text(min_size=1, max_size=8), inner, max_size=4)),
    max_leaves=12)


@given(st.dictionaries(st.text(min_size=1, max_size=8), _VALUES, min_size=1, max_size=5))
def test_reads_back_what_pyyaml_dumps(document):
    # yaml.safe_dump (PyYAML 6.0.3) quotes every string a YAML 1.1 reader would type, so a
    # YAML 1.2 core reader must give back the same values.
    tree = read_tree(yaml.safe_dump(document))
    assert tree.value == document
    assert tree.problems == ()


_PATHS = [("format",), ("alpha",), ("study",), ("study", "id"), ("study", "registered"),
          ("data",), ("data", "unit"), ("data", "exclusions"), ("data", "exclusions", 0),
          ("data", "exclusions", 0, "equals"), ("data", "planned_n"), ("design",),
          ("design", "factors"), ("design", "factors", 0), ("design", "factors", 0, "levels"),
          ("design", "factors", 0, "levels", 1), ("design", "factors", 0, "control"),
          ("outcomes",), ("outcomes", 0), ("outcomes", 1, "name"), ("outcomes", 0, "role"),
          ("assumptions",), ("assumptions", "equal_variance"), ("extra",)]


def _holds(container: object, key: object) -> bool:
    if isinstance(container, dict):
        return isinstance(key, str)
    return isinstance(container, list) and isinstance(key, int) and key < len(container)


def _set(document: dict, path: tuple, value: object) -> None:
    """Put `value` at `path` where the (already edited) document still has that place."""
    target: object = document
    for key in path[:-1]:
        if not _holds(target, key) or (isinstance(target, dict) and key not in target):
            return
        target = target[key]
    if _holds(target, path[-1]):
        target[path[-1]] = value


_CONTRAST_PATHS = [("contrasts",), ("contrasts", 0), ("contrasts", 0, "kind"), ("contrasts", 0, "weights"),
                   ("contrasts", 0, "weights", "low"), ("contrasts", 1, "degree"),
                   ("contrasts", 1, "spacing"), ("contrasts", 1, "spacing", 0), ("contrasts", 2, "outcomes"),
                   ("contrasts", 2, "alternative"), ("multiplicity",), ("multiplicity", "method"),
                   ("multiplicity", "order"), ("multiplicity", "order", 0), ("exploratory", 0),
                   ("exploratory", 0, "id"), ("assumptions", "fallbacks"), ("assumptions", "fallbacks", 0),
                   ("assumptions", "fallbacks", 0, "test"), ("analysis", "method"),
                   ("design", "factors", 0, "ordered")]


@given(st.lists(st.tuples(st.sampled_from(_PATHS), _VALUES), min_size=1, max_size=4))
def test_any_edit_of_a_valid_plan_loads_or_lists_problems(tmp_path_factory, edits):
    _edit_and_load(tmp_path_factory, BASE, edits)


@given(st.lists(st.tuples(st.sampled_from(_CONTRAST_PATHS), _VALUES), min_size=1, max_size=4))
def test_any_edit_of_contrasts_loads_or_lists_problems(tmp_path_factory, edits):
    _edit_and_load(tmp_path_factory, EVERY_KIND, edits)


def _edit_and_load(tmp_path_factory, base: str, edits) -> None:
    from appendix.errors import PlanError
    from appendix.plan.load import load_plan

    document = read_tree(base).value
    for path, value in edits:
        _set(document, path, value)
    study = tmp_path_factory.mktemp("fuzz") / "study.yaml"
    study.write_text(yaml.safe_dump(document), encoding="utf-8")
    try:
        load_plan(study)
    except PlanError as error:
        # Never a crash, never an empty or unlocated problem.
        assert error.problems
        assert all(p.message and p.line is not None for p in error.problems)
