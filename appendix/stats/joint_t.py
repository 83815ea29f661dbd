"""The joint law of a family of t statistics: P(max_j |T_j| >= c) for correlated T.

A family of contrasts b_j = l_j' beta, estimated as l_j' beta_hat with standard errors from
one variance estimate on df degrees of freedom, has t statistics T_j = Z_j / S whose joint
law is the multivariate t with the correlation matrix R of the estimates (Dunnett & Sobel
1954, Biometrika 41:153-169). The single-step adjusted p of a hypothesis with statistic t
is P(max_j |T_j| >= |t|) over the whole family, and the simultaneous critical value c
solves P(max_j |T_j| >= c) = alpha (Hothorn, Bretz & Westfall 2008, Biom J 50:346-363).
With one-sided members the event for member j is T_j >= c in its own direction.

The probability is computed by the separation-of-variables method of Genz & Bretz (2002,
J Comput Graph Stat 11:950-971; Genz & Bretz 2009, *Computation of Multivariate Normal and
t Probabilities*, secs. 4.1-4.2 and 5.2 for singular R): R = L L' with L from a pivoted
Cholesky factorization of rank r in echelon form, so each constraint bounds the last
variable it involves; the r - 1 normal variables that later constraints need and the
variable S are drawn by a randomized quasi-Monte Carlo rule (scrambled Sobol points in
independent replicates, a fixed seed so that results repeat byte for byte). The same
points serve every evaluation of one law, so the tail is a monotone function of c and the
adjusted p is below alpha exactly when |t| exceeds the critical value. The stated error is
three standard errors of the replicate means (about 99% coverage).

Families such as all pairs of k means have a singular R (rank k - 1); simple effects of an
additive model at several levels of another factor are the same estimate (correlation 1).
Both are handled: a constraint that depends on earlier ones only narrows an earlier
variable's range.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from scipy import optimize as _opt
from scipy import special as _sp
from scipy import stats as _st
from scipy.stats import qmc

from appendix.errors import InternalError

SEED = 20260214
REPLICATES = 12
POINTS = 2**12
_RANK_TOL = 1e-10
_ENTRY_TOL = 1e-7


@dataclass(frozen=True)
class Echelon:
    """R = L L' (L is m x r) with rows ordered so that `last[j]` is the last nonzero
    column of row j; `rank` is r."""

    factor: np.ndarray
    last: np.ndarray
    rank: int


def echelon_factor(corr: np.ndarray, lower: np.ndarray, upper: np.ndarray) -> Echelon:
    """Pivoted Cholesky factor of a correlation matrix, of its numerical rank.

    The pivots follow Genz & Bretz's (2002, sec. 3) priority rule for the integration
    region lower < Z < upper: at each step the remaining row whose interval, given the
    expected values of the variables before it, is least probable comes next, which
    makes the integrand smoother. Rows left with no residual variance are linear
    combinations of the pivots and keep only their entries in the columns before.
    """
    corr = np.asarray(corr, dtype=np.float64)
    m = corr.shape[0]
    if corr.shape != (m, m) or not np.all(np.isfinite(corr)):
        raise InternalError(f"a correlation matrix must be square and finite, got shape {corr.shape}")
    factor = np.zeros((m, m))
    residual = np.diag(corr).copy()
    last = np.full(m, -1, dtype=np.int64)
    expected = np.zeros(m)
    free = np.ones(m, dtype=bool)
    for k in range(m):
        candidates = free & (residual > _RANK_TOL)
        if not candidates.any():
            break
        shift = factor[:, :k] @ expected[:k]
        sd = np.sqrt(np.where(candidates, residual, 1.0))
        mass = _sp.ndtr((upper - shift) / sd) - _sp.ndtr((lower - shift) / sd)
        j = int(np.argmin(np.where(candidates, mass, np.inf)))
        column = (corr[:, j] - factor[:, :k] @ factor[j, :k]) / math.sqrt(residual[j])
        column[~free] = 0.0
        column[(np.abs(column) <= _ENTRY_TOL) & (np.arange(m) != j)] = 0.0
        factor[:, k] = column
        residual = np.maximum(residual - column**2, 0.0)
        free[j] = False
        last[column != 0.0] = k
        a, b = (lower[j] - shift[j]) / column[j], (upper[j] - shift[j]) / column[j]
        width = max(float(_sp.ndtr(b) - _sp.ndtr(a)), 1e-300)
        # E[Z | a < Z < b] for a standard normal Z.
        expected[k] = (float(_st.norm.pdf(a)) - float(_st.norm.pdf(b))) / width
    rank = int(np.count_nonzero(~free))
    if rank == 0:
        raise InternalError("a correlation matrix of rank 0 has no statistics to integrate")
    return Echelon(factor=factor[:, :rank], last=last, rank=rank)


@dataclass(frozen=True)
class MaxTLaw:
    """The law of max_j of a family's t statistics (|T_j| for two-sided members).

    `signs[j]` is -1 for a member whose alternative is 'less' (its statistic is negated
    so that every one-sided member is 'greater'); `two_sided[j]` marks the members
    referred to |T_j|; `df` is the degrees of freedom of the common variance estimate
    (math.inf for a known variance).
    """

    echelon: Echelon
    two_sided: np.ndarray
    df: float
    normals: np.ndarray   # (replicates, points, rank - 1) uniform points for the normals
    scales: np.ndarray    # (replicates, points) draws of S = sqrt(chi2_df / df)

    def tail(self, c: float) -> tuple[float, float]:
        """(P(max_j T*_j >= c), its error bound) with T*_j = |T_j| or the directed T_j."""
        inside = self._inside(c)
        means = inside.mean(axis=1)
        estimate = float(means.mean())
        error = 3.0 * float(means.std(ddof=1)) / math.sqrt(means.size)
        return min(1.0, max(0.0, 1.0 - estimate)), error

    def _inside(self, c: float) -> np.ndarray:
        """Per point, the conditional probability that every constraint holds at c."""
        e = self.echelon
        upper = c * self.scales
        lower = np.where(self.two_sided[:, None, None], -upper[None], -np.inf)
        weight = np.ones_like(self.scales)
        y = np.zeros((*self.scales.shape, e.rank))
        for k in range(e.rank):
            rows = np.flatnonzero(e.last == k)
            partial = y[..., :k] @ e.factor[rows, :k].T          # (reps, points, rows)
            slope = e.factor[rows, k]
            a = (lower[rows].transpose(1, 2, 0) - partial) / slope
            b = (upper[..., None] - partial) / slope
            low = np.max(np.where(slope > 0, a, b), axis=-1)
            high = np.min(np.where(slope > 0, b, a), axis=-1)
            d, f = _sp.ndtr(low), _sp.ndtr(high)
            width = np.maximum(f - d, 0.0)
            weight = weight * width
            if k + 1 < e.rank:
                u = self.normals[..., k]
                # Clipped away from 0 and 1 so that the quantile stays finite.
                y[..., k] = _sp.ndtri(np.clip(d + u * width, 1e-300, 1.0 - 1e-16))
        return weight

    def critical(self, alpha: float) -> float:
        """The c with tail(c) = alpha: the single-step simultaneous critical value."""
        one = 2.0 if bool(np.all(self.two_sided)) else 1.0
        dist = _st.norm() if math.isinf(self.df) else _st.t(self.df)
        m = self.echelon.factor.shape[0]
        low = 0.5 * float(dist.isf(alpha / one))
        high = 2.0 * float(dist.isf(alpha / 2.0 / m)) + 1.0
        return float(_opt.brentq(lambda c: self.tail(c)[0] - alpha, low, high,
                                 xtol=1e-10, rtol=1e-12))


def max_t_law(corr: np.ndarray, df: float, alternatives: Sequence[str]) -> MaxTLaw:
    """The law of the family's maximum statistic, ready to evaluate.

    `corr` is the correlation matrix of the estimates (as estimated, before any sign
    change); `alternatives[j]` is 'two-sided', 'greater' or 'less'.

    >>> law = max_t_law(np.eye(2), math.inf, ["two-sided", "two-sided"])
    >>> round(law.tail(1.959964)[0], 4)   # 1 - 0.95**2 for two independent normals
    0.0975
    """
    corr = np.asarray(corr, dtype=np.float64)
    signs = np.array([-1.0 if a == "less" else 1.0 for a in alternatives])
    if len(signs) != corr.shape[0]:
        raise InternalError(f"{len(signs)} alternatives for {corr.shape[0]} statistics")
    two_sided = np.array([a == "two-sided" for a in alternatives])
    # The ordering is fixed once per law, at a bound near the usual critical values, so
    # that every evaluation uses the same integrand.
    dist = _st.norm() if math.isinf(df) else _st.t(df)
    bound = float(dist.isf(0.025 / len(signs)))
    echelon = echelon_factor(corr * np.outer(signs, signs),
                             np.where(two_sided, -bound, -np.inf), np.full(len(signs), bound))
    dims = echelon.rank - 1 + (0 if math.isinf(df) else 1)
    rng = np.random.default_rng(SEED)
    if dims == 0:
        points = np.full((1, 1, 0), 0.5)
    else:
        points = np.stack([qmc.Sobol(dims, scramble=True, seed=rng).random(POINTS)
                           for _ in range(REPLICATES)])
    if math.isinf(df):
        scales = np.ones(points.shape[:2])
        normals = points
    else:
        scales = np.sqrt(_st.chi2.isf(points[..., -1], df) / df)
        normals = points[..., :-1]
    return MaxTLaw(echelon=echelon, two_sided=two_sided, df=float(df), normals=normals,
                   scales=scales)
