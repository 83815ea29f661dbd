"""Cell rules: missing values, numbers, exclusion matching."""

from __future__ import annotations

import pytest

from appendix.data.values import is_missing, match_key, parse_number


@pytest.mark.parametrize("cell, missing", [
    (None, True), ("", True), ("  ", True), ("NA", True), ("N/A", True), ("NaN", True),
    (".", True), ("na", False), ("0", False), ("none", False),
])
def test_missing(cell, missing):
    assert is_missing(cell) is missing


@pytest.mark.parametrize("cell, value", [
    ("12", 12.0), (" -0.5 ", -0.5), ("+3", 3.0), (".5", 0.5), ("5.", 5.0), ("1.2e3", 1200.0),
    ("1,5", None), ("12 mg", None), ("inf", None), ("nan", None), ("1e999", None), ("0x10", None),
    ("1_000", None), ("", None),
])
def test_parse_number(cell, value):
    assert parse_number(cell) == value


@pytest.mark.parametrize("rule, cell, matches", [
    ("yes", "yes", True), ("yes", " yes ", True), ("yes", "Yes", False),
    ("0", "0.0", True), ("0", "-0", True), ("3", "3e0", True), ("0.1", "0.10", True),
    ("10000", "1e4", True), ("1", "1.0001", False),
    ("true", "TRUE", True), ("true", "True", True), ("true", "1", False),
    ("", None, True), ("", "", True), ("x", None, False),
])
def test_exclusion_matching(rule, cell, matches):
    assert (match_key(rule) == match_key(cell)) is matches
