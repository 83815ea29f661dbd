"""The factorial, blocked and covariate engine against sources outside the project.

Sources, each named again beside its check (data and printed values: design_cases.py):
- statsmodels 0.15.0 stats/tests/test_anova.py, kidney data: printed types 1, 2, 3 tables.
- pingouin 0.7.0 datasets anova2, anova2_unbalanced, anova3, anova3_unbalanced, ancova, and
  the tables printed in the docstrings of pingouin.anova and pingouin.ancova.
- D. C. Montgomery, Design and Analysis of Experiments (5th ed. 2001, 8th ed. 2013): two
  randomized complete block examples and one covariance example, from memory.
- Reference libraries at full precision: statsmodels 0.15.0 (ols + anova_lm, and estimated
  marginal means built here from its params and cov_params), pingouin 0.7.0's own balanced
  two-way code, pandas 3 (cell and level means), scipy 1.17 (noncentral F inverted here for
  the partial eta squared intervals).

Tolerances: a printed value is met to half a unit in its last printed digit
(`printed_tolerance`); a library value to relative 1e-9 (the interval bounds, found by two
different root finders, to 1e-7 absolute).

These checks concern software only: statistical output is not a clinical or regulatory
decision; defer to local regulations, a qualified, licensed statistician and the study's
own governance.

The checks that a reference library reproduces the printed values call no engine code, so
a failure there points at the expected values or the data copies, not at the engine.
"""

from __future__ import annotations

import importlib.util
import itertools
import re
from pathlib import Path

import numpy as np
import pandas as pd
import pingouin
import pytest
import scipy.stats as st
from scipy.optimize import brentq
import statsmodels.formula.api as smf
from statsmodels.stats.anova import anova_lm

from appendix.stats.design import Grid, design_cells
from appendix.stats.linear import fit_linear, slopes_homogeneity
from appendix.stats.marginal import marginal_means

from tests.reference.design_cases import (
    BLOCK_MEANS,
    BLOCK_TABLES,
    COVARIATE_MEANS,
    COVARIATE_TABLES,
    DESIGNS,
    FIBER_SLOPE,
    KIDNEY_TABLE,
    KIDNEY_TABLES,
    KIDNEY_TERMS,
    PINGOUIN_TABLES,
    THREE_WAY_TERMS,
    TWO_WAY_TERMS,
    Design,
    PrintedMeans,
    PrintedTable,
    Term,
    printed_tolerance,
)

REL = 1e-9  # library-to-engine agreement (task requirement)
CONFIDENCE = 0.95
PRINTED_TABLES = KIDNEY_TABLES + PINGOUIN_TABLES + BLOCK_TABLES + COVARIATE_TABLES
PRINTED_MEANS = BLOCK_MEANS + COVARIATE_MEANS

# Every model checked against statsmodels at full precision: (design, terms).
MODELS: tuple[tuple[str, tuple[Term, ...]], ...] = (
    ("kidney", KIDNEY_TERMS),
    ("kidney-less-3", KIDNEY_TERMS),
    ("kidney-less-3", (("Duration",), ("Weight",))),  # no interaction: lack of fit in residual
    ("kidney-less-3", (("Weight",), ("Duration",))),  # type 1 depends on the order
    ("anova2", TWO_WAY_TERMS["anova2"]),
    ("anova2_unbalanced", TWO_WAY_TERMS["anova2_unbalanced"]),
    ("anova2_unbalanced", (("Exercise",), ("Diet",), ("Exercise", "Diet"))),
    ("anova3", THREE_WAY_TERMS),
    ("anova3_unbalanced", THREE_WAY_TERMS),
    ("anova3_unbalanced", (("Sex",), ("Risk",), ("Drug",), ("Risk", "Drug"))),
    ("vascular-graft", (("Pressure",), ("Batch",))),
    ("vascular-graft", (("Batch",), ("Pressure",))),
    ("hardness", (("Tip",), ("Coupon",))),
    ("ancova", (("Income",), ("Method",))),
    ("ancova", (("Income",), ("BMI",), ("Method",))),
    ("fiber", (("Diameter",), ("Machine",))),
)

