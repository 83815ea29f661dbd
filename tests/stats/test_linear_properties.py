"""Random crossed designs: every variance-table number equals statsmodels' row-level fit.

Reference: statsmodels (0.15) `ols(...).fit()` + `anova_lm(typ=1|2|3)`, with
`C(x, Sum)` coding for type 3, on the same rows. The designs are drawn by hypothesis
(derandomized, so every run draws the same examples): 2 or 3 factors of 2-4 levels,
balanced or unbalanced cells, any set of two-way interactions (and the three-way one
when all two-way ones are in), a block factor that interacts with nothing, 0-2
covariates. All data are invented: seeded normal draws.
"""

from __future__ import annotations

import itertools

import numpy as np
import pandas as pd
import pytest
import statsmodels.formula.api as smf
from hypothesis import given, settings
from hypothesis import strategies as st
from statsmodels.stats.anova import anova_lm

from appendix.stats.design import Grid, design_cells
from appendix.stats.linear import fit_linear

RELATIVE = 1e-9  # the brief's agreement target


@st.composite
def designs(draw):
    """(shape, terms, per-cell counts, covariate count, seed) of one random design."""
    factors = draw(st.sampled_from([2, 3]))
    shape = tuple(draw(st.integers(2, 4)) for _ in range(factors))
    names = tuple(f"F{i}" for i in range(factors))
    blocked = draw(st.booleans())  # the last factor is a block: main effect only
    crossable = names[:-1] if blocked else names
    pairs = [p for p in itertools.combinations(crossable, 2) if draw(st.booleans())]
    terms = [(name,) for name in names] + pairs
    if len(crossable) == 3 and len(pairs) == 3 and draw(st.booleans()):
        terms.append(crossable)
    covariates = draw(st.integers(0, 2))
    terms += [(f"x{j}",) for j in range(covariates)]
    balanced = draw(st.booleans())
    seed = draw(st.integers(0, 2**32 - 1))
    return shape, tuple(terms), balanced, covariates, seed


def invented_rows(shape, balanced, covariates, seed):
    """Invented data: at least two units per cell, normal cell effects, covariates that
    differ in mean between cells, normal noise."""
    rng = np.random.default_rng(seed)
    cells = int(np.prod(shape))
    counts = np.full(cells, 2) + (0 if balanced else rng.integers(0, 4, size=cells))
    if balanced:
        counts += int(rng.integers(0, 3))
    cell = np.repeat(np.arange(cells), counts)
    rng.shuffle(cell)
    codes = list(np.unravel_index(cell, shape))
    y = 20.0 + rng.normal(0, 1, size=cells)[cell] + rng.normal(0, 1, size=cell.size)
    xs = {}
    for j in range(covariates):
        x = rng.normal(0, 1, size=cells)[cell] + rng.normal(5.0, 2.0, size=cell.size)
        y = y + rng.normal(0.5, 0.3) * x
        xs[f"x{j}"] = x
    return [c.astype(np.int64) for c in codes], y, xs


def statsmodels_names(terms, coding):
    """patsy's row names for our terms (its order: factor terms first, then covariates)."""
    def name(term):
        return ":".join(part if part.startswith("x") else f"C({part}{coding})" for part in term)
    return [name(t) for t in terms]


def reference_table(codes, y, xs, terms, ss_type):
    coding = ", Sum" if ss_type == 3 else ""
    frame = pd.DataFrame({"y": y, **{f"F{i}": c for i, c in enumerate(codes)}, **xs})
    names = statsmodels_names(terms, coding)
    table = anova_lm(smf.ols("y ~ " + " + ".join(names), data=frame).fit(), typ=ss_type)
    return table.drop(index="Intercept", errors="ignore"), names


def assert_same_table(fit, table, names):
    assert list(table.index) == [*names, "Residual"]
    for row, name in zip(fit.terms, names):
        expected = table.loc[name]
        assert row.df == expected["df"]
        assert row.ss == pytest.approx(expected["sum_sq"], rel=RELATIVE)
        assert row.ms == pytest.approx(expected["sum_sq"] / expected["df"], rel=RELATIVE)
        assert row.statistic == pytest.approx(expected["F"], rel=RELATIVE)
        assert row.p == pytest.approx(expected["PR(>F)"], rel=RELATIVE, abs=1e-300)
    residual = table.loc["Residual"]
    assert fit.residual_df == residual["df"]
    assert fit.residual_ss == pytest.approx(residual["sum_sq"], rel=RELATIVE)
    assert fit.residual_ms == pytest.approx(residual["sum_sq"] / residual["df"], rel=RELATIVE)


def cells_of(design):
    """The invented rows of a drawn design and their cell statistics."""
    shape, terms, balanced, covariates, seed = design
    codes, y, xs = invented_rows(shape, balanced, covariates, seed)
    grid = Grid(tuple(f"F{i}" for i in range(len(shape))),
                tuple(tuple(f"L{j}" for j in range(k)) for k in shape))
    return codes, y, xs, terms, design_cells(grid, codes, y, xs)


@settings(max_examples=25, deadline=None, derandomize=True)
@given(designs())
def test_every_ss_type_matches_statsmodels(design) -> None:
    codes, y, xs, terms, cells = cells_of(design)
    # patsy sorts covariate terms after the factor terms, so we list them in that order too.
    for ss_type in (1, 2, 3):
        table, names = reference_table(codes, y, xs, terms, ss_type)
        fit = fit_linear(cells, terms, ss_type, 0.05)
        assert fit.ss_type == ss_type
        assert fit.n == y.size and fit.empty_cells == ()
        assert_same_table(fit, table, names)
        assert fit.total_ss == pytest.approx(float(np.sum((y - y.mean()) ** 2)), rel=RELATIVE)


@settings(max_examples=10, deadline=None, derandomize=True)
@given(designs())
def test_partial_effect_sizes_follow_from_the_reference_table(design) -> None:
    # Olejnik & Algina (2003), Table 2: partial eta^2 = SS / (SS + SS_res) and partial
    # omega^2 = (SS - df MS_res) / (SS + (N - df) MS_res), here from statsmodels' SS.
    codes, y, xs, terms, cells = cells_of(design)
    fit = fit_linear(cells, terms, 2, 0.05)
    table, names = reference_table(codes, y, xs, terms, 2)
    ss_res = table.loc["Residual", "sum_sq"]
    ms_res = ss_res / table.loc["Residual", "df"]
    for row, name in zip(fit.terms, names):
        ss, df = table.loc[name, "sum_sq"], table.loc[name, "df"]
        assert row.partial_eta_squared == pytest.approx(ss / (ss + ss_res), rel=RELATIVE)
        assert row.partial_omega_squared == pytest.approx(
            (ss - df * ms_res) / (ss + (y.size - df) * ms_res), rel=1e-8, abs=1e-12)
        assert row.confidence_level == pytest.approx(0.90)
        low, high = row.partial_eta_ci
        assert 0.0 <= low <= high < 1.0
        assert row.partial_omega_ci == row.partial_eta_ci
