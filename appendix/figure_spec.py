"""What the figure code and the page agree on, so that the page is rendered from drawn
figures without loading the code that draws them.

A figure's key is ``{outcome}-{kind}``; `FIGURE_KINDS` are the kinds drawn for every
outcome, in the order the appendix shows them (the contrasts' forest plot, interaction,
profile and covariate figures are added where they apply). A point cloud larger than
`PLOT_POINTS` is drawn from a deterministic subsample of that size, and the caption says so.
"""

#: Figure kinds drawn for every outcome, in the order the appendix shows them.
FIGURE_KINDS: tuple[str, ...] = ("distribution", "means", "qq", "residuals", "f-reference")

#: Point clouds larger than this are drawn from a deterministic subsample of this size
#: (appendix.stats.sampling); boxes, means and lines still use every unit.
PLOT_POINTS = 20_000


def cells_words(results) -> str:
    """The treatment cells of `results` (a `StudyResults`) in a sentence: the factor's label
    as the plan writes it (``seed coating``), or the crossed factors' (``seed coating ×
    irrigation regime``); empty where no factor is a treatment."""
    return " \u00d7 ".join(f.label or f.name for f in results.factors if f.role == "treatment")


def cells_label(results) -> str:
    """What a figure's axis and a table's column call the treatment cells of `results`:
    `cells_words` with a capital (``Seed coating``); ``Group`` where no factor is a treatment."""
    text = cells_words(results)
    return text[:1].upper() + text[1:] if text else "Group"

#: The key of the unit-flow diagram (one per study, drawn from the results' unit flow).
UNIT_FLOW_FIGURE = "unit-flow"
