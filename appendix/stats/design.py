"""Cell statistics of a crossed between-unit design: the sufficient statistics of every
linear model on its factors and covariates.

A `Grid` is the crossing of the between-unit factors (treatment factors and blocks); each
unit falls in one cell. One grouped pass over the rows gives, per cell, the count, the
means of the response y and of the covariates x1..xq, and the centred within-cell
cross-products of [y, x1..xq]. Every sum of squares of a model whose factor terms are
constant within cells, and whose covariates enter linearly (possibly with slopes that
differ between cells), follows from these numbers (`appendix.stats.linear`), so the
cost after the pass grows with the cells, not the rows.

Numerics: each column's per-cell mean and sum of squared deviations come from the
blocked two-pass sweep of `appendix.stats.cells.cell_stats` (Chan, Golub & LeVeque 1983,
Am. Stat. 37:242-247), or, for y given as decimal text, from its exact scaled-integer
path. Off-diagonal cross-products are a second blocked pass over the deviations from
those cell means. No sum of squares is formed as sum(x^2) - (sum x)^2 / n.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass

import numpy as np

from appendix.errors import InternalError
from appendix.stats.cells import CellStats, cell_stats
from appendix.stats.sweep import blocks

Term = tuple[str, ...]
"""("A",) a main effect, ("A", "B") an interaction, ("baseline",) a covariate."""


def _read_only(array: np.ndarray) -> np.ndarray:
    array.flags.writeable = False
    return array


@dataclass(frozen=True)
class Grid:
    """The crossing of the between-unit factors; cell index in mixed radix, first factor slowest.

    >>> g = Grid(("A", "B"), (("a1", "a2"), ("b1", "b2", "b3")))
    >>> g.shape, g.n_cells, g.cell_levels(4)
    ((2, 3), 6, ('a2', 'b2'))
    """

    names: tuple[str, ...]
    levels: tuple[tuple[str, ...], ...]

    def __post_init__(self) -> None:
        if len(self.names) != len(self.levels) or not self.names:
            raise InternalError(f"a grid needs one level list per factor, got {len(self.names)} "
                                f"names and {len(self.levels)} level lists")
        if len(set(self.names)) != len(self.names):
            raise InternalError(f"factor names must be distinct, got {self.names}")
        for name, levels in zip(self.names, self.levels):
            if not levels or len(set(levels)) != len(levels):
                raise InternalError(f"factor '{name}' needs distinct levels, got {levels}")

    @property
    def shape(self) -> tuple[int, ...]:
        return tuple(len(levels) for levels in self.levels)

    @property
    def n_cells(self) -> int:
        return math.prod(self.shape)

    def index(self, name: str) -> int:
        """Position of factor `name` in the grid (ValueError naming it if absent)."""
        try:
            return self.names.index(name)
        except ValueError:
            raise ValueError(f"'{name}' is not a factor of the design {self.names}") from None

    def cell_codes(self, codes: Sequence[np.ndarray]) -> np.ndarray:
        """The cell of every row from the per-factor level codes (0-based, in level order)."""
        if len(codes) != len(self.names):
            raise InternalError(f"{len(codes)} code arrays given for {len(self.names)} factors")
        cell = np.zeros(np.asarray(codes[0]).shape, dtype=np.int64) if len(codes) > 1 else None
        shape = np.asarray(codes[0]).shape
        for name, k, column in zip(self.names, self.shape, codes):
            column = np.asarray(column)
            if column.shape != shape or (column.size and not np.issubdtype(column.dtype, np.integer)):
                raise InternalError(f"codes of '{name}' must be integers of shape {shape}")
            column = column.astype(np.int64, copy=False)
            # one pass: a negative code reads as a huge unsigned one
            if column.size and int(column.view(np.uint64).max()) >= k:
                raise InternalError(f"codes of '{name}' must lie in 0..{k - 1}")
            if len(self.names) == 1:  # one factor: its codes are the cells (no copy)
                return column
            cell *= k
            cell += column
        return cell

    def level_codes(self) -> np.ndarray:
        """(cells, factors) matrix of every cell's level codes, in cell order."""
        return np.array(np.unravel_index(np.arange(self.n_cells), self.shape)).T.reshape(
            self.n_cells, len(self.names))

    def cell_levels(self, cell: int) -> tuple[str, ...]:
        """The level names of cell number `cell`."""
        position = np.unravel_index(cell, self.shape)
        return tuple(levels[int(i)] for levels, i in zip(self.levels, position))


