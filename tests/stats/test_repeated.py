"""The repeated-measures engine: the complete-units rule, the table's layout, degenerate
data and numerical stability. Agreement with pingouin and statsmodels is in
tests/reference/test_repeated_reference.py.

All data here are invented: small hand-written matrices, or draws from numpy's seeded
generator.
"""

from __future__ import annotations

import warnings

import numpy as np
import pytest
import scipy.stats as st

from appendix.errors import InternalError
from appendix.stats.repeated import (
    CompleteUnits, complete_units, repeated_measures, within_contrast, within_means,
)
from appendix.stats.sphericity import helmert_contrasts, sphericity


def _units(y: np.ndarray, groups=None) -> CompleteUnits:
    """Wide invented data as complete units (ids u0, u1, ...), through complete_units."""
    n, m = y.shape
    return complete_units([f"u{i}" for i in range(n) for _ in range(m)],
                          np.tile(np.arange(m), n), y.ravel(),
                          m, None if groups is None else np.repeat(groups, m))


def _codes(fit):
    return [w.code for row in fit.rows for w in row.warnings]


@pytest.fixture
def strict():
    """Any numpy or scipy warning raised as an error: degenerate data must not leak one."""
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        yield


# --- complete_units ---------------------------------------------------------------------


def test_complete_units_drops_incomplete_units_with_reasons():
    ids = ["b", "b", "b", "a", "a", "c", "c", "c", "d", "d", "d"]
    codes = np.array([0, 1, 2, 0, 2, 2, 1, 0, 0, 1, 2])
    values = np.array([1.0, 2, 3, 4, 5, 6, np.nan, 8, np.nan, 10, np.nan])
    data = complete_units(ids, codes, values, 3, level_names=["day0", "day7", "day14"])
    assert data.units == ("b",)
    assert data.y.tolist() == [[1.0, 2.0, 3.0]]
    assert data.groups is None
    assert data.dropped == (("a", "no value at day7"), ("c", "no value at day7"),
                            ("d", "no value at day0, day14"))


def test_complete_units_keeps_first_seen_order_and_places_values_by_level():
    ids = ["u2", "u1", "u2", "u1"]
    data = complete_units(ids, np.array([1, 0, 0, 1]), np.array([1.0, 2, 3, 4]), 2)
    assert data.units == ("u2", "u1")
    assert data.y.tolist() == [[3.0, 1.0], [2.0, 4.0]]


def test_complete_units_results_are_read_only():
    data = _units(np.arange(6.0).reshape(3, 2), groups=np.array([0, 0, 1]))
    with pytest.raises(ValueError):
        data.y[0, 0] = 1.0
    with pytest.raises(ValueError):
        data.groups[0] = 1


def test_complete_units_default_level_names_and_missing_group():
    ids = ["a", "a", "b", "b", "c", "c"]
    codes = np.array([0, 1, 0, 1, 0, 1])
    values = np.array([1.0, 2, 3, np.nan, 5, 6])
    groups = np.array([0, 0, 1, 1, -1, -1])
    data = complete_units(ids, codes, values, 2, groups)
    assert data.dropped == (("b", "no value at level 2"), ("c", "no group"))
    assert data.groups.tolist() == [0]


def test_complete_units_repeated_pair_is_an_error_naming_the_unit():
    with pytest.raises(ValueError, match="^unit 'p7' has more than one row for within level "
                                         "'week 2'$"):
        complete_units(["p1", "p7", "p7", "p7"], np.array([0, 0, 1, 1]),
                       np.array([1.0, 2, 3, np.nan]), 2, level_names=["week 1", "week 2"])


def test_complete_units_varying_group_is_an_error_naming_the_unit():
    with pytest.raises(ValueError, match="^unit 'k2' has more than one group code across its "
                                         "rows$"):
        complete_units(["k1", "k1", "k2", "k2"], np.array([0, 1, 0, 1]),
                       np.array([1.0, 2, 3, 4]), 2, np.array([0, 0, 1, 0]))


