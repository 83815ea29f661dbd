"""The linear-model engine on fixed designs: ANCOVA order, empty cells, slopes, large N,
exact decimals, degenerate data and the model rules.

References: statsmodels (0.15) OLS on the same rows, via `anova_lm` on one fit (typ=1|2|3)
or on a sequence of nested fits (`anova_lm(m0, m1, ...)`: df and SS of each step), and
scipy (1.17) for F and noncentral-F tails. All data are invented: seeded normal draws.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import patsy
import pytest
import statsmodels.api as sm
import statsmodels.formula.api as smf
from scipy import stats as st
from statsmodels.stats.anova import anova_lm
from statsmodels.tools.sm_exceptions import SingularMatrixWarning

from appendix.stats.design import Grid, design_cells
from appendix.stats.linear import fit_linear, fitted_values, slopes_homogeneity

RELATIVE = 1e-9
A, B, AB = ("A",), ("B",), ("A", "B")


def grid_of(*shape: int) -> Grid:
    names = ("A", "B", "D")[: len(shape)]
    return Grid(names, tuple(tuple(f"{name.lower()}{j + 1}" for j in range(k))
                             for name, k in zip(names, shape)))


def invented(shape, counts_low=2, counts_high=6, seed=0, covariate=False, drop=()):
    """Invented rows: random counts per cell (cells in `drop` get none), normal effects."""
    rng = np.random.default_rng(seed)
    cells = int(np.prod(shape))
    counts = rng.integers(counts_low, counts_high, size=cells)
    counts[list(drop)] = 0
    cell = np.repeat(np.arange(cells), counts)
    codes = [c.astype(np.int64) for c in np.unravel_index(cell, shape)]
    x = rng.normal(0, 1, cells)[cell] + rng.normal(10, 3, cell.size)
    y = 50 + rng.normal(0, 2, cells)[cell] + rng.normal(0, 1, cell.size)
    if covariate:
        y = y + 0.7 * x
    frame = pd.DataFrame({"y": y, "x": x, **{n: c for n, c in zip("ABD", codes)}})
    return codes, y, x, frame


def nested_steps(frame, formulas, singular=False):
    """df and SS of each step of a sequence of nested statsmodels fits (`singular`: the
    last design is rank-deficient, which statsmodels announces)."""
    if singular:
        with pytest.warns(SingularMatrixWarning):
            fits = [smf.ols(f, data=frame).fit() for f in formulas]
    else:
        fits = [smf.ols(f, data=frame).fit() for f in formulas]
    table = anova_lm(*fits)
    return table["df_diff"].iloc[1:].tolist(), table["ss_diff"].iloc[1:].tolist(), fits[-1]


def test_ancova_with_the_covariate_first_matches_sequential_fits() -> None:
    # statsmodels' sequential comparison y~1, y~x, y~x+A, y~x+A+B, y~x+A*B (type 1 in our
    # order; patsy itself would move x after the factors).
    codes, y, x, frame = invented((3, 2), seed=1, covariate=True)
    cells = design_cells(grid_of(3, 2), codes, y, {"x": x})
    fit = fit_linear(cells, [("x",), A, B, AB], 1, 0.05)
    dfs, sss, last = nested_steps(frame, ["y ~ 1", "y ~ x", "y ~ x + C(A)", "y ~ x + C(A) + C(B)",
                                          "y ~ x + C(A) * C(B)"])
    assert [row.df for row in fit.terms] == dfs == [1, 2, 1, 2]
    assert [row.ss for row in fit.terms] == pytest.approx(sss, rel=RELATIVE)
    assert [row.kind for row in fit.terms] == ["covariate", "factor", "factor", "interaction"]
    assert [row.label for row in fit.terms] == ["x", "A", "B", "A × B"]
    assert fit.residual_ss == pytest.approx(last.ssr, rel=RELATIVE)
    assert fit.residual_df == last.df_resid
    assert fit.r_squared == pytest.approx(last.rsquared, rel=RELATIVE)


def _sum_coded(frame):
    """statsmodels-side sum-to-zero design of y ~ A * B, with each term's column names."""
    design = patsy.dmatrix("C(A, Sum) * C(B, Sum)", frame, return_type="dataframe")
    groups = {"A": [c for c in design if c.startswith("C(A") and ":" not in c],
              "B": [c for c in design if c.startswith("C(B")],
              "AB": [c for c in design if ":" in c]}
    return design, groups


