"""Safe YAML reading that keeps the line of every key and list item.

The file is composed into PyYAML's node tree (``yaml.SafeLoader``'s parser and composer,
never its constructor) and turned into plain values here, so that:

- scalars follow the YAML 1.2 core schema: only ``true``/``false`` are booleans and
  ``null``/``~``/empty is null; ``yes``, ``no``, ``on`` and dates stay text (a level
  called ``no`` stays a level called ``no``);
- every mapping key and sequence item records its 1-based line under its key path;
- duplicate keys, non-text keys, tags other than the core ones, and anchors and aliases
  are problems. Anchors and aliases are refused: a plan should read literally, and
  refusing them rules out alias-expansion bombs.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass, field

import yaml
from yaml.events import AliasEvent
from yaml.nodes import MappingNode, Node, ScalarNode, SequenceNode

from appendix.plan.wording import Loc, key_path

_CORE = "tag:yaml.org,2002:"
_ALLOWED_TAGS = {f"{_CORE}{name}" for name in ("str", "int", "float", "bool", "null", "map", "seq")}
_ALIAS_TAG = "!appendix/alias"

_NULL = re.compile(r"^(?:~|null|Null|NULL|)$")
_BOOL = re.compile(r"^(?:true|True|TRUE|false|False|FALSE)$")
_INT = re.compile(r"^(?:[-+]?[0-9]+|0o[0-7]+|0x[0-9a-fA-F]+)$")
_FLOAT = re.compile(
    r"^(?:[-+]?(?:\.[0-9]+|[0-9]+(?:\.[0-9]*)?)(?:[eE][-+]?[0-9]+)?"
    r"|[-+]?\.(?:inf|Inf|INF)|\.(?:nan|NaN|NAN))$"
)


def _plain_tag(text: str) -> str:
    """The core-schema tag of an untagged plain scalar."""
    for tag, pattern in (("null", _NULL), ("bool", _BOOL), ("int", _INT), ("float", _FLOAT)):
        if pattern.match(text):
            return f"{_CORE}{tag}"
    return f"{_CORE}str"


class _CoreLoader(yaml.SafeLoader):
    """SafeLoader with YAML 1.2 core implicit typing; notes anchors and aliases on nodes."""

    yaml_implicit_resolvers: dict = {}

    def compose_node(self, parent, index):  # noqa: ANN001 - PyYAML's signature
        event = self.peek_event()
        if isinstance(event, AliasEvent):
            self.get_event()
            # Stand-in node: the alias is reported where it is used, not expanded.
            return ScalarNode(_ALIAS_TAG, event.anchor, event.start_mark, event.end_mark)
        anchor = getattr(event, "anchor", None)
        node = super().compose_node(parent, index)
        if anchor is not None:
            node.refused_anchor = anchor
        return node


for _tag, _pattern, _first in (
    ("null", _NULL, ["~", "n", "N", ""]),
    ("bool", _BOOL, list("tTfF")),
    ("int", _INT, list("-+0123456789")),
    ("float", _FLOAT, list("-+.0123456789")),
):
    _CoreLoader.add_implicit_resolver(f"{_CORE}{_tag}", _pattern, _first)


@dataclass(frozen=True)
class Tree:
    """A composed YAML document as plain values, with lines and the problems found."""

    value: object
    lines: dict[str, int]
    problems: tuple[tuple[Loc, int, str], ...] = field(default=())


class YamlSyntaxError(Exception):
    """The text is not well-formed YAML; `line` is 1-based or None."""

    def __init__(self, line: int | None, message: str):
        super().__init__(message)
        self.line = line
        self.message = message


def read_tree(text: str) -> Tree:
    """Compose `text` (one YAML document) into plain values with their lines.

    >>> read_tree("a: [1, no]\\n").value
    {'a': [1, 'no']}
    """
    try:
        node = yaml.compose(text, Loader=_CoreLoader)
    except yaml.MarkedYAMLError as error:
        mark = error.problem_mark or error.context_mark
        message = " ".join(p for p in (error.context, error.problem) if p)
        raise YamlSyntaxError(mark.line + 1 if mark else None, message) from None
    except yaml.YAMLError as error:
        raise YamlSyntaxError(None, str(error)) from None
    except RecursionError:
        raise YamlSyntaxError(None, _TOO_DEEP) from None
    builder = _Builder()
    try:
        value = None if node is None else builder.value(node, ())
    except RecursionError:
        raise YamlSyntaxError(None, _TOO_DEEP) from None
    return Tree(value, builder.lines, tuple(builder.problems))


# PyYAML composes recursively; a plan is a few levels deep, so running out of stack means
# a malformed or hostile file, reported as such rather than as a crash.
_TOO_DEEP = "lists or mappings are nested too deeply"


class _Builder:
    """Walks the node tree once; `lines` and `problems` fill as it goes."""

    def __init__(self) -> None:
        self.lines: dict[str, int] = {}
        self.problems: list[tuple[Loc, int, str]] = []

    def _refuse(self, loc: Loc, node: Node, message: str) -> None:
        self.problems.append((loc, node.start_mark.line + 1, message))

    def value(self, node: Node, loc: Loc) -> object:
        self.lines.setdefault(key_path(loc), node.start_mark.line + 1)
        anchor = getattr(node, "refused_anchor", None)
        if anchor is not None:
            self._refuse(loc, node, f"anchor '&{anchor}' is not allowed; write the value out in full")
        if node.tag == _ALIAS_TAG:
            self._refuse(loc, node, f"alias '*{node.value}' is not allowed; write the value out in full")
            return None
        if node.tag not in _ALLOWED_TAGS:
            shown = "!!" + node.tag[len(_CORE):] if node.tag.startswith(_CORE) else node.tag
            self._refuse(loc, node, f"tag '{shown}' is not allowed; remove it "
                                    "(only plain YAML values are read)")
        if isinstance(node, MappingNode):
            return self._mapping(node, loc)
        if isinstance(node, SequenceNode):
            return [self.value(item, (*loc, i)) for i, item in enumerate(node.value)]
        return self._scalar(node, loc)

    def _mapping(self, node: MappingNode, loc: Loc) -> dict[str, object]:
        result: dict[str, object] = {}
        first_line: dict[str, int] = {}
        for key_node, value_node in node.value:
            line = key_node.start_mark.line + 1
            if not isinstance(key_node, ScalarNode) or key_node.tag == _ALIAS_TAG:
                self._refuse(loc, key_node, "a key must be a plain name, not a list or mapping")
                continue
            key = key_node.value
            if key in first_line:
                self.problems.append(((*loc, key), line,
                                      f"duplicate key; first given on line {first_line[key]}"))
                continue
            first_line[key] = line
            self.lines[key_path((*loc, key))] = line
            result[key] = self.value(value_node, (*loc, key))
        return result

    def _scalar(self, node: ScalarNode, loc: Loc) -> object:
        text, tag = node.value, node.tag
        if tag not in _ALLOWED_TAGS:
            # Already reported; read the value as if untagged so that only the tag is wrong.
            tag = _plain_tag(text) if node.style is None else f"{_CORE}str"
        if tag == f"{_CORE}str":
            return text
        try:
            if tag == f"{_CORE}null":
                return None
            if tag == f"{_CORE}bool":
                return text.lower() == "true"
            if tag == f"{_CORE}int":
                return int(text, 0) if text[:2] in ("0o", "0x") else int(text)
            if tag == f"{_CORE}float":
                lowered = text.lower().lstrip("+")
                if lowered in (".inf", "-.inf", ".nan"):
                    return {".inf": math.inf, "-.inf": -math.inf, ".nan": math.nan}[lowered]
                return float(text)
        except ValueError:
            pass
        self._refuse(loc, node, f"got {text!r}, which is not a valid {tag.rsplit(':', 1)[-1]}")
        return text