# Estimated marginal means checked against statsmodels: (design, terms, factors).
MEANS: tuple[tuple[str, tuple[Term, ...], Term], ...] = (
    ("kidney-less-3", KIDNEY_TERMS, ("Duration",)),
    ("kidney-less-3", KIDNEY_TERMS, ("Weight",)),
    ("kidney-less-3", KIDNEY_TERMS, ("Duration", "Weight")),
    ("kidney-less-3", (("Duration",), ("Weight",)), ("Weight",)),
    ("anova2", TWO_WAY_TERMS["anova2"], ("Crop",)),
    ("anova2_unbalanced", TWO_WAY_TERMS["anova2_unbalanced"], ("Diet",)),
    ("anova3_unbalanced", THREE_WAY_TERMS, ("Drug",)),
    ("anova3_unbalanced", THREE_WAY_TERMS, ("Sex", "Risk")),
    ("vascular-graft", (("Pressure",), ("Batch",)), ("Pressure",)),
    ("ancova", (("Income",), ("Method",)), ("Method",)),
    ("ancova", (("Income",), ("BMI",), ("Method",)), ("Method",)),
    ("fiber", (("Diameter",), ("Machine",)), ("Machine",)),
)


def _id(value: object) -> str:
    if isinstance(value, (PrintedTable, PrintedMeans)):
        return f"{value.design}-{getattr(value, 'ss_type', 'means')}"
    return str(value)


def _within_print(actual: float | None, text: str) -> bool:
    """`actual` rounds to the printed `text` (half a unit in its last digit, plus float slack)."""
    if actual is None:
        return False
    expected = float(text)
    return abs(actual - expected) <= printed_tolerance(text) + 1e-12 * abs(expected)


# --- statsmodels as the reference library ------------------------------------------------

def _formula_term(design: Design, term: Term) -> str:
    return ":".join(name if name in design.covariates else f"C({name}, Sum)" for name in term)


def _statsmodels_fit(design: Design, terms: tuple[Term, ...]):
    """statsmodels 0.15.0 OLS with sum-to-zero coding (needed for its type 3)."""
    formula = "y ~ " + (" + ".join(_formula_term(design, t) for t in terms) or "1")
    return smf.ols(formula, data=design.frame()).fit()


def _statsmodels_table(design: Design, terms: tuple[Term, ...], ss_type: int) -> pd.DataFrame:
    """statsmodels 0.15.0 anova_lm(typ=ss_type), indexed by the engine's term tuples.

    Type 1 comes from anova_lm over the nested models (first k terms, k = 0..), because the
    formula parser moves numeric terms after categorical ones, which would change the
    sequence of a covariate listed first; F there uses the largest model's scale."""
    fit = _statsmodels_fit(design, terms)
    if ss_type == 1:
        nested = [_statsmodels_fit(design, terms[:k]) for k in range(len(terms))]
        steps = anova_lm(*nested, fit)
        rows = {}
        for term, (_, step) in zip(terms, steps.iloc[1:].iterrows()):
            # anova_lm's own Pr(>F) here uses each smaller model's residual df; the type 1
            # p value uses the full model's (scipy f.sf).
            rows[term] = pd.Series({"df": step["df_diff"], "sum_sq": step["ss_diff"], "F": step["F"],
                                    "PR(>F)": st.f.sf(step["F"], step["df_diff"], fit.df_resid)})
        rows[("Residual",)] = anova_lm(fit, typ=1).loc["Residual"]
        return pd.DataFrame(rows.values(), index=list(rows.keys()))
    table = anova_lm(fit, typ=ss_type)
    names = {_formula_term(design, t): t for t in terms}
    names["Residual"] = ("Residual",)
    table = table.loc[[i for i in table.index if i != "Intercept"]]
    table.index = [names[i] for i in table.index]
    return table


