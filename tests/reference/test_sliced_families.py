"""Single-step families sliced by a second factor (`by`), through the whole pipeline.

Tukey and Dunnett adjust over the registered family as a whole: every comparison at every
level of `by` together. Each expected value comes from an independent computation named
beside it:

- balanced cells with the interaction in the model: the slices' estimates are independent
  given the residual variance, so P(max >= c) = 1 - E_S[prod over slices of P(slice max <
  c S)], with the per-slice law the studentized range (Tukey 1953; scipy.stats
  studentized_range) or Dunnett's equicorrelated normal (scipy.stats.multivariate_normal),
  integrated over S by scipy.integrate.quad (the conditioning argument of Hochberg &
  Tamhane 1987, *Multiple Comparison Procedures*, ch. 3, from memory);
- unbalanced cells with a covariate: scipy.stats.multivariate_t.cdf (Genz's method, scipy
  1.17) with the correlation of statsmodels' own estimates (OLS cov_params);
- an additive model, where the comparison at every level of `by` is one and the same
  estimate: the quadrature of tests/reference/joint_reference.py.

The data are invented here (seeded).
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest
from scipy import integrate, optimize, stats

from appendix.api import compute, render

STUDY = """\
format: 1
study: {{id: invented-sliced, title: Invented supplement-by-dose data for tests}}
data:
  source: units.csv
  unit: unit_id
design:
  factors:
    - {{name: supplement, label: Supplement, levels: [placebo, tablet, powder], control: placebo}}
    - {{name: dose, label: Dose, levels: [low, mid, high]}}
{extra}  sums_of_squares: 2
outcomes:
  - {{name: ferritin, label: Ferritin, unit: ug/L, role: primary}}
contrasts:
  - {{id: C1, factor: supplement, kind: {kind}, by: dose, label: Supplements at each dose}}
