"""Sphericity of a within-unit factor: Mauchly's test and the epsilon corrections.

Everything is computed from the pooled within-group covariance of orthonormal contrasts
among the m within levels, M = C' S C (C is m x d, d = m - 1, C'C = I, C'1 = 0): each
unit's row minus its group's mean row, projected on C. M's eigenvalues do not depend on
which orthonormal C is used; normalised Helmert contrasts are used here.

Sources: Mauchly (1940, Ann Math Stat 11:204-209); Box (1949, Biometrika 36:317-346;
1954, Ann Math Stat 25:290-302); Greenhouse & Geisser (1959, Psychometrika 24:95-112);
Huynh & Feldt (1976, J Educ Stat 1:69-82); Lecoutre (1991, J Educ Stat 16:371-372);
Anderson (2003, *An Introduction to Multivariate Statistical Analysis*, 3rd ed.).
"""

from __future__ import annotations

import math

import numpy as np
from scipy import stats as _st

from appendix.results import Sphericity, StatWarning

__all__ = ["Sphericity", "centred", "helmert_contrasts", "sphericity"]


# Sphericity (the result type) lives with the other result types in appendix.results.


def centred(y: np.ndarray) -> tuple[np.ndarray, float]:
    """`y` minus its overall mean, and that mean.

    Every later mean and deviation is then taken on values near zero, so a large common
    offset costs no digits (values within a factor of two of the shift are subtracted
    exactly, Sterbenz 1974).
    """
    shift = float(np.mean(y)) if y.size else 0.0
    return y - shift, shift


def helmert_contrasts(levels: int) -> np.ndarray:
    """The (levels, levels - 1) normalised Helmert contrasts: orthonormal, orthogonal to 1.

    Column k (0-based) compares level k + 1 with the mean of levels 0..k:
    (1, ..., 1, -(k + 1), 0, ..., 0) / sqrt((k + 1)(k + 2)).
    """
    c = np.zeros((levels, levels - 1))
    for k in range(levels - 1):
        c[: k + 1, k] = 1.0
        c[k + 1, k] = -(k + 1.0)
        c[:, k] /= math.sqrt((k + 1.0) * (k + 2.0))
    return c


def contrast_eigenvalues(y: np.ndarray,
                         groups: np.ndarray | None) -> tuple[np.ndarray, int, int]:
    """Eigenvalues of M = C'SC (S the pooled within-group covariance), S's df N - g, and g.

    Residuals from the group mean rows are projected on C and M's eigenvalues taken as the
    squared singular values of that (N, d) matrix over N - g, so S is never formed.
    Returns an empty array when there is no residual df.
    """
    codes = np.zeros(y.shape[0], dtype=np.intp) if groups is None else np.asarray(groups)
    occupied = np.unique(codes)
    df = y.shape[0] - occupied.size
    if df <= 0:
        return np.zeros(0), max(df, 0), occupied.size
    y, _ = centred(y)
    residual = np.empty_like(y)
    for code in occupied:
        rows = codes == code
        residual[rows] = y[rows] - y[rows].mean(axis=0)
    projected = residual @ helmert_contrasts(y.shape[1])
    singular = np.linalg.svd(projected, compute_uv=False)
    return np.sort(singular**2 / df)[::-1], df, occupied.size


def greenhouse_geisser(eigenvalues: np.ndarray, d: int) -> float:
    """(sum lambda)^2 / (d sum lambda^2) = tr(M)^2 / (d tr(M^2)) (Box 1954;
    Greenhouse & Geisser 1959); the caller ensures tr(M) > 0."""
    return float(min(1.0, eigenvalues.sum() ** 2 / (d * np.sum(eigenvalues**2))))


def huynh_feldt(gg: float, n_units: int, n_groups: int, d: int) -> float | None:
    """Huynh & Feldt's (1976) epsilon with Lecoutre's (1991) correction for groups, capped at 1.

    ((N - g + 1) d eps_GG - 2) / (d (N - g - d eps_GG)); with one group this is Huynh &
    Feldt's original N d eps_GG - 2 over d (N - 1 - d eps_GG). Lecoutre (1991, J Educ
    Stat 16:371-372) showed that the original's N in the numerator should be N - g + 1
    when there are g groups. None when the denominator or the estimate is not positive
    (possible only when N - g <= d).
    """
    df = n_units - n_groups
    denominator = d * (df - d * gg)
    if denominator <= 0.0:
        return None
    value = ((df + 1) * d * gg - 2.0) / denominator
    return min(1.0, value) if value > 0.0 else None


