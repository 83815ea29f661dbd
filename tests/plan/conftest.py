"""Fixtures for the plan tests."""

from __future__ import annotations

from pathlib import Path

import pytest


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
