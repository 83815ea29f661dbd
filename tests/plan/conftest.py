"""Fixtures for the plan tests."""

from __future__ import annotations

from pathlib import Path

import pytest

# The shared assertion helpers live in a plain module; show their failures in full.
pytest.register_assert_rewrite("tests.plan.plans")


@pytest.fixture
def write_study(tmp_path: Path):
    def write(text: str | bytes, name: str = "study.yaml") -> Path:
        path = tmp_path / name
        if isinstance(text, bytes):
            path.write_bytes(text)
        else:
            path.write_text(text, encoding="utf-8")
        return path

    return write
