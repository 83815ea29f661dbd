"""The noncentral-F interval behind every variance-explained effect size's CI.

The design engine (`appendix.stats.linear`, `appendix.stats.repeated`) converts it into
the interval of each term's partial eta and omega squared (and Cohen's f).
"""

from __future__ import annotations

import warnings as _warnings

from scipy import optimize as _opt
from scipy import special as _sp

from appendix.errors import InternalError
from appendix.stats.descriptives import check_confidence

# Beyond this noncentrality scipy's noncentral F (Boost series) slows down and then stops
# converging (F ~ 1e18); such F are far outside any real trial, so the interval is then
# reported as unavailable rather than computed unreliably.
_MAX_LAMBDA = 1e10


def _tail_above(f: float, df1: float, df2: float, lam: float) -> float:
    """P(F' > f) under noncentrality `lam` (the central F survival function at lam = 0).

    scipy.special's distribution functions are the ones behind scipy.stats' `f` and `ncf`
    (Boost's noncentral beta series), called without the distribution objects' argument
    handling, which costs twenty times the evaluation itself; the roots sought lie at
    tail probabilities of (1 -+ confidence) / 2, where 1 - CDF loses no relevant digit.
    A NaN (a series that did not converge) raises ValueError, as the caller expects."""
    tail = _sp.fdtrc(df1, df2, f) if lam == 0.0 else 1.0 - _sp.ncfdtr(df1, df2, lam, f)
    if tail != tail:
        raise ValueError("the noncentral F series did not converge")
    return float(tail)


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
