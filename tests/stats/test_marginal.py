"""Estimated marginal means and contrasts against statsmodels' own coefficients.

Reference: statsmodels (0.15) formula OLS. For each marginal mean the row l of the
statsmodels design is built by hand: the design rows of every cell of the grid with the
covariate at its overall mean (patsy's `build_design_matrices` on the fit's own design
information), averaged with equal weights over the other factors; then l'b with b =
`params` and sqrt(l' V l) with V = `cov_params()`. t quantiles and tails from scipy
(1.17). All data are invented: seeded normal draws.
"""

from __future__ import annotations

import itertools

import numpy as np
import pandas as pd
import patsy
import pytest
import statsmodels.formula.api as smf
from scipy import stats as st

from appendix.stats.design import Grid, design_cells
from appendix.stats.linear import fit_linear
from appendix.stats.marginal import contrast_covariance, marginal_contrast, marginal_means

RELATIVE = 1e-9
NAMES = ("A", "B", "D")


def invented(shape, per_cell=None, seed=0, drop=()):
    """Invented rows: `per_cell` units in every cell (else 2-6 at random), a covariate
    whose mean differs between cells, normal effects and noise."""
    rng = np.random.default_rng(seed)
    cells = int(np.prod(shape))
    counts = np.full(cells, per_cell) if per_cell else rng.integers(2, 7, size=cells)
    counts[list(drop)] = 0
    cell = np.repeat(np.arange(cells), counts)
    codes = [c.astype(np.int64) for c in np.unravel_index(cell, shape)]
    x = rng.normal(0, 1, cells)[cell] + rng.normal(20, 4, cell.size)
    y = 30 + rng.normal(0, 2, cells)[cell] + 0.4 * x + rng.normal(0, 1, cell.size)
    names = NAMES[: len(shape)]
    grid = Grid(names, tuple(tuple(f"{n.lower()}{j + 1}" for j in range(k))
                             for n, k in zip(names, shape)))
    frame = pd.DataFrame({"y": y, "x": x, **dict(zip(names, codes))})
    return grid, design_cells(grid, codes, y, {"x": x}), frame


class Reference:
    """statsmodels' fit of `formula` and hand-built marginal-mean rows l."""

    def __init__(self, frame: pd.DataFrame, formula: str, shape: tuple[int, ...]):
        self.model = smf.ols(formula, data=frame).fit()
        names = NAMES[: len(shape)]
        cells = pd.DataFrame(list(itertools.product(*(range(k) for k in shape))), columns=list(names))
        cells["x"] = frame["x"].mean()
        info = self.model.model.data.orig_exog.design_info
        self.rows = np.asarray(patsy.build_design_matrices([info], cells)[0])
        self.cells = cells

    def row(self, fixed: dict[str, int]) -> np.ndarray:
        chosen = np.ones(len(self.cells), dtype=bool)
        for name, code in fixed.items():
            chosen &= (self.cells[name] == code).to_numpy()
        return self.rows[chosen].mean(axis=0)

    def estimate(self, l: np.ndarray) -> tuple[float, float]:
        cov = self.model.cov_params().to_numpy()
        return float(l @ self.model.params.to_numpy()), float(np.sqrt(l @ cov @ l))


@pytest.mark.parametrize(("shape", "per_cell", "formula", "terms"), [
    ((3, 4), 5, "y ~ C(A) * C(B) + x", [("A",), ("B",), ("A", "B"), ("x",)]),
    ((3, 4), None, "y ~ C(A) + C(B) + x", [("A",), ("B",), ("x",)]),
    ((2, 3, 2), 3, "y ~ C(A) * C(B) * C(D) + x",
     [("A",), ("B",), ("D",), ("A", "B"), ("A", "D"), ("B", "D"), ("A", "B", "D"), ("x",)]),
])
@pytest.mark.parametrize("ss_type", [2, 3])
def test_marginal_means_and_ses_match_statsmodels(shape, per_cell, formula, terms, ss_type) -> None:
    grid, cells, frame = invented(shape, per_cell, seed=len(shape) + (per_cell or 0))
    fit = fit_linear(cells, terms, ss_type, 0.05)
    reference = Reference(frame, formula, shape)
    for factors in (("A",), ("B",), ("A", "B")):
        means = marginal_means(fit, factors, 0.95)
        indices = [grid.index(f) for f in factors]
        combos = list(itertools.product(*(range(grid.shape[i]) for i in indices)))
        assert len(means) == len(combos)
        for mean, combo in zip(means, combos):
            estimate, se = reference.estimate(reference.row(dict(zip(factors, combo))))
            assert mean.levels == tuple(grid.levels[i][c] for i, c in zip(indices, combo))
            assert mean.estimate == pytest.approx(estimate, rel=RELATIVE)
            assert mean.se == pytest.approx(se, rel=RELATIVE)
            half = st.t.ppf(0.975, reference.model.df_resid) * se
            assert (mean.ci_low, mean.ci_high) == pytest.approx((estimate - half, estimate + half),
                                                                rel=RELATIVE)
            assert mean.df == reference.model.df_resid and not mean.warnings


