"""Figures of the appendix as deterministic SVG text (matplotlib, Agg/SVG, no pyplot).

`make_figures` draws, per outcome: the distribution by group, the group means with their
confidence intervals, a normal Q-Q plot of the residuals, residuals against fitted values
and the reference F distribution with the observed F; and, when the outcome has planned
contrasts, a forest plot of the registered family (``{outcome}-contrasts``). A figure
whose statistic is missing is left out; the appendix then says why.

Palette: eight colours of our own, chosen so that levels differ in lightness as well as
hue. Red-green colour vision deficiencies collapse hue differences along the red-green
axis; lightness and the blue-yellow contrast survive, so the first six colours stay at
least 15 CIE76 units apart under simulated deuteranopia and protanopia (Machado, Oliveira
& Fernandes 2009, full severity), which `tests/render/test_figures.py` checks. Beyond six
levels the position on the axis and the legend carry the distinction. A level keeps its
colour (its position in the registered level order) in every figure.
"""

from __future__ import annotations

import io
import re
import textwrap
from collections.abc import Callable, Mapping
from dataclasses import dataclass
from types import MappingProxyType

import matplotlib
import numpy as np
from matplotlib.figure import Figure
from scipy import stats

from appendix import numbers
from appendix.data.dataset import Dataset, OutcomeData
from appendix.results import ContrastFamily, HypothesisResult, OutcomeResult, StudyResults
from appendix.stats.sampling import subsample_indices

#: Level colours, in level order (cycled beyond eight levels).
PALETTE: tuple[str, ...] = (
    "#1B4F8A",  # deep blue
    "#E69A2E",  # amber
    "#5DA5DA",  # sky
    "#9E2A2B",  # brick
    "#3C9A78",  # teal green
    "#B0B0B0",  # light grey
    "#2B2B2B",  # near black
    "#E8B4D0",  # pale rose
)

#: Beyond this many points in a figure its scatters are rasterised inside the SVG to keep files light.
DENSE_POINTS = 5000
#: Point clouds larger than this are drawn from a deterministic subsample of this size
#: (appendix.stats.sampling); boxes, means and lines still use every unit.
PLOT_POINTS = 20_000

_WIDTH_IN = 6.0
_HEIGHT_IN = 2.9
_JITTER_SEED = 20260214  # fixed: the same data always give the same picture

_RC = MappingProxyType({
    "svg.fonttype": "none",  # text stays text: light, searchable, same in both renderers
    "text.parse_math": False,  # labels come from the plan and data: "$" is a dollar sign
    "font.family": "sans-serif",
    "font.sans-serif": ["Liberation Sans", "DejaVu Sans"],
    "font.size": 9,
    "axes.titlesize": 9,
    "axes.labelsize": 9,
    "xtick.labelsize": 8,
    "ytick.labelsize": 8,
    "legend.fontsize": 8,
    "axes.spines.top": False,
    "axes.spines.right": False,
    "axes.linewidth": 0.7,
    "lines.linewidth": 1.1,
    "savefig.bbox": "standard",
    "svg.image_inline": True,
})


def level_colour(index: int) -> str:
    """The colour of the level at `index` in registered order."""
    return PALETTE[index % len(PALETTE)]


@dataclass(frozen=True)
class _Panel:
    """What one outcome's figures are drawn from."""

    outcome: OutcomeResult
    data: OutcomeData
    levels: tuple[str, ...]
    means: tuple[float | None, ...]

    @property
    def axis_label(self) -> str:
        unit = self.outcome.unit
        return _wrap(f"{self.outcome.label} ({unit})" if unit else self.outcome.label)

    def residual_label(self) -> str:
        unit = self.outcome.unit
        return f"Residual ({unit})" if unit else "Residual"

    def fitted(self) -> np.ndarray:
        """Fitted value of each unit: its group mean (NaN where the mean is missing)."""
        table = np.array([np.nan if m is None else m for m in self.means], dtype=float)
        return table[self.data.codes] if len(self.data.codes) else np.empty(0)


def make_figures(dataset: Dataset, results: StudyResults) -> dict[str, str]:
    """SVG text of every figure, keyed by file stem ``f"{outcome}-{kind}"``.

    Deterministic: two calls on the same inputs give identical text.
    """
    figures: dict[str, str] = {}
    drawable = {item.name for item in dataset.outcomes}
    for outcome in results.outcomes:
        # without data only the data figures are skipped; the appendix says "not drawn"
        if outcome.name in drawable:
            panel = _panel(dataset, outcome)
            for kind, draw in _DRAWERS.items():
                _draw(figures, f"{outcome.name}-{kind}", draw, panel)
        family = next((f for f in outcome.contrasts if f.registered), None)
        if family is not None and family.hypotheses:
            _draw(figures, f"{outcome.name}-{CONTRASTS_KIND}",
                  lambda f: _forest(outcome, f), family)
    return figures