@pytest.mark.parametrize(("drop", "dfs"), [((0,), [1, 1, 3]), ((1, 8), [0, 0, 2])])
def test_empty_cells_type3_is_the_documented_column_deletion_test(drop, dfs) -> None:
    # 3 x 3 with some cells empty. Reference: statsmodels OLS (pinv, rank-based df) on the
    # sum-coded design with and without each term's columns. With (a1, b2) and (a3, b3)
    # empty the main-effect columns are aliased with the interaction's: nothing is left
    # to test, and the rows say so.
    codes, y, _, frame = invented((3, 3), seed=2, drop=drop)
    fit = fit_linear(design_cells(grid_of(3, 3), codes, y), [A, B, AB], 3, 0.05)
    design, groups = _sum_coded(frame)
    with pytest.warns(SingularMatrixWarning):
        full = sm.OLS(frame["y"], design).fit()
    assert [row.df for row in fit.terms] == dfs
    for row, key in zip(fit.terms, ("A", "B", "AB")):
        reduced = sm.OLS(frame["y"], design.drop(columns=groups[key])).fit()
        table = anova_lm(reduced, full)
        assert row.df == table["df_diff"].iloc[1]
        if row.df == 0:
            assert row.ss is None and abs(table["ss_diff"].iloc[1]) < 1e-9
            assert any(w.code == "term-not-estimable" for w in row.warnings)
        else:
            assert row.ss == pytest.approx(table["ss_diff"].iloc[1], rel=1e-8)
            assert row.statistic == pytest.approx(table["F"].iloc[1], rel=1e-8)
            assert any(w.code == "term-partly-estimable" for w in row.warnings)
        assert any(w.code == "type3-empty-cells" for w in row.warnings)
    assert fit.residual_df == full.df_resid


def test_empty_cells_are_listed_and_summarised_in_one_sentence() -> None:
    codes, y, _, _ = invented((3, 3), seed=2, drop=(1, 8))
    fit = fit_linear(design_cells(grid_of(3, 3), codes, y), [A, B, AB], 3, 0.05)
    assert fit.empty_cells == (("a1", "b2"), ("a3", "b3"))
    assert any("2 of the 4 contrasts of A × B are estimable" in w.message
               for w in fit.terms[2].warnings)
    assert fit.estimability == ("2 of the 9 cells have no units; estimable contrasts: "
                                "A 0 of 2, B 0 of 2, A × B 2 of 4; type 3 rows test the "
                                "sum-to-zero coefficients that remain estimable, not equal "
                                "unweighted marginal means.")


def test_empty_cells_types_1_and_2_match_nested_fits() -> None:
    codes, y, _, frame = invented((3, 3), seed=3, drop=(1, 8))
    cells = design_cells(grid_of(3, 3), codes, y)
    dfs, sss, _ = nested_steps(frame, ["y ~ 1", "y ~ C(A)", "y ~ C(A) + C(B)", "y ~ C(A) * C(B)"],
                               singular=True)
    type1 = fit_linear(cells, [A, B, AB], 1, 0.05)
    assert [r.df for r in type1.terms] == dfs == [2, 2, 2]
    assert [r.ss for r in type1.terms] == pytest.approx(sss, rel=RELATIVE)
    # Type 2 of A: y ~ C(B) versus y ~ C(A) + C(B).
    type2 = fit_linear(cells, [A, B, AB], 2, 0.05)
    dfs_a, sss_a, _ = nested_steps(frame, ["y ~ C(B)", "y ~ C(A) + C(B)"])
    assert type2.terms[0].df == dfs_a[0] and type2.terms[0].ss == pytest.approx(sss_a[0], rel=RELATIVE)
    assert type2.terms[2].ss == pytest.approx(type1.terms[2].ss, rel=RELATIVE)


def test_an_additive_block_design_with_empty_cells_stays_fully_estimable() -> None:
    codes, y, _, frame = invented((3, 4), seed=4, drop=(0, 7))
    fit = fit_linear(design_cells(grid_of(3, 4), codes, y), [A, B], 2, 0.05)
    table = anova_lm(smf.ols("y ~ C(A) + C(B)", data=frame).fit(), typ=2)
    assert [r.df for r in fit.terms] == [2, 3]
    assert [r.ss for r in fit.terms] == pytest.approx(table["sum_sq"].iloc[:2].tolist(), rel=RELATIVE)
    assert all(not r.warnings for r in fit.terms)
    assert fit.estimability == "2 of the 12 cells have no units; every term's contrasts remain estimable."


