"""Variance-explained effect sizes of the one-way layout, with noncentral-F intervals."""

from __future__ import annotations

import math
import warnings as _warnings

from scipy import optimize as _opt
from scipy import stats as _st

from appendix.errors import InternalError
from appendix.results import EffectSize, OneWayTable, StatWarning
from appendix.stats.descriptives import check_confidence

# Beyond this noncentrality scipy's noncentral F (Boost series) slows down and then stops
# converging (F ~ 1e18); such F are far outside any real trial, so the interval is then
# reported as unavailable rather than computed unreliably.
_MAX_LAMBDA = 1e10


def _tail_above(f: float, df1: float, df2: float, lam: float) -> float:
    """P(F' > f) under noncentrality `lam` (the central F survival function at lam = 0)."""
    if lam == 0.0:
        return float(_st.f.sf(f, df1, df2))
    return float(_st.ncf.sf(f, df1, df2, lam))


class _OutOfRange(Exception):
    """The noncentrality bound lies beyond what can be computed reliably."""


def _solve(f: float, df1: float, df2: float, target: float) -> float:
    """The lambda >= 0 at which P(F' > f | lambda) = target; 0 if already above at 0.

    Raises _OutOfRange when the root lies beyond `_MAX_LAMBDA`.

    P(F' > f | lambda) increases with lambda, so the root is bracketed by doubling an
    upper end until the tail probability passes the target, then found by Brent's method.
    """
    if _tail_above(f, df1, df2, 0.0) >= target:
        return 0.0
    high = max(1.0, f * df1)
    while high <= _MAX_LAMBDA and _tail_above(f, df1, df2, high) <= target:
        high *= 2.0
    if high > _MAX_LAMBDA:
        raise _OutOfRange
    return float(_opt.brentq(lambda lam: _tail_above(f, df1, df2, lam) - target, 0.0, high,
                             xtol=1e-12, rtol=1e-13, maxiter=500))


def noncentrality_interval(f: float, df1: float, df2: float,
                           confidence: float) -> tuple[float, float] | None:
    """Two-sided CI for the noncentrality lambda of F(df1, df2, lambda), by inversion.

    The lower end solves P(F' > f_obs | lambda) = (1 - confidence) / 2 and the upper end
    P(F' > f_obs | lambda) = (1 + confidence) / 2; an end is 0 when no positive lambda
    reaches it (Steiger 2004, Psychological Methods 9:164-182, section 3). None when a
    bound would exceed lambda = 1e10 or scipy's series fails to converge. The df need not
    be integers (scipy's noncentral F takes real df), so the interval can be taken on the
    epsilon-corrected df of a repeated-measures test.

    >>> [round(x, 3) for x in noncentrality_interval(5.0, 3, 76, 0.95)]
    [1.867, 32.563]
    """
    confidence = check_confidence(confidence)
    if not (f >= 0.0 and df1 > 0 and df2 > 0):
        raise InternalError(f"need F >= 0 and positive df, got F={f}, df=({df1}, {df2})")
    tail = (1.0 - confidence) / 2.0
    with _warnings.catch_warnings():
        # A non-converging series is reported by scipy as a RuntimeWarning; here it means
        # "no reliable bound", which the caller turns into a typed warning.
        _warnings.simplefilter("error", RuntimeWarning)
        try:
            return _solve(f, df1, df2, tail), _solve(f, df1, df2, 1.0 - tail)
        except (_OutOfRange, RuntimeWarning, ValueError):  # ValueError: NaN from the series
            return None


def effect_sizes(table: OneWayTable, confidence: float) -> tuple[EffectSize, ...]:
    """Eta squared, omega squared and Cohen's f, each with a noncentral-F interval.

    Estimates: eta^2 = SS_between / SS_total; omega^2 = (SS_between - df_b MS_within) /
    (SS_total + MS_within) (Hays 1963); f = sqrt(eta^2 / (1 - eta^2)) (Cohen 1988,
    *Statistical Power Analysis*, 2nd ed., ch. 8). omega^2 may be negative; it is shown
    as computed.

    Intervals: the CI [lambda_L, lambda_U] of the noncentrality is converted with
    f^2 = lambda / N, so the population proportion of variance explained is
    lambda / (lambda + N) (Steiger 2004). Eta^2 and omega^2 estimate that same
    population quantity, so they share that interval; Cohen's f gets sqrt(lambda / N).
    Steiger (2004) recommends a 90% interval for a test at alpha = .05 (confidence
    1 - 2 alpha), so that it excludes zero exactly when the F test rejects; the caller
    passes the level.
    """
    confidence = check_confidence(confidence)
    if table.f is None:
        warning = StatWarning("effect-size-undefined",
                              "Effect sizes need the F ratio, which is undefined for these data.")
        return tuple(EffectSize(measure, None, None, None, confidence, (warning,))
                     for measure in ("eta_squared", "omega_squared", "cohens_f"))
    between, _, total = table.rows
    n_total = table.df_between + table.df_within + 1
    ms_within = table.rows[1].mean_square
    eta2 = between.sum_of_squares / total.sum_of_squares
    omega2 = (between.sum_of_squares - table.df_between * ms_within) / (total.sum_of_squares + ms_within)
    cohens_f = math.sqrt(eta2 / (1.0 - eta2)) if eta2 < 1.0 else math.inf
    interval = noncentrality_interval(table.f, table.df_between, table.df_within, confidence)
    if interval is None:
        note = (StatWarning("effect-size-ci-unavailable",
                            f"F = {table.f:.4g} is too large for the noncentral-F interval to be "
                            "computed reliably; the interval is not reported."),)
        return (
            EffectSize("eta_squared", eta2, None, None, confidence, note),
            EffectSize("omega_squared", omega2, None, None, confidence, note),
            EffectSize("cohens_f", cohens_f, None, None, confidence, note),
        )
    lam_low, lam_high = interval
    share_low, share_high = lam_low / (lam_low + n_total), lam_high / (lam_high + n_total)
    f_low, f_high = math.sqrt(lam_low / n_total), math.sqrt(lam_high / n_total)
    return (
        EffectSize("eta_squared", eta2, share_low, share_high, confidence),
        EffectSize("omega_squared", omega2, share_low, share_high, confidence),
        EffectSize("cohens_f", cohens_f, f_low, f_high, confidence),
    )
