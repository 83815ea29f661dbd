"""Brown–Forsythe on decimal data: the exact path gives the float path's answer, and both
agree with scipy.stats.levene(center='median') (scipy 1.17) on invented seeded data."""

from __future__ import annotations

import numpy as np
import pytest
from scipy.stats import levene

from appendix.stats.diagnostics import brown_forsythe


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_exact_decimal_deviations_agree_with_the_float_path_and_scipy(seed):
    rng = np.random.default_rng(seed)
    codes = rng.integers(0, 3, 40)
    values = np.round(1e6 + rng.normal(0, 2, 40) * (1 + codes), 2)  # two decimals
    exact = brown_forsythe(values, codes, 3, decimals=2)
    floating = brown_forsythe(values, codes, 3)
    reference = levene(*(values[codes == i] for i in range(3)), center="median")
    assert exact.statistic == pytest.approx(floating.statistic, rel=1e-9)
    assert exact.statistic == pytest.approx(reference.statistic, rel=1e-9)
    assert exact.p == pytest.approx(reference.pvalue, rel=1e-9)