def test_slopes_homogeneity_is_the_separate_slopes_comparison() -> None:
    codes, y, x, frame = invented((2, 3), seed=5, covariate=True)
    cells = design_cells(grid_of(2, 3), codes, y, {"x": x})
    row = slopes_homogeneity(cells, [A, B, AB, ("x",)], "x", AB, 0.05)
    table = anova_lm(smf.ols("y ~ C(A) * C(B) + x", data=frame).fit(),
                     smf.ols("y ~ C(A) * C(B) + x + x:C(A) * C(B)", data=frame).fit())
    assert row.term == ("A", "B", "x") and row.df == table["df_diff"].iloc[1] == 5
    assert row.ss == pytest.approx(table["ss_diff"].iloc[1], rel=RELATIVE)
    assert row.statistic == pytest.approx(table["F"].iloc[1], rel=RELATIVE)
    assert row.p == pytest.approx(table["Pr(>F)"].iloc[1], rel=RELATIVE)
    one = slopes_homogeneity(cells, [A, B, ("x",)], "x", A, 0.05)
    reference = anova_lm(smf.ols("y ~ C(A) + C(B) + x", data=frame).fit(),
                         smf.ols("y ~ C(A) + C(B) + x + x:C(A)", data=frame).fit())
    assert one.df == 1 and one.ss == pytest.approx(reference["ss_diff"].iloc[1], rel=RELATIVE)


def test_fitted_values_equal_statsmodels_fitted_values() -> None:
    codes, y, x, frame = invented((3, 2), seed=6, covariate=True)
    grid = grid_of(3, 2)
    fit = fit_linear(design_cells(grid, codes, y, {"x": x}), [A, B, AB, ("x",)], 3, 0.05)
    reference = smf.ols("y ~ C(A) * C(B) + x", data=frame).fit().fittedvalues.to_numpy()
    ours = fitted_values(fit, grid.cell_codes(codes), {"x": x})
    assert ours == pytest.approx(reference, rel=RELATIVE)


def test_a_million_rows_give_the_table_of_their_twenty_thousand_distinct_rows() -> None:
    # 20,000 invented rows repeated 50 times (shuffled): X'X and X'y scale by 50, so every
    # SS is 50 times statsmodels' SS on the 20,000 rows, the residual df is
    # 1,000,000 - rank, and F and p follow (scipy F survival function). No row is left out.
    rng = np.random.default_rng(7)
    shape, rows, copies = (3, 4, 2), 20_000, 50
    cell = rng.integers(0, 24, size=rows)
    codes = [c.astype(np.int64) for c in np.unravel_index(cell, shape)]
    x = rng.normal(10, 3, rows)
    y = 100 + rng.normal(0, 0.5, 24)[cell] + 0.3 * x + rng.normal(0, 2, rows)
    frame = pd.DataFrame({"y": y, "x": x, "A": codes[0], "B": codes[1], "D": codes[2]})
    terms = [A, B, ("D",), AB, ("A", "D"), ("B", "D"), ("A", "B", "D"), ("x",)]
    order = rng.permutation(rows * copies) % rows
    big = design_cells(grid_of(*shape), [c[order] for c in codes], y[order], {"x": x[order]})
    fit = fit_linear(big, terms, 3, 0.05)
    reference = anova_lm(smf.ols("y ~ C(A, Sum) * C(B, Sum) * C(D, Sum) + x", data=frame).fit(),
                         typ=3).drop(index="Intercept")
    rank = rows - int(reference.loc["Residual", "df"])
    df_res = rows * copies - rank
    ms_res = copies * reference.loc["Residual", "sum_sq"] / df_res
    assert fit.n == rows * copies and fit.residual_df == df_res
    assert fit.residual_ss == pytest.approx(copies * reference.loc["Residual", "sum_sq"], rel=1e-9)
    for row, (_, expected) in zip(fit.terms, reference.iloc[:-1].iterrows()):
        assert row.df == expected["df"]
        assert row.ss == pytest.approx(copies * expected["sum_sq"], rel=1e-9)
        f = copies * expected["sum_sq"] / expected["df"] / ms_res
        assert row.statistic == pytest.approx(f, rel=1e-9)
        assert row.p == pytest.approx(st.f.sf(f, expected["df"], df_res), rel=1e-8, abs=1e-300)


