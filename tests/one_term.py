"""The variance table a one-factor outcome reports, for tests that hand the engine arrays.

The same route as a run (`appendix.models`): the design engine's one-term model
(`appendix.nist.engine_table`, which `selftest` also reads) with the one-way layout's
notes (`appendix.models.one_factor_notes`), fitted to the rows, or to per-level n, mean
and SSD as an out-of-core source gives them.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np

from appendix.models import one_factor_notes
from appendix.nist import engine_table
from appendix.results import ModelTable
from appendix.stats.cells import CellStats, cell_stats, default_labels
from appendix.stats.design import Grid, design_cells, design_cells_from_stats

FACTOR = "group"


def one_term_table(values: np.ndarray, codes: np.ndarray, k: int, levels: Sequence[str] | None = None,
                   *, decimals: int | None = None, alpha: float = 0.05) -> ModelTable:
    """The one-factor table of `values` in levels `codes` (0..k-1), as a run reports it;
    `decimals` selects the exact scaled-integer path, as the data stage does for decimal
    text."""
    values = np.asarray(values, dtype=np.float64)
    labels = tuple(levels) if levels is not None else default_labels(k)
    grid = Grid((FACTOR,), (labels,))
    table = engine_table(design_cells(grid, [np.asarray(codes)], values, decimals=decimals), alpha)
    return one_factor_notes(table, cell_stats(values, codes, k, labels, decimals=decimals))


def summary_table(cells: CellStats, *, alpha: float = 0.05) -> ModelTable:
    """The one-factor table of per-level cell statistics (an out-of-core source's)."""
    grid = Grid((FACTOR,), (tuple(cells.labels),))
    return one_factor_notes(engine_table(design_cells_from_stats(grid, cells), alpha), cells)
