"""Properties over many generated values (hypothesis): typed cells survive the text step."""

from __future__ import annotations

from hypothesis import given
from hypothesis import strategies as st

from appendix.data.values import match_key, parse_number
from appendix.plan.scalars import scalar_text


@given(st.floats(allow_nan=False, allow_infinity=False))
def test_double_to_text_and_back_is_exact(value):
    # A Parquet/Excel/SAS double becomes text and is parsed again for the analysis.
    assert parse_number(scalar_text(value)) == value


@given(st.integers(min_value=-10**30, max_value=10**30))
def test_integer_text_matches_its_float_spelling(value):
    assert match_key(str(value)) == match_key(f"{value}.0") == match_key(f"{value}e0")
