"""A large in-memory study: every unit enters the tests, while Shapiro–Wilk and the point
clouds use deterministic subsamples that the appendix states (invented data)."""

from __future__ import annotations

import re
from pathlib import Path

import numpy as np

from appendix import api
from appendix.figure_spec import PLOT_POINTS
from appendix.stats.diagnostics import SHAPIRO_MAX_N

N = 25_000


def test_large_study_subsamples_only_figures_and_shapiro(tmp_path: Path):
    rng = np.random.default_rng(11)
    codes = rng.integers(0, 3, N)
    values = np.round(20 + 0.2 * codes + rng.normal(0, 2, N), 2)
    lines = ["unit,arm,y"] + [f"u{i},a{c},{v:.2f}" for i, (c, v) in enumerate(zip(codes, values))]
    (tmp_path / "units.csv").write_text("\n".join(lines) + "\n", encoding="utf-8")
    study = tmp_path / "study.yaml"
    study.write_text("format: 1\nstudy: {id: large, title: Invented large study}\n"
                     "data: {source: units.csv, unit: unit}\n"
                     "design: {factors: [{name: arm, levels: [a0, a1, a2]}]}\n"
                     "outcomes: [{name: y, label: response, unit: mg, role: primary}]\n",
                     encoding="utf-8")
    record = api.run(study, tmp_path / "run", pdf=False)
    outcome = record.results.outcomes[0]
    assert outcome.n_units == N and outcome.arithmetic == "exact-decimal"
    normality = outcome.diagnostics.normality
    assert normality.n == SHAPIRO_MAX_N
    assert [w.code for w in normality.warnings] == ["normality-subsample"]
    # scipy.stats.f_oneway (scipy 1.17) on every unit is the reference for the F test
    from scipy.stats import f_oneway

    reference = f_oneway(*(values[codes == i] for i in range(3)))
    assert abs(outcome.tables[0].rows[0].statistic - reference.statistic) <= 1e-9 * reference.statistic
    html = (tmp_path / "run" / "appendix.html").read_text(encoding="utf-8")
    statement = (f"Points are a deterministic subsample of {PLOT_POINTS} of the {N} units; "
                 "every unit enters the boxes, means and tests.")
    # said once, in the first of the distribution, Q-Q and residual figures; the others point
    # back to it (captions.Captions.note)
    assert html.count(statement) == 1
    assert len(re.findall(r"Other notes as for Figure \d+\.|As for Figure \d+\.", html)) >= 2
    rerun = api.run(study, tmp_path / "again", pdf=False)
    assert rerun.results == record.results
    assert (tmp_path / "again" / "appendix.html").read_bytes() == \
        (tmp_path / "run" / "appendix.html").read_bytes()