def test_complete_units_rejects_malformed_arrays():
    with pytest.raises(InternalError, match="within_codes must lie in 0..1"):
        complete_units(["a", "a"], np.array([0, 2]), np.array([1.0, 2.0]), 2)
    with pytest.raises(InternalError, match="one length"):
        complete_units(["a"], np.array([0, 1]), np.array([1.0, 2.0]), 2)


# --- the table ----------------------------------------------------------------------------


def _invented(seed: int, n_per_group: int, levels: int, n_groups: int = 1,
              integers: bool = False) -> tuple[np.ndarray, np.ndarray]:
    rng = np.random.default_rng(seed)
    groups = np.repeat(np.arange(n_groups), n_per_group)
    y = (rng.normal(0, 2, size=(groups.size, 1)) + rng.normal(0, 1, size=(n_groups, levels))[groups]
         + rng.normal(0, 1, size=(groups.size, levels)))
    return (np.round(y * 10) if integers else y), groups


def test_rows_layout_of_a_mixed_design():
    y, groups = _invented(1, 6, 3, 2)
    fit = repeated_measures(_units(y, groups), "visit", ["v1", "v2", "v3"], "arm", ["A", "B"])
    assert [(r.term, r.label, r.kind, r.df) for r in fit.rows] == [
        (("arm",), "arm", "between", 1.0),
        (("units",), "Error between units", "error", 10.0),
        (("visit",), "visit", "within", 2.0),
        (("visit", "arm"), "visit x arm", "within", 2.0),
        (("visit", "units"), "Error within units", "error", 20.0),
    ]
    between, _, visit, inter, _ = fit.rows
    assert between.gg_df is None and between.hf_p is None
    assert visit.gg_df == pytest.approx((2 * fit.sphericity.greenhouse_geisser,
                                         20 * fit.sphericity.greenhouse_geisser))
    assert inter.hf_df == pytest.approx((2 * fit.sphericity.huynh_feldt,
                                         20 * fit.sphericity.huynh_feldt))
    assert all(r.confidence_level == pytest.approx(0.90) for r in fit.rows)
    assert fit.n_units == 12 and fit.warnings == ()


def test_sums_of_squares_add_up_to_the_total():
    # The strata partition the total sum of squares about the grand mean (numpy's var).
    y, groups = _invented(2, 5, 4, 3)
    fit = repeated_measures(_units(y, groups), "t", list("abcd"), "g", ["x", "y", "z"])
    assert sum(r.ss for r in fit.rows) == pytest.approx(np.var(y) * y.size, rel=1e-12)
    assert sum(r.df for r in fit.rows) == y.size - 1


def test_a_large_common_offset_changes_nothing():
    # Integers shifted by 1e9 stay exact in float64; the centred computation must give the
    # same table (sum(y^2) - (sum y)^2 / n would lose every digit here).
    y, groups = _invented(3, 7, 4, 2, integers=True)
    plain = repeated_measures(_units(y, groups), "t", list("abcd"), "g", ["x", "y"])
    shifted = repeated_measures(_units(y + 1e9, groups), "t", list("abcd"), "g", ["x", "y"])
    for a, b in zip(plain.rows, shifted.rows):
        assert b.ss == pytest.approx(a.ss, rel=1e-9, abs=1e-9)
        assert (b.statistic is None) == (a.statistic is None)
        if a.statistic is not None:
            assert b.statistic == pytest.approx(a.statistic, rel=1e-9)
    assert shifted.sphericity.greenhouse_geisser == pytest.approx(
        plain.sphericity.greenhouse_geisser, rel=1e-9)
    assert shifted.sphericity.mauchly_w == pytest.approx(plain.sphericity.mauchly_w, rel=1e-9)
    a, b = (within_contrast(_units(v, groups), [0.5, 0.25, -1.5, 0.75]) for v in (y, y + 1e9))
    assert (b.estimate, b.se, b.statistic) == pytest.approx((a.estimate, a.se, a.statistic), rel=1e-9)
    a, b = (within_means(_units(v, groups), 0.95).means[2] for v in (y, y + 1e9))
    assert b.mean - 1e9 == pytest.approx(a.mean, abs=1e-6)
    assert b.se == pytest.approx(a.se, rel=1e-9)