multiplicity: {{method: {method}}}
"""

LEVELS = ["placebo", "tablet", "powder"]
DOSES = ["low", "mid", "high"]


def _study(tmp_path, *, kind, method, interaction=True, balanced=True, covariate=False, seed=3):
    rng = np.random.default_rng(seed)
    rows, unit = [], 0
    for s, supplement in enumerate(LEVELS):
        for d, dose in enumerate(DOSES):
            n = 6 if balanced else int(rng.integers(4, 10))
            for _ in range(n):
                unit += 1
                base = float(np.round(rng.normal(50, 8), 1))
                y = 40 + 1.6 * s + 0.8 * d + 0.9 * s * d + (0.3 * (base - 50) if covariate else 0.0) \
                    + rng.normal(0, 3)
                rows.append((f"U{unit:03d}", supplement, dose, f"{base:.1f}", f"{y:.2f}"))
    frame = pd.DataFrame(rows, columns=["unit_id", "supplement", "dose", "baseline", "ferritin"])
    frame.to_csv(tmp_path / "units.csv", index=False)
    extra = "  interactions: [[supplement, dose]]\n" if interaction else ""
    if covariate:
        extra += "  covariates: [{name: baseline, label: Baseline ferritin, unit: ug/L}]\n"
    (tmp_path / "study.yaml").write_text(STUDY.format(extra=extra, kind=kind, method=method))
    frame["ferritin"] = frame["ferritin"].astype(float)
    frame["baseline"] = frame["baseline"].astype(float)
    return frame


def _family(tmp_path):
    computed = compute(tmp_path / "study.yaml")
    (model,) = computed.results.outcomes
    (family,) = model.contrasts
    return computed, family


def _independent_slices(per_slice_inside, df: float, c: float, slices: int) -> float:
    """1 - E_S[P(slice max < c S)^slices], S ~ sqrt(chi2_df / df)."""
    density = stats.chi(df)
    root = math.sqrt(df)

    def integrand(s):
        return per_slice_inside(c * s) ** slices * density.pdf(s * root) * root

    inside = integrate.quad(integrand, 0.0, density.isf(1e-14) / root, epsabs=1e-12, limit=200)[0]
    return 1.0 - inside


def test_tukey_by_adjusts_all_pairs_at_every_dose_together(tmp_path):
    """9 pairs (3 per dose) in balanced cells, interaction fitted: the family law is three
    independent studentized ranges (k = 3, df = infinity given S) sharing S."""
    _study(tmp_path, kind="pairwise", method="tukey")
    computed, family = _family(tmp_path)
    hs = family.hypotheses
    assert len(hs) == 9 and family.joint == "multivariate-t" and family.by == "Dose"
    df = hs[0].df
    assert df == 9 * 6 - 9

    def range_inside(x):  # P(max pair |t| < x | S) for 3 balanced means: studentized range
        return stats.studentized_range.cdf(x * math.sqrt(2), 3, np.inf)

    for h in hs:
        expected = _independent_slices(range_inside, df, abs(h.statistic), 3)
        assert h.p_adjusted == pytest.approx(expected, abs=family.joint_error + 1e-7), h.id
        # Adjusting each dose on its own (k = 3 per slice) gives a smaller p: the defect fixed.
        per_slice = stats.studentized_range.sf(abs(h.statistic) * math.sqrt(2), 3, df)
        assert h.p_adjusted >= per_slice
    worst = max(hs, key=lambda h: abs(h.statistic))
    assert worst.p_adjusted > stats.studentized_range.sf(abs(worst.statistic) * math.sqrt(2), 3, df) * 1.5
    # The simultaneous critical value solves the same law at alpha = .05.
    c = optimize.brentq(lambda x: _independent_slices(range_inside, df, x, 3) - 0.05, 1.5, 5.0)
    for h in hs:
        assert (h.ci_high - h.estimate) / h.se == pytest.approx(c, abs=2e-3)
        assert h.ci_simultaneous and (h.decision == "reject") == (h.p_adjusted < 0.05)
    html = render(computed).html
    assert "over the whole family of 9 hypotheses (the comparisons at every level of " \
           "Dose together)" in html
    assert "hold simultaneously for all 9 hypotheses of the family" in html


def test_dunnett_by_adjusts_every_comparison_at_every_dose_together(tmp_path):
    """6 comparisons with placebo (2 per dose), balanced cells, interaction fitted: within a
    dose the two share the control (correlation 1/2), doses independent given S."""
    _study(tmp_path, kind="versus-control", method="dunnett")
    _, family = _family(tmp_path)
    hs = family.hypotheses
    assert len(hs) == 6 and family.joint == "multivariate-t"
    assert len({round(h.statistic, 12) for h in hs}) == 6   # no two collapsed into one
    df = hs[0].df
    pair = stats.multivariate_normal(mean=[0, 0], cov=[[1, 0.5], [0.5, 1]])

    def dunnett_inside(x):  # P(|Z1| < x, |Z2| < x) for Dunnett's equicorrelated pair
        return float(pair.cdf([x, x], lower_limit=[-x, -x]))

    for h in hs:
        expected = _independent_slices(dunnett_inside, df, abs(h.statistic), 3)
        assert h.p_adjusted == pytest.approx(expected, abs=family.joint_error + 2e-6), h.id
        assert h.p_adjusted >= h.p


def test_dunnett_by_with_a_covariate_in_unbalanced_cells_matches_the_multivariate_t(tmp_path):
    """The correlation of covariate-adjusted simple effects is not equicorrelated: the law
    is the multivariate t with statsmodels' covariance of the same estimates."""
    import statsmodels.formula.api as smf

    frame = _study(tmp_path, kind="versus-control", method="dunnett", balanced=False,
                   covariate=True)
    _, family = _family(tmp_path)
    hs = family.hypotheses
    fit = smf.ols("ferritin ~ baseline + C(supplement) * C(dose)", data=frame).fit()
    grid = pd.DataFrame([(s, d, frame["baseline"].mean()) for s in LEVELS for d in DOSES],
                        columns=["supplement", "dose", "baseline"])
    import patsy

    rhs = fit.model.formula.split("~", 1)[1]
    design = patsy.dmatrix(rhs, pd.concat([frame[["supplement", "dose", "baseline"]], grid],
                                          ignore_index=True), return_type="dataframe")
    cells = design.iloc[len(frame):].to_numpy().reshape(3, 3, -1)   # supplement x dose
    rows = [cells[LEVELS.index(t), DOSES.index(d)] - cells[0, DOSES.index(d)]
            for t in ("tablet", "powder") for d in DOSES]
    covariance = np.array(rows) @ fit.cov_params().to_numpy() @ np.array(rows).T
    se = np.sqrt(np.diag(covariance))
    corr = covariance / np.outer(se, se)
    estimates = np.array(rows) @ fit.params.to_numpy()
    # The pipeline lists tablet at low, mid, high, then powder: the same order as `rows`.
    np.testing.assert_allclose([h.estimate for h in hs], estimates, rtol=1e-9)
    np.testing.assert_allclose([h.se for h in hs], se, rtol=1e-9)
    assert abs(corr[0, 3]) > 0.3 and len({round(x, 6) for x in corr[np.triu_indices(6, 1)]}) > 3
    law = stats.multivariate_t(shape=corr, df=fit.df_resid)
    for h in hs:
        c = abs(h.statistic)
        expected = 1.0 - law.cdf(np.full(6, c), lower_limit=np.full(6, -c), maxpts=500_000,
                                 random_state=11)
        assert h.p_adjusted == pytest.approx(expected, abs=family.joint_error + 2e-4), h.id


