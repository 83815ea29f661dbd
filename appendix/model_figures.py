"""Figures of designs beyond one factor: interaction plots of two-factor marginal means,
the profile plot of a repeated-measures outcome, and the covariate scatter with the
fitted parallel lines (drawn by `appendix.figures`)."""

from __future__ import annotations

import itertools

import numpy as np

from appendix.data.dataset import Dataset
from appendix.figures import covariate_scatter, interaction_plot, profile_plot
from appendix.results import StudyResults


def model_figures(dataset: Dataset, results: StudyResults) -> dict[str, str]:
    """SVG text of every model figure of the run, keyed by file stem."""
    figures: dict[str, str] = {}
    for model in results.models:
        figures.update(_model_figures(results, model))
        figures.update(_covariate_figures(dataset, results, model))
    return figures


def _covariate_figures(dataset: Dataset, results: StudyResults, model) -> dict[str, str]:
    """Outcome against each covariate by treatment cell (unit means over the occasions
    of a repeated-measures design), with the common slope through each cell's adjusted
    mean at the covariate mean, keyed ``f"{outcome}-covariate-{i}"``."""
    treatments = [f for f in results.factors if f.role == "treatment"]
    names = {f.name for f in treatments}
    group = next((g for g in model.marginal_means if set(g.factors) == names), None)
    if not model.covariate_slopes or group is None:
        return {}
    data = dataset.outcome(model.name)
    index = {f.name: j for j, f in enumerate(results.factors)}
    cells = np.zeros(data.values.size, dtype=np.int64)
    for factor in treatments:
        cells = cells * len(factor.levels) + data.factors[index[factor.name]]
    y, every = data.values, slice(None)
    within = next((f for f in results.factors if f.role == "within"), None)
    if within is not None:  # rows are unit by unit, one per occasion (complete units)
        m = len(within.levels)
        y, every = data.values.reshape(-1, m).mean(axis=1), slice(None, None, m)
    labels = [c.level for c in results.unit_flow.read]
    by_levels = {mm.levels: mm.estimate for mm in group.means}
    names_in_order = [f.name for f in treatments]
    intercepts = [by_levels.get(tuple(cell[names_in_order.index(f)] for f in group.factors))
                  for cell in itertools.product(*(f.levels for f in treatments))]
    out = {}
    y_label = f"{model.label} ({model.unit})" if model.unit else model.label
    for i, slope in enumerate(model.covariate_slopes, 1):
        if slope.estimate is None:
            continue
        stem = f"{model.name}-covariate-{i}"
        svg = covariate_scatter(data.covariates[i - 1][every], y, cells[every], labels, slope.estimate,
                                intercepts, x_label=slope.label, y_label=y_label, centre=slope.mean,
                                stem=stem)
        if svg is not None:
            out[stem] = svg
    return out


def _model_figures(results: StudyResults, model) -> dict[str, str]:
    """Interaction plots of every two-factor table of marginal means, and the profile
    plot of a repeated-measures outcome, keyed ``f"{outcome}-interaction-{i}"`` (i counts
    the outcome's marginal-means tables from 1) and ``f"{outcome}-profile"``."""
    labels = {f.name: f.label for f in results.factors}
    levels = {f.name: f.levels for f in results.factors}
    y_label = f"{model.label} ({model.unit})" if model.unit else model.label
    out: dict[str, str] = {}
    within = next((f for f in results.factors if f.role == "within"), None)
    for i, group in enumerate(model.marginal_means, 1):
        if len(group.factors) != 2 or (within is not None and within.name in group.factors):
            continue  # the profile plot shows the within factor
        a, b = group.factors
        by_levels = {m.levels: m for m in group.means}

        def grid(field):
            return [[getattr(by_levels.get((x, t)), field, None) for x in levels[a]] for t in levels[b]]

        stem = f"{model.name}-interaction-{i}"
        svg = interaction_plot(levels[a], levels[b], grid("estimate"), grid("ci_low"), grid("ci_high"),
                               x_label=labels[a], trace_label=labels[b], y_label=y_label, stem=stem)
        if svg is not None:
            out[stem] = svg
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