def test_two_levels_match_the_paired_t_test():
    # scipy.stats.ttest_rel: F of a two-level within factor is t^2; the difference contrast
    # is the paired t itself.
    y, _ = _invented(4, 9, 2)
    data = _units(y)
    fit = repeated_measures(data, "t", ["pre", "post"])
    ref = st.ttest_rel(y[:, 1], y[:, 0])
    within = fit.rows[1]
    assert within.statistic == pytest.approx(ref.statistic**2, rel=1e-12)
    assert within.p == pytest.approx(ref.pvalue, rel=1e-10)
    # epsilon is 1 by construction: no corrected test is given beside the one in force
    assert (within.gg_df, within.gg_p, within.hf_df, within.hf_p) == (None, None, None, None)
    s = fit.sphericity
    assert (s.mauchly_w, s.p, s.greenhouse_geisser, s.huynh_feldt, s.lower_bound) == (
        None, None, 1.0, 1.0, 1.0)
    assert [w.code for w in s.warnings] == ["sphericity-two-levels"]
    c = within_contrast(data, [-1, 1])
    assert c.statistic == pytest.approx(ref.statistic, rel=1e-12)
    assert c.p == pytest.approx(ref.pvalue, rel=1e-10)
    assert c.df == 8


def test_within_means_of_one_group_are_one_sample_t_intervals():
    # scipy.stats.t.interval with scipy.stats.sem per level (Student 1908).
    y, _ = _invented(5, 6, 3)
    means = within_means(_units(y), 0.9)
    for level, m in enumerate(means.means):
        low, high = st.t.interval(0.9, 5, loc=y[:, level].mean(), scale=st.sem(y[:, level]))
        assert (m.level, m.n, m.df) == (level, 6, 5)
        assert m.mean == pytest.approx(y[:, level].mean(), rel=1e-12)
        assert (m.ci_low, m.ci_high) == pytest.approx((low, high), rel=1e-12)


def test_level_order_does_not_change_the_epsilons():
    # Epsilon and W are properties of the covariance of any orthonormal contrast basis, so
    # permuting the levels leaves them unchanged.
    y, groups = _invented(6, 8, 4, 2)
    a = sphericity(y, groups)
    b = sphericity(y[:, [2, 0, 3, 1]], groups)
    assert b.greenhouse_geisser == pytest.approx(a.greenhouse_geisser, rel=1e-12)
    assert b.huynh_feldt == pytest.approx(a.huynh_feldt, rel=1e-12)
    assert b.mauchly_w == pytest.approx(a.mauchly_w, rel=1e-12)
    assert b.p == pytest.approx(a.p, rel=1e-10)


def test_helmert_contrasts_are_orthonormal_and_orthogonal_to_one():
    c = helmert_contrasts(5)
    assert c.T @ c == pytest.approx(np.eye(4), abs=1e-15)
    assert np.ones(5) @ c == pytest.approx(np.zeros(4), abs=1e-15)


# --- degenerate data --------------------------------------------------------------------


def test_one_unit_gives_no_tests_and_no_crash(strict):
    data = _units(np.array([[1.0, 2.0, 4.0]]))
    fit = repeated_measures(data, "t", ["a", "b", "c"])
    assert all(r.statistic is None and r.p is None for r in fit.rows)
    assert _codes(fit) == ["no-error-df"]
    assert fit.sphericity.greenhouse_geisser is None
    assert [w.code for w in fit.sphericity.warnings] == ["sphericity-undefined"]
    c = within_contrast(data, [1, 0, -1])
    assert (c.estimate, c.se, c.statistic, c.p) == (-3.0, None, None, None)
    assert [w.code for w in c.warnings] == ["single-unit"]


