"""The published JSON Schema of the study file, derived from the plan model.

``python -m appendix.plan.schema`` rewrites ``schema/study.schema.json``; a test checks
that the committed file equals what the model generates.

Editors can check a study file as it is typed, e.g. with a first line
``# yaml-language-server: $schema=../../schema/study.schema.json``.
"""

from __future__ import annotations

import json
import sys
from pathlib import Path

from appendix.plan.model import Plan

SCHEMA_ID = "urn:appendix:schema:study:format-1"
SCHEMA_DIALECT = "https://json-schema.org/draft/2020-12/schema"
SCHEMA_FILE = Path(__file__).resolve().parents[2] / "schema" / "study.schema.json"


def study_schema() -> dict:
    """The JSON Schema (draft 2020-12) of a format-1 study file."""
    schema = Plan.model_json_schema()
    schema["$schema"] = SCHEMA_DIALECT
    schema["$id"] = SCHEMA_ID
    schema["title"] = "appendix study file, format 1"
    return schema


def schema_text() -> str:
    """The schema as the committed file holds it: sorted keys, two-space indent, final newline."""
    return json.dumps(study_schema(), sort_keys=True, indent=2, ensure_ascii=False) + "\n"


def main(argv: list[str] | None = None) -> int:
    """Write the schema to `argv[0]` (default: the repository's schema/study.schema.json)."""
    args = sys.argv[1:] if argv is None else argv
    target = Path(args[0]) if args else SCHEMA_FILE
    target.write_text(schema_text(), encoding="utf-8")
    print(f"wrote {target}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