@pytest.mark.parametrize("kind, method", [("pairwise", "tukey"), ("versus-control", "dunnett")])
def test_an_additive_model_gives_one_estimate_per_comparison_at_every_dose(tmp_path, kind, method):
    """Without the interaction the comparison is the same at every dose, so the family's law
    is that of the distinct comparisons: the adjusted p equals the unsliced family's
    (quadrature of joint_reference.rank2_tail for the 3 pairs, rank 2; the bivariate normal
    with correlation 1/2 for the two comparisons with placebo)."""
    from tests.reference.joint_reference import rank2_tail

    _study(tmp_path, kind=kind, method=method, interaction=False)
    _, family = _family(tmp_path)
    hs = family.hypotheses
    by_comparison = {}
    for h in hs:
        by_comparison.setdefault(h.id.split("@")[0], set()).add(round(h.p_adjusted, 12))
    assert all(len(v) == 1 for v in by_comparison.values())
    L = (np.array([[1, -1, 0], [1, 0, -1], [0, 1, -1]], float) if kind == "pairwise"
         else np.array([[-1, 1, 0], [-1, 0, 1]], float))
    reference = {}
    for h in hs:
        key = round(abs(h.statistic), 10)
        if key not in reference:
            reference[key] = rank2_tail(L @ L.T, h.df, abs(h.statistic))
        assert h.p_adjusted == pytest.approx(reference[key], abs=family.joint_error + 1e-7), h.id


REPEATED = """\
format: 1
study: {{id: invented-visits, title: Invented supplement data over visits for tests}}
data:
  source: units.csv
  unit: unit_id
design:
  factors:
    - {{name: supplement, label: Supplement, levels: [placebo, tablet, powder], control: placebo}}
    - {{name: visit, label: Visit, role: within, levels: [week2, week4, week8]}}
  interactions: [[supplement, visit]]
  sums_of_squares: 2
repeated: {{missing: complete-units}}
outcomes:
  - {{name: ferritin, label: Ferritin, unit: ug/L, role: primary}}
contrasts:
  - {{id: C1, factor: {factor}, kind: {kind}, by: {by}, label: Sliced comparisons}}
multiplicity: {{method: {method}}}
"""


def _repeated(tmp_path, *, factor, kind, by, method, seed=5):
    rng = np.random.default_rng(seed)
    rows, wide = [], []
    covariance = np.array([[9.0, 6.0, 3.0], [6.0, 12.0, 8.0], [3.0, 8.0, 16.0]])
    for s, supplement in enumerate(LEVELS):
        for u in range(int(rng.integers(7, 11))):
            unit = f"{supplement[:2].upper()}{u:02d}"
            y = 40 + np.array([0.5, 1.0, 2.0]) * s + rng.multivariate_normal(np.zeros(3), covariance)
            wide.append((unit, supplement, *np.round(y, 2)))
            rows += [(unit, supplement, visit, f"{v:.2f}")
                     for visit, v in zip(["week2", "week4", "week8"], np.round(y, 2))]
    pd.DataFrame(rows, columns=["unit_id", "supplement", "visit", "ferritin"]).to_csv(
        tmp_path / "units.csv", index=False)
    (tmp_path / "study.yaml").write_text(REPEATED.format(factor=factor, kind=kind, by=by,
                                                         method=method))
    return pd.DataFrame(wide, columns=["unit_id", "supplement", "week2", "week4", "week8"])