def test_exact_decimal_response_matches_statsmodels() -> None:
    codes, _, _, frame = invented((2, 3), seed=8)
    y = np.round(frame["y"].to_numpy() + 1000.0, 2)  # two-decimal text values
    frame["y"] = y
    cells = design_cells(grid_of(2, 3), codes, y, decimals=2)
    assert cells.arithmetic == "exact-decimal"
    fit = fit_linear(cells, [A, B, AB], 2, 0.05)
    table = anova_lm(smf.ols("y ~ C(A) * C(B)", data=frame).fit(), typ=2)
    assert [r.ss for r in fit.terms] == pytest.approx(table["sum_sq"].iloc[:3].tolist(), rel=RELATIVE)
    assert fit.residual_ss == pytest.approx(table.loc["Residual", "sum_sq"], rel=RELATIVE)


def test_effect_size_interval_ends_have_the_noncentral_f_tails() -> None:
    # Steiger (2004): at the 90% bounds the observed F sits at the 95th and 5th
    # percentiles of F(df1, df2, lambda), lambda = eta / (1 - eta) (df1 + df2 + 1); scipy ncf.
    codes, y, x, _ = invented((3, 2), seed=9, covariate=True)
    fit = fit_linear(design_cells(grid_of(3, 2), codes, y, {"x": x}), [A, B, AB, ("x",)], 2, 0.05)
    row = fit.terms[0]
    low, high = row.partial_eta_ci
    scale = row.df + fit.residual_df + 1
    lam_high = high / (1 - high) * scale
    assert st.ncf.cdf(row.statistic, row.df, fit.residual_df, lam_high) == pytest.approx(0.05, abs=1e-8)
    if low > 0:
        lam_low = low / (1 - low) * scale
        assert st.ncf.cdf(row.statistic, row.df, fit.residual_df, lam_low) == pytest.approx(0.95, abs=1e-8)


def test_a_saturated_model_with_one_unit_per_cell_has_no_residual_df() -> None:
    codes, y, _, _ = invented((2, 3), counts_low=1, counts_high=2, seed=10)
    fit = fit_linear(design_cells(grid_of(2, 3), codes, y), [A, B, AB], 3, 0.05)
    assert fit.residual_df == 0 and fit.residual_ms is None
    assert [r.df for r in fit.terms] == [1, 2, 2]
    assert all(r.statistic is None and r.p is None and r.partial_eta_squared is None for r in fit.terms)
    assert all(r.warnings[-1].message == f"The F ratio of {r.label} is undefined: the model "
               "leaves no residual degrees of freedom." for r in fit.terms)
    assert any(w.code == "no-residual-df" for w in fit.warnings)
    # Without the interaction the same rows leave 2 residual df (6 cells - 4 columns).
    additive = fit_linear(design_cells(grid_of(2, 3), codes, y), [A, B], 3, 0.05)
    assert additive.residual_df == 2 and additive.terms[0].statistic is not None


def test_zero_within_cell_variation_gives_no_f() -> None:
    codes, _, _, _ = invented((2, 2), seed=11)
    cell = codes[0] * 2 + codes[1]
    y = np.array([1.0, 2.0, 4.0, 8.0])[cell]  # constant within each cell
    fit = fit_linear(design_cells(grid_of(2, 2), codes, y), [A, B, AB], 2, 0.05)
    assert fit.residual_ss == pytest.approx(0.0, abs=1e-20) and fit.residual_ms == 0.0
    assert all(r.ss is not None and r.statistic is None and r.p is None for r in fit.terms)
    assert all(r.warnings[-1].code == "f-undefined" for r in fit.terms)
    assert any(w.code == "zero-residual-variance" for w in fit.warnings)


