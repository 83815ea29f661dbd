"""Figures of designs beyond one factor, from results: interaction plots of two-factor
marginal means and the profile plot of a repeated-measures outcome (drawn by
`appendix.figures`)."""

from __future__ import annotations

from appendix.figures import interaction_plot, profile_plot
from appendix.results import StudyResults


def model_figures(results: StudyResults) -> dict[str, str]:
    """SVG text of every model figure of the run, keyed by file stem."""
    figures: dict[str, str] = {}
    for model in results.models:
        figures.update(_model_figures(results, model))
    return figures


def _model_figures(results: StudyResults, model) -> dict[str, str]:
    """Interaction plots of every two-factor table of marginal means, and the profile
    plot of a repeated-measures outcome, keyed ``f"{outcome}-interaction-{i}"`` (i counts
    the outcome's marginal-means tables from 1) and ``f"{outcome}-profile"``."""
    labels = {f.name: f.label for f in results.factors}
    levels = {f.name: f.levels for f in results.factors}
    y_label = f"{model.label} ({model.unit})" if model.unit else model.label
    out: dict[str, str] = {}
    for i, group in enumerate(model.marginal_means, 1):
        if len(group.factors) != 2:
            continue
        a, b = group.factors
        by_levels = {m.levels: m for m in group.means}

        def grid(field):
            return [[getattr(by_levels.get((x, t)), field, None) for x in levels[a]] for t in levels[b]]

        stem = f"{model.name}-interaction-{i}"
        svg = interaction_plot(levels[a], levels[b], grid("estimate"), grid("ci_low"), grid("ci_high"),
                               x_label=labels[a], trace_label=labels[b], y_label=y_label, stem=stem)
        if svg is not None:
            out[stem] = svg
    within = next((f for f in results.factors if f.role == "within"), None)
    if model.sphericity is not None and within is not None:
        cells = [c.level for c in results.unit_flow.read]
        m = len(within.levels)
        groups = model.descriptives.groups

        def rows(field):
            return [[getattr(groups[g * m + w], field) for w in range(m)] for g in range(len(cells))]

        stem = f"{model.name}-profile"
        svg = profile_plot(within.levels, cells, rows("mean"), rows("ci_low"), rows("ci_high"),
                           x_label=within.label, y_label=y_label,
                           group_label=" \u00d7 ".join(f.label for f in results.factors
                                                        if f.role == "treatment"), stem=stem)
        if svg is not None:
            out[stem] = svg
    return out