def test_comparisons_at_every_visit_are_adjusted_together(tmp_path):
    """Dunnett at each of three visits: one fit per visit (statsmodels OLS of that visit's
    values), correlated through the units' residuals across visits; the law used is the
    multivariate t with those correlations (scipy.stats.multivariate_t), stated as an
    approximation because each visit has its own error variance."""
    import statsmodels.formula.api as smf

    wide = _repeated(tmp_path, factor="supplement", kind="versus-control", by="visit",
                     method="dunnett")
    computed, family = _family(tmp_path)
    hs = family.hypotheses
    assert len(hs) == 6 and family.joint == "multivariate-t-approximate" and family.by == "Visit"
    assert all(any(w.code == "joint-law-approximate" for w in h.warnings) for h in hs)
    fits = {v: smf.ols(f"{v} ~ C(supplement, levels={LEVELS!r})", data=wide).fit()
            for v in ["week2", "week4", "week8"]}
    residuals = np.column_stack([fits[v].resid for v in fits])
    sigma = residuals.T @ residuals / fits["week2"].df_resid
    g = fits["week2"].cov_params().to_numpy() / fits["week2"].scale   # (X'X)^-1
    members = [(t, v) for t in (1, 2) for v in range(3)]   # tablet, powder at each visit
    rows = {t: np.eye(3)[t] for t in (1, 2)}                # treatment coding: the t-th coefficient
    covariance = np.array([[rows[a] @ g @ rows[b] * sigma[i, j] for b, j in members]
                           for a, i in members])
    se = np.sqrt(np.diag(covariance))
    np.testing.assert_allclose([h.se for h in hs], se, rtol=1e-8)
    law = stats.multivariate_t(shape=covariance / np.outer(se, se), df=fits["week2"].df_resid)
    for h in hs:
        c = abs(h.statistic)
        expected = 1.0 - law.cdf(np.full(6, c), lower_limit=np.full(6, -c), maxpts=500_000,
                                 random_state=11)
        assert h.p_adjusted == pytest.approx(expected, abs=family.joint_error + 2e-4), h.id
    assert "an approximate joint multivariate t distribution" in render(computed).html


def test_visit_pairs_within_each_supplement_are_adjusted_together(tmp_path):
    """Tukey on the within factor's pairs within each supplement: 9 hypotheses, each on its
    own units' scores. Different supplements have different units (independent given S),
    the pairs of one supplement are correlated through its units' covariance (numpy.cov
    here). Reference: 1 - E_S[prod over supplements of P(its 3 pairs inside c S)], each
    factor by the rank-2 quadrature of joint_reference (the pairs of 3 visits span 2
    dimensions), on each hypothesis's own df as the pipeline states."""
    from tests.reference.joint_reference import rank2_inside, tail_over_s

    wide = _repeated(tmp_path, factor="visit", kind="pairwise", by="supplement", method="tukey")
    _, family = _family(tmp_path)
    hs = family.hypotheses
    assert len(hs) == 9 and family.joint == "multivariate-t-approximate"
    pairs = {"week4-week2": (-1, 1, 0), "week8-week2": (-1, 0, 1), "week8-week4": (0, -1, 1)}
    blocks = []
    for supplement in LEVELS:
        y = wide[wide.supplement == supplement][["week2", "week4", "week8"]].to_numpy()
        w = np.array([pairs[h.id.split(":")[1].split("@")[0]] for h in hs
                      if h.id.endswith("@" + supplement)], float)
        blocks.append(w @ np.cov(y, rowvar=False) @ w.T)
    assert len({h.df for h in hs}) == 3   # each supplement's own units: df differ

    def inside(x):
        return np.prod([rank2_inside(block, x) for block in blocks], axis=0)

    # The largest statistic of each supplement (each on its own df) is checked.
    for supplement in LEVELS:
        h = max((h for h in hs if h.id.endswith("@" + supplement)), key=lambda h: abs(h.statistic))
        expected = tail_over_s(inside, h.df, abs(h.statistic))
        assert h.p_adjusted == pytest.approx(expected, abs=family.joint_error + 1e-6), h.id
