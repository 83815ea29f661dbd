"""Linear models of crossed designs from cell statistics: sums of squares of types 1, 2, 3.

The model has an intercept, factor terms (main effects of treatment factors and blocks,
and their interactions), covariates (ANCOVA) and, optionally, covariate-by-factor terms
(slopes that differ between cells). A factor term's columns are the products of its
factors' codings: treatment coding (first level the reference) for types 1 and 2,
sum-to-zero coding for type 3. A covariate enters centred at its overall mean.

Compression. The rows of the full data matrix [X | y] within one cell differ only
through the deviations of y and the covariates from the cell means, so its cross-product
is, summed over cells, n_c m_c m_c' + D_c S_c D_c' (m_c the row of cell means, S_c the
centred within-cell cross-products of [y, x], D_c where those deviations enter). The
fit uses the compressed matrix of rows sqrt(n_c) m_c' plus, per cell, the factor F_c'
D_c' with F_c F_c' = S_c (symmetric eigendecomposition, negative rounding clipped); when
no slope differs between cells D_c is one matrix and the S_c are pooled first. For a
model of factors only this is weighted least squares on the cell means (weights n)
plus the pooled within-cell SSD. A Householder QR of the compressed matrix (numpy,
LAPACK) gives R with R'R = X'X of the full data; every sub-model is then fitted on the
small R by SVD (columns scaled to unit length; singular values below `RANK_TOLERANCE`
times the largest are zero), never through normal equations on raw sums.

Sums of squares (Searle 1987, *Linear Models for Unbalanced Data*, ch. 4; Fox 2016,
*Applied Regression Analysis*, 3rd ed., sec. 8.2). With P_S the projection on the
columns of the terms in S, a term's SS is ||(P_full - P_reduced) y||^2, computed as
||(I - P_reduced) P_full y||^2 so that a small SS is not the difference of two large
residual SS; its df is the rank increment.

- type 1: sequential, each term after the terms before it in the order given;
- type 2: each term after every term that does not contain it (marginality);
- type 3: sum-to-zero coding, each term after all the others.

Empty cells. A term whose rank increment is below the df it would have with every cell
filled (`full_df`) gets a warning counting its estimable contrasts. With empty cells a
type 3 row compares the full sum-to-zero-coded model with the same model less that
term's columns: it tests the term's sum-to-zero coefficients that remain estimable given
all other columns. That hypothesis depends on which cells are empty and is not the
hypothesis of equal unweighted marginal means; the row says so.

Effect sizes (fixed effects). partial eta^2 = SS_t / (SS_t + SS_res); partial omega^2 =
(SS_t - df_t MS_res) / (SS_t + (N - df_t) MS_res) (Olejnik & Algina 2003, Psychological
Methods 8:434-447, Table 2). Interval: the noncentrality interval [lambda_L, lambda_U]
of F(df_t, df_res) at confidence 1 - 2 alpha (Steiger 2004, Psychological Methods
9:164-182), mapped by lambda / (lambda + df_t + df_res + 1). Partial eta^2 and partial
omega^2 are two estimates of one population quantity, the proportion
sigma^2_t / (sigma^2_t + sigma^2_error), and Steiger's interval covers that quantity,
so both report the same interval.

Output of this module is statistical evidence, not a clinical or regulatory decision;
the study's own governance, local regulations and a qualified, licensed statistician
decide how it is used.
"""

from __future__ import annotations

import itertools
import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field

import numpy as np
from scipy import stats as _st

from appendix.results import StatWarning
from appendix.stats.design import DesignCells, Grid, Term
from appendix.stats.effect_sizes import noncentrality_interval

RANK_TOLERANCE = 1e-10
"""Relative singular-value threshold for rank (columns scaled to unit length first)."""

ESTIMABLE_TOLERANCE = 1e-8
"""A linear function is estimable when its part outside the row space is below this
fraction of its length (in the scaled coordinates)."""

