"""Multiplicity control: adjusted p-values, fixed-sequence, families and their intervals.

Invented data are seeded normal draws (said where used). The source of every published
or reference value is named beside it.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import scipy.stats as st
from hypothesis import given, settings
from hypothesis import strategies as hst
from statsmodels.stats.multitest import multipletests

from appendix.errors import InternalError
from appendix.stats import multiplicity as mult
from appendix.stats.cells import cell_stats
from appendix.stats.contrasts import classical_contrast, hypotheses_for

LEVELS = ("uncoated", "chitosan", "seaweed", "humic")

# --- adjusted p-values against published and reference values ---------------------------

# Ten raw p-values and their adjustments by R multtest mt.rawp2adjp, as recorded in
# statsmodels 0.15 statsmodels/stats/tests/test_multi.py (pval0, res_multtest1; columns
# rawp, Bonferroni, Holm, Hochberg, SidakSS, ..., BH), rows sorted by raw p.
MULTTEST = np.array([
    [5.2365677720800003e-05, 5.2365677720800005e-04, 5.2365677720800005e-04,
     5.2365677720800005e-04, 5.2353339704891422e-04, 5.2365677720800005e-04],
    [2.8140506198000000e-04, 2.8140506197999998e-03, 2.5326455578199999e-03,
     2.5326455578199999e-03, 2.8104897961789277e-03, 1.4070253098999999e-03],
    [1.4987731079600001e-02, 1.4987731079600000e-01, 1.1990184863680001e-01,
     1.1990184863680001e-01, 1.4016246580579017e-01, 4.9959103598666670e-02],
    [2.0273268879800001e-02, 2.0273268879799999e-01, 1.4191288215860001e-01,
     1.4191288215860001e-01, 1.8520270949069695e-01, 5.0683172199499998e-02],
    [1.7709695272300000e-01, 1.0, 1.0, 9.6783382430900000e-01, 8.5760763426056130e-01,
     3.5419390544599999e-01],
    [6.4219392379499995e-01, 1.0, 1.0, 9.6783382430900000e-01, 9.9996560644133570e-01,
     8.9533672797500008e-01],
    [6.8084594763299999e-01, 1.0, 1.0, 9.6783382430900000e-01, 9.9998903512635740e-01,
     8.9533672797500008e-01],
    [7.1626938238000004e-01, 1.0, 1.0, 9.6783382430900000e-01, 9.9999661886871472e-01,
     8.9533672797500008e-01],
    [8.3854136755300002e-01, 1.0, 1.0, 9.6783382430900000e-01, 9.9999998796038225e-01,
     9.3171263061444454e-01],
    [9.6783382430900000e-01, 1.0, 1.0, 9.6783382430900000e-01, 9.9999999999999878e-01,
     9.6783382430900000e-01],
])


@pytest.mark.parametrize("column, method", [
    (1, "bonferroni"), (2, "holm"), (3, "hochberg"), (4, "sidak"), (5, "benjamini-hochberg")])
def test_adjust_matches_r_multtest(column, method) -> None:
    rng = np.random.default_rng(1)
    order = rng.permutation(10)  # the adjustment must not depend on the input order
    raw = MULTTEST[order, 0]
    assert mult.adjust(raw, method) == pytest.approx(MULTTEST[order, column], rel=1e-10)


# Benjamini & Hochberg (1995, JRSS B 57:289-300), section 4.2: fifteen p-values from a
# study of myocardial infarction treatment (from memory).
BH1995 = [0.0001, 0.0004, 0.0019, 0.0095, 0.0201, 0.0278, 0.0298, 0.0344, 0.0459, 0.3240,
          0.4262, 0.5719, 0.6528, 0.7590, 1.0000]


def test_benjamini_hochberg_1995_example() -> None:
    bh = mult.adjust(BH1995, "benjamini-hochberg")
    bonferroni = mult.adjust(BH1995, "bonferroni")
    # The paper: the FDR procedure rejects the four smallest, Bonferroni the three smallest.
    assert int(np.sum(bh < 0.05)) == 4
    assert int(np.sum(bonferroni < 0.05)) == 3
    # Reference: statsmodels 0.15.0 multipletests, every method.
    for ours, theirs in [("bonferroni", "bonferroni"), ("holm", "holm"), ("hochberg", "simes-hochberg"),
                         ("sidak", "sidak"), ("benjamini-hochberg", "fdr_bh")]:
        # statsmodels' Sidak takes log1p(-1) for the p of 1 (its own divide warning, not ours).
        with np.errstate(divide="ignore"):
            expected = multipletests(BH1995, method=theirs)[1]
        assert mult.adjust(BH1995, ours) == pytest.approx(expected, rel=1e-12, abs=1e-15)


def test_adjust_passes_missing_values_through_and_counts_only_the_rest() -> None:
    got = mult.adjust([0.01, None, 0.02, math.nan], "bonferroni")
    assert got[[0, 2]].tolist() == pytest.approx([0.02, 0.04])
    assert np.isnan(got[1]) and np.isnan(got[3])
    assert np.isnan(mult.adjust([None], "holm")).all()
    assert mult.adjust([], "sidak").size == 0
    assert mult.adjust([0.2, 0.3], "none").tolist() == [0.2, 0.3]
    # Sidak in the small-p range keeps its digits: 1 - (1 - 1e-12)^3 = 3e-12 (exact to 1e-23).
    assert mult.adjust([1e-12, 0.5, 0.5], "sidak")[0] == pytest.approx(3e-12, rel=1e-9)
    with pytest.raises(InternalError):
        mult.adjust([0.1], "tukey")
    with pytest.raises(InternalError):
        mult.adjust([1.5], "holm")


@settings(max_examples=200, deadline=None)
@given(hst.lists(hst.floats(0.0, 1.0), min_size=1, max_size=30),
       hst.sampled_from(mult.P_METHODS))
def test_adjusted_p_are_monotone_never_below_raw_and_at_most_one(raw, method) -> None:
    adjusted = mult.adjust(raw, method)
    p = np.asarray(raw)
    assert np.all(adjusted >= p) and np.all(adjusted <= 1.0)
    order = np.argsort(p, kind="stable")
    assert np.all(np.diff(adjusted[order]) >= -1e-15)


# --- fixed-sequence ----------------------------------------------------------------

def _results(ps, seed=3):
    """Real results on invented data (seeded normal draws), with chosen p-values put in."""
    import dataclasses

    rng = np.random.default_rng(seed)
    codes = np.repeat(np.arange(4), 6)
    cells = cell_stats(rng.normal(10, 1, size=24), codes, 4, LEVELS)
    hs = hypotheses_for("pairwise", LEVELS, contrast_id="C3", label="pairs")
    return tuple(dataclasses.replace(classical_contrast(h, cells, "two-sided", 0.95), p=p)
                 for h, p in zip(hs, ps))


def test_fixed_sequence_hand_worked() -> None:
    # Procedure: Maurer, Hothorn & Lehmacher (1995); Westfall & Krishen (2001): test in the
    # registered order at the full alpha = .05, stop at the first p >= alpha.
    # p = .01 -> reject (p_adj .01); .04 -> reject (max .04); .03 -> reject (max stays .04);
    # .20 -> retain, stop (p_adj .20); .001 and .002 come after the stop -> not tested.
    walked = mult.fixed_sequence(_results([0.01, 0.04, 0.03, 0.20, 0.001, 0.002]), 0.05)
    assert [r.decision for r in walked] == ["reject", "reject", "reject", "retain",
                                            "not-tested", "not-tested"]
    assert [r.p_adjusted for r in walked] == [0.01, 0.04, 0.04, 0.20, None, None]
    assert not any(r.ci_simultaneous for r in walked)


def test_fixed_sequence_follows_the_registered_order_not_the_input_order() -> None:
    results = _results([0.20, 0.01, 0.02, 0.03, 0.04, 0.001])
    ids = [r.id for r in results]
    order = [ids[1], ids[2], ids[0], ids[3], ids[4], ids[5]]
    walked = mult.apply_multiplicity(results, "fixed-sequence", 0.05, order=order)
    assert [r.id for r in walked] == ids  # input order kept
    assert [r.decision for r in walked] == ["retain", "reject", "reject", "not-tested",
                                            "not-tested", "not-tested"]
    # A contrast id stands for its hypotheses in expansion order.
    by_contrast = mult.apply_multiplicity(results, "fixed-sequence", 0.05, order=["C3"])
    assert by_contrast[0].decision == "retain" and by_contrast[1].decision == "not-tested"
    with pytest.raises(InternalError):
        mult.apply_multiplicity(results, "fixed-sequence", 0.05, order=ids[:3])
    with pytest.raises(InternalError):
        mult.apply_multiplicity(results, "holm", 0.05, order=ids)


def test_fixed_sequence_stops_at_an_unavailable_hypothesis() -> None:
    import dataclasses

    results = list(_results([0.01, 0.02, 0.03, 0.04, 0.01, 0.01]))
    results[1] = dataclasses.replace(results[1], p=None, p_adjusted=None, decision="unavailable")
    walked = mult.fixed_sequence(results, 0.05)
    assert [r.decision for r in walked] == ["reject", "unavailable"] + ["not-tested"] * 4


# --- families: intervals, decisions, errors ----------------------------------------

def _invented_cells(seed: int, sizes=(6, 9, 4, 7)):
    """Invented unbalanced data: seeded normal draws with level-specific centres."""
    rng = np.random.default_rng(seed)
    codes = np.repeat(np.arange(len(sizes)), sizes)
    values = rng.normal(rng.uniform(0, 3, size=len(sizes))[codes], 1.0)
    return cell_stats(values, codes, len(sizes), LEVELS), values, codes


def test_bonferroni_and_sidak_intervals_use_the_adjusted_level() -> None:
    cells, _, _ = _invented_cells(4)
    hs = hypotheses_for("versus-control", LEVELS, control="uncoated", contrast_id="C2", label="v")
    for method, per_level in [("bonferroni", 1 - 0.05 / 3), ("sidak", 0.95 ** (1 / 3))]:
        family = mult.test_family(hs, ("two-sided",) * 3, method="classical", multiplicity=method,
                                  cells=cells, alpha=0.05)
        for r in family:
            half = st.t.isf((1 - per_level) / 2, r.df) * r.se  # scipy.stats.t 1.17
            assert (r.ci_low, r.ci_high) == pytest.approx((r.estimate - half, r.estimate + half),
                                                          rel=1e-12)
            assert r.ci_simultaneous and r.confidence_level == 0.95
            assert r.decision == ("reject" if r.p_adjusted < 0.05 else "retain")
    holm = mult.test_family(hs, ("greater",) * 3, method="classical", multiplicity="holm",
                            cells=cells, alpha=0.05)
    assert not any(r.ci_simultaneous for r in holm)
    assert all(r.ci_high is None for r in holm)


@settings(max_examples=12, deadline=None)
@given(hst.integers(0, 2**31 - 1), hst.sampled_from(["two-sided", "greater", "less"]),
       hst.sampled_from(["classical", "welch", "rank-based"]))
def test_simultaneous_intervals_contain_the_unadjusted_ones(seed, alternative, method) -> None:
    cells, values, codes = _invented_cells(seed)
    for kind, multiplicity in [("pairwise", "tukey"), ("versus-control", "dunnett"),
                               ("pairwise", "bonferroni")]:
        hs = hypotheses_for(kind, LEVELS, control="uncoated", contrast_id="C", label="c")
        alternatives = (alternative,) * len(hs)
        plain = mult.test_family(hs, alternatives, method=method, multiplicity="none", cells=cells,
                                 values=values, codes=codes, alpha=0.05)
        joint = mult.test_family(hs, alternatives, method=method, multiplicity=multiplicity,
                                 cells=cells, values=values, codes=codes, alpha=0.05)
        for a, b in zip(plain, joint):
            assert b.ci_simultaneous and b.p_adjusted >= a.p
            if a.ci_low is not None:
                assert b.ci_low <= a.ci_low + 1e-12
            if a.ci_high is not None:
                assert b.ci_high >= a.ci_high - 1e-12
            assert b.decision == ("reject" if b.p_adjusted < 0.05 else "retain")


def test_tukey_with_an_empty_level_keeps_the_gap_and_counts_the_rest() -> None:
    cells, values, codes = _invented_cells(5, sizes=(6, 0, 5, 7))
    hs = hypotheses_for("pairwise", LEVELS, contrast_id="C3", label="pairs")
    family = mult.tukey_family(hs, cells, "two-sided", 0.05)
    gaps = [r.id for r in family if r.decision == "unavailable"]
    assert gaps == ["C3:chitosan-uncoated", "C3:seaweed-chitosan", "C3:humic-chitosan"]
    assert all(r.p_adjusted is None and r.warnings[0].code == "hypothesis-empty-level"
               for r in family if r.id in gaps)
    # The three available pairs form the all-pairs family of k = 3 occupied levels.
    r = next(r for r in family if r.id == "C3:humic-uncoated")
    expected = st.studentized_range.sf(abs(r.statistic) * math.sqrt(2), 3, 15)  # scipy 1.17
    assert r.p_adjusted == pytest.approx(expected, rel=1e-10)


def test_tukey_one_sided_is_conservative_and_says_so() -> None:
    cells, _, _ = _invented_cells(6)
    hs = hypotheses_for("pairwise", LEVELS, contrast_id="C3", label="pairs")
    family = mult.tukey_family(hs, cells, "greater", 0.05)
    for r in family:
        assert r.p_adjusted >= r.p and r.ci_high is None
        assert "tukey-one-sided-conservative" in {w.code for w in r.warnings}


def test_family_methods_reject_the_wrong_hypotheses() -> None:
    cells, values, codes = _invented_cells(7)
    pairs = hypotheses_for("pairwise", LEVELS, contrast_id="C3", label="pairs")
    trend = hypotheses_for("trend", LEVELS, contrast_id="C4", label="trend")
    with pytest.raises(InternalError):
        mult.tukey_family(trend, cells, "two-sided", 0.05)
    with pytest.raises(InternalError):
        mult.dunnett_family(pairs, cells, "two-sided", 0.05)
    with pytest.raises(InternalError):
        mult.test_family(pairs, ("two-sided",) * 5, method="classical", multiplicity="holm",
                         cells=cells, alpha=0.05)
    with pytest.raises(InternalError):
        mult.test_family(pairs, ("two-sided",) * 6, method="rank-based", multiplicity="holm",
                         cells=cells, alpha=0.05)  # no values and codes
    with pytest.raises(InternalError):
        mult.test_family(pairs, ("two-sided",) * 6, method="classical", multiplicity="scheffe",
                         cells=cells, alpha=0.05)


def test_dunnett_degenerate_levels_without_floating_point_warnings() -> None:
    import warnings

    labels = ("a", "b", "c")
    vc = hypotheses_for("versus-control", labels, control="a", contrast_id="C2", label="v")
    # Invented: level b has no spread, so under welch its comparison has correlation 1
    # with the control's part.
    values = np.array([1.0, 2, 3, 4, 5, 5, 5, 7, 8, 9.5])
    codes = np.repeat([0, 1, 2], [4, 3, 3])
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        family = mult.dunnett_family(vc, cell_stats(values, codes, 3, labels), "two-sided", 0.05,
                                     welch=True)
        assert all(r.p is not None and r.p <= r.p_adjusted <= 1.0 for r in family)
        assert all("dunnett-welch-approximate" in {w.code for w in r.warnings} for r in family)
        # An empty control: nothing can be compared, every hypothesis says why.
        keep = codes != 0
        empty = mult.dunnett_family(vc, cell_stats(values[keep], codes[keep], 3, labels),
                                    "two-sided", 0.05)
    assert [r.decision for r in empty] == ["unavailable", "unavailable"]
    assert empty[0].warnings[0].code == "hypothesis-empty-level"


def test_rank_based_tukey_refers_dunn_z_to_the_range_with_infinite_df() -> None:
    cells, values, codes = _invented_cells(10)
    hs = hypotheses_for("pairwise", LEVELS, contrast_id="C3", label="pairs")
    family = mult.test_family(hs, ("two-sided",) * 6, method="rank-based", multiplicity="tukey",
                              cells=cells, values=values, codes=codes, alpha=0.05)
    q = st.studentized_range.isf(0.05, 4, np.inf)  # scipy 1.17
    for r in family:
        assert r.statistic_name == "z" and r.df is None
        assert r.p_adjusted == pytest.approx(
            max(r.p, st.studentized_range.sf(abs(r.statistic) * math.sqrt(2), 4, np.inf)), rel=1e-10)
        assert r.ci_high - r.estimate == pytest.approx(q / math.sqrt(2) * r.se, rel=1e-10)


def test_dunnett_counts_a_level_listed_twice_once() -> None:
    cells, _, _ = _invented_cells(11)
    vc = hypotheses_for("versus-control", LEVELS, control="uncoated", contrast_id="C2", label="v")
    again = hypotheses_for("versus-control", LEVELS, control="uncoated", contrast_id="C6", label="w")
    once = mult.dunnett_family(vc, cells, "two-sided", 0.05)
    twice = mult.dunnett_family(vc + again[:1], cells, "two-sided", 0.05)
    assert [r.p_adjusted for r in twice[:3]] == [r.p_adjusted for r in once]
    assert twice[3].p_adjusted == once[0].p_adjusted and twice[3].id == "C6:chitosan"


# --- graphical (Bretz et al. 2009) ---------------------------------------------------------

def _one_per_contrast(ps, ids):
    """`_results` with each hypothesis standing alone as the contrast named in `ids`."""
    import dataclasses

    return tuple(dataclasses.replace(r, contrast=cid) for r, cid in zip(_results(ps), ids))


def test_graphical_family_by_contrast_id() -> None:
    from appendix.stats.graphical import Graph

    # The hand-worked example of tests/stats/test_graphical.py (p = .01, .03, .02 on H1, H2,
    # H3; adjusted .02, .04, .04), with the results given in another order than the nodes.
    graph = Graph(weights={"H1": 0.5, "H2": 0.5},
                  transitions={"H1": {"H2": 0.5, "H3": 0.5}, "H2": {"H1": 0.5, "H3": 0.5},
                               "H3": {"H1": 0.5, "H2": 0.5}})
    results = _one_per_contrast([0.02, 0.01, 0.03], ["H3", "H1", "H2"])
    tested = mult.apply_multiplicity(results, "graphical", 0.03, graph=graph)
    assert [r.contrast for r in tested] == ["H3", "H1", "H2"]
    assert [r.p_adjusted for r in tested] == pytest.approx([0.04, 0.02, 0.04], rel=1e-12)
    assert [r.decision for r in tested] == ["retain", "reject", "retain"]
    assert not any(r.ci_simultaneous for r in tested)
    # Intervals are the unadjusted 1 - alpha ones.
    assert all(r.confidence_level == pytest.approx(0.97) for r in tested)


def test_graphical_family_errors_and_unavailable_hypotheses() -> None:
    import dataclasses

    from appendix.stats.graphical import Graph

    graph = Graph(weights={"A": 0.5, "B": 0.5}, transitions={"A": {"B": 1}, "B": {"A": 1}})
    results = list(_one_per_contrast([0.01, 0.04], ["A", "B"]))
    results[1] = dataclasses.replace(results[1], p=None, p_adjusted=None, decision="unavailable")
    tested = mult.apply_multiplicity(results, "graphical", 0.05, graph=graph)
    assert tested[1] is results[1]  # passes through, never rejected
    assert (tested[0].decision, tested[0].p_adjusted) == ("reject", pytest.approx(0.02))
    with pytest.raises(InternalError, match="one hypothesis per node"):
        mult.apply_multiplicity(_results([0.01] * 6), "graphical", 0.05, graph=graph)
    with pytest.raises(InternalError, match="not among"):
        mult.apply_multiplicity(_one_per_contrast([0.01, 0.02], ["A", "C"]), "graphical", 0.05,
                                graph=graph)
    with pytest.raises(InternalError, match="a graph belongs to method graphical only"):
        mult.apply_multiplicity(results, "holm", 0.05, graph=graph)
    with pytest.raises(InternalError, match="a graph belongs to method graphical only"):
        mult.apply_multiplicity(results, "graphical", 0.05)