def _statsmodels_marginal_means(design: Design, terms: tuple[Term, ...], factors: Term,
                                confidence: float = CONFIDENCE) -> dict[tuple[str, ...], tuple[float, ...]]:
    """Estimated marginal means from statsmodels' params and cov_params: predicted cell means
    averaged with equal weights over the other factors' levels, covariates at their overall
    mean (Searle, Speed & Milliken 1980, "population marginal means"); L built here by hand.
    Returns level tuple -> (estimate, se, ci_low, ci_high), CI with t(residual df)."""
    fit = _statsmodels_fit(design, terms)
    cell = np.ravel_multi_index(design.codes, tuple(len(lv) for lv in design.levels))
    grid = list(itertools.product(*design.levels))  # every cell, first factor slowest
    first = [np.flatnonzero(cell == c) for c in range(len(grid))]
    assert all(i.size for i in first), "every reference design here fills every cell"
    rows = np.asarray(fit.model.exog)[[i[0] for i in first]].copy()  # statsmodels' coding
    for name, values in design.covariates.items():
        if name in fit.model.exog_names:  # not a covariate of the design this model leaves out
            rows[:, fit.model.exog_names.index(name)] = float(np.mean(values))
    params = fit.params.to_numpy()
    cov = fit.cov_params().to_numpy()
    t = st.t.ppf(0.5 + confidence / 2.0, fit.df_resid)
    result = {}
    for levels in itertools.product(*(design.levels[design.factors.index(f)] for f in factors)):
        mask = np.array([all(g[design.factors.index(f)] == lv for f, lv in zip(factors, levels))
                         for g in grid])
        weights = rows[mask].mean(axis=0)
        estimate = float(weights @ params)
        se = float(np.sqrt(weights @ cov @ weights))
        result[levels] = (estimate, se, estimate - t * se, estimate + t * se)
    return result


# --- checks of the reference data and printed values (no engine needed) ------------------

def test_kidney_copy_matches_installed_statsmodels() -> None:
    # Source: statsmodels 0.15.0 statsmodels/stats/tests/test_anova.py, kidney_table.
    spec = importlib.util.find_spec("statsmodels")
    assert spec is not None and spec.origin is not None
    shipped = Path(spec.origin).parent / "stats" / "tests" / "test_anova.py"
    if not shipped.exists():
        pytest.skip("statsmodels installed without its test files")
    match = re.search(r'kidney_table = StringIO\("""(.*?)"""\)', shipped.read_text(), re.S)
    assert match is not None
    assert match.group(1).split() == KIDNEY_TABLE.split()


@pytest.mark.parametrize("printed", PRINTED_TABLES, ids=_id)
def test_statsmodels_reproduces_printed_table(printed: PrintedTable) -> None:
    # Guards the data copies and every recalled value: statsmodels 0.15.0 anova_lm on the
    # data in design_cases.py must round to what each source prints.
    design = DESIGNS[printed.design]
    table = _statsmodels_table(design, printed.terms, printed.ss_type)
    residual = table.loc[[("Residual",)]].iloc[0]
    for row in printed.rows:
        reference = table.loc[[row.term]].iloc[0]
        assert reference["df"] == row.df, row.term
        ss, f, p = reference["sum_sq"], reference["F"], reference["PR(>F)"]
        assert row.ss is None or _within_print(ss, row.ss), (row.term, ss, row.ss)
        assert row.statistic is None or _within_print(f, row.statistic), (row.term, f, row.statistic)
        assert row.p is None or _within_print(p, row.p), (row.term, p, row.p)
        eta = ss / (ss + residual["sum_sq"])
        assert row.partial_eta_squared is None or _within_print(eta, row.partial_eta_squared)
    assert residual["df"] == printed.residual_df
    assert _within_print(residual["sum_sq"], printed.residual_ss)


@pytest.mark.parametrize("printed", PRINTED_MEANS, ids=_id)
def test_statsmodels_reproduces_printed_means(printed: PrintedMeans) -> None:
    # Sources: Montgomery (from memory), see design_cases.py; statsmodels 0.15.0 params.
    design = DESIGNS[printed.design]
    reference = _statsmodels_marginal_means(design, printed.terms, printed.factors)
    assert set(reference) == set(printed.means)
    for levels, text in printed.means.items():
        assert _within_print(reference[levels][0], text), (levels, reference[levels][0], text)


