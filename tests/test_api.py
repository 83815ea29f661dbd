"""The Python API is the CLI's code path: same results, same files."""

from __future__ import annotations

import dataclasses
from pathlib import Path

import pytest

from appendix import api
from appendix.errors import PlanError
from appendix.results import to_json


def test_compute_gives_frozen_typed_results(demo_study: Path):
    computed = api.compute(demo_study)
    first = computed.results.outcomes[0]
    assert (first.name, first.role) == ("dry_mass", "primary")
    with pytest.raises(dataclasses.FrozenInstanceError):
        first.tables[0].rows[0].statistic = 0.0  # type: ignore[misc]
    # scipy.stats.f_oneway (scipy 1.17.1) on the same analysed units is the reference
    from scipy.stats import f_oneway

    data = computed.dataset.outcome("dry_mass")
    groups = [data.values[data.codes == i] for i in range(4)]
    reference = f_oneway(*groups)
    (row,) = first.tables[0].rows  # the one-term model: the factor's row
    assert row.statistic == pytest.approx(reference.statistic, rel=1e-12)
    assert row.p == pytest.approx(reference.pvalue, rel=1e-9)


def test_render_then_run_write_the_same_results(demo_study: Path, tmp_path: Path):
    computed = api.compute(demo_study)
    rendered = api.render(computed)
    assert rendered.results_json == to_json(computed.results)
    assert rendered.html.startswith("<!DOCTYPE html>")
    record = api.run(demo_study, tmp_path / "run", pdf=False)
    assert (tmp_path / "run" / "results.json").read_text(encoding="utf-8") == rendered.results_json
    assert "appendix.pdf" not in record.files and "results.json" in record.files


def test_load_plan_raises_plan_error_with_every_problem(tmp_path: Path):
    bad = tmp_path / "study.yaml"
    bad.write_text("format: 2\nalpha: 0.7\n", encoding="utf-8")
    with pytest.raises(PlanError) as caught:
        api.load_plan(bad)
    paths = [problem.path for problem in caught.value.problems]
    assert {"format", "alpha", "study", "data", "design", "outcomes"} <= set(paths)


def test_out_of_core_run_matches_the_in_memory_run(demo_study: Path, tmp_path: Path):
    memory = api.run(demo_study, tmp_path / "memory", pdf=False, out_of_core=False).results
    duck = api.run(demo_study, tmp_path / "duck", pdf=False, out_of_core=True).results
    for a, b in zip(memory.outcomes, duck.outcomes):
        assert b.sample_of == a.n_units and b.sample_size == a.n_units
        assert b.arithmetic == "float64" and a.arithmetic == "exact-decimal"
        (table_a,), (table_b,) = a.tables, b.tables
        pairs = [(ra.sum_of_squares, rb.sum_of_squares) for ra, rb in zip(table_a.rows, table_b.rows)]
        pairs += [(table_a.residual_ss, table_b.residual_ss), (table_a.total_ss, table_b.total_ss)]
        for ss_a, ss_b in pairs:  # between, within (residual) and total, as before
            assert ss_b == pytest.approx(ss_a, rel=1e-12)
        assert table_b.rows[0].p == pytest.approx(table_a.rows[0].p, rel=1e-10)
        assert [c.decision for c in b.conclusions] == [c.decision for c in a.conclusions]
        # the whole demo fits in the subsample, so row-level statistics agree too
        assert b.robust.kruskal.statistic == pytest.approx(a.robust.kruskal.statistic, rel=1e-12)
    assert duck.unit_flow == memory.unit_flow
    html = (tmp_path / "duck" / "appendix.html").read_text(encoding="utf-8")
    assert "aggregated out of core" in html
