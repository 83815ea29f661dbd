"""Numeric core: pure functions from arrays to the result types of `appendix.results`.

Inputs are `values` (float64), `codes` (int index 0..k-1 into the plan's levels, in plan
order) and `k`. Nothing here reads files, plots or formats. The variance table of every
between-units design, a one-factor study included (the one-term model), is the design
engine's: `design_cells` on a `Grid`, then `fit_linear`.
"""

from appendix.stats.cells import CellStats, cell_stats, residuals, ss_between
from appendix.stats.descriptives import describe
from appendix.stats.design import Grid, design_cells
from appendix.stats.diagnostics import bartlett, brown_forsythe, outlier_screen, shapiro_wilk
from appendix.stats.effect_sizes import noncentrality_interval
from appendix.stats.linear import fit_linear
from appendix.stats.oneway import Partition, partition, welch_anova
from appendix.stats.rank import kruskal_wallis

__all__ = [
    "CellStats", "Grid", "Partition", "bartlett", "brown_forsythe", "cell_stats", "describe",
    "design_cells", "fit_linear", "kruskal_wallis", "noncentrality_interval", "outlier_screen",
    "partition", "residuals", "shapiro_wilk", "ss_between", "welch_anova",
]
