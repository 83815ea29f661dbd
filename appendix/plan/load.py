"""Load a study file: bounded, safe YAML; every problem at once; a frozen plan with its hash.

>>> loaded = load_plan(Path("studies/demo/study.yaml"))  # doctest: +SKIP
>>> loaded.plan.factor.levels, loaded.line_of("outcomes[0].role")  # doctest: +SKIP
"""

from __future__ import annotations

import json
from collections.abc import Mapping
from dataclasses import dataclass
from functools import cached_property
from pathlib import Path
from types import MappingProxyType

from pydantic import ValidationError

from appendix.errors import PlanError, Problem, UserError
from appendix.hashing import sha256_text
from appendix.plan.checks import consistency_problems
from appendix.plan.messages import translate
from appendix.plan.model import Plan
from appendix.plan.settings import plan_settings
from appendix.plan.wording import Loc, key_path, show
from appendix.results import PlanSetting
from appendix.plan.yamltree import YamlSyntaxError, read_tree

#: Largest study file read. A plan is a page of text; anything far larger is a mistake.
MAX_BYTES = 1 << 20


@dataclass(frozen=True)
class LoadedPlan:
    """A validated plan with where it came from.

    `sha256` is the hash of the canonical plan JSON (`canonical_json`), so that two
    files that differ only in comments, order or spelling of the same values share it;
    `content` is the file's bytes as read; `lines` maps key paths to 1-based lines.
    """

    plan: Plan
    path: Path
    text: str
    content: bytes
    sha256: str
    lines: Mapping[str, int]

    @property
    def folder(self) -> Path:
        """The study file's folder: plan paths are relative to it."""
        return self.path.parent

    @property
    def data_path(self) -> Path:
        return self.folder / self.plan.data.source

    @cached_property
    def settings(self) -> tuple[PlanSetting, ...]:
        """Every key with a default, resolved, with whether the study file states it."""
        return plan_settings(self.plan, self.lines)

    @property
    def defaulted(self) -> tuple[str, ...]:
        """The keys whose defaults hold: the appendix says "by default" for them where it
        would say "as registered"."""
        return tuple(s.key for s in self.settings if not s.stated)

    def line_of(self, path: str) -> int | None:
        """The line of a key path, or of its nearest enclosing key when absent."""
        return _line(self.lines, path)


def canonical_json(plan: Plan) -> str:
    """The plan as canonical JSON: sorted keys, no spaces, UTF-8 text kept as is."""
    return json.dumps(plan.model_dump(mode="json"), sort_keys=True, separators=(",", ":"),
                      ensure_ascii=False, allow_nan=False)


def plan_sha256(plan: Plan) -> str:
    return sha256_text(canonical_json(plan))


def load_plan(path: Path | str) -> LoadedPlan:
    """Read, parse and validate a study file (a path, as `Path` or text).

    Raises `PlanError` listing every problem found (file:line, key path, message), or
    `UserError` when the file cannot be read at all.
    """
    path = Path(path)
    where = str(path)
    content = _read_bounded(path)
    try:
        text = content.decode("utf-8-sig")
    except UnicodeDecodeError as error:
        line = content[: error.start].count(b"\n") + 1
        raise PlanError([Problem(where, line, "", "the file is not UTF-8 text")]) from None
    try:
        tree = read_tree(text)
    except YamlSyntaxError as error:
        raise PlanError([Problem(where, error.line, "", f"not valid YAML: {error.message}")]) from None
    lines = tree.lines
    found: list[tuple[Loc, int | None, str]] = list(tree.problems)
    if not isinstance(tree.value, dict):
        message = ("the file is empty" if tree.value is None else f"got {show(tree.value)}")
        found.append(((), 1, f"{message}; allowed: a mapping of keys (format, study, data, ...)"))
        raise _plan_error(where, found)
    plan = None
    try:
        plan = Plan.model_validate(tree.value)
    except ValidationError as error:
        for item in error.errors():
            translated = translate(item, Plan)
            if translated is not None:
                found.append((translated[0], None, translated[1]))
    found += [(loc, None, message) for loc, message in consistency_problems(tree.value)]
    if found or plan is None:
        raise _plan_error(where, found, lines)
    return LoadedPlan(plan=plan, path=path, text=text, content=content,
                      sha256=plan_sha256(plan), lines=MappingProxyType(dict(lines)))


def _read_bounded(path: Path) -> bytes:
    try:
        with path.open("rb") as handle:
            content = handle.read(MAX_BYTES + 1)
    except FileNotFoundError:
        raise UserError(f"study file not found: {path.resolve()}") from None
    except IsADirectoryError:
        raise UserError(f"study file is a folder, not a file: {path.resolve()}") from None
    except OSError as error:
        raise UserError(f"cannot read the study file {path}: {error.strerror}") from None
    if len(content) > MAX_BYTES:
        raise PlanError([Problem(str(path), None, "",
                                 f"the file is larger than {MAX_BYTES} bytes; a study file "
                                 "is a short text, is this the right file?")])
    return content


def _line(lines: Mapping[str, int], path: str) -> int | None:
    while True:
        if path in lines:
            return lines[path]
        if not path:
            return None
        cut = max(path.rfind("."), path.rfind("["))
        path = path[:cut] if cut > 0 else ""


def _plan_error(where: str, found: list[tuple[Loc, int | None, str]],
                lines: Mapping[str, int] | None = None) -> PlanError:
    problems = {Problem(where, line if line is not None else _line(lines or {}, key_path(loc)),
                        key_path(loc), message)
                for loc, line, message in found}
    return PlanError(sorted(problems, key=lambda p: (p.line or 0, p.path, p.message)))
