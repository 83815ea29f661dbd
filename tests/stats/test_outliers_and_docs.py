"""Outlier screen by hand, its contract checks, and the docstring examples of the core."""

from __future__ import annotations

import doctest
import importlib

import numpy as np
import pytest

from appendix.errors import InternalError
from appendix.stats.cells import cell_stats
from appendix.stats.diagnostics import outlier_screen

pytestmark = pytest.mark.filterwarnings("error")


def test_studentized_residual_by_hand() -> None:
    # Level a: 1, 2, 3, 10 (mean 4, residuals -3 -2 -1 6); level b: 4, 5, 6 (mean 5).
    # SS_within = 50 + 2 = 52, df = 5. Unit a4: h = 1/4, e^2/(1-h) = 48,
    # s^2 = (52 - 48)/4 = 1, t = 6 / sqrt(1 * 0.75) = 6.9282 (hand computation).
    values = np.array([1.0, 2.0, 3.0, 10.0, 4.0, 5.0, 6.0])
    codes = np.array([0, 0, 0, 0, 1, 1, 1])
    cells = cell_stats(values, codes, 2)
    units = ("a1", "a2", "a3", "a4", "b1", "b2", "b3")
    screen = outlier_screen(values, codes, cells, units, ("a", "b"), 3.0)
    assert screen.n_screened == 7 and screen.warnings == ()
    (unit,) = screen.flagged
    assert (unit.unit, unit.level, unit.value, unit.residual) == ("a4", "a", 10.0, 6.0)
    assert unit.studentized == pytest.approx(6 / np.sqrt(0.75), rel=1e-14)


def test_infinite_studentized_residual_is_flagged_with_a_warning() -> None:
    # a = 0, 4 and b = 3, 3, 3: without either unit of a nothing varies any more.
    values = np.array([0.0, 4.0, 3.0, 3.0, 3.0])
    codes = np.array([0, 0, 1, 1, 1])
    screen = outlier_screen(values, codes, cell_stats(values, codes, 2), tuple("vwxyz"), ("a", "b"), 3.0)
    assert [u.unit for u in screen.flagged] == ["v", "w"]
    assert all(np.isinf(u.studentized) for u in screen.flagged)
    assert [w.code for w in screen.warnings] == ["outlier-infinite"]


@pytest.mark.parametrize(("units", "levels", "threshold", "message"), [
    (("a",), ("x", "y"), 3.0, "units must match"),
    (("a", "b"), ("x",), 3.0, "units must match"),
    (("a", "b"), ("x", "y"), 0.0, "threshold must be positive"),
])
def test_contract_violations(units, levels, threshold, message) -> None:
    values, codes = np.array([1.0, 2.0]), np.array([0, 1])
    with pytest.raises(InternalError, match=message):
        outlier_screen(values, codes, cell_stats(values, codes, 2), units, levels, threshold)


@pytest.mark.parametrize("name", ["cells", "oneway", "rank", "effect_sizes", "exact"])
def test_docstring_examples_hold(name: str) -> None:
    module = importlib.import_module(f"appendix.stats.{name}")
    result = doctest.testmod(module, optionflags=doctest.ELLIPSIS)
    assert result.attempted > 0 and result.failed == 0