@pytest.mark.parametrize(("name", "terms"), [
    ("ancova", (("Income",), ("Method",))), ("ancova", (("Income",), ("BMI",), ("Method",))),
    ("fiber", (("Diameter",), ("Machine",))),
])
def test_adjusted_means_are_statsmodels_predictions_at_covariate_mean(name, terms) -> None:
    # With one factor, the hand-built L rows must give statsmodels 0.15.0's own predict() at
    # the covariates' overall means, level by level.
    design = DESIGNS[name]
    factor = design.factors[0]
    fit = _statsmodels_fit(design, terms)
    means = _statsmodels_marginal_means(design, terms, (factor,))
    at = pd.DataFrame({factor: list(design.levels[0])})
    for covariate, values in design.covariates.items():
        at[covariate] = float(np.mean(values))
    predicted = fit.predict(at).to_numpy()
    assert [means[(lv,)][0] for lv in design.levels[0]] == pytest.approx(predicted, rel=1e-12)


def test_fiber_slope_matches_memory() -> None:
    # Montgomery 2013, ch. 15, common slope 0.954 (from memory) vs statsmodels 0.15.0 OLS.
    fit = _statsmodels_fit(DESIGNS["fiber"], (("Diameter",), ("Machine",)))
    assert _within_print(float(fit.params["Diameter"]), FIBER_SLOPE)


def test_unbalanced_two_way_printed_type_1_differs() -> None:
    # The unbalanced cases really are unbalanced: statsmodels 0.15.0 type 1 for Diet (first)
    # is not the printed type 2 value (pingouin 0.7.0 anova docstring: 390.625), so the type 2
    # checks below could not pass by a type 1 engine.
    table = _statsmodels_table(DESIGNS["anova2_unbalanced"], TWO_WAY_TERMS["anova2_unbalanced"], 1)
    assert table.loc[[("Diet",)]].iloc[0]["sum_sq"] == pytest.approx(1210.0, rel=REL)


# --- the engine ---------------------------------------------------------------------------

def _engine_cells(design: Design):
    return design_cells(Grid(design.factors, design.levels), design.codes, design.y,
                        covariates=design.covariates or None, decimals=design.decimals)


def _engine_fit(design: Design, terms: tuple[Term, ...], ss_type: int):
    return fit_linear(_engine_cells(design), list(terms), ss_type, 0.05)


def _row(fit, term: Term):
    rows = [r for r in fit.terms if r.term == term]
    assert len(rows) == 1, (term, [r.term for r in fit.terms])
    return rows[0]


@pytest.mark.parametrize("printed", PRINTED_TABLES, ids=_id)
def test_engine_matches_printed_table(printed: PrintedTable) -> None:
    # Sources: the `source` of each table in design_cases.py; to the printed precision.
    fit = _engine_fit(DESIGNS[printed.design], printed.terms, printed.ss_type)
    assert fit.ss_type == printed.ss_type
    for expected in printed.rows:
        row = _row(fit, expected.term)
        assert row.df == expected.df, expected.term
        assert expected.ss is None or _within_print(row.ss, expected.ss), (expected.term, row.ss)
        assert expected.statistic is None or _within_print(row.statistic, expected.statistic), (expected.term, row.statistic)
        assert expected.p is None or _within_print(row.p, expected.p), (expected.term, row.p)
        assert expected.partial_eta_squared is None or _within_print(
            row.partial_eta_squared, expected.partial_eta_squared), expected.term
    assert fit.residual_df == printed.residual_df
    assert _within_print(fit.residual_ss, printed.residual_ss)