ZERO_RESIDUAL = 1e-13
"""A residual SS at or below this fraction of the total SS is rounding: no variation."""

SS_TYPES = (1, 2, 3)


def _read_only(array: np.ndarray) -> np.ndarray:
    array.flags.writeable = False
    return array


@dataclass(frozen=True)
class TermRow:
    """One row of the variance table: a factor, interaction or covariate term.

    `df` is the term's rank increment; `full_df` the df it would have with every cell
    filled. Effect-size intervals are at `confidence_level` = 1 - 2 alpha, from the
    noncentral F on `effect_ci_df` (the term's df and the residual df; None without an
    interval). `statistic` is the F ratio MS / MS_residual, `p` its right tail.
    """

    term: Term
    label: str
    kind: str
    df: int
    ss: float | None
    ms: float | None
    statistic: float | None
    p: float | None
    partial_eta_squared: float | None
    partial_eta_ci: tuple[float, float] | None
    partial_omega_squared: float | None
    partial_omega_ci: tuple[float, float] | None
    confidence_level: float
    full_df: int
    warnings: tuple[StatWarning, ...] = ()
    effect_ci_df: tuple[float, float] | None = None


@dataclass(frozen=True, eq=False)
class ModelFit:
    """A fitted model's variance table and what its marginal means need.

    Beyond the table: `model_terms` (the terms, in order), `coding` ("treatment" for
    types 1 and 2, "sum" for type 3), `column_terms[j]` (the term of coefficient j; ()
    for the intercept), `column_covariate[j]` (the covariate multiplying column j, or
    None), `cell_design` (cells, p): each coefficient's factor coding in every grid cell
    (1 for the intercept and a plain covariate), `coefficients` (p,) a least-squares
    solution for y - `y_mean` with covariates centred at `covariate_means`,
    `covariance` (p, p) MS_res times a generalized inverse of X'X (NaN without residual
    df), `inverse` (p, p) that generalized inverse itself (whatever MS_res is),
    `row_space` (p, r) an orthonormal basis of the estimable functions in the
    coordinates l * `column_scale`. Arrays are read-only. `r_squared` is None when the
    data have no variation or the model fits nothing beyond the intercept (no term
    estimable, e.g. a single occupied cell).
    """

    ss_type: int
    terms: tuple[TermRow, ...]
    residual_df: int
    residual_ss: float
    residual_ms: float | None
    total_df: int
    total_ss: float
    r_squared: float | None
    n: int
    empty_cells: tuple[tuple[str, ...], ...]
    estimability: str
    grid: Grid
    covariates: tuple[str, ...]
    model_terms: tuple[Term, ...]
    coding: str
    column_terms: tuple[Term, ...]
    column_covariate: tuple[str | None, ...]
    cell_design: np.ndarray
    coefficients: np.ndarray
    covariance: np.ndarray
    inverse: np.ndarray
    column_scale: np.ndarray
    row_space: np.ndarray
    y_mean: float
    covariate_means: tuple[tuple[str, float], ...]
    warnings: tuple[StatWarning, ...] = ()

    def estimable(self, l: np.ndarray) -> bool:
        """Whether the linear function l'b of the coefficients is estimable."""
        scaled = np.asarray(l, dtype=np.float64) / self.column_scale
        length = float(np.linalg.norm(scaled))
        if length == 0.0:
            return True
        outside = scaled - self.row_space @ (self.row_space.T @ scaled)
        return float(np.linalg.norm(outside)) <= ESTIMABLE_TOLERANCE * length


# --- terms and their columns ------------------------------------------------------------


def label_of(term: Term) -> str:
    return " × ".join(term)


def _kind(term: Term, covariates: tuple[str, ...]) -> str:
    if len(term) > 1:
        return "interaction"
    return "covariate" if term[0] in covariates else "factor"