def _draw(figures: dict[str, str], stem: str, draw: Callable, source) -> None:
    """Draw one figure into `figures[stem]` (nothing when `draw` returns None)."""
    # drawing inside the context: font sizes are fixed when artists are made
    with matplotlib.rc_context({**_RC, "svg.hashsalt": stem}):
        figure = draw(source)
        if figure is not None:
            figures[stem] = _to_svg(figure, stem)


def _panel(dataset: Dataset, outcome: OutcomeResult) -> _Panel:
    by_level = {g.level: g.mean for g in outcome.descriptives.groups}
    return _Panel(
        outcome=outcome,
        data=dataset.outcome(outcome.name),
        levels=dataset.levels,
        means=tuple(by_level.get(level) for level in dataset.levels),
    )


def _new_figure(height: float = _HEIGHT_IN) -> tuple[Figure, object]:
    figure = Figure(figsize=(_WIDTH_IN, height), layout="constrained")
    return figure, figure.add_subplot()


def _scatter(ax, panel: _Panel, x, y, colour: str, **kwargs) -> None:
    # the whole cloud decides, not one group's share of it: all groups' points weigh
    ax.scatter(x, y, s=16, color=colour, edgecolors="#000000", linewidths=0.3, alpha=0.9,
               rasterized=min(len(panel.data.values), PLOT_POINTS) > DENSE_POINTS, **kwargs)


def _distribution(panel: _Panel) -> Figure | None:
    values, codes = panel.data.values, panel.data.codes
    if len(values) == 0:
        return None
    rng = np.random.default_rng(_JITTER_SEED)
    figure, ax = _new_figure()
    positions = np.arange(len(panel.levels))
    groups = [values[codes == i] for i in positions]
    drawn = [i for i in positions if len(groups[i])]
    ax.boxplot([groups[i] for i in drawn], positions=drawn, widths=0.5, showfliers=False,
               medianprops={"color": "#000000", "linewidth": 1.2},
               boxprops={"linewidth": 0.8}, whiskerprops={"linewidth": 0.8},
               capprops={"linewidth": 0.8})
    shown = _thin(len(values))
    points, point_codes = values[shown], codes[shown]
    for i in drawn:
        mine = points[point_codes == i]
        jitter = rng.uniform(-0.17, 0.17, size=len(mine))
        _scatter(ax, panel, i + jitter, mine, level_colour(i), zorder=3)
    _level_axis(ax, panel.levels)
    ax.set_ylabel(panel.axis_label)
    return figure


def _means(panel: _Panel) -> Figure | None:
    groups = {g.level: g for g in panel.outcome.descriptives.groups}
    if all(m is None for m in panel.means):
        return None
    figure, ax = _new_figure()
    for i, level in enumerate(panel.levels):
        group = groups.get(level)
        if group is None or group.mean is None:
            continue
        if group.ci_low is not None and group.ci_high is not None:
            ax.errorbar([i], [group.mean],
                        yerr=[[group.mean - group.ci_low], [group.ci_high - group.mean]],
                        fmt="none", color=level_colour(i), ecolor=level_colour(i),
                        elinewidth=1.4, capsize=5)
        ax.plot([i], [group.mean], marker="o", markersize=6, color=level_colour(i),
                markeredgecolor="#000000", markeredgewidth=0.6, linestyle="none")
    _level_axis(ax, panel.levels)
    ax.set_xlim(-0.6, len(panel.levels) - 0.4)
    ax.set_ylabel(panel.axis_label)  # the caption says these are means
    return figure


def _thin(n: int) -> np.ndarray:
    """Indices of the points to draw: all of them up to `PLOT_POINTS`, else a
    deterministic subsample (the captions say so)."""
    return subsample_indices(n, PLOT_POINTS)


