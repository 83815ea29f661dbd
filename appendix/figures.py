"""Figures of the appendix as deterministic SVG text (matplotlib, Agg/SVG, no pyplot).

`make_figures` draws, per outcome and for every design: the distribution by cell of the
treatment factors, the cell means with their confidence intervals (designs without
repeated measures), a normal Q-Q plot of the model's residuals, residuals against
fitted values, and the reference F distribution of the first tested term with its
observed F; interaction plots of two-factor marginal means, the profile plot of a
repeated-measures outcome, the outcome against each covariate with the fitted parallel
lines; and, when the outcome has planned contrasts, a forest plot of the registered
family (``{outcome}-contrasts``). A figure whose statistic is missing is left out; the
appendix then says why.

Lines of means and the covariate scatter (`interaction_plot`, `profile_plot`,
`covariate_scatter`) draw from plain sequences; they add a marker and a line style per
level (colour is never the only cue) and carry a <title> and <desc>.

Palette: eight colours of our own, chosen so that levels differ in lightness as well as
hue. Red-green colour vision deficiencies collapse hue differences along the red-green
axis; lightness and the blue-yellow contrast survive, so the first six colours stay at
least 15 CIE76 units apart under simulated deuteranopia and protanopia (Machado, Oliveira
& Fernandes 2009, full severity), which `tests/render/test_figures.py` checks. Beyond six
levels the position on the axis and the legend carry the distinction. A level keeps its
colour (its position in the registered level order) in every figure.
"""

from __future__ import annotations

import dataclasses

import io
import itertools
import re
import textwrap
from collections.abc import Callable, Mapping
from dataclasses import dataclass
from types import MappingProxyType

import matplotlib
import numpy as np
from matplotlib import font_manager, ft2font
from matplotlib.figure import Figure
from matplotlib.lines import Line2D
from scipy import stats

from appendix import numbers
from appendix.data.dataset import Dataset, OutcomeData
from appendix.figure_spec import FIGURE_KINDS, PLOT_POINTS, UNIT_FLOW_FIGURE, cells_label
from appendix.models import Residuals
from appendix.results import (ContrastFamily, HypothesisResult, LevelCount, OutcomeResult,
                              StudyResults, UnitFlow)
from appendix.stats.sampling import subsample_indices
from appendix.typefaces import FIGURE_FAMILY, FONT_FACES, font_folder

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

# figures stand two to a row in print: half the A4 text block (174 mm less a gap), so
# they print at the size they are drawn and their text stays 8-9 pt; the forest plot of
# the contrasts, whose rows carry long labels, takes three fifths of it, its caption beside
_WIDTH_IN = 3.3
_HEIGHT_IN = 1.9
_WIDE_IN = 4.1
_JITTER_SEED = 20260214  # fixed: the same data always give the same picture

