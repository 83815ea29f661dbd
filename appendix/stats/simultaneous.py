"""Single-step simultaneous tests: Tukey–Kramer / Games–Howell (all pairs) and Dunnett
(many to one) for one factor's levels, and any family from the joint multivariate t of
its estimates (`joint_results`), with simultaneous confidence intervals.

Both take the raw per-hypothesis results of `contrasts` (estimate, SE, df, statistic) and
replace p_adjusted, the interval and the decision. Adjusted p-values are never below the
raw p (the maximum over a family cannot be less likely to exceed a value than one member).
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Sequence
from functools import lru_cache

import numpy as np
from scipy import integrate as _int
from scipy import optimize as _opt
from scipy import special as _sp
from scipy import stats as _st

from appendix.errors import InternalError
from appendix.results import HypothesisResult, StatWarning
from appendix.stats.contrasts import interval
from appendix.stats.joint_t import max_t_law

_SQRT2 = math.sqrt(2.0)


def _finish(r: HypothesisResult, p_adjusted: float, multiplier: float, alpha: float,
            extra: tuple[StatWarning, ...] = ()) -> HypothesisResult:
    p_adjusted = min(1.0, max(p_adjusted, r.p))
    low, high = interval(r.estimate, r.se, multiplier, r.alternative)
    return dataclasses.replace(
        r, p_adjusted=p_adjusted, ci_low=low, ci_high=high, confidence_level=1.0 - alpha,
        ci_simultaneous=True, decision="reject" if p_adjusted < alpha else "retain",
        warnings=r.warnings + extra)


def _directed(r: HypothesisResult) -> float:
    """The statistic signed so that large values favour the alternative."""
    return -r.statistic if r.alternative == "less" else r.statistic


# --- Tukey–Kramer and Games–Howell -------------------------------------------------------

@lru_cache(maxsize=256)
def _q_critical(alpha: float, k: int, df: float) -> float:
    return float(_st.studentized_range.isf(alpha, k, df))


def tukey_results(raw: Sequence[HypothesisResult], alpha: float) -> tuple[HypothesisResult, ...]:
    """Single-step studentized-range adjustment of all-pairs hypotheses.

    p_adj = P(Q_{k, df} >= |t| sqrt 2) and the simultaneous interval is
    estimate -/+ q_{1-alpha; k, df} / sqrt 2 * SE, where k is the number of levels
    compared (Tukey 1953; Kramer 1956, Biometrics 12:307-310, for unequal n). Under
    welch each pair has its own Welch df (Games & Howell 1976, J Educ Stat 1:113-125),
    which makes the family level approximate. Rank-based refers Dunn's z to the range
    with df = infinity, the large-sample all-pairs test on joint mean ranks (Nemenyi
    1963, from memory).
    The studentized range is two-sided; for a one-sided alternative the directed
    statistic is referred to the same two-sided range and the open end is dropped,
    which is conservative (a warning says so).
    """
    if any(r.kind != "pairwise" for r in raw):
        raise InternalError("Tukey–Kramer applies only to families of pairwise hypotheses")
    ready = [r for r in raw if r.p is not None]
    levels = {i for r in ready for i, w in enumerate(r.weights) if w != 0.0}
    k = max(len(levels), 2)
    out = []
    for r in raw:
        if r.p is None:
            out.append(r)
            continue
        df = math.inf if r.df is None else r.df
        extra: tuple[StatWarning, ...] = ()
        if r.method == "welch":
            extra += (StatWarning("games-howell-approximate",
                                  "Games–Howell intervals use each pair's Welch df; their joint "
                                  "coverage is approximate."),)
        if r.alternative == "two-sided":
            q = abs(r.statistic)
        else:
            q = max(_directed(r), 0.0)
            extra += (StatWarning("tukey-one-sided-conservative",
                                  "The studentized range is two-sided; this one-sided adjusted p "
                                  "and bound are conservative."),)
        p_adj = float(_st.studentized_range.sf(q * _SQRT2, k, df))
        out.append(_finish(r, p_adj, _q_critical(alpha, k, df) / _SQRT2, alpha, extra))
    return tuple(out)


# --- Dunnett -------------------------------------------------------------------------

_S_NODES, _Z_STEP = 16, 0.03
_S_EDGES = np.array([1e-17, 1e-9, 1e-5, 1e-3, 0.02, 0.2, 0.5, 0.8, 0.98, 0.999, 1 - 1e-5, 1 - 1e-9])


def many_to_one_tail(c: float, lam: Sequence[float], df: float, two_sided: bool) -> float:
    """P(max_i T_i > c) (or P(max_i |T_i| > c)) for Dunnett's many-to-one statistics.

    T_i = Z_i / S with Z_i = lam_i Z_0 + sqrt(1 - lam_i^2) E_i (Z_0, E_i independent
    standard normal) and S ~ sqrt(chi^2_df / df): exactly the correlation structure
    rho_ij = lam_i lam_j of comparisons with one shared control (Dunnett 1955, JASA
    50:1096-1121, section 3). Conditional on Z_0 the comparisons are independent, so the
    probability is a double integral over Z_0 (Simpson's rule, step 0.03) and S
    (16-point Gauss-Legendre on log S in eleven panels between quantiles of S, from the
    1e-17 to the 1 - 1e-9 quantile; about 1e-7 relative error from df = 1 to 1e4). The
    complement of the product of conditional non-exceedances is taken as
    -expm1(sum log1p(-q)), so the tail stays accurate when it is small; df = inf drops
    the S integral.
    """
    # lam = 1 (a comparison whose treated level has no variance, under welch) makes the
    # conditional law a step; a nearly-1 lam keeps the integrand finite and the step sharp.
    lam = np.minimum(np.asarray(lam, dtype=np.float64), 1.0 - 1e-12)
    sig = np.sqrt(1.0 - lam**2)
    if math.isinf(df):
        s, w = np.ones(1), np.ones(1)
    else:
        # In u = log S the integrand is smooth for every df: for small df the mass that
        # matters for large c sits at tiny S, which a grid in S itself would miss.
        # Panels between quantiles of S put the nodes where its probability lies, whatever df.
        edges = 0.5 * np.log(_st.chi2.ppf(_S_EDGES, df) / df)
        x, wx = _sp.roots_legendre(_S_NODES)
        mid, half = (edges[1:] + edges[:-1]) / 2, (edges[1:] - edges[:-1]) / 2
        u = (mid[:, None] + half[:, None] * x[None, :]).ravel()
        s = np.exp(u)
        # density of S times dS/du: 2 (df/2)^(df/2) s^df exp(-df s^2 / 2) / Gamma(df/2)
        log_f = (math.log(2.0) + df / 2 * math.log(df / 2) - float(_sp.gammaln(df / 2))
                 + df * u - df * s * s / 2)
        w = (half[:, None] * wx[None, :]).ravel() * np.exp(log_f)
    cs = c * s
    reach = min(max(12.0, float(np.abs(cs).max()) + 12.0), 40.0)
    z = np.linspace(-reach, reach, 2 * int(reach / _Z_STEP) + 1)
    shifted = lam[None, :, None] * z[None, None, :]
    q = _sp.ndtr((shifted - cs[:, None, None]) / sig[None, :, None])
    if two_sided:
        q = q + _sp.ndtr((-shifted - cs[:, None, None]) / sig[None, :, None])
    q = np.minimum(q, np.nextafter(1.0, 0.0))
    exceed = -np.expm1(np.sum(np.log1p(-q), axis=1))
    inner = _int.simpson(exceed * _st.norm.pdf(z)[None, :], dx=float(z[1] - z[0]), axis=1)
    return float(min(1.0, max(0.0, float(np.dot(w, inner)))))


def many_to_one_critical(alpha: float, lam: Sequence[float], df: float, two_sided: bool) -> float:
    """The c with `many_to_one_tail(c) = alpha`: Dunnett's critical value d.

    Bracketed by the single-comparison t quantile (below) and the Bonferroni quantile
    (above), then found by Brent's method.
    """
    lam = tuple(float(x) for x in lam)
    dist = _st.norm() if math.isinf(df) else _st.t(df)
    side = 2.0 if two_sided else 1.0
    # Widened so that the integration error can never put both ends on one side.
    low = 0.9 * float(dist.isf(alpha / side))
    high = 1.1 * float(dist.isf(alpha / side / len(lam))) + 0.1
    return float(_opt.brentq(lambda c: many_to_one_tail(c, lam, df, two_sided) - alpha,
                             low, high, xtol=1e-10, rtol=1e-12))


def _versus_control(r: HypothesisResult) -> tuple[int, int]:
    w = np.asarray(r.weights)
    treated, controls = np.flatnonzero(w == 1.0), np.flatnonzero(w == -1.0)
    if r.kind != "versus-control" or treated.size != 1 or controls.size != 1 or np.count_nonzero(w) != 2:
        raise InternalError(f"Dunnett applies only to versus-control hypotheses, got {r.id}")
    return int(treated[0]), int(controls[0])


def dunnett_results(raw: Sequence[HypothesisResult], var_mean: Sequence[float],
                    alpha: float) -> tuple[HypothesisResult, ...]:
    """Dunnett's (1955) single-step many-to-one adjustment with simultaneous intervals.

    The comparisons L - control are correlated through the shared control:
    rho_ij = lam_i lam_j with lam_i = sqrt(v_c / (v_c + v_i)), `var_mean` the variance v
    of each level's estimate (n-based for classical and rank-based; each level's own
    variance under welch, where each comparison also keeps its Welch df, an
    approximation like Games–Howell). Two-sided: p_adj = P(max |T| >= |t|); one-sided:
    P(max T >= t) in the alternative's direction; interval estimate -/+ d * SE.
    """
    pairs = [_versus_control(r) for r in raw]
    if len({c for _, c in pairs}) > 1:
        raise InternalError("Dunnett needs one shared control in the family")
    ready = [(r, t) for r, (t, _) in zip(raw, pairs) if r.p is not None]
    if not ready:
        return tuple(raw)
    control = pairs[0][1]
    v_c = var_mean[control]
    # One comparison per treated level: a level listed twice is the same statistic.
    treated = sorted({t for _, t in ready})
    lam = tuple(float(math.sqrt(v_c / (v_c + var_mean[t]))) for t in treated)
    adjusted: dict[str, HypothesisResult] = {}
    for r, _ in ready:
        df = math.inf if r.df is None else float(r.df)
        two_sided = r.alternative == "two-sided"
        stat = abs(r.statistic) if two_sided else _directed(r)
        extra: tuple[StatWarning, ...] = ()
        if r.method == "welch":
            extra = (StatWarning("dunnett-welch-approximate",
                                 "Under unequal variances each comparison keeps its own Welch df; "
                                 "the joint coverage of these Dunnett intervals is approximate."),)
        p_adj = many_to_one_tail(stat, lam, df, two_sided)
        d = _dunnett_critical(alpha, lam, df, two_sided)
        adjusted[r.id] = _finish(r, p_adj, d, alpha, extra)
    return tuple(adjusted.get(r.id, r) for r in raw)


@lru_cache(maxsize=64)
def _dunnett_critical(alpha: float, lam: tuple[float, ...], df: float, two_sided: bool) -> float:
    return many_to_one_critical(alpha, lam, df, two_sided)


# --- any family: the joint multivariate t ------------------------------------------------

def _union_bound(stat: float, df: float, alternatives: Sequence[str]) -> float:
    """sum_j P(T*_j >= stat) on `df`: Boole's inequality bounds P(max_j T*_j >= stat) by it
    (m p for a family of one sidedness), each two-sided member counting both tails."""
    from scipy import stats

    one_tail = float(stats.t.sf(stat, df)) if math.isfinite(df) else float(stats.norm.sf(stat))
    return min(1.0, sum(2.0 * one_tail if a == "two-sided" else one_tail for a in alternatives))


def joint_results(raw: Sequence[HypothesisResult], corr: np.ndarray, alpha: float,
                  approximate: StatWarning | None = None
                  ) -> tuple[tuple[HypothesisResult, ...], float | None]:
    """Single-step adjustment over the whole family from the joint law of its statistics.

    `corr` is the correlation matrix of the raw estimates (aligned with `raw`). Each
    tested hypothesis gets p_adj = P(max_j |T_j| >= |t|) (one-sided members in their
    own direction) and the simultaneous interval estimate -/+ c SE with c the family's
    critical value, both from the multivariate t on the hypothesis's df (Hothorn, Bretz &
    Westfall 2008; computed as in `appendix.stats.joint_t`). Members that could not be
    estimated are left out of the law. When the members' df differ (separate variance
    estimates) each uses the law on its own df, an approximation stated by `approximate`
    like any other departure from a common variance estimate.

    An adjusted p never exceeds the union (Bonferroni) bound of `_union_bound`: where the
    integration error of a small tail would carry it past, it is clipped there.

    Returns the results and the largest error bound of the integration (None when
    nothing was tested).
    """
    ready = [i for i, r in enumerate(raw) if r.p is not None and r.se is not None]
    if not ready:
        return tuple(raw), None
    sub = np.asarray(corr, dtype=np.float64)[np.ix_(ready, ready)]
    alternatives = [raw[i].alternative for i in ready]
    laws: dict[float, object] = {}
    out = list(raw)
    worst = 0.0
    extra = () if approximate is None else (approximate,)
    for i in ready:
        r = raw[i]
        df = math.inf if r.df is None else float(r.df)
        if df not in laws:
            law = max_t_law(sub, df, alternatives)
            laws[df] = (law, law.critical(alpha))
        law, c = laws[df]
        stat = abs(r.statistic) if r.alternative == "two-sided" else _directed(r)
        p_adj, error = law.tail(stat)
        worst = max(worst, error)
        out[i] = _finish(r, min(p_adj, _union_bound(stat, df, alternatives)), c, alpha, extra)
    return tuple(out), worst