def _check_terms(cells: DesignCells, terms: Sequence[Term]) -> tuple[Term, ...]:
    """The terms as tuples, with every rule of a valid model checked (ValueError)."""
    grid, covariates = cells.grid, cells.covariates
    checked: list[Term] = []
    seen: set[frozenset[str]] = set()
    for term in terms:
        term = tuple(term)
        if not term:
            raise ValueError("a term needs at least one factor or covariate")
        for name in term:
            if name not in grid.names and name not in covariates:
                raise ValueError(f"term {label_of(term)}: '{name}' is neither a factor "
                                 f"{grid.names} nor a covariate {covariates}")
        if len(set(term)) != len(term):
            raise ValueError(f"term {label_of(term)} names a variable twice")
        if sum(name in covariates for name in term) > 1:
            raise ValueError(f"term {label_of(term)}: products of covariates are not supported")
        key = frozenset(term)
        if key in seen:
            raise ValueError(f"term {label_of(term)} is given twice")
        seen.add(key)
        checked.append(term)
    mains = {t[0] for t in checked if len(t) == 1}
    for term in checked:
        for name in term:
            if len(term) > 1 and name not in mains:
                raise ValueError(f"the interaction {label_of(term)} needs the main effect of "
                                 f"'{name}' in the model")
    return tuple(checked)


def _factor_coding(k: int, coding: str) -> np.ndarray:
    """(k, k - 1) contrast coding: treatment (first level reference) or sum to zero."""
    if coding == "treatment":
        return np.eye(k)[:, 1:]
    return np.vstack([np.eye(k - 1), -np.ones((1, k - 1))])


def _term_columns(term: Term, grid: Grid, covariates: tuple[str, ...], coding: str,
                  level_codes: np.ndarray) -> tuple[np.ndarray, str | None]:
    """The term's factor coding in every grid cell (cells, m) and its covariate (or None).

    Columns are row-wise Kronecker products of the factors' codings, in term order.
    """
    block = np.ones((grid.n_cells, 1))
    covariate = None
    for name in term:
        if name in covariates:
            covariate = name
            continue
        i = grid.index(name)
        part = _factor_coding(grid.shape[i], coding)[level_codes[:, i]]
        block = (block[:, :, None] * part[:, None, :]).reshape(grid.n_cells, -1)
    return block, covariate


def _full_df(term: Term, grid: Grid) -> int:
    return math.prod(grid.shape[grid.index(name)] - 1 for name in term if name in grid.names)


@dataclass(frozen=True, eq=False)
class _Columns:
    """The model's columns: cell-level factor values, covariate of each, term of each."""

    design: np.ndarray           # (cells, p)
    covariate: tuple[str | None, ...]
    term_of: tuple[Term, ...]    # () for the intercept
    spans: dict[Term, np.ndarray]  # term -> its column indices


def _columns(cells: DesignCells, terms: tuple[Term, ...], coding: str) -> _Columns:
    grid = cells.grid
    codes = grid.level_codes()
    blocks = [np.ones((grid.n_cells, 1))]
    covariate: list[str | None] = [None]
    term_of: list[Term] = [()]
    spans: dict[Term, np.ndarray] = {}
    start = 1
    for term in terms:
        block, cov = _term_columns(term, grid, cells.covariates, coding, codes)
        blocks.append(block)
        covariate += [cov] * block.shape[1]
        term_of += [term] * block.shape[1]
        spans[term] = np.arange(start, start + block.shape[1])
        start += block.shape[1]
    return _Columns(np.hstack(blocks), tuple(covariate), tuple(term_of), spans)


# --- the compressed least-squares problem -----------------------------------------------


def _factor(s: np.ndarray) -> np.ndarray:
    """F with F F' = s for symmetric positive semidefinite s (batched), by eigh."""
    w, v = np.linalg.eigh(s)
    return v * np.sqrt(np.clip(w, 0.0, None))[..., None, :]