def _residuals(panel: _Panel) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Residuals, fitted values and level codes of the units with a fitted value (of the
    deterministic subsample when there are more than `PLOT_POINTS`)."""
    fitted = panel.fitted()
    keep = np.flatnonzero(np.isfinite(fitted))
    keep = keep[_thin(keep.size)]
    return panel.data.values[keep] - fitted[keep], fitted[keep], panel.data.codes[keep]


def _qq(panel: _Panel) -> Figure | None:
    residuals, _, codes = _residuals(panel)
    sd = panel.outcome.table.residual_sd
    if len(residuals) < 3 or not sd:
        return None
    order = np.argsort(residuals, kind="stable")
    n = len(residuals)
    # Blom (1958) plotting positions, the usual choice for normal probability plots
    theoretical = stats.norm.ppf((np.arange(1, n + 1) - 0.375) / (n + 0.25))
    figure, ax = _new_figure()
    sorted_codes = codes[order]
    for i in range(len(panel.levels)):
        mine = sorted_codes == i
        if mine.any():
            _scatter(ax, panel, theoretical[mine], residuals[order][mine], level_colour(i),
                     label=panel.levels[i], zorder=3)
    ends = np.array([theoretical[0], theoretical[-1]])
    ax.plot(ends, ends * sd, color="#000000", linewidth=0.8, linestyle="--",
            label="Normal, SD = residual SD")
    ax.set_xlabel("Standard normal quantile")
    ax.set_ylabel(panel.residual_label())
    _legend_outside(ax)
    return figure


def _versus_fitted(panel: _Panel) -> Figure | None:
    residuals, fitted, codes = _residuals(panel)
    if len(residuals) == 0:
        return None
    figure, ax = _new_figure()
    ax.axhline(0.0, color="#000000", linewidth=0.7)
    for i in range(len(panel.levels)):
        mine = codes == i
        if mine.any():
            _scatter(ax, panel, fitted[mine], residuals[mine], level_colour(i),
                     label=panel.levels[i], zorder=3)
    unit = panel.outcome.unit
    ax.set_xlabel(f"Fitted value: group mean ({unit})" if unit else "Fitted value: group mean")
    ax.set_ylabel(panel.residual_label())
    _legend_outside(ax)
    return figure


def _f_reference(panel: _Panel) -> Figure | None:
    table = panel.outcome.table
    if table.f is None or table.critical_f is None or table.df_between < 1 or table.df_within < 1:
        return None
    dist = stats.f(table.df_between, table.df_within)
    scale = max(float(dist.ppf(0.999)), table.critical_f * 1.3)
    # a huge F would squash the density into the left edge: past 3x the scale it is
    # marked by an arrow at the right edge instead of a line at its place
    on_scale = table.f * 1.15 <= 3 * scale
    right = max(scale, table.f * 1.15) if on_scale else scale
    x = np.linspace(right / 2000, right, 1200)
    y = dist.pdf(x)
    figure, ax = _new_figure(height=2.8)
    ax.plot(x, y, color=PALETTE[0], label=f"F({table.df_between}, {table.df_within}) density")
    tail = x >= table.critical_f
    alpha = numbers.no_leading_zero(f"{table.alpha:g}")
    ax.fill_between(x[tail], y[tail], color=PALETTE[1], alpha=0.85, linewidth=0,
                    label=f"Rejection region, \u03b1 = {alpha}")
    ax.axvline(table.critical_f, color=PALETTE[1], linewidth=1.0,
               label=f"Critical F = {numbers.fixed(table.critical_f, 2)}")
    observed = f"Observed F = {numbers.fixed(table.f, 2)}"
    if on_scale:
        ax.axvline(table.f, color="#000000", linewidth=1.0, linestyle="--", label=observed)
    else:
        ax.annotate(f"{observed} \u2192", xy=(0.99, 0.5), xycoords="axes fraction",
                    ha="right", va="center")
    # with df1 <= 2 the density is unbounded or highest at 0; keep the tail readable
    ax.set_ylim(0, float(np.max(y[x >= right * 0.02])) * 1.1)
    ax.set_xlim(0, right)
    ax.set_xlabel("F")
    ax.set_ylabel("Density")
    _legend_outside(ax)
    return figure


#: The stem suffix of the forest plot of an outcome's registered contrasts.
CONTRASTS_KIND = "contrasts"

_GAP_WORDS = MappingProxyType({"not-tested": "not tested under the plan",
                               "unavailable": "unavailable"})


def _drawn(h: HypothesisResult) -> bool:
    return (h.decision not in _GAP_WORDS and h.estimate is not None
            and (h.ci_low is not None or h.ci_high is not None))


def _forest(outcome: OutcomeResult, family: ContrastFamily) -> Figure | None:
    """Estimates with their CIs, one row per hypothesis (plan order from the top), a zero
    line; an open one-sided bound is an arrow to the axis edge; not-tested and unavailable
    hypotheses are labelled gaps."""
    hypotheses = family.hypotheses
    shown = [h for h in hypotheses if _drawn(h)]
    if not shown:
        return None
    ends = [0.0] + [v for h in shown for v in (h.estimate, h.ci_low, h.ci_high) if v is not None]
    low, high = min(ends), max(ends)
    pad = 0.08 * ((high - low) or 1.0)
    left, right = low - pad, high + pad
    if any(h.ci_low is None for h in shown):
        left -= 2 * pad  # room for the arrow of an open lower bound
    if any(h.ci_high is None for h in shown):
        right += 2 * pad
    rows = len(hypotheses)
    figure, ax = _new_figure(height=max(1.7, 0.75 + 0.36 * rows))
    ax.axvline(0.0, color="#000000", linewidth=0.7)
    gap_place = ax.get_yaxis_transform()  # x in axes fraction, y in data
    for i, h in enumerate(hypotheses):
        y = rows - 1 - i
        if not _drawn(h):
            ax.text(0.5, y, _GAP_WORDS.get(h.decision, "no interval"), transform=gap_place,
                    ha="center", va="center", fontstyle="italic", color="#555555")
            continue
        start = h.ci_low if h.ci_low is not None else h.ci_high
        stop = h.ci_high if h.ci_low is not None else left
        if h.ci_low is not None and h.ci_high is None:
            stop = right
        if h.ci_low is not None and h.ci_high is not None:
            ax.plot([start, stop], [y, y], color=PALETTE[0], linewidth=1.5,
                    solid_capstyle="butt")
        else:
            ax.annotate("", xy=(stop, y), xytext=(start, y),
                        arrowprops={"arrowstyle": "-|>", "color": PALETTE[0], "linewidth": 1.5,
                                    "shrinkA": 0, "shrinkB": 0, "mutation_scale": 9})
        ax.plot([h.estimate], [y], marker="s", markersize=5.5, color=PALETTE[0],
                markeredgecolor="#000000", markeredgewidth=0.6, linestyle="none")
    ax.set_yticks(range(rows), labels=[_wrap(h.label, 30) for h in reversed(hypotheses)])
    ax.tick_params(axis="y", length=0)
    ax.spines["left"].set_visible(False)
    ax.set_ylim(-0.6, rows - 0.4)
    ax.set_xlim(left, right)
    if family.method == "rank-based":
        ax.set_xlabel("Difference in mean ranks")
    else:
        unit = outcome.unit
        ax.set_xlabel(f"Contrast estimate ({unit})" if unit else "Contrast estimate")
    return figure


def _wrap(label: str, width: int = 44) -> str:
    # long labels would run off a 2.9-inch axis; break them between words
    return "\n".join(textwrap.wrap(label, width=width)) or label


def _legend_outside(ax) -> None:
    # beside the axes, never over the points
    ax.legend(frameon=False, loc="upper left", bbox_to_anchor=(1.01, 1.0), borderaxespad=0)


def _level_axis(ax, levels: tuple[str, ...]) -> None:
    ax.set_xticks(range(len(levels)), labels=list(levels))
    # many or long level names would overlap side by side
    if len(levels) > 6 or max(len(level) for level in levels) > 14:
        ax.tick_params(axis="x", labelrotation=30)
        for label in ax.get_xticklabels():
            label.set_horizontalalignment("right")
            label.set_rotation_mode("anchor")
    ax.set_xlabel("Group")


_DRAWERS: Mapping[str, Callable[[_Panel], Figure | None]] = MappingProxyType({
    "distribution": _distribution,
    "means": _means,
    "qq": _qq,
    "residuals": _versus_fitted,
    "f-reference": _f_reference,
})

#: Figure kinds in the order the appendix shows them.
FIGURE_KINDS: tuple[str, ...] = tuple(_DRAWERS)

_ID = re.compile(r'\bid="([^"]+)"')
_REF = re.compile(r'(xlink:href="#|href="#|url\(#)([^")]+)')


def _to_svg(figure: Figure, stem: str) -> str:
    """Serialise `figure` (inside its rc context) with no date and ids unique to `stem`."""
    buffer = io.StringIO()
    figure.savefig(buffer, format="svg", metadata={"Date": None})
    text = buffer.getvalue()
    # matplotlib numbers ids per figure (figure_1, axes_1...); several figures inline in
    # one HTML page need distinct ids, so every id and reference gets the stem as prefix
    text = _ID.sub(lambda m: f'id="{stem}-{m.group(1)}"', text)
    return _REF.sub(lambda m: f"{m.group(1)}{stem}-{m.group(2)}", text)