def test_a_single_level_factor_has_no_row_to_test() -> None:
    codes, y, _, _ = invented((3,), seed=12)
    grid = Grid(("A", "B"), (("a1", "a2", "a3"), ("only",)))
    fit = fit_linear(design_cells(grid, [codes[0], np.zeros_like(codes[0])], y), [A, B], 2, 0.05)
    assert fit.terms[1].df == 0 and fit.terms[1].ss is None and fit.terms[1].full_df == 0
    assert fit.terms[0].df == 2 and fit.terms[0].statistic is not None
    assert any(w.code == "single-level" for w in fit.warnings)


def test_a_single_level_factor_outside_the_model_is_not_reported() -> None:
    # a grouping the model does not use (e.g. one cell for units without a treatment
    # factor) has nothing to test, so its name must not appear in a warning
    codes, y, _, _ = invented((3,), seed=12)
    grid = Grid(("A", "B"), (("a1", "a2", "a3"), ("only",)))
    fit = fit_linear(design_cells(grid, [codes[0], np.zeros_like(codes[0])], y), [A], 2, 0.05)
    assert [w.code for w in fit.warnings] == []
    assert all("'B'" not in w.message for r in fit.terms for w in r.warnings)


@pytest.mark.parametrize(("terms", "message"), [
    ([A, AB], "the interaction A × B needs the main effect of 'B' in the model"),
    ([A, ("E",)], "term E: 'E' is neither a factor ('A', 'B') nor a covariate ('x',)"),
    ([A, B, AB, ("B", "A")], "term B × A is given twice"),
    ([A, ("x",), ("A", "x", "x")], "term A × x × x names a variable twice"),
])
def test_invalid_models_are_refused_with_the_reason(terms, message) -> None:
    codes, y, x, _ = invented((2, 2), seed=13)
    cells = design_cells(grid_of(2, 2), codes, y, {"x": x})
    with pytest.raises(ValueError) as error:
        fit_linear(cells, terms, 2, 0.05)
    assert str(error.value) == message


def test_ss_type_and_alpha_are_checked() -> None:
    codes, y, _, _ = invented((2, 2), seed=14)
    cells = design_cells(grid_of(2, 2), codes, y)
    with pytest.raises(ValueError, match="ss_type must be 1, 2 or 3"):
        fit_linear(cells, [A], 4, 0.05)
    with pytest.raises(ValueError, match="alpha must lie strictly between 0 and 0.5"):
        fit_linear(cells, [A], 1, 0.5)


def test_a_large_common_offset_costs_no_digits() -> None:
    # Invented dyadic values (integers / 64) on offsets of 1e9 (y) and 1e6 (x): the offsets
    # subtract exactly, so statsmodels on the shifted rows is the reference for our fit on
    # the raw ones (the difficulty NIST StRD's SmLs07-09 pose, from memory).
    rng = np.random.default_rng(15)
    codes, _, _, frame = invented((3, 2), seed=15)
    small_y = rng.integers(0, 640, size=len(frame)) / 64.0 + 2.0 * codes[0]
    small_x = rng.integers(0, 320, size=len(frame)) / 64.0
    frame["y"], frame["x"] = small_y, small_x
    cells = design_cells(grid_of(3, 2), codes, small_y + 1e9, {"x": small_x + 1e6})
    fit = fit_linear(cells, [A, B, AB, ("x",)], 3, 0.05)
    table = anova_lm(smf.ols("y ~ C(A, Sum) * C(B, Sum) + x", data=frame).fit(), typ=3)
    assert [r.ss for r in fit.terms] == pytest.approx(table["sum_sq"].iloc[1:5].tolist(), rel=RELATIVE)
    assert fit.residual_ss == pytest.approx(table.loc["Residual", "sum_sq"], rel=RELATIVE)


def test_no_units_at_all_gives_an_empty_table_not_a_crash() -> None:
    # Degenerate data give None plus warnings (project rule); no reference value needed.
    empty = np.zeros(0, dtype=np.int64)
    cells = design_cells(grid_of(2, 2), [empty, empty], np.zeros(0), {"x": np.zeros(0)})
    fit = fit_linear(cells, [A, B, ("x",)], 2, 0.05)
    assert fit.n == 0 and fit.residual_df == 0 and fit.r_squared is None
    assert all(r.df == 0 and r.ss is None for r in fit.terms)
    assert [w.code for w in fit.warnings] == ["no-residual-df"]
    assert fit.estimability.startswith("4 of the 4 cells have no units")