@dataclass(frozen=True, eq=False)
class _Problem:
    """R of the compressed [X | y] (R'R equals the full data's cross-product)."""

    r: np.ndarray
    scale: np.ndarray            # column lengths of X (1 for zero columns)
    threshold: float             # absolute singular-value threshold (scaled columns)
    y_mean: float
    x_means: np.ndarray          # (q,) overall covariate means
    total_ss: float
    # thin SVDs of R's scaled column sets already taken, by column tuple (`_svd`)
    svds: dict = field(default_factory=dict, repr=False)


def _compress(cells: DesignCells, columns: _Columns) -> _Problem:
    occupied = np.flatnonzero(cells.n > 0)
    n = cells.n[occupied].astype(np.float64)
    shift, centred = cells.centred()
    width = centred.shape[1]
    # overall means, in centred coordinates (0 when no cell has units)
    centre = n @ centred[occupied] / n.sum() if occupied.size else np.zeros(width)
    gaps = centred[occupied] - centre                 # (occ, 1 + q)
    design = columns.design[occupied]
    p = design.shape[1]
    index = {name: 1 + j for j, name in enumerate(cells.covariates)}
    which = np.array([0 if c is None else index[c] for c in columns.covariate])
    # Mean rows: each column's cell mean (coding times covariate gap for slope columns).
    factor_of = np.where(which[None, :] == 0, 1.0, gaps[:, which])
    means = np.hstack([design * factor_of, gaps[:, :1]]) * np.sqrt(n)[:, None]
    # Within-cell rows: the deviations enter slope columns and y.
    on = which > 0
    slot = np.append(on, False)  # the same columns of [X | y]
    varying = on.any() and not np.allclose(design[:, on], design[:1, on])
    if varying:
        f = _factor(cells.cross[occupied])                # (occ, w, w)
        within = np.zeros((occupied.size, width, p + 1))
        within[:, :, p] = f[:, 0, :]
        within[:, :, slot] = design[:, None, on] * np.transpose(f, (0, 2, 1))[:, :, which[on]]
        within = within.reshape(-1, p + 1)
    else:
        f = _factor(cells.cross[occupied].sum(axis=0))    # (w, w)
        within = np.zeros((width, p + 1))
        within[:, p] = f[0, :]
        if on.any():
            within[:, slot] = columns.design[0, on][None, :] * f.T[:, which[on]]
    z = np.vstack([means, within])
    r = np.linalg.qr(z, mode="r")
    if r.shape[0] < p + 1:
        r = np.vstack([r, np.zeros((p + 1 - r.shape[0], p + 1))])
    scale = np.linalg.norm(r[:, :p], axis=0)
    scale[scale == 0.0] = 1.0
    every = tuple(map(_read_only, np.linalg.svd(r[:, :p] / scale, full_matrices=False)))
    y_gap = gaps[:, 0]
    total_ss = float(cells.cross[occupied, 0, 0].sum() + n @ (y_gap * y_gap))
    return _Problem(r, scale, RANK_TOLERANCE * every[1][0], float(shift[0] + centre[0]),
                    shift[1:] + centre[1:], total_ss, svds={tuple(range(p)): every})