@pytest.mark.parametrize("ss_type", [1, 2, 3])
@pytest.mark.parametrize(("name", "terms"), MODELS, ids=[f"{n}-{len(t)}terms-{i}" for i, (n, t) in enumerate(MODELS)])
def test_engine_matches_statsmodels(name: str, terms: tuple[Term, ...], ss_type: int) -> None:
    # Reference: statsmodels 0.15.0 ols(...).fit() + anova_lm(typ=ss_type), sum-to-zero coding;
    # partial eta squared SS/(SS + SS_res); partial omega squared
    # (SS - df MS_res) / (SS + (N - df) MS_res) (Olejnik & Algina 2003, fixed effects; from memory).
    design = DESIGNS[name]
    fit = _engine_fit(design, terms, ss_type)
    reference = _statsmodels_table(design, terms, ss_type)
    residual = reference.loc[[("Residual",)]].iloc[0]
    ms_res = residual["sum_sq"] / residual["df"]
    assert [r.term for r in fit.terms] == list(terms)
    for term in terms:
        row, ref = _row(fit, term), reference.loc[[term]].iloc[0]
        assert row.df == ref["df"], term
        assert row.ss == pytest.approx(ref["sum_sq"], rel=REL), term
        assert row.ms == pytest.approx(ref["sum_sq"] / ref["df"], rel=REL), term
        assert row.statistic == pytest.approx(ref["F"], rel=REL), term
        assert row.p == pytest.approx(ref["PR(>F)"], rel=REL, abs=1e-300), term
        assert row.partial_eta_squared == pytest.approx(
            ref["sum_sq"] / (ref["sum_sq"] + residual["sum_sq"]), rel=REL), term
        omega = (ref["sum_sq"] - ref["df"] * ms_res) / (ref["sum_sq"] + (design.y.size - ref["df"]) * ms_res)
        assert row.partial_omega_squared == pytest.approx(omega, rel=REL, abs=1e-12), term
    assert fit.residual_df == residual["df"]
    assert fit.residual_ss == pytest.approx(residual["sum_sq"], rel=REL)
    assert fit.residual_ms == pytest.approx(ms_res, rel=REL)
    sm_fit = _statsmodels_fit(design, terms)
    assert fit.r_squared == pytest.approx(sm_fit.rsquared, rel=REL)
    assert fit.total_ss == pytest.approx(sm_fit.centered_tss, rel=REL)
    assert fit.n == design.y.size


# pingouin 0.7.0 calls DataFrame.dropna(inplace=True), which pandas 3 deprecates; only that
# warning from inside pingouin is ignored here.
@pytest.mark.filterwarnings("ignore:The inplace keyword in DataFrame.dropna is deprecated:Warning")
@pytest.mark.parametrize("ss_type", [1, 2, 3])
def test_engine_balanced_two_way_matches_pingouin(ss_type: int) -> None:
    # Reference: pingouin 0.7.0 pingouin.anova on its "anova2" dataset; balanced two-way
    # designs take pingouin's own pandas code (not statsmodels), a second library.
    design = DESIGNS["anova2"]
    reference = pingouin.anova(data=design.frame(), dv="y", between=["Blend", "Crop"], ss_type=ss_type)
    fit = _engine_fit(design, TWO_WAY_TERMS["anova2"], ss_type)
    sources = {"Blend": ("Blend",), "Crop": ("Crop",), "Blend * Crop": ("Blend", "Crop")}
    for _, ref in reference.iterrows():
        if ref["Source"] == "Residual":
            assert fit.residual_df == ref["DF"]
            assert fit.residual_ss == pytest.approx(ref["SS"], rel=REL)
            continue
        row = _row(fit, sources[ref["Source"]])
        assert row.df == ref["DF"]
        assert row.ss == pytest.approx(ref["SS"], rel=REL)
        assert row.statistic == pytest.approx(ref["F"], rel=REL)
        assert row.p == pytest.approx(ref["p_unc"], rel=REL)
        assert row.partial_eta_squared == pytest.approx(ref["np2"], rel=REL)


def _engine_means(design: Design, terms: tuple[Term, ...], factors: Term) -> dict:
    fit = _engine_fit(design, terms, 3)
    means = marginal_means(fit, factors, CONFIDENCE)
    return {tuple(m.levels): m for m in means}


@pytest.mark.parametrize(("name", "terms", "factors"), MEANS,
                         ids=[f"{n}-{'x'.join(f)}-{i}" for i, (n, _, f) in enumerate(MEANS)])
def test_engine_marginal_means_match_statsmodels(name: str, terms: tuple[Term, ...],
                                                 factors: Term) -> None:
    # Reference: statsmodels 0.15.0 params and cov_params with L built by hand
    # (`_statsmodels_marginal_means`); t quantile from scipy.
    design = DESIGNS[name]
    reference = _statsmodels_marginal_means(design, terms, factors)
    means = _engine_means(design, terms, factors)
    assert set(means) == set(reference)
    for levels, (estimate, se, low, high) in reference.items():
        m = means[levels]
        assert m.estimate == pytest.approx(estimate, rel=REL), levels
        assert m.se == pytest.approx(se, rel=REL), levels
        assert m.ci_low == pytest.approx(low, rel=REL), levels
        assert m.ci_high == pytest.approx(high, rel=REL), levels
        assert m.df == _statsmodels_fit(design, terms).df_resid


