"""Numeric core: pure functions from arrays to the result types of `appendix.results`.

Inputs are `values` (float64), `codes` (int index 0..k-1 into the plan's levels, in plan
order) and `k`. Nothing here reads files, plots or formats.
"""

from appendix.stats.cells import CellStats, cell_stats, residuals, ss_between
from appendix.stats.descriptives import describe
from appendix.stats.diagnostics import bartlett, brown_forsythe, outlier_screen, shapiro_wilk
from appendix.stats.effect_sizes import effect_sizes, noncentrality_interval
from appendix.stats.oneway import Partition, partition, variance_table, welch_anova
from appendix.stats.rank import kruskal_wallis

__all__ = [
    "CellStats", "Partition", "bartlett", "brown_forsythe", "cell_stats", "describe",
    "effect_sizes", "kruskal_wallis", "noncentrality_interval", "outlier_screen", "partition",
    "residuals", "shapiro_wilk", "ss_between", "variance_table", "welch_anova",
]