def test_contrasts_simple_effects_and_their_covariance_match_statsmodels() -> None:
    grid, cells, frame = invented((3, 4), seed=11)
    fit = fit_linear(cells, [("A",), ("B",), ("A", "B"), ("x",)], 3, 0.05)
    reference = Reference(frame, "y ~ C(A) * C(B) + x", (3, 4))
    df = reference.model.df_resid
    weights = [(1.0, -1.0, 0.0), (-1.0, 0.0, 1.0), (0.5, 0.5, -1.0)]
    for at in (None, {"B": "b2"}):
        fixed = {} if at is None else {"B": 1}
        rows = [sum(w * reference.row({**fixed, "A": i}) for i, w in enumerate(ws)) for ws in weights]
        for ws, l in zip(weights, rows):
            estimate, se = reference.estimate(l)
            result = marginal_contrast(fit, "A", ws, at=at)
            assert result.estimate == pytest.approx(estimate, rel=RELATIVE)
            assert result.se == pytest.approx(se, rel=RELATIVE)
            assert result.statistic == pytest.approx(estimate / se, rel=RELATIVE)
            assert result.p == pytest.approx(2 * st.t.sf(abs(estimate / se), df), rel=1e-8)
            assert result.ci_low == pytest.approx(estimate - st.t.ppf(0.975, df) * se, rel=RELATIVE)
        expected = np.array(rows) @ reference.model.cov_params().to_numpy() @ np.array(rows).T
        assert contrast_covariance(fit, "A", weights, at=at) == pytest.approx(expected, rel=1e-8)


def test_one_sided_contrast_uses_one_tail_and_one_bound() -> None:
    _, cells, frame = invented((3, 4), seed=12)
    fit = fit_linear(cells, [("A",), ("B",), ("x",)], 2, 0.05)
    reference = Reference(frame, "y ~ C(A) + C(B) + x", (3, 4))
    df = reference.model.df_resid
    estimate, se = reference.estimate(reference.row({"A": 2}) - reference.row({"A": 0}))
    result = marginal_contrast(fit, "A", [-1, 0, 1], alternative="greater", confidence=0.9)
    assert result.p == pytest.approx(st.t.sf(estimate / se, df), rel=1e-8)
    assert result.ci_high is None
    assert result.ci_low == pytest.approx(estimate - st.t.ppf(0.9, df) * se, rel=RELATIVE)


def test_empty_cell_means_are_not_estimable_with_the_interaction_but_are_without() -> None:
    # Cell (a1, b1) is empty. With A x B the a1 mean needs that cell's own parameter; the
    # additive model predicts it, and statsmodels' additive fit gives the same number.
    grid, cells, frame = invented((3, 4), seed=13, drop=(0,))
    full = fit_linear(cells, [("A",), ("B",), ("A", "B"), ("x",)], 3, 0.05)
    a_means = marginal_means(full, ("A",), 0.95)
    assert a_means[0].estimate is None and a_means[0].se is None
    assert a_means[0].warnings[0].code == "not-estimable"
    assert a_means[1].estimate is not None and a_means[2].estimate is not None
    assert marginal_contrast(full, "A", [1, -1, 0]).estimate is None
    assert marginal_contrast(full, "A", [0, 1, -1]).estimate is not None
    additive = fit_linear(cells, [("A",), ("B",), ("x",)], 2, 0.05)
    reference = Reference(frame, "y ~ C(A) + C(B) + x", (3, 4))
    estimate, se = reference.estimate(reference.row({"A": 0}))
    first = marginal_means(additive, ("A",), 0.95)[0]
    assert first.estimate == pytest.approx(estimate, rel=RELATIVE)
    assert first.se == pytest.approx(se, rel=RELATIVE)


def test_no_residual_df_leaves_estimates_without_standard_errors() -> None:
    grid, cells, frame = invented((2, 3), per_cell=1, seed=14)
    fit = fit_linear(cells, [("A",), ("B",), ("A", "B")], 3, 0.05)
    mean = marginal_means(fit, ("A",), 0.95)[0]
    # With one unit per cell the saturated model reproduces the data: the a1 mean is the
    # plain average of the three a1 values.
    assert mean.estimate == pytest.approx(frame.loc[frame["A"] == 0, "y"].mean(), rel=RELATIVE)
    assert mean.se is None and mean.ci_low is None and mean.warnings[0].code == "no-residual-df"
    contrast = marginal_contrast(fit, "B", [1, 0, -1])
    assert contrast.estimate is not None and contrast.statistic is None and contrast.p is None
    assert np.isnan(contrast_covariance(fit, "B", [[1, 0, -1]])).all()


@pytest.mark.parametrize(("call", "message"), [
    (lambda fit: marginal_contrast(fit, "A", [1, -1]), "'A' has 3 levels, so the contrast needs 3 finite weights"),
    (lambda fit: marginal_contrast(fit, "A", [1, -1, 0], at={"A": "a1"}), "`at` cannot fix the contrasted factor 'A'"),
    (lambda fit: marginal_contrast(fit, "A", [1, -1, 0], at={"B": "b9"}), "'b9' is not a level of 'B' ('b1', 'b2', 'b3', 'b4')"),
    (lambda fit: marginal_means(fit, ("E",), 0.95), "'E' is not a factor of the design ('A', 'B')"),
    (lambda fit: marginal_contrast(fit, "A", [1, -1, 0], alternative="both"),
     "alternative must be one of ('two-sided', 'greater', 'less'), got 'both'"),
])
def test_bad_requests_are_refused_with_the_reason(call, message) -> None:
    _, cells, _ = invented((3, 4), seed=15)
    fit = fit_linear(cells, [("A",), ("B",), ("x",)], 2, 0.05)
    with pytest.raises(ValueError) as error:
        call(fit)
    assert str(error.value) == message
