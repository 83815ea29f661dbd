"""Descriptive statistics per level."""

from __future__ import annotations

import numpy as np
import pytest

from appendix.errors import InternalError
from appendix.stats.descriptives import describe


def test_values_by_hand() -> None:
    # Level a: 2, 4, 4, 5, 7 (mean 4.4, SSD 13.2, SD sqrt(3.3)); level b: 10, 20.
    # Quartiles by linear interpolation (Hyndman & Fan type 7): a -> 4, 4, 5.
    values = np.array([4.0, 10.0, 2.0, 7.0, 20.0, 4.0, 5.0])
    codes = np.array([0, 1, 0, 0, 1, 0, 0])
    d = describe(values, codes, ("a", "b"), [1, 0], 0.95)
    a, b = d.groups
    assert d.confidence_level == 0.95 and d.warnings == ()
    assert (a.level, a.n, a.n_missing) == ("a", 5, 1)
    assert a.mean == pytest.approx(4.4, rel=1e-15)
    assert a.sd == pytest.approx(np.sqrt(3.3), rel=1e-15)
    assert a.se == pytest.approx(np.sqrt(3.3 / 5), rel=1e-15)
    # t(0.975, 4) = 2.7764451051977987 (scipy 1.17 stats.t.isf(0.025, 4); tables give 2.776).
    half = 2.7764451051977987 * np.sqrt(3.3 / 5)
    assert (a.ci_low, a.ci_high) == pytest.approx((4.4 - half, 4.4 + half), rel=1e-14)
    assert (a.q1, a.median, a.q3, a.minimum, a.maximum) == (4.0, 4.0, 5.0, 2.0, 7.0)
    # b: two values, quartiles interpolate: 12.5, 15, 17.5.
    assert (b.q1, b.median, b.q3) == (12.5, 15.0, 17.5)
    assert b.sd == pytest.approx(np.sqrt(50.0), rel=1e-15)


def test_bad_arguments() -> None:
    values, codes = np.array([1.0, 2.0]), np.array([0, 1])
    with pytest.raises(InternalError, match="confidence"):
        describe(values, codes, ("a", "b"), [0, 0], 95)
    with pytest.raises(InternalError, match="missing counts"):
        describe(values, codes, ("a", "b"), [0], 0.95)
