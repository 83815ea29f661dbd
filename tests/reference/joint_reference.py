"""Independent references for the joint law of a family of t statistics.

`rank2_tail` integrates P(max_j |T_j| >= c) by nested adaptive quadrature (scipy.integrate
quad-free: the trapezoid rule on a fine grid, Gauss-Legendre over S) for a family whose estimates span at most two dimensions, such as all pairs of three
means: conditional on S = s and on the first normal coordinate, every constraint is an
interval for the second, so the inner integral is a difference of normal CDFs. It shares
no code with `appendix.stats.joint_t` (which uses quasi-Monte Carlo on a Cholesky factor).
"""

from __future__ import annotations

import math

import numpy as np
from scipy import stats


def rank2_inside(covariance: np.ndarray, x: np.ndarray) -> np.ndarray:
    """P(max_j |E_j| / s_j < x) for normal estimates E with `covariance` of rank <= 2
    (s_j = sqrt(covariance[j, j])), for each bound in the array `x`."""
    covariance = np.asarray(covariance, dtype=np.float64)
    x = np.atleast_1d(np.asarray(x, dtype=np.float64))
    values, vectors = np.linalg.eigh(covariance)
    order = np.argsort(values)[::-1]
    if values[order[2:]].max(initial=0.0) > 1e-9 * values.max():
        raise ValueError("the covariance has rank above 2")
    basis = vectors[:, order[:2]] * np.sqrt(np.clip(values[order[:2]], 0.0, None))  # E = basis @ Z
    se = np.sqrt(np.diag(covariance))
    z1 = np.linspace(-9.0, 9.0, 9001)
    weight_z = np.full(z1.size, z1[1] - z1[0])
    weight_z[[0, -1]] /= 2  # trapezoid rule: second order also across the integrand's kinks
    low = np.full((x.size, z1.size), -np.inf)
    high = np.full((x.size, z1.size), np.inf)
    ok = np.ones((x.size, z1.size), dtype=bool)
    for (b1, b2), h in zip(basis, se):
        bound = h * x[:, None]
        if abs(b2) < 1e-12:
            ok &= np.abs(b1 * z1)[None, :] < bound
            continue
        a, b = (-bound - b1 * z1) / b2, (bound - b1 * z1) / b2
        low, high = np.maximum(low, np.minimum(a, b)), np.minimum(high, np.maximum(a, b))
    mass = np.where(ok & (high > low), stats.norm.cdf(high) - stats.norm.cdf(low), 0.0)
    return mass @ (weight_z * stats.norm.pdf(z1))


def tail_over_s(inside, df: float, c: float) -> float:
    """1 - E[inside(c S)] with S ~ sqrt(chi2_df / df), by Gauss-Legendre in log S over
    panels between quantiles of S; `inside` maps an array of bounds to probabilities."""
    if math.isinf(df):
        return float(1.0 - inside(np.array([c]))[0])
    edges = 0.5 * np.log(stats.chi2.ppf([1e-14, 1e-6, 1e-3, 0.05, 0.5, 0.95, 0.999, 1 - 1e-6,
                                         1 - 1e-14], df) / df)
    x, w = np.polynomial.legendre.leggauss(40)
    mid, half = (edges[1:] + edges[:-1]) / 2, (edges[1:] - edges[:-1]) / 2
    u = (mid[:, None] + half[:, None] * x[None, :]).ravel()
    wu = (half[:, None] * w[None, :]).ravel()
    s = np.exp(u)
    density = stats.chi(df).pdf(s * math.sqrt(df)) * math.sqrt(df) * s  # dS = S du
    return float(1.0 - np.sum(wu * density * inside(c * s)))


def rank2_tail(covariance: np.ndarray, df: float, c: float) -> float:
    """P(max_j |T_j| >= c), T_j = E_j / (s_j S), for estimates E with `covariance` of rank
    <= 2 (s_j = sqrt(covariance[j, j])) and S ~ sqrt(chi2_df / df)."""
    return tail_over_s(lambda x: rank2_inside(covariance, x), df, c)