def test_constant_data_give_none_with_warnings(strict):
    data = _units(np.full((5, 3), 7.25))
    fit = repeated_measures(data, "t", ["a", "b", "c"])
    assert _codes(fit) == ["zero-error-variance"]
    assert fit.rows[1].partial_eta_squared is None
    assert fit.sphericity.mauchly_w is None
    c = within_contrast(data, [1, -1, 0])
    assert c.estimate == 0.0 and c.statistic is None
    assert [w.code for w in c.warnings] == ["zero-variance"]
    assert [w.code for m in within_means(data, 0.95).means for w in m.warnings] == [
        "zero-variance"] * 3


def test_additive_data_leave_no_within_error(strict):
    # unit effect + level effect, nothing else: the within error is rounding noise only.
    y = np.array([0.1, 0.7, 2.3, 5.9])[:, None] + np.array([0.3, 1.1, 1.6])[None, :]
    fit = repeated_measures(_units(y), "t", ["a", "b", "c"])
    assert fit.rows[1].statistic is None
    assert _codes(fit) == ["zero-error-variance"]


def test_fewer_units_than_levels_leave_mauchly_undefined(strict):
    y, _ = _invented(7, 3, 5)
    fit = repeated_measures(_units(y), "t", list("abcde"))
    s = fit.sphericity
    assert s.mauchly_w is None and s.chi_square is None and s.p is None
    assert 0.25 <= s.greenhouse_geisser <= 1.0
    assert "mauchly-too-few-units" in [w.code for w in s.warnings]
    assert fit.rows[1].statistic is not None


def test_two_units_at_three_levels_leave_huynh_feldt_undefined(strict):
    # N - 1 = 1 residual df, d = 2: d (N - 1 - d eps_GG) <= 0 since eps_GG >= 1/2.
    fit = repeated_measures(_units(np.array([[1.0, 4.0, 2.0], [2.0, 3.5, 5.0]])), "t",
                            ["a", "b", "c"])
    s = fit.sphericity
    assert s.huynh_feldt is None and s.mauchly_w is None
    assert [w.code for w in s.warnings] == ["huynh-feldt-undefined", "mauchly-too-few-units"]
    within = fit.rows[1]
    assert within.hf_df is None and within.hf_p is None
    assert within.gg_p is not None and within.statistic is not None


def test_singular_contrast_covariance_gives_w_zero(strict):
    # The quadratic contrast y0 - 2 y1 + y2 is 0 for every unit: M is singular.
    rng = np.random.default_rng(8)
    a, b = rng.normal(size=(2, 10))
    y = np.column_stack([a, b, 2 * b - a])
    s = sphericity(y)
    assert s.mauchly_w == 0.0 and s.p is None
    assert [w.code for w in s.warnings] == ["mauchly-singular"]


def test_empty_group_and_single_occupied_group(strict):
    y, _ = _invented(9, 6, 3)
    data = _units(y, groups=np.zeros(6, dtype=int))
    fit = repeated_measures(data, "t", ["a", "b", "c"], "arm", ["A", "B"])
    assert [w.code for w in fit.warnings] == ["group-no-complete-units"]
    assert fit.rows[0].statistic is None and fit.rows[3].statistic is None
    assert _codes(fit) == ["term-no-df", "term-no-df"]
    assert fit.rows[2].statistic is not None and fit.rows[1].df == 5


def test_no_complete_units(strict):
    data = complete_units(["a", "b"], np.array([0, 1]), np.array([1.0, 2.0]), 2)
    fit = repeated_measures(data, "t", ["x", "y"])
    assert fit.n_units == 0
    assert [w.code for w in fit.warnings] == ["units-dropped", "no-complete-units"]
    assert all(r.statistic is None for r in fit.rows)
    assert [w.code for w in within_contrast(data, [1, -1]).warnings] == ["no-units"]


def test_argument_errors_are_internal_errors():
    data = _units(np.arange(6.0).reshape(3, 2))
    with pytest.raises(InternalError, match="alpha"):
        repeated_measures(data, "t", ["a", "b"], alpha=0.5)
    with pytest.raises(InternalError, match="3 within levels named for 2 columns"):
        repeated_measures(data, "t", ["a", "b", "c"])
    with pytest.raises(InternalError, match="carry no groups"):
        repeated_measures(data, "t", ["a", "b"], "arm", ["A"])
    with pytest.raises(InternalError, match="3 weights given for 2 within levels"):
        within_contrast(data, [1, 0, -1])
    with pytest.raises(InternalError, match="carry no groups"):
        within_contrast(data, [1, -1], group=0)


