"""Pydantic validation errors in our own words: the key, the value received, what is allowed.

`translate` turns one pydantic error into a (location, message) pair, or None when the
error is an artefact of another one (a list reported "too short" because its items
failed) or is reported by the cross-field checks instead.
"""

from __future__ import annotations

import re
import typing
from collections.abc import Mapping

import annotated_types
from pydantic import BaseModel, WithJsonSchema
from pydantic.fields import FieldInfo

from appendix.plan.wording import Loc, did_you_mean, one_of, show

# Plain words for the identifier patterns of the model (keyed by the regex itself).
_PATTERNS = {
    r"^[A-Za-z0-9][A-Za-z0-9._-]{0,79}$":
        "1 to 80 letters, digits, '.', '_' or '-', starting with a letter or digit",
    r"^[A-Za-z][A-Za-z0-9_]{0,62}$":
        "1 to 63 letters, digits or '_', starting with a letter",
    r"^[A-Za-z][A-Za-z0-9_.-]{0,31}$":
        "1 to 32 letters, digits, '.', '_' or '-', starting with a letter",
    r"^[A-Za-z][A-Za-z0-9_.-]{0,31}(@[A-Za-z][A-Za-z0-9_]{0,62})?$":
        "a contrast id, or 'contrast@outcome' (e.g. 'C1@pain')",
}

_TEXT = ("string_type",)
_LIST = ("tuple_type", "list_type")
_MAPPING = ("model_type", "dict_type", "model_attributes_type")
_NUMBER = ("float_parsing", "float_type", "finite_number")
_WHOLE = ("int_parsing", "int_type", "int_from_float", "int_parsing_size")
_RANGE = ("greater_than", "greater_than_equal", "less_than", "less_than_equal")
_BOOL = ("bool_parsing", "bool_type")
_DATE = ("date_parsing", "date_type", "date_from_datetime_parsing", "date_from_datetime_inexact",
         "date_past", "date_future")


def _model_of(annotation: object) -> type[BaseModel] | None:
    """The pydantic model inside an annotation such as ``tuple[Outcome, ...]`` or ``X | None``."""
    if isinstance(annotation, type) and issubclass(annotation, BaseModel):
        return annotation
    for arg in typing.get_args(annotation):
        found = _model_of(arg)
        if found is not None:
            return found
    return None


def _walk(root: type[BaseModel], loc: Loc) -> tuple[type[BaseModel] | None, FieldInfo | None]:
    """The model holding the last key of `loc`, and that key's field (None where unknown)."""
    keys = [part for part in loc if isinstance(part, str)]
    model: type[BaseModel] | None = root
    for depth, key in enumerate(keys):
        if model is None or key not in model.model_fields:
            return model, None
        info = model.model_fields[key]
        if depth == len(keys) - 1:
            return model, info
        model = _model_of(info.annotation)
    return model, None


def _range(info: FieldInfo | None) -> str:
    words = {"gt": "greater than", "ge": "at least", "lt": "less than", "le": "at most"}
    parts = []
    for item in info.metadata if info else ():
        for attribute, word in words.items():
            if isinstance(item, annotated_types.BaseMetadata) and hasattr(item, attribute):
                parts.append(f"{word} {getattr(item, attribute)}")
    return " " + " and ".join(parts) if parts else ""


_TYPE_WORDS = {"string": "text", "number": "a number", "integer": "a whole number",
               "boolean": "true/false"}


def _json_types(info: FieldInfo | None) -> str:
    """What a field declared with `WithJsonSchema` accepts, in words (``""`` if not declared)."""
    stack: list[object] = list(info.metadata) + [info.annotation] if info else []
    while stack:
        item = stack.pop()
        if isinstance(item, WithJsonSchema) and item.json_schema:
            kinds = item.json_schema.get("type", [])
            words = [_TYPE_WORDS[k] for k in ([kinds] if isinstance(kinds, str) else kinds)]
            return ", ".join(words[:-1]) + f" or {words[-1]}" if len(words) > 1 else "".join(words)
        stack.extend(getattr(item, "__metadata__", ()))
        stack.extend(typing.get_args(item))
    return ""


def _count(n: int) -> str:
    return f"{n} item{'s' if n != 1 else ''}"


def translate(error: Mapping, root: type[BaseModel]) -> tuple[Loc, str] | None:
    """Our message for one entry of ``ValidationError.errors()``."""
    kind, loc, value = error["type"], tuple(error["loc"]), error.get("input")
    ctx = error.get("ctx") or {}
    model, info = _walk(root, loc)
    got = f"got {show(value)}"
    if kind == "plan_consistency":
        return None
    if kind == "too_short" and isinstance(value, (list, tuple)) and len(value) >= ctx["min_length"]:
        return None  # the list is long enough; its items failed and are reported
    if kind == "missing":
        hint = f" ({info.description})" if info and info.description else ""
        return loc, f"required key is missing{hint}"
    if kind == "extra_forbidden":
        allowed = list(model.model_fields) if model else []
        near = did_you_mean(loc[-1], allowed)
        return loc, f"unknown key{near}" if near else f"unknown key; allowed: {one_of(allowed)}"
    if kind == "literal_error":
        choices = re.findall(r"'([^']*)'", ctx["expected"])
        return loc, f"{got}; allowed: {ctx['expected']}{did_you_mean(value, choices)}"
    if kind in _TEXT:
        quote = " (put it in quotes to mean the text)" if isinstance(value, (bool, int, float)) else ""
        return loc, f"{got}; allowed: {_json_types(info) or 'text'}{quote}"
    if kind == "string_too_short":
        return loc, f"{got}; allowed: text of at least {ctx['min_length']} character" + (
            "s" if ctx["min_length"] != 1 else "")
    if kind == "string_too_long":
        return loc, f"{got}; allowed: text of at most {ctx['max_length']} characters"
    if kind == "string_pattern_mismatch":
        return loc, f"{got}; allowed: {_PATTERNS.get(ctx['pattern'], 'text matching ' + ctx['pattern'])}"
    if kind in _LIST:
        return loc, f"{got}; allowed: a list, written [a, b] or as '- item' lines"
    if kind in _MAPPING:
        inner = _model_of(info.annotation) if info else None
        keys = f" with keys {one_of(inner.model_fields, 'and')}" if inner else ""
        return loc, f"{got}; allowed: a mapping{keys}"
    if kind in _NUMBER or kind in _RANGE or kind in _WHOLE:
        whole = kind in _WHOLE or (info is not None and int in (info.annotation,
                                                               *typing.get_args(info.annotation)))
        return loc, f"{got}; allowed: {'a whole number' if whole else 'a number'}{_range(info)}"
    if kind in _BOOL:
        return loc, f"{got}; allowed: true or false"
    if kind in _DATE:
        return loc, f"{got}; allowed: a date written YYYY-MM-DD"
    if kind == "too_short":
        return loc, f"got {_count(len(value))}; allowed: at least {_count(ctx['min_length'])}"
    if kind == "too_long":
        return loc, f"got {_count(len(value))}; allowed: at most {_count(ctx['max_length'])}"
    return loc, f"{got}; {error['msg'][:1].lower()}{error['msg'][1:]}"
