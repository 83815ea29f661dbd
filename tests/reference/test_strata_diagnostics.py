"""Normality is checked where the tests are: in a repeated-measures design, the between-units
tests rest on the unit means' residuals and the within-units tests on the within-units
residuals. Each W is compared with scipy.stats.shapiro (scipy 1.17) on residuals from
statsmodels OLS (0.15): the unit means on the treatment factor, and the long-format values
on unit, visit and visit x treatment (unit effects absorb the between stratum, so its
residuals are those of the within-units error). The data are invented here (seeded)."""

from __future__ import annotations

import re

import numpy as np
import pandas as pd
import pytest
from scipy import stats

from appendix.api import compute, render

STUDY = """\
format: 1
study: {id: invented-strata, title: Invented repeated data for tests}
data:
  source: units.csv
  unit: unit_id
design:
  factors:
    - {name: diet, label: Diet, levels: [standard, enriched]}
    - {name: week, label: Week, role: within, levels: [w1, w2, w3, w4]}
  interactions: [[diet, week]]
  sums_of_squares: 2
repeated: {missing: complete-units}
outcomes:
  - {name: weight, label: Body weight, unit: g, role: primary}
assumptions: {normality: shapiro-wilk}
"""


def test_each_stratum_has_its_own_normality_check(tmp_path):
    rng = np.random.default_rng(12)
    rows = []
    for d, diet in enumerate(["standard", "enriched"]):
        for u in range(11):
            unit = f"{diet[0].upper()}{u:02d}"
            level = rng.normal(0, 4)
            for w, week in enumerate(["w1", "w2", "w3", "w4"]):
                # skewed within-unit errors: the within stratum is the one that is not normal
                y = 200 + 5 * w + 2 * d * w + level + 4.0 * rng.lognormal(0.0, 1.0)
                rows.append((unit, diet, week, round(y, 2)))
    frame = pd.DataFrame(rows, columns=["unit_id", "diet", "week", "weight"])
    frame.to_csv(tmp_path / "units.csv", index=False)
    (tmp_path / "study.yaml").write_text(STUDY)
    computed = compute(tmp_path / "study.yaml")
    (model,) = computed.results.outcomes
    dx = model.diagnostics
    assert (dx.normality.residuals, dx.within_normality.residuals) == ("unit-means", "within-units")
    import statsmodels.formula.api as smf

    means = frame.groupby(["unit_id", "diet"], as_index=False)["weight"].mean()
    between = smf.ols("weight ~ C(diet)", data=means).fit().resid
    for week in ["w2", "w3", "w4"]:   # week x diet, coded without the columns units absorb
        frame[f"e_{week}"] = ((frame.week == week) & (frame.diet == "enriched")).astype(float)
    within = smf.ols("weight ~ C(unit_id) + C(week) + e_w2 + e_w3 + e_w4", data=frame).fit().resid
    w_between, p_between = stats.shapiro(between)
    w_within, p_within = stats.shapiro(within)
    assert dx.normality.n == 22 and dx.within_normality.n == 88
    assert dx.normality.statistic == pytest.approx(w_between, rel=1e-9)
    assert dx.within_normality.statistic == pytest.approx(w_within, rel=1e-9)
    assert dx.within_normality.p == pytest.approx(p_within, rel=1e-6)
    assert p_within < 0.05   # the skewed errors are found where they are
    html = render(computed).html
    tested = re.findall(r'Shapiro&#8211;Wilk <i>W</i></th><td class="text">([^<(]*)', html)
    assert [t.strip() for t in tested] == ["the residuals of the unit means, on which the "
                                           "between-units tests rely", "the within-units residuals"]
    status = next(a for a in dx.assumptions if a.assumption == "normally distributed residuals")
    assert "the within-units residuals: W = " in status.detail
    # the status refers to the Q-Q plot only because the appendix draws it; Welch's test is
    # not defined for this design, so no status claims it is shown
    assert "Q-Q" in status.detail and f'id="figure-{model.name}-qq"' in html
    assert "Welch" not in " ".join(a.detail for a in dx.assumptions)