def mauchly_p(log_w: float, df_s: int, d: int) -> tuple[float, float]:
    """Chi-square and p of Mauchly's (1940) W with Anderson's second-order term.

    chi^2 = -nu rho log W with nu = df of S and rho = 1 - (2d^2 + d + 2) / (6 d nu) (Box
    1949); p = P1 + w2 (P2 - P1) where P1, P2 are chi-square tails on f and f + 4 df,
    f = d(d + 1)/2 - 1, and w2 = (d + 2)(d - 1)(d - 2)(2d^3 + 6d^2 + 3d + 2) /
    (288 d^2 nu^2 rho^2) (Anderson 2003, *An Introduction to Multivariate Statistical
    Analysis*, 3rd ed., section 10.7.4, with d the dimension throughout; w2 = 0 for d = 2).
    """
    rho = 1.0 - (2.0 * d**2 + d + 2.0) / (6.0 * d * df_s)
    chi_square = -df_s * rho * log_w
    f = d * (d + 1) // 2 - 1
    w2 = ((d + 2.0) * (d - 1.0) * (d - 2.0) * (2.0 * d**3 + 6.0 * d**2 + 3.0 * d + 2.0)
          / (288.0 * (d * df_s * rho) ** 2))
    p1 = float(_st.chi2.sf(chi_square, f))
    p2 = float(_st.chi2.sf(chi_square, f + 4))
    return float(chi_square), min(1.0, max(0.0, p1 + w2 * (p2 - p1)))


def undefined_sphericity(d: int) -> Sphericity:
    """No test and no epsilon for `d` contrasts that show no variation within groups."""
    note = StatWarning("sphericity-undefined",
                       "The contrasts among the within levels show no variation within "
                       "groups (or there are too few units), so Mauchly's test and the "
                       "epsilon corrections are not defined.")
    return Sphericity(None, None, d * (d + 1) // 2 - 1, None, None, None, 1.0 / d, (note,))


def sphericity(y: np.ndarray, groups: np.ndarray | None = None) -> Sphericity:
    """Mauchly's test and the Greenhouse–Geisser, Huynh–Feldt and lower-bound epsilons.

    `y` is the (units, levels) matrix of complete units, `groups` the between-group code
    of each row (None for one group). The covariance is pooled within groups, so group
    mean differences are not read as non-sphericity. Degenerate data (no residual df,
    no variation among the contrasts) give None with a warning.
    """
    levels = y.shape[1]
    if levels < 2:
        raise ValueError(f"a within factor needs at least two levels, got {levels}")
    d = levels - 1
    df_test = d * (d + 1) // 2 - 1
    lower = 1.0 / d
    if d == 1:
        note = StatWarning("sphericity-two-levels",
                           "With two within levels there is a single contrast, so sphericity "
                           "holds by construction: both epsilons are 1 and Mauchly's W is not "
                           "defined.")
        return Sphericity(None, None, df_test, None, 1.0, 1.0, lower, (note,))
    eigenvalues, df_s, n_groups = contrast_eigenvalues(y, groups)
    if eigenvalues.size == 0 or not eigenvalues[0] > 0.0:
        return undefined_sphericity(d)
    gg = greenhouse_geisser(eigenvalues, d)
    hf = huynh_feldt(gg, y.shape[0], n_groups, d)
    notes: list[StatWarning] = []
    if hf is None:
        notes.append(StatWarning("huynh-feldt-undefined",
                                 f"With {df_s} residual degrees of freedom for {d} contrasts the "
                                 "Huynh–Feldt epsilon is not defined."))
    if df_s < d:
        notes.append(StatWarning("mauchly-too-few-units",
                                 f"Mauchly's test needs at least {d} residual degrees of freedom "
                                 f"(units minus groups) for {levels} within levels; there are "
                                 f"{df_s}, so W is not defined."))
        return Sphericity(None, None, df_test, None, gg, hf, lower, tuple(notes))
    if eigenvalues[-1] <= eigenvalues[0] * d * np.finfo(float).eps:
        notes.append(StatWarning("mauchly-singular",
                                 "The covariance matrix of the contrasts is singular, so Mauchly's "
                                 "W is 0 and its chi-square test is not defined."))
        return Sphericity(0.0, None, df_test, None, gg, hf, lower, tuple(notes))
    log_w = float(np.sum(np.log(eigenvalues)) - d * math.log(eigenvalues.mean()))
    chi_square, p = mauchly_p(log_w, df_s, d)
    return Sphericity(math.exp(log_w), chi_square, df_test, p, gg, hf, lower, tuple(notes))