@pytest.mark.parametrize("printed", PRINTED_MEANS, ids=_id)
def test_engine_marginal_means_match_printed(printed: PrintedMeans) -> None:
    # Sources: Montgomery (from memory), named in design_cases.py; to the printed precision.
    means = _engine_means(DESIGNS[printed.design], printed.terms, printed.factors)
    for levels, text in printed.means.items():
        assert _within_print(means[levels].estimate, text), (levels, means[levels].estimate, text)


def test_engine_unbalanced_means_are_unweighted_cell_means() -> None:
    # Reference: pandas 3 cell means of pingouin's "anova2_unbalanced"; with the interaction in
    # the model the marginal mean of a Diet level is the plain average of its two cell means
    # (the "unweighted means" of the dataset's origin, onlinestatbook.com "unequal" chapter),
    # not the mean of its units.
    design = DESIGNS["anova2_unbalanced"]
    frame = design.frame()
    cell_means = frame.groupby(["Diet", "Exercise"])["y"].mean()
    means = _engine_means(design, TWO_WAY_TERMS["anova2_unbalanced"], ("Diet",))
    for diet in design.levels[0]:
        unweighted = cell_means.loc[diet].mean()
        assert means[(diet,)].estimate == pytest.approx(unweighted, rel=REL)
        assert means[(diet,)].estimate != pytest.approx(frame.loc[frame["Diet"] == diet, "y"].mean(), rel=1e-3)


def _scipy_noncentrality_bound(f: float, df1: int, df2: int, upper_tail: float) -> float:
    """The lambda at which scipy's noncentral F puts `upper_tail` above f; 0 if none."""
    if st.f.sf(f, df1, df2) >= upper_tail:
        return 0.0
    return brentq(lambda lam: st.ncf.sf(f, df1, df2, lam) - upper_tail, 1e-12, 1e4, xtol=1e-13)


@pytest.mark.parametrize(("name", "terms", "ss_type"), [
    ("kidney-less-3", KIDNEY_TERMS, 3), ("anova3_unbalanced", THREE_WAY_TERMS, 2),
    ("ancova", (("Income",), ("Method",)), 2),
])
def test_engine_partial_eta_interval_inverts_scipy_noncentral_f(name, terms, ss_type) -> None:
    # Reference: scipy 1.17 stats.ncf inverted here with brentq; interval at 1 - 2 alpha = 90 %
    # and partial eta = lambda / (lambda + df1 + df2 + 1) (Steiger 2004, Psychological Methods
    # 9:164-182, from memory). Tolerance 1e-7 absolute: two root finders' stopping rules.
    fit = _engine_fit(DESIGNS[name], terms, ss_type)
    for row in fit.terms:
        bounds = [_scipy_noncentrality_bound(row.statistic, row.df, fit.residual_df, tail) for tail in (0.05, 0.95)]
        expected = [lam / (lam + row.df + fit.residual_df + 1) for lam in bounds]
        assert row.partial_eta_ci == pytest.approx(expected, abs=1e-7), row.term


@pytest.mark.parametrize(("name", "terms", "covariate", "factor"), [
    ("fiber", (("Diameter",), ("Machine",)), "Diameter", "Machine"),
    ("ancova", (("Income",), ("Method",)), "Income", "Method"),
    ("ancova", (("Income",), ("BMI",), ("Method",)), "BMI", "Method"),
])
def test_engine_slopes_homogeneity_matches_statsmodels(name, terms, covariate, factor) -> None:
    # Reference: statsmodels 0.15.0 anova_lm(equal-slopes model, model + covariate x factor),
    # the extra-sum-of-squares F test of parallel slopes.
    design = DESIGNS[name]
    row = slopes_homogeneity(_engine_cells(design), list(terms), covariate, (factor,), 0.05)
    equal = _statsmodels_fit(design, terms)
    separate = _statsmodels_fit(design, (*terms, (factor, covariate)))
    step = anova_lm(equal, separate).iloc[1]
    assert row.df == step["df_diff"]
    assert row.ss == pytest.approx(step["ss_diff"], rel=REL)
    assert row.statistic == pytest.approx(step["F"], rel=REL)
    assert row.p == pytest.approx(step["Pr(>F)"], rel=REL)