def _svd(problem: _Problem, cols: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """The thin SVD of R's columns `cols`, scaled to unit length, taken once per fit (the
    whole model's columns serve the threshold, the residual, its terms' sums of squares
    and the coefficients)."""
    key = tuple(int(c) for c in cols)
    if key not in problem.svds:
        problem.svds[key] = tuple(map(_read_only, np.linalg.svd(
            problem.r[:, cols] / problem.scale[cols], full_matrices=False)))
    return problem.svds[key]


@dataclass(frozen=True, eq=False)
class _Space:
    """An orthonormal basis of the span of some columns of R, and its rank."""

    basis: np.ndarray
    rank: int

    def project(self, v: np.ndarray) -> np.ndarray:
        return self.basis @ (self.basis.T @ v)


def _space(problem: _Problem, cols: np.ndarray) -> _Space:
    if cols.size == 0:
        return _Space(np.zeros((problem.r.shape[0], 0)), 0)
    u, s, _ = _svd(problem, cols)
    rank = int(np.count_nonzero(s > problem.threshold))
    return _Space(u[:, :rank], rank)


def _extra_ss(problem: _Problem, reduced: np.ndarray, full: np.ndarray) -> tuple[int, float]:
    """(df, SS) of the columns `full` minus `reduced`: ||(I - P_reduced) P_full y||^2."""
    y = problem.r[:, -1]
    small, big = _space(problem, reduced), _space(problem, full)
    fitted = big.project(y)
    gap = fitted - small.project(fitted)
    return big.rank - small.rank, float(gap @ gap)


# --- the table --------------------------------------------------------------------------


@dataclass(frozen=True)
class _Residual:
    df: int
    ss: float
    ms: float | None
    n: int


def _term_row(term: Term, kind: str, df: int, ss: float, full_df: int, residual: _Residual,
              alpha: float, notes: Sequence[StatWarning] = ()) -> TermRow:
    """A table row: MS, F, p and partial effect sizes, or None with the reason."""
    label = label_of(term)
    confidence = 1.0 - 2.0 * alpha
    warnings = list(notes)
    if df < full_df:
        warnings.append(StatWarning(
            "term-partly-estimable" if df > 0 else "term-not-estimable",
            f"{df} of the {full_df} contrasts of {label} are estimable in these data "
            "(some cells have no units, or the term is aliased with earlier terms)."))
    empty = TermRow(term, label, kind, df, None, None, None, None, None, None, None, None,
                    confidence, full_df, tuple(warnings))
    if df == 0:
        return empty
    ms = ss / df
    if residual.ms is None or residual.ms == 0.0:
        why = "no residual degrees of freedom" if residual.ms is None else "no residual variation"
        warnings.append(StatWarning(
            "f-undefined", f"The F ratio of {label} is undefined: the model leaves {why}."))
        return TermRow(term, label, kind, df, ss, ms, None, None, None, None, None, None,
                       confidence, full_df, tuple(warnings))
    f = ms / residual.ms
    p = float(_st.f.sf(f, df, residual.df))
    eta = ss / (ss + residual.ss)
    omega = (ss - df * residual.ms) / (ss + (residual.n - df) * residual.ms)
    interval = noncentrality_interval(f, df, residual.df, confidence)
    ci = on = None
    if interval is None:
        warnings.append(StatWarning(
            "effect-size-ci-unavailable",
            f"F = {f:.4g} for {label} is too large for the noncentral-F interval to be "
            "computed reliably; the interval is not reported."))
    else:
        ci = tuple(lam / (lam + df + residual.df + 1) for lam in interval)
        on = (float(df), float(residual.df))
    return TermRow(term, label, kind, df, ss, ms, f, p, eta, ci, omega, ci, confidence,
                   full_df, tuple(warnings), on)


def _residual(problem: _Problem, full: _Space, n: int) -> tuple[_Residual, list[StatWarning]]:
    y = problem.r[:, -1]
    gap = y - full.project(y)
    ss = float(gap @ gap)
    df = n - full.rank
    warnings: list[StatWarning] = []
    ms = None
    if df <= 0:
        df = max(df, 0)
        warnings.append(StatWarning(
            "no-residual-df",
            "The model leaves no residual degrees of freedom, so no F test, p-value or "
            "standard error can be computed."))
    elif ss <= ZERO_RESIDUAL * problem.total_ss:
        ms = 0.0
        warnings.append(StatWarning(
            "zero-residual-variance",
            "The residual sum of squares is zero up to rounding (the model leaves no "
            "variation), so the F ratios are undefined."))
    else:
        ms = ss / df
    return _Residual(df, ss, ms, n), warnings


def _check_alpha(alpha: float) -> float:
    if not 0.0 < alpha < 0.5:
        raise ValueError(f"alpha must lie strictly between 0 and 0.5, got {alpha!r}")
    return float(alpha)


def _contains(big: Term, small: Term) -> bool:
    return set(small) < set(big)


def _sequences(ss_type: int, terms: tuple[Term, ...], spans: dict[Term, np.ndarray]):
    """(term, reduced columns, full columns) of each row under the SS type."""
    intercept = np.array([0])
    everything = np.concatenate([intercept, *spans.values()])
    for i, term in enumerate(terms):
        if ss_type == 1:
            before = np.concatenate([intercept, *(spans[t] for t in terms[:i])])
            yield term, before, np.concatenate([before, spans[term]])
        elif ss_type == 2:
            others = [spans[t] for t in terms if t != term and not _contains(t, term)]
            reduced = np.concatenate([intercept, *others])
            yield term, reduced, np.concatenate([reduced, spans[term]])
        else:
            yield term, np.setdiff1d(everything, spans[term]), everything


def _layout_warnings(cells: DesignCells, terms: Sequence[Term]) -> list[StatWarning]:
    """A factor of the model's terms with a single level. Grid factors outside every term
    (such as the one-cell grouping of units without a treatment factor) have no effect the
    model would test, so they are not reported and their names never reach the reader."""
    found = []
    grid = cells.grid
    in_model = {name for term in terms for name in term}
    for name, levels in zip(grid.names, grid.levels):
        if len(levels) < 2 and name in in_model:
            found.append(StatWarning(
                "single-level", f"Factor '{name}' has a single level, so it has no effect "
                                "to test."))
    return found


def _estimability(cells: DesignCells, rows: Sequence[TermRow], ss_type: int) -> str:
    grid = cells.grid
    empty = int(np.count_nonzero(cells.n == 0))
    short = [row for row in rows if row.df < row.full_df]
    if empty == 0 and not short:
        return f"All effects are estimable: each of the {grid.n_cells} cells has units."
    opening = (f"{empty} of the {grid.n_cells} cells have no units" if empty
               else "Every cell has units")
    if not short:
        return f"{opening}; every term's contrasts remain estimable."
    counts = ", ".join(f"{row.label} {row.df} of {row.full_df}" for row in short)
    tail = ("; type 3 rows test the sum-to-zero coefficients that remain estimable, not "
            "equal unweighted marginal means" if ss_type == 3 and empty else "")
    return f"{opening}; estimable contrasts: {counts}{tail}."


def _type3_note(term: Term, cells: DesignCells) -> list[StatWarning]:
    if not np.any(cells.n == 0) or all(name in cells.covariates for name in term):
        return []
    return [StatWarning(
        "type3-empty-cells",
        f"With empty cells, the type 3 row for {label_of(term)} compares the sum-to-zero-coded "
        "model with the same model less this term's columns: it tests the term's coefficients "
        "that remain estimable given all other terms, a hypothesis that depends on which cells "
        "are empty; it is not a test of equal unweighted marginal means.")]


def fit_linear(cells: DesignCells, terms: Sequence[Term], ss_type: int, alpha: float) -> ModelFit:
    """Variance table of the model with `terms` (in order), SS of type `ss_type`.

    >>> from appendix.stats.design import Grid, design_cells
    >>> g = Grid(("A", "B"), (("a1", "a2"), ("b1", "b2")))
    >>> a, b = np.array([0, 0, 0, 1, 1, 1, 1, 0]), np.array([0, 1, 1, 0, 1, 1, 0, 0])
    >>> y = np.array([1.0, 2.0, 3.0, 4.0, 6.0, 5.0, 3.0, 2.0])
    >>> fit = fit_linear(design_cells(g, [a, b], y), [("A",), ("B",)], 2, 0.05)
    >>> [round(row.ss, 6) for row in fit.terms], fit.residual_df
    ([12.5, 4.5], 5)
    """
    if ss_type not in SS_TYPES:
        raise ValueError(f"ss_type must be 1, 2 or 3, got {ss_type!r}")
    alpha = _check_alpha(alpha)
    terms = _check_terms(cells, terms)
    coding = "sum" if ss_type == 3 else "treatment"
    columns = _columns(cells, terms, coding)
    problem = _compress(cells, columns)
    everything = np.arange(columns.design.shape[1])
    full = _space(problem, everything)
    n = cells.n_total
    residual, warnings = _residual(problem, full, n)
    warnings = _layout_warnings(cells, terms) + warnings
    rows = []
    for term, reduced, bigger in _sequences(ss_type, terms, columns.spans):
        df, ss = _extra_ss(problem, reduced, bigger)
        notes = _type3_note(term, cells) if ss_type == 3 else []
        rows.append(_term_row(term, _kind(term, cells.covariates), df, ss,
                              _full_df(term, cells.grid), residual, alpha, notes))
    coefficients, inverse, row_space = _solution(problem, everything)
    ms = residual.ms if residual.ms is not None else math.nan
    total_ss = problem.total_ss
    grid = cells.grid
    return ModelFit(
        ss_type=ss_type, terms=tuple(rows), residual_df=residual.df, residual_ss=residual.ss,
        residual_ms=residual.ms, total_df=max(n - 1, 0), total_ss=total_ss,
        r_squared=1.0 - residual.ss / total_ss if total_ss > 0 and full.rank > 1 else None, n=n,
        empty_cells=tuple(grid.cell_levels(int(c)) for c in np.flatnonzero(cells.n == 0)),
        estimability=_estimability(cells, rows, ss_type), grid=grid,
        covariates=cells.covariates, model_terms=terms, coding=coding,
        column_terms=columns.term_of, column_covariate=columns.covariate,
        cell_design=_read_only(columns.design), coefficients=coefficients,
        covariance=_read_only(ms * inverse), inverse=inverse,
        column_scale=_read_only(problem.scale.copy()),
        row_space=row_space, y_mean=problem.y_mean,
        covariate_means=tuple(zip(cells.covariates, problem.x_means.tolist())),
        warnings=tuple(warnings))


def _solution(problem: _Problem, cols: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Minimum-norm (scaled) coefficients, a generalized inverse of X'X, row space."""
    scale = problem.scale[cols]
    u, s, wt = _svd(problem, cols)
    rank = int(np.count_nonzero(s > problem.threshold))
    u, s, w = u[:, :rank], s[:rank], wt[:rank].T
    coefficients = (w @ ((u.T @ problem.r[:, -1]) / s)) / scale
    inverse = (w / s**2) @ w.T / np.outer(scale, scale)
    return _read_only(coefficients), _read_only(inverse), _read_only(w.copy())


def slopes_homogeneity(cells: DesignCells, terms: Sequence[Term], covariate: str,
                       by: Term, alpha: float) -> TermRow:
    """F test of covariate x (crossing of `by`) added to the model: equal slopes across cells.

    The added columns let the covariate's slope differ in every cell of the crossing of
    `by` (covariate times each main effect and interaction of `by`'s factors); the row
    tests them jointly after every term of the model, on the residual of the model with
    separate slopes (the homogeneity-of-regression check of ANCOVA; Huitema 2011, *The
    Analysis of Covariance and Alternatives*, 2nd ed., ch. 9).
    """
    alpha = _check_alpha(alpha)
    terms = _check_terms(cells, terms)
    by = tuple(by)
    if covariate not in cells.covariates or (covariate,) not in terms:
        raise ValueError(f"the covariate '{covariate}' must be a term of the model")
    if not by or any(name not in cells.grid.names for name in by):
        raise ValueError(f"`by` must name factors of the design {cells.grid.names}, got {by}")
    present = {frozenset(t) for t in terms}
    added = [subset + (covariate,) for size in range(1, len(by) + 1)
             for subset in itertools.combinations(by, size)
             if frozenset(subset + (covariate,)) not in present]
    extended = _check_terms(cells, [*terms, *added])
    columns = _columns(cells, extended, "treatment")
    problem = _compress(cells, columns)
    everything = np.arange(columns.design.shape[1])
    residual, notes = _residual(problem, _space(problem, everything), cells.n_total)
    base = np.concatenate([np.array([0]), *(columns.spans[t] for t in terms)])
    df, ss = _extra_ss(problem, base, everything)
    term = by + (covariate,)
    cells_of_by = math.prod(cells.grid.shape[cells.grid.index(name)] for name in by)
    return _term_row(term, "interaction", df, ss, cells_of_by - 1, residual, alpha, notes)


def fitted_values(fit: ModelFit, cell_codes: np.ndarray,
                  covariates: Mapping[str, np.ndarray] | None = None) -> np.ndarray:
    """The model's prediction for each row (its cell and covariate values).

    NaN for a row whose prediction is not estimable (an empty cell that the model's terms
    do not reach). Estimability is that of the row's whole design vector: a slope that is
    not estimable on its own (a constant covariate, or one that the cells determine) still
    gives an estimable prediction for every observed row.
    """
    covariates = dict(covariates or {})
    missing = [name for name in fit.covariates if name not in covariates]
    if missing:
        raise ValueError(f"fitted values need the covariate(s) {missing}")
    cell_codes = np.asarray(cell_codes)
    design = fit.cell_design
    plain = np.array([c is None for c in fit.column_covariate])
    level = np.where(plain, design, 0.0)
    if not fit.covariate_means:  # one design vector per cell: check each cell once
        prediction = fit.y_mean + level @ fit.coefficients
        return np.where(_estimable_rows(fit, level), prediction, np.nan)[cell_codes]
    rows = level[cell_codes]
    for name, centre in fit.covariate_means:
        part = np.where(np.array([c == name for c in fit.column_covariate]), design, 0.0)
        rows = rows + part[cell_codes] * (np.asarray(covariates[name], dtype=np.float64) - centre)[:, None]
    prediction = fit.y_mean + rows @ fit.coefficients
    return np.where(_estimable_rows(fit, rows), prediction, np.nan)


def _estimable_rows(fit: ModelFit, rows: np.ndarray) -> np.ndarray:
    """`ModelFit.estimable` of every row of `rows` at once."""
    scaled = rows / fit.column_scale
    length = np.linalg.norm(scaled, axis=1)
    outside = scaled - (scaled @ fit.row_space) @ fit.row_space.T
    return np.linalg.norm(outside, axis=1) <= ESTIMABLE_TOLERANCE * length


def leverages(fit: ModelFit, cell_codes: np.ndarray,
              covariates: Mapping[str, np.ndarray] | None = None) -> np.ndarray:
    """The diagonal of the hat matrix H = X (X'X)^+ X' of the fitted model, one value per
    row (its cell and covariate values), from a QR factorisation of the row design X
    (columns scaled to unit length; columns beyond the numerical rank, `RANK_TOLERANCE`,
    dropped). h_i is the row's leverage: its residual has variance sigma^2 (1 - h_i)
    (Belsley, Kuh & Welsch 1980, ch. 2)."""
    covariates = dict(covariates or {})
    rows = fit.cell_design[np.asarray(cell_codes)]
    columns = []
    for j, name in enumerate(fit.column_covariate):
        column = rows[:, j]
        if name is not None:
            centre = dict(fit.covariate_means)[name]
            column = column * (np.asarray(covariates[name], dtype=np.float64) - centre)
        columns.append(column)
    x = np.column_stack(columns) if columns else np.ones((rows.shape[0], 1))
    norms = np.linalg.norm(x, axis=0)
    x = x[:, norms > 0] / norms[norms > 0]
    u, sv, _ = np.linalg.svd(x, full_matrices=False)
    rank = int((sv > RANK_TOLERANCE * sv[0]).sum()) if sv.size else 0
    return np.einsum("ij,ij->i", u[:, :rank], u[:, :rank])