# --- the effect-size interval answers to the corrected test ------------------------------


def _non_spherical(seed: int, groups: int = 1) -> tuple[np.ndarray, np.ndarray | None]:
    """Invented (numpy-seeded) scores at 4 within levels whose last level varies about 13
    times as much as the others (independent levels): the Greenhouse–Geisser epsilon
    lies near its lower bound 1/3. The last level is shifted by a random amount, so that
    some seeds reject and some do not."""
    rng = np.random.default_rng(seed)
    n = 10 * groups
    sd = np.array([0.3, 0.3, 0.3, 4.0])
    shift = np.array([0.0, 0.0, 0.0, rng.uniform(0.0, 6.0)])
    y = rng.normal(0.0, 1.0, size=(n, 4)) * sd + shift + rng.normal(0, 2, size=(n, 1))
    codes = None if groups == 1 else np.repeat(np.arange(groups), 10)
    if codes is not None:
        y[:, 3] += rng.uniform(0.0, 3.0) * codes  # a group x level interaction of random size
    return y, codes


@pytest.mark.parametrize("groups", [1, 2])
def test_effect_interval_excludes_zero_exactly_when_the_corrected_test_rejects(groups):
    alpha = 0.05
    decisions = set()
    for seed in range(80):
        y, codes = _non_spherical(seed, groups)
        fit = repeated_measures(_units(y, codes), "t", ["a", "b", "c", "d"],
                                between=None if groups == 1 else "g",
                                between_levels=() if groups == 1 else ("g1", "g2"), alpha=alpha)
        assert fit.sphericity.greenhouse_geisser < 0.6
        for row in (r for r in fit.rows if r.kind == "within"):
            rejects = row.gg_p < alpha
            low, high = row.partial_eta_ci
            assert (low > 0.0) == rejects, (seed, row.label, row.gg_p, row.partial_eta_ci)
            # The point estimate lies inside its own interval, unless the observed F is
            # so small (corrected p >= 1 - alpha) that the whole interval is at zero.
            if high > 0.0:
                assert low <= row.partial_eta_squared <= high, (seed, row.label)
            else:
                assert row.gg_p >= 1.0 - alpha
            decisions.add(rejects)
    assert decisions == {True, False}  # both outcomes were met, so the equivalence was tested


def test_the_row_records_the_df_its_interval_uses():
    y, codes = _non_spherical(3, groups=2)
    fit = repeated_measures(_units(y, codes), "t", ["a", "b", "c", "d"], between="g",
                            between_levels=("g1", "g2"))
    within = [r for r in fit.rows if r.kind == "within"]
    assert len(within) == 2 and all(r.effect_ci_df == r.gg_df for r in within)
    assert within[0].gg_df[0] < 3.0 * 0.6  # fractional, well below the uncorrected 3
    between = fit.rows[0]
    assert between.kind == "between" and between.gg_df is None
    assert between.effect_ci_df == (1.0, float(fit.n_units - 2))


def test_two_levels_give_no_correction_to_any_within_term():
    # A mixed design with two within levels: the within factor and its interaction with
    # the groups both rest on the single contrast, so neither has corrected df, and
    # their effect-size intervals use the uncorrected df of the test in force.
    y, groups = _invented(6, 4, 2, n_groups=3)
    fit = repeated_measures(_units(y, groups), "t", ["pre", "post"], "g", ["a", "b", "c"])
    within = [r for r in fit.rows if r.kind == "within"]
    assert [r.term for r in within] == [("t",), ("t", "g")]
    error_df = next(r for r in fit.rows if r.term == ("t", "units")).df
    for row in within:
        assert (row.gg_df, row.gg_p, row.hf_df, row.hf_p) == (None, None, None, None)
        assert row.p is not None and row.effect_ci_df == (row.df, error_df)
