"""The YAML reader: core-schema typing and line numbers."""

from __future__ import annotations

import math

import pytest

from appendix.plan.yamltree import YamlSyntaxError, read_tree


@pytest.mark.parametrize("text, value", [
    ("yes", "yes"), ("no", "no"), ("on", "on"), ("true", True), ("False", False),
    ("~", None), ("null", None), ("", None), ("12", 12), ("-3", -3), ("0x1F", 31),
    ("0o17", 15), ("0.05", 0.05), ("5e-2", 0.05), ("'12'", "12"), ("2026-02-14", "2026-02-14"),
    ("1_000", "1_000"), ("!!str 3", "3"), (".inf", math.inf),
])
def test_core_schema_scalars(text, value):
    # YAML 1.2 core schema (yaml.org/spec/1.2.2, section 10.3), from the spec's tables.
    assert read_tree(f"a: {text}\n").value == {"a": value}


def test_nan_scalar():
    assert math.isnan(read_tree("a: .nan\n").value["a"])


def test_lines_of_nested_items():
    tree = read_tree("a:\n  - x\n  -\n    b: 1\n    c: [2, 3]\n")
    assert tree.lines == {"": 1, "a": 1, "a[0]": 2, "a[1]": 4, "a[1].b": 4, "a[1].c": 5,
                          "a[1].c[0]": 5, "a[1].c[1]": 5}


def test_non_scalar_key_is_a_problem():
    tree = read_tree("? [a, b]\n: 1\nc: 2\n")
    assert tree.value == {"c": 2}
    assert tree.problems == (((), 1, "a key must be a plain name, not a list or mapping"),)


def test_two_documents_are_a_syntax_error():
    with pytest.raises(YamlSyntaxError) as caught:
        read_tree("a: 1\n---\nb: 2\n")
    assert caught.value.line == 2  # the second "---"
    assert "expected a single document" in caught.value.message


def test_deep_nesting_is_an_error_not_a_crash():
    with pytest.raises(YamlSyntaxError) as caught:
        read_tree("a: " + "[" * 100_000 + "]" * 100_000 + "\n")
    assert (caught.value.line, caught.value.message) == (None, "lists or mappings are nested too deeply")