@dataclass(frozen=True, eq=False)
class DesignCells:
    """Sufficient statistics per cell: n, means of [y, x1..xq], centred within-cell
    cross-products of [y, x1..xq] (two-pass; y's SSD at [0, 0]).

    `mean` is NaN and `cross` 0 for empty cells. `arithmetic` says how y's within-cell
    SSD was summed: "exact-decimal" or "float64". `shift` (1 + q,) is a common centre of
    each column and `centred_mean` = mean - shift kept at full precision (the cell
    sweep's own centring), so that a large common offset costs no digits in the fit;
    both default to (0, mean) for statistics built elsewhere.
    """

    grid: Grid
    covariates: tuple[str, ...]
    n: np.ndarray
    mean: np.ndarray
    cross: np.ndarray
    arithmetic: str
    shift: np.ndarray | None = None
    centred_mean: np.ndarray | None = None

    @property
    def n_total(self) -> int:
        return int(self.n.sum())

    def centred(self) -> tuple[np.ndarray, np.ndarray]:
        """(shift, centred means): the stored pair, or (0, mean) when none was stored."""
        if self.shift is None or self.centred_mean is None:
            return np.zeros(self.mean.shape[1]), self.mean
        return self.shift, self.centred_mean


def design_cells(grid: Grid, codes: Sequence[np.ndarray], y: np.ndarray,
                 covariates: Mapping[str, np.ndarray] | None = None, *,
                 decimals: int | None = None) -> DesignCells:
    """One grouped pass: per-cell n, means and centred cross-products of [y, covariates].

    `decimals=d` says y is decimal text with at most d places: its n, mean and SSD then
    come from the exact path of `cell_stats`; covariate moments are float64.
    """
    covariates = dict(covariates or {})
    for name in covariates:
        if name in grid.names:
            raise InternalError(f"'{name}' is both a factor and a covariate")
    # One factor: its codes are the cells, and the grouped sweep of cell_stats rejects a
    # code outside 0..k-1 as it counts, so they skip the grid's own pass over them.
    one = len(grid.names) == 1 and len(codes) == 1
    cell = np.asarray(codes[0]) if one else grid.cell_codes(codes)
    k = grid.n_cells
    columns = [np.asarray(y, dtype=np.float64)]
    columns += [np.asarray(covariates[name], dtype=np.float64) for name in covariates]
    stats = [cell_stats(columns[0], cell, k, decimals=decimals)]
    stats += [cell_stats(x, cell, k) for x in columns[1:]]
    width = len(columns)
    n = np.asarray(stats[0].n, dtype=np.int64)
    mean = np.column_stack([s.mean for s in stats])
    shift = np.array([s.shift for s in stats])
    centred = np.column_stack([s.centred_mean for s in stats])
    cross = np.zeros((k, width, width))
    for j, s in enumerate(stats):
        cross[:, j, j] = s.ssd
    if width > 1:
        _off_diagonal(cross, columns, stats, cell, k)
    return DesignCells(grid=grid, covariates=tuple(covariates), n=_read_only(n),
                       mean=_read_only(mean), cross=_read_only(cross),
                       arithmetic=stats[0].arithmetic, shift=_read_only(shift),
                       centred_mean=_read_only(centred))


def _off_diagonal(cross: np.ndarray, columns: list[np.ndarray], stats: list[CellStats],
                  cell: np.ndarray, k: int) -> None:
    """Fill cross[:, i, j] (i < j) with sum over the cell of (c_i - mean_i)(c_j - mean_j).

    Deviations are taken from each cell's centre (shift + centred mean) in blocks, so the
    temporaries stay small; the second pass of the two-pass method.
    """
    width = len(columns)
    centres = [np.nan_to_num(s.centred_mean) for s in stats]
    for rows in blocks(cell.size):
        c = cell[rows]
        deviations = [(x[rows] - s.shift) - centre[c] for x, s, centre in zip(columns, stats, centres)]
        for i in range(width):
            for j in range(i + 1, width):
                sums = np.bincount(c, weights=deviations[i] * deviations[j], minlength=k)
                cross[:, i, j] += sums
                cross[:, j, i] += sums


def design_cells_from_stats(grid: Grid, cells: CellStats) -> DesignCells:
    """The `DesignCells` of a one-factor grid without covariates from its cell statistics
    (e.g. computed out of core): means and SSD carried over, centring kept."""
    if len(grid.names) != 1 or grid.n_cells != len(cells.labels):
        raise InternalError("cell statistics convert only for a one-factor grid of the same levels")
    mean = np.asarray(cells.mean, dtype=np.float64).reshape(-1, 1)
    cross = np.asarray(cells.ssd, dtype=np.float64).reshape(-1, 1, 1)
    shift = np.array([cells.shift])
    return DesignCells(grid=grid, covariates=(), n=np.asarray(cells.n, dtype=np.int64),
                       mean=_read_only(mean), cross=_read_only(cross), arithmetic=cells.arithmetic,
                       shift=shift, centred_mean=_read_only(np.asarray(cells.centred_mean,
                                                                       dtype=np.float64).reshape(-1, 1)))