_RC = MappingProxyType({
    "svg.fonttype": "none",  # text stays text: light, searchable, same in both renderers
    "text.parse_math": False,  # labels come from the plan and data: "$" is a dollar sign
    "font.family": "sans-serif",
    "font.sans-serif": [FIGURE_FAMILY],  # the shipped faces, `_register_figure_fonts`
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


def _register_figure_fonts() -> None:
    """Give matplotlib the shipped faces of `FIGURE_FAMILY` under that name (once per
    process), so that it measures the figures' text in the font the PDF draws it in,
    whatever fonts the machine has; the SVG names that family, then ``sans-serif``."""
    manager = font_manager.fontManager
    if any(entry.name == FIGURE_FAMILY for entry in manager.ttflist):
        return
    for family, _, _, name in FONT_FACES:
        if family == FIGURE_FAMILY:
            entry = font_manager.ttfFontProperty(ft2font.FT2Font(str(font_folder() / name)))
            manager.ttflist.append(dataclasses.replace(entry, name=FIGURE_FAMILY))


def _figure_settings(stem: str):
    """The settings every figure is drawn under (`_RC`, an SVG id salt of its own), with
    the shipped fonts known to matplotlib."""
    _register_figure_fonts()
    return matplotlib.rc_context({**_RC, "svg.hashsalt": stem})


def level_colour(index: int) -> str:
    """The colour of the level at `index` in registered order."""
    return PALETTE[index % len(PALETTE)]


@dataclass(frozen=True)
class _Panel:
    """What one outcome's figures are drawn from: its rows, each row's treatment cell
    (index into `levels`, the run's cells), and the model's residuals."""

    outcome: OutcomeResult
    data: OutcomeData
    levels: tuple[str, ...]
    cells: np.ndarray
    residuals: Residuals | None
    df_residual: float | None
    alpha: float
    tested: tuple
    group_label: str = "Group"  # the treatment factors' labels, crossed, when there are any

    @property
    def axis_label(self) -> str:
        unit = self.outcome.unit
        return _wrap(f"{self.outcome.label} ({unit})" if unit else self.outcome.label)

    def residual_label(self) -> str:
        unit = self.outcome.unit
        return f"Residual ({unit})" if unit else "Residual"


def make_figures(dataset: Dataset, results: StudyResults,
                 residuals: Mapping[str, Residuals]) -> dict[str, str]:
    """SVG text of every figure, keyed by file stem ``f"{outcome}-{kind}"``; `residuals`
    holds each outcome's model residuals (`appendix.runner.Analysis`).

    Deterministic: two calls on the same inputs give identical text.
    """
    figures: dict[str, str] = {}
    flow = unit_flow_diagram(results)
    if flow is not None:
        figures[UNIT_FLOW_FIGURE] = flow
    drawable = {item.name for item in dataset.outcomes}
    for outcome in results.outcomes:
        # without data only the data figures are skipped; the appendix says "not drawn"
        if outcome.name in drawable:
            panel = _panel(dataset, results, outcome, residuals.get(outcome.name))
            for kind in FIGURE_KINDS:
                _draw(figures, f"{outcome.name}-{kind}", _DRAWERS[kind], panel)
            figures.update(_covariate_figures(dataset, results, outcome, residuals.get(outcome.name)))
        figures.update(_lines_of_means(results, outcome))
        shares = [f for f in outcome.contrasts if f.registered]
        # one plot of every registered hypothesis of the outcome, family after family
        family = (dataclasses.replace(shares[0], hypotheses=tuple(h for f in shares for h in f.hypotheses))
                  if shares else None)
        if family is not None and family.hypotheses:
            _draw(figures, f"{outcome.name}-{CONTRASTS_KIND}",
                  lambda f: _forest(outcome, f), family)
    return figures


def _draw(figures: dict[str, str], stem: str, draw: Callable, source) -> None:
    """Draw one figure into `figures[stem]` (nothing when `draw` returns None)."""
    # drawing inside the context: font sizes are fixed when artists are made
    with _figure_settings(stem):
        figure = draw(source)
        if figure is not None:
            figures[stem] = _to_svg(figure, stem)


def treatment_cells(results: StudyResults, data: OutcomeData) -> np.ndarray:
    """Each row's cell of the crossed treatment factors (first factor slowest), the
    index into the run's cells; 0 for every row of a design without treatment factors."""
    index = {f.name: j for j, f in enumerate(results.factors)}
    cells = np.zeros(data.values.size, dtype=np.int64)
    for factor in (f for f in results.factors if f.role == "treatment"):
        cells = cells * len(factor.levels) + data.factors[index[factor.name]]
    return cells


def _panel(dataset: Dataset, results: StudyResults, outcome: OutcomeResult,
           residuals: Residuals | None) -> _Panel:
    data = dataset.outcome(outcome.name)
    tested = next(iter(outcome.tables), None)
    return _Panel(outcome=outcome, data=data, levels=dataset.levels,
                  cells=treatment_cells(results, data), residuals=residuals,
                  df_residual=tested.residual_df if tested is not None else None, alpha=results.alpha,
                  tested=tested_row(results, outcome), group_label=cells_label(results))



def _new_figure(height: float = _HEIGHT_IN, width: float = _WIDTH_IN) -> tuple[Figure, object]:
    figure = Figure(figsize=(width, height), layout="constrained")
    return figure, figure.add_subplot()


def _scatter(ax, panel: _Panel, x, y, colour: str, **kwargs) -> None:
    # the whole cloud decides, not one group's share of it: all groups' points weigh
    ax.scatter(x, y, s=16, color=colour, edgecolors="#000000", linewidths=0.3, alpha=0.9,
               rasterized=min(len(panel.data.values), PLOT_POINTS) > DENSE_POINTS, **kwargs)


def _distribution(panel: _Panel) -> Figure | None:
    values, codes = panel.data.values, panel.cells
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
    _level_axis(ax, panel.levels, panel.group_label)
    ax.set_ylabel(_wrap(panel.axis_label, 26))
    return figure


def _means(panel: _Panel) -> Figure | None:
    """Raw cell means with their CIs; a repeated-measures outcome has its profile plot."""
    if is_repeated(panel.outcome):
        return None
    groups = {g.level: g for g in panel.outcome.descriptives.groups}
    if all(groups.get(level) is None or groups[level].mean is None for level in panel.levels):
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
    _level_axis(ax, panel.levels, panel.group_label)
    ax.set_xlim(-0.6, len(panel.levels) - 0.4)
    ax.set_ylabel(_wrap(panel.axis_label, 26))  # the caption says these are means
    return figure


def is_repeated(outcome: OutcomeResult) -> bool:
    """Whether the outcome was analysed with repeated measures (it has a within stratum)."""
    return any(t.sphericity is not None for t in outcome.tables)


def _thin(n: int) -> np.ndarray:
    """Indices of the points to draw: all of them up to `PLOT_POINTS`, else a
    deterministic subsample (the captions say so)."""
    return subsample_indices(n, PLOT_POINTS)


def _residuals(panel: _Panel) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Residuals, fitted values and cells of the points with a fitted value (of the
    deterministic subsample when there are more than `PLOT_POINTS`)."""
    series = panel.residuals
    if series is None:
        return np.empty(0), np.empty(0), np.empty(0, dtype=np.int64)
    keep = np.flatnonzero(np.isfinite(series.fitted) & np.isfinite(series.residuals))
    keep = keep[_thin(keep.size)]
    return series.residuals[keep], series.fitted[keep], series.cells[keep]


def residual_sd(panel: _Panel) -> float | None:
    """sqrt(sum e^2 / df) of the model's residuals (the points of the Q-Q plot)."""
    series = panel.residuals
    if series is None or not panel.df_residual or panel.df_residual <= 0:
        return None
    e = series.residuals[np.isfinite(series.residuals)]
    return float(np.sqrt(np.sum(e * e) / panel.df_residual)) if e.size else None


def _qq(panel: _Panel) -> Figure | None:
    residuals, _, codes = _residuals(panel)
    sd = residual_sd(panel)
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
    ax.set_ylabel(_wrap(panel.residual_label(), 26))
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
    ax.set_xlabel(f"Fitted value ({unit})" if unit else "Fitted value")
    ax.set_ylabel(_wrap(panel.residual_label(), 26))
    _legend_outside(ax)
    return figure


def tested_row(results: StudyResults, outcome: OutcomeResult):
    """(row, table) of the first tested term of an outcome's first variance table: its
    first treatment factor's main effect (blocks and covariates adjust the model)."""
    treatments = [f.name for f in results.factors if f.role == "treatment"]
    for table in outcome.tables[:1]:
        for row in table.rows:
            if row.term == tuple(treatments[:1]) and row.statistic is not None:
                return row, table
    return None, None


def _f_reference(panel: _Panel) -> Figure | None:
    row, table = panel.tested
    if row is None or row.df < 1 or table.residual_df < 1:
        return None
    df1, df2 = row.df, table.residual_df
    dist = stats.f(df1, df2)
    critical = float(dist.isf(panel.alpha))
    scale = max(float(dist.ppf(0.999)), critical * 1.3)
    # a huge F would squash the density into the left edge: past 3x the scale it is
    # marked by an arrow at the right edge instead of a line at its place
    on_scale = row.statistic * 1.15 <= 3 * scale
    right = max(scale, row.statistic * 1.15) if on_scale else scale
    x = np.linspace(right / 2000, right, 1200)
    y = dist.pdf(x)
    figure, ax = _new_figure()
    ax.plot(x, y, color=PALETTE[0],
            label=f"F({numbers.df_value(df1)}, {numbers.df_value(df2)}) density")
    tail = x >= critical
    alpha = numbers.no_leading_zero(f"{panel.alpha:g}")
    ax.fill_between(x[tail], y[tail], color=PALETTE[1], alpha=0.85, linewidth=0,
                    label=f"Rejection region, \u03b1 = {alpha}")
    ax.axvline(critical, color=PALETTE[1], linewidth=1.0,
               label=f"Critical F = {numbers.fixed(critical, 2)}")
    observed = f"Observed F = {numbers.fixed(row.statistic, 2)}"
    if on_scale:
        ax.axvline(row.statistic, color="#000000", linewidth=1.0, linestyle="--", label=observed)
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
    figure, ax = _new_figure(height=max(1.5, 0.7 + 0.3 * rows), width=_WIDE_IN)
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
    # long labels would run off a short axis; break them between words
    return "\n".join(textwrap.wrap(label, width=width)) or label


def _legend_columns(handles) -> int:
    # as many columns as half a page's width holds: three short labels, else two, else one
    longest = max((len(h.get_label()) for h in handles), default=0)
    return min(len(handles) or 1, 3 if longest <= 12 else 2 if longest <= 26 else 1)


def _legend_outside(ax, **options) -> None:
    """The axes' legend below them, never over the points (beside them would leave a
    half-width figure too narrow an axis)."""
    handles = options.pop("handles", None)
    if handles is None:
        handles, _ = ax.get_legend_handles_labels()
    ax.figure.legend(handles=handles, frameon=False, loc="outside lower center",
                     ncols=_legend_columns(handles),
                     **options)


def _level_axis(ax, levels: tuple[str, ...], title: str) -> None:
    ax.set_xticks(range(len(levels)), labels=list(levels))
    # many or long level names would overlap side by side
    if len(levels) > 6 or max(len(level) for level in levels) > 14:
        ax.tick_params(axis="x", labelrotation=30)
        for label in ax.get_xticklabels():
            label.set_horizontalalignment("right")
            label.set_rotation_mode("anchor")
    ax.set_xlabel(_wrap(title, 60))


#: The drawer of each kind of `FIGURE_KINDS`.
_DRAWERS: Mapping[str, Callable[[_Panel], Figure | None]] = MappingProxyType({
    "distribution": _distribution,
    "means": _means,
    "qq": _qq,
    "residuals": _versus_fitted,
    "f-reference": _f_reference,
})

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


# --- figures of designs beyond one factor ----------------------------------------------
# Drawn from plain sequences (no engine types), so that any engine's marginal means,
# covariate fits or repeated-measures means can be shown. Each returns SVG text with an
# accessible <title> and <desc>, or None when nothing can be drawn.

#: Marker per line or group (in level order, cycled): colour is never the only cue.
MARKERS: tuple[str, ...] = ("o", "s", "^", "D", "v", "P", "X", "h")
#: Line style per line or group (in level order, cycled), a third cue beside colour and marker.
LINE_STYLES: tuple[str, ...] = ("-", "--", "-.", ":")


def level_marker(index: int) -> str:
    """The marker of the level at `index` in registered order."""
    return MARKERS[index % len(MARKERS)]


def level_line_style(index: int) -> str:
    """The line style of the level at `index` in registered order."""
    return LINE_STYLES[index % len(LINE_STYLES)]


def _number_or_nan(value: object) -> float:
    return np.nan if value is None else float(value)


def _grid(values, rows: int, columns: int, name: str) -> np.ndarray:
    """`values` as a float array of shape (rows, columns), None read as NaN."""
    table = np.array([[_number_or_nan(v) for v in row] for row in values], dtype=float)
    if table.shape != (rows, columns):
        raise ValueError(f"{name}: expected {rows} rows of {columns} values (one row per "
                         f"line, one value per x level), got shape {table.shape}")
    return table


def _dodge(lines: int) -> np.ndarray:
    """Sideways offsets of each line's points, so that their intervals do not overlap."""
    step = min(0.15, 0.5 / max(lines - 1, 1))
    return (np.arange(lines) - (lines - 1) / 2) * step


@dataclass(frozen=True)
class _LinesOfMeans:
    """Estimates with intervals: one line per `lines` level across the `x_levels`."""

    x_levels: tuple[str, ...]
    lines: tuple[str, ...]
    estimates: np.ndarray  # (lines, x levels), NaN where missing
    ci_low: np.ndarray
    ci_high: np.ndarray
    x_label: str
    lines_label: str
    y_label: str

    @classmethod
    def of(cls, x_levels, lines, estimates, ci_low, ci_high, x_label: str,
           lines_label: str, y_label: str) -> _LinesOfMeans:
        shape = (len(lines), len(x_levels))
        return cls(tuple(str(x) for x in x_levels), tuple(str(t) for t in lines),
                   _grid(estimates, *shape, "estimates"), _grid(ci_low, *shape, "ci_low"),
                   _grid(ci_high, *shape, "ci_high"), x_label, lines_label, y_label)

    def has_interval(self) -> np.ndarray:
        return (np.isfinite(self.estimates) & np.isfinite(self.ci_low)
                & np.isfinite(self.ci_high))

    def describe(self, what: str) -> str:
        drawn = int(np.isfinite(self.estimates).sum())
        bars = int(self.has_interval().sum())
        return (f"{what} of {self.y_label} at each level of {self.x_label} "
                f"({', '.join(self.x_levels)}), one line per level of {self.lines_label} "
                f"({', '.join(self.lines)}), each with its own colour, marker and line "
                f"style. {drawn} of {self.estimates.size} estimates drawn; {bars} with a "
                "confidence interval as a vertical bar.")


def _draw_lines_of_means(spec: _LinesOfMeans) -> Figure | None:
    if not np.isfinite(spec.estimates).any():
        return None
    figure, ax = _new_figure()
    offsets = _dodge(len(spec.lines))
    with_bar = spec.has_interval()
    for j, name in enumerate(spec.lines):
        x = np.arange(len(spec.x_levels)) + offsets[j]
        y = spec.estimates[j]
        if not np.isfinite(y).any():
            continue
        colour = level_colour(j)
        bar = with_bar[j]
        if bar.any():
            # only complete intervals get a bar: a missing bound draws nothing
            _, caps, bars = ax.errorbar(
                x[bar], y[bar], yerr=[y[bar] - spec.ci_low[j][bar], spec.ci_high[j][bar] - y[bar]],
                fmt="none", color=colour, ecolor=colour, elinewidth=1.3, capsize=3)
            bars[0].set_gid(f"line-{j}-ci")
            for k, cap in enumerate(caps):
                cap.set_gid(f"line-{j}-cap-{k}")
        # NaN breaks the line where an estimate is missing
        (line,) = ax.plot(x, y, color=colour, linestyle=level_line_style(j),
                          marker=level_marker(j), markersize=6, markeredgecolor="#000000",
                          markeredgewidth=0.6, label=_wrap(name, 24), zorder=3)
        line.set_gid(f"line-{j}-means")
    _level_axis(ax, spec.x_levels, spec.x_label)
    ax.set_xlim(-0.6, len(spec.x_levels) - 0.4)
    ax.set_ylabel(_wrap(spec.y_label))
    _legend_outside(ax, title=_wrap(spec.lines_label, 24), alignment="left")
    return figure


def interaction_plot(x_levels, trace_levels, estimates, ci_low, ci_high, *, x_label: str,
                     trace_label: str, y_label: str, title: str | None = None,
                     stem: str = "interaction") -> str | None:
    """Marginal means with confidence intervals across the levels of one factor, one line
    per level of another (the usual interaction plot; lines that are not parallel suggest
    an interaction).

    `estimates`, `ci_low` and `ci_high` hold one row per trace level (in `trace_levels`
    order) of one value per x level; None or NaN leaves a point or a bar out (a bar needs
    both bounds). Points are dodged sideways so that bars do not overlap. `stem` prefixes
    every id in the SVG (figures shown on one page need distinct stems). None when no
    estimate is finite.
    """
    spec = _LinesOfMeans.of(x_levels, trace_levels, estimates, ci_low, ci_high,
                            x_label, trace_label, y_label)
    return _lines_figure(spec, stem, title or f"{y_label} by {x_label} and {trace_label}",
                         "Interaction plot: marginal means")


def profile_plot(levels, group_labels, means, ci_low, ci_high, *, x_label: str,
                 y_label: str, title: str | None = None, group_label: str = "Group",
                 stem: str = "profile") -> str | None:
    """Repeated-measures profiles: the mean at each within-unit level (`levels`, in
    registered order along the axis) for each group, with confidence intervals.

    `means`, `ci_low` and `ci_high` hold one row per group (in `group_labels` order) of
    one value per within level; None or NaN leaves a point or bar out. None when no mean
    is finite.
    """
    spec = _LinesOfMeans.of(levels, group_labels, means, ci_low, ci_high,
                            x_label, group_label, y_label)
    return _lines_figure(spec, stem,
                         title or f"{y_label} across {x_label} by {group_label}",
                         "Profile plot: means")


def _lines_figure(spec: _LinesOfMeans, stem: str, title: str, what: str) -> str | None:
    return _accessible_figure(stem, lambda: _draw_lines_of_means(spec), title,
                              spec.describe(what))


@dataclass(frozen=True)
class _CovariateFit:
    """Units' covariate and outcome values by group, and the parallel-lines fit."""

    x: np.ndarray
    y: np.ndarray
    codes: np.ndarray
    group_labels: tuple[str, ...]
    slope: float
    intercepts: np.ndarray  # fitted value of each group at x = centre; NaN where missing
    centre: float
    x_label: str
    y_label: str


def _draw_covariate(fit: _CovariateFit) -> Figure | None:
    if fit.x.size == 0:
        return None
    figure, ax = _new_figure()
    shown = _thin(fit.x.size)
    px, py, pcodes = fit.x[shown], fit.y[shown], fit.codes[shown]
    dense = shown.size > DENSE_POINTS
    keys = []  # legend entries: a group's marker and its line's style together
    for g, name in enumerate(fit.group_labels):
        mine = pcodes == g
        if mine.any():
            points = ax.scatter(px[mine], py[mine], s=16, color=level_colour(g),
                                marker=level_marker(g), edgecolors="#000000",
                                linewidths=0.3, alpha=0.9, rasterized=dense, zorder=3)
            points.set_gid(f"group-{g}-points")
        has_line = bool(np.isfinite(fit.slope) and np.isfinite(fit.intercepts[g]))
        if mine.any() or has_line:
            keys.append(Line2D([], [], color=level_colour(g), marker=level_marker(g),
                               markersize=5, markeredgecolor="#000000", markeredgewidth=0.3,
                               linestyle=level_line_style(g) if has_line else "none",
                               label=_wrap(name, 24)))
        if not has_line:
            continue
        # each line spans its own group's covariate range (no extrapolation)
        own = fit.x[fit.codes == g]
        span = np.array([own.min(), own.max()] if own.size else [fit.x.min(), fit.x.max()])
        (line,) = ax.plot(span, fit.intercepts[g] + fit.slope * (span - fit.centre),
                          color=level_colour(g), linestyle=level_line_style(g),
                          linewidth=1.4, zorder=4)
        line.set_gid(f"group-{g}-fit")
    mean = float(fit.x.mean())
    marker = ax.axvline(mean, color="#000000", linewidth=0.8, linestyle=":",
                        label=f"Covariate mean = {mean:.4g}")
    marker.set_gid("covariate-mean")
    ax.set_xlabel(_wrap(fit.x_label, 60))
    ax.set_ylabel(_wrap(fit.y_label))
    _legend_outside(ax, handles=[*keys, marker])
    return figure


def covariate_scatter(x, y, groups, group_labels, slope, intercepts, *, x_label: str,
                      y_label: str, title: str | None = None, centre: float | None = None,
                      stem: str = "covariate") -> str | None:
    """Outcome against covariate, one colour and marker per group, with the fitted
    parallel lines of the analysis of covariance (one common `slope`, one intercept per
    group) and the covariate mean marked by a dotted line.

    `groups` holds each unit's group code (an index into `group_labels`). `intercepts`
    are each group's fitted value at the covariate value `centre` (default: the mean of
    `x` over the units with both values, so that intercepts are the adjusted means of a
    centred covariate); None or NaN draws no line for that group, as does a None `slope`.
    Units with a missing x or y are left out. Beyond `PLOT_POINTS` units the points are a
    deterministic subsample; the lines and the mean use every unit. None when no unit has
    both values.
    """
    x = np.array([_number_or_nan(v) for v in x], dtype=float)
    y = np.array([_number_or_nan(v) for v in y], dtype=float)
    codes = np.asarray(groups, dtype=int)
    labels = tuple(str(g) for g in group_labels)
    cuts = np.array([_number_or_nan(v) for v in intercepts], dtype=float)
    if not (x.shape == y.shape == codes.shape) or cuts.shape != (len(labels),):
        raise ValueError(f"x, y and groups need one value per unit (got {x.size}, {y.size}, "
                         f"{codes.size}) and intercepts one per group label (got "
                         f"{cuts.size} for {len(labels)})")
    if codes.size and (codes.min() < 0 or codes.max() >= len(labels)):
        raise ValueError(f"groups: codes must index group_labels (0 to {len(labels) - 1})")
    keep = np.isfinite(x) & np.isfinite(y)
    x, y, codes = x[keep], y[keep], codes[keep]
    at = centre if centre is not None else (float(x.mean()) if x.size else 0.0)
    fit = _CovariateFit(x, y, codes, labels, _number_or_nan(slope), cuts, float(at),
                        x_label, y_label)
    lines = int((np.isfinite(cuts) & np.isfinite(fit.slope)).sum())
    desc = (f"Scatter plot of {y_label} against {x_label}, {x.size} units in "
            f"{len(labels)} groups ({', '.join(labels)}), each with its own colour and "
            f"marker; fitted parallel lines (common slope): {lines} of {len(labels)}; a "
            "dotted line at the covariate mean.")
    return _accessible_figure(stem, lambda: _draw_covariate(fit),
                              title or f"{y_label} against {x_label} by group", desc)


def _accessible_figure(stem: str, draw: Callable[[], Figure | None], title: str,
                       desc: str) -> str | None:
    """Draw under the figure settings and give the SVG a <title> and <desc> (read by
    screen readers; the ids carry `stem` like every other id). The title is a heading, so
    it starts with a capital like the appendix's headings (sentence case)."""
    title = title[:1].upper() + title[1:]
    with _figure_settings(stem):
        figure = draw()
        if figure is None:
            return None
        svg = _to_svg(figure, stem)
    root = re.search(r"<svg\b[^>]*>", svg)
    labels = (f' role="img" aria-labelledby="{stem}-title {stem}-desc">'
              f'<title id="{stem}-title">{_xml_text(title)}</title>'
              f'<desc id="{stem}-desc">{_xml_text(desc)}</desc>')
    return svg[:root.end() - 1] + labels + svg[root.end():]


def _xml_text(text: str) -> str:
    return text.replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;")


# --- figures of marginal means, occasions and covariates ----------------------------


def _covariate_figures(dataset: Dataset, results: StudyResults, model: OutcomeResult,
                       residual: Residuals | None) -> dict[str, str]:
    """Outcome against each covariate by treatment cell (unit means over the occasions
    of a repeated-measures design), with the common slope through each cell's adjusted
    mean at the covariate mean, keyed ``f"{outcome}-covariate-{i}"``.

    Where the model also adjusts for blocks or other covariates, a point is the unit's
    partial residual for this covariate: its cell's line at its covariate value plus its
    model residual, i.e. its value with the blocks' and the other covariates' effects taken
    out (Larsen & McCleary 1972, Technometrics 14:781-790), so that points and lines show
    the same adjustment. Without them that sum is the unit's own value."""
    treatments = [f for f in results.factors if f.role == "treatment"]
    names = {f.name for f in treatments}
    group = next((g for g in model.marginal_means if set(g.factors) == names), None)
    if not model.covariate_slopes or group is None:
        return {}
    data = dataset.outcome(model.name)
    cells = treatment_cells(results, data)
    y, every = data.values, slice(None)
    within = [f for f in results.factors if f.role == "within"]
    if within:  # rows are unit by unit, one per cell of the within grid (complete units)
        m = int(np.prod([len(f.levels) for f in within]))
        y, every = data.values.reshape(-1, m).mean(axis=1), slice(None, None, m)
    labels = [c.level for c in results.unit_flow.read]
    by_levels = {mm.levels: mm.estimate for mm in group.means}
    names_in_order = [f.name for f in treatments]
    intercepts = [by_levels.get(tuple(cell[names_in_order.index(f)] for f in group.factors))
                  for cell in itertools.product(*(f.levels for f in treatments))]
    lines = np.array([np.nan if v is None else v for v in intercepts], dtype=float)
    adjusted = (any(f.role == "block" for f in results.factors) or len(model.covariate_slopes) > 1)
    out = {}
    y_label = f"{model.label} ({model.unit})" if model.unit else model.label
    for i, slope in enumerate(model.covariate_slopes, 1):
        if slope.estimate is None:
            continue
        x = data.covariates[i - 1][every]
        shown = y
        if adjusted:  # the caption says the points are adjusted: without residuals, no figure
            if residual is None or residual.residuals.shape != y.shape:
                continue
            shown = lines[cells[every]] + slope.estimate * (x - slope.mean) + residual.residuals
        stem = f"{model.name}-covariate-{i}"
        x_label = f"{slope.label} ({slope.unit})" if slope.unit else slope.label
        svg = covariate_scatter(x, shown, cells[every], labels, slope.estimate, intercepts,
                                x_label=x_label, y_label=y_label, centre=slope.mean, stem=stem)
        if svg is not None:
            out[stem] = svg
    return out


def _lines_of_means(results: StudyResults, model: OutcomeResult) -> dict[str, str]:
    """Interaction plots of every two-factor table of marginal means that holds at most one
    within factor's levels, and a profile plot of a repeated-measures outcome per within
    factor, keyed ``f"{outcome}-interaction-{i}"`` (i counts the outcome's marginal-means
    tables from 1) and ``f"{outcome}-profile"`` (one within factor) or
    ``f"{outcome}-profile-{j}"`` (the j-th of several, from 1)."""
    labels = {f.name: f.label for f in results.factors}
    levels = {f.name: f.levels for f in results.factors}
    y_label = f"{model.label} ({model.unit})" if model.unit else model.label
    out: dict[str, str] = {}
    within = [f for f in results.factors if f.role == "within"]
    names = {f.name for f in within}
    for i, group in enumerate(model.marginal_means, 1):
        if len(group.factors) != 2 or len(names & set(group.factors)) == 1:
            continue  # the profile plot shows a within factor by treatment cell
        a, b = group.factors
        by_levels = {m.levels: m for m in group.means}

        def grid(field):
            return [[getattr(by_levels.get((x, t)), field, None) for x in levels[a]] for t in levels[b]]

        stem = f"{model.name}-interaction-{i}"
        svg = interaction_plot(levels[a], levels[b], grid("estimate"), grid("ci_low"), grid("ci_high"),
                               x_label=labels[a], trace_label=labels[b], y_label=y_label, stem=stem)
        if svg is not None:
            out[stem] = svg
    if not is_repeated(model):
        return out
    treatments = tuple(f.name for f in results.factors if f.role == "treatment")
    cells = [c.level for c in results.unit_flow.read]
    for j, factor in enumerate(within, 1):
        # the means at each level of the factor by treatment cell (all units without one)
        group = next((g for g in model.marginal_means if g.factors == (*treatments, factor.name)), None)
        if group is None:
            continue
        by_levels = {m.levels: m for m in group.means}
        prefixes = [(c,) for c in cells] if treatments else [()]

        def rows(field):
            return [[getattr(by_levels.get((*p, level)), field, None) for level in factor.levels]
                    for p in prefixes]

        stem = f"{model.name}-profile" if len(within) == 1 else f"{model.name}-profile-{j}"
        svg = profile_plot(factor.levels, cells, rows("estimate"), rows("ci_low"), rows("ci_high"),
                           x_label=factor.label, y_label=y_label,
                           group_label=" \u00d7 ".join(f.label for f in results.factors
                                                        if f.role == "treatment"), stem=stem)
        if svg is not None:
            out[stem] = svg
    return out


# --- the flow of units -----------------------------------------------------------------

_FLOW_WIDTH_IN = 6.0
_FLOW_FONT = 7.5  # points
_FLOW_LINE_IN = 0.135  # one text line of the boxes
_FLOW_GAP_IN = 0.26  # between rows of boxes, room for the arrows
_CHAR_IN = 0.064  # a generous mean character width at `_FLOW_FONT` (browsers use their own sans)


@dataclass(frozen=True)
class _FlowBox:
    x: float  # centre, inches
    top: float
    width: float
    lines: tuple[str, ...]

    @property
    def height(self) -> float:
        return len(self.lines) * _FLOW_LINE_IN + 0.1

    @property
    def bottom(self) -> float:
        return self.top - self.height


def _box_lines(width: float, texts: list[str], counts: tuple[LevelCount, ...] = ()) -> tuple[str, ...]:
    """`texts` wrapped to the box, then the counts by group, never breaking one group's
    name from its count."""
    chars = max(int((width - 0.12) / _CHAR_IN), 12)
    lines = [line for text in texts for line in textwrap.wrap(text, chars) or [""]]
    entries = [f"{c.level}: {c.n}" for c in counts]
    line = ""
    for entry in entries:
        joined = f"{line}, {entry}" if line else entry
        if line and len(joined) > chars:
            lines.append(line + ",")
            line = entry
        else:
            line = joined
    if line:
        lines.append(line)
    return tuple(lines)


def unit_flow_boxes(flow: UnitFlow, labels: Mapping[str, str]) -> list[list[_FlowBox]]:
    """The boxes of the flow diagram, row by row from the top: units read and those set
    aside by each registered rule; eligible units by group; per outcome the units missing
    a value and those analysed, by group. `labels` maps outcome names to their labels."""
    read = sum(c.n for c in flow.read)
    eligible = sum(c.n for c in flow.eligible)
    main_w, side_w = 2.3, 2.9
    top = [_FlowBox(main_w / 2 + 0.05, 0.0, main_w, _box_lines(main_w, [f"Read from the data: {read} units"]))]
    if flow.exclusions:
        lines = [f"Excluded by a registered rule: {read - eligible}"] + [
            f"{x.rule} ({x.reason}): {x.total}" for x in flow.exclusions]
    else:
        lines = ["Excluded: 0 (the plan registers no exclusion rule)"]
    top.append(_FlowBox(_FLOW_WIDTH_IN - side_w / 2 - 0.05, 0.0, side_w, _box_lines(side_w, lines)))
    first = -max(b.height for b in top) - _FLOW_GAP_IN
    wide = _FLOW_WIDTH_IN - 0.1
    middle = [_FlowBox(_FLOW_WIDTH_IN / 2, first, wide,
                       _box_lines(wide, [f"Eligible for analysis: {eligible} units, by group"],
                                  flow.eligible))]
    second = middle[0].bottom - _FLOW_GAP_IN
    k = max(len(flow.outcomes), 1)
    w = (_FLOW_WIDTH_IN - 0.1 * (k + 1)) / k
    bottom = [
        _FlowBox(0.1 + w / 2 + i * (w + 0.1), second, w, _box_lines(w, [
            labels.get(o.outcome, o.outcome)[:1].upper() + labels.get(o.outcome, o.outcome)[1:],
            f"Missing a value: {sum(c.n for c in o.missing)}",
            f"Analysed: {sum(c.n for c in o.analysed)} units, by group"], o.analysed))
        for i, o in enumerate(flow.outcomes)]
    return [top, middle, bottom] if bottom else [top, middle]


def _draw_flow(rows: list[list[_FlowBox]]) -> Figure:
    from matplotlib.patches import Rectangle

    height = -min(b.bottom for row in rows for b in row) + 0.04
    figure = Figure(figsize=(_FLOW_WIDTH_IN, height))
    ax = figure.add_axes((0, 0, 1, 1))
    ax.set_xlim(0, _FLOW_WIDTH_IN)
    ax.set_ylim(-height + 0.02, 0.02)
    ax.axis("off")
    for row in rows:
        for b in row:
            ax.add_patch(Rectangle((b.x - b.width / 2, b.bottom), b.width, b.height,
                                   facecolor="#ffffff", edgecolor="#2B2B2B", linewidth=0.8))
            ax.text(b.x, b.top - 0.06, "\n".join(b.lines), ha="center",
                    va="top", fontsize=_FLOW_FONT, linespacing=1.3, multialignment="center")
    arrow = {"arrowstyle": "-|>", "color": "#2B2B2B", "linewidth": 0.8, "shrinkA": 0,
             "shrinkB": 0, "mutation_scale": 8}
    read, side = rows[0]
    eligible = rows[1][0]
    ax.annotate("", xy=(read.x, eligible.top), xytext=(read.x, read.bottom), arrowprops=arrow)
    mid = (read.bottom + eligible.top) / 2
    ax.annotate("", xy=(side.x - side.width / 2, mid), xytext=(read.x, mid), arrowprops=arrow)
    for b in rows[2] if len(rows) > 2 else ():
        ax.annotate("", xy=(b.x, b.top), xytext=(b.x, eligible.bottom), arrowprops=arrow)
    return figure


def unit_flow_diagram(results: StudyResults) -> str | None:
    """The flow of units as boxes and arrows (read, excluded by rule, eligible by group,
    per outcome missing and analysed by group), SVG text with a <title> and <desc>; None
    when no unit was read."""
    flow = results.unit_flow
    if not flow.read:
        return None
    labels = {o.name: o.label for o in results.outcomes}
    rows = unit_flow_boxes(flow, labels)
    desc = " ".join(" ".join(b.lines) + "." for row in rows for b in row)
    return _accessible_figure(UNIT_FLOW_FIGURE, lambda: _draw_flow(rows), "Flow of units", desc)
