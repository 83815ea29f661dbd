"""The command line: exit codes, messages, and what is (not) written."""

from __future__ import annotations

import datetime as dt
import io
import subprocess
import sys
from pathlib import Path

import pytest

from appendix import __version__, api
from appendix.cli import main

FIXED_CLOCK = lambda: dt.datetime(2026, 3, 1, 12, 0, tzinfo=dt.timezone.utc)  # noqa: E731


def run_cli(argv, cwd: Path):
    out, err = io.StringIO(), io.StringIO()
    code = main(argv, stdout=out, stderr=err, cwd=cwd, clock=FIXED_CLOCK)
    return code, out.getvalue(), err.getvalue()


def tree(folder: Path) -> dict[str, bytes]:
    return {p.relative_to(folder).as_posix(): p.read_bytes()
            for p in sorted(folder.rglob("*")) if p.is_file()}


def test_check_lists_the_run_and_writes_nothing(demo_study: Path):
    before = tree(demo_study.parent.parent)
    code, out, err = run_cli(["check", str(demo_study)], demo_study.parent.parent)
    assert (code, err) == (0, "")
    assert tree(demo_study.parent.parent) == before
    lines = out.splitlines()
    assert lines[0] == ("study seed-coating-demo: Seed coatings and early growth of spring "
                        "wheat seedlings (invented demo)")
    # 48 units generated, 12 per coating; two excluded by rule X1 (see generate.py)
    assert "units read: uncoated 12, chitosan 12, seaweed 12, humic 12" in lines
    assert any(line.startswith("excluded by X1 (") and line.endswith("): 2") for line in lines)
    assert lines[-1] == "nothing was written"


def test_bad_plan_exits_2_with_message_and_no_traceback(tmp_path: Path):
    study = tmp_path / "study.yaml"
    study.write_text("format: 1\nstudyy: {}\n", encoding="utf-8")
    code, out, err = run_cli(["check", "study.yaml"], tmp_path)
    assert code == 2 and out == ""
    assert "Traceback" not in err
    assert "unknown key; did you mean 'study'?" in err
    assert list(tmp_path.iterdir()) == [study]


def test_missing_study_file_exits_2(tmp_path: Path):
    code, _, err = run_cli(["run", "absent.yaml"], tmp_path)
    assert code == 2
    assert "absent.yaml" in err and "Traceback" not in err


def test_usage_error_exits_2(tmp_path: Path):
    code, _, err = run_cli(["frobnicate"], tmp_path)
    assert code == 2
    assert "invalid choice: 'frobnicate'" in err


def test_no_command_prints_help_and_exits_2(tmp_path: Path):
    code, _, err = run_cli([], tmp_path)
    assert code == 2 and "COMMAND" in err


def test_version_exits_0(tmp_path: Path, capsys):
    code, _, _ = run_cli(["--version"], tmp_path)
    assert code == 0
    assert capsys.readouterr().out.strip() == f"appendix {__version__}"


def test_internal_error_exits_3_and_writes_a_log(tmp_path: Path, demo_study: Path, monkeypatch):
    def broken(_study):
        raise ZeroDivisionError("simulated bug")

    monkeypatch.setattr(api, "check", broken)
    code, _, err = run_cli(["check", str(demo_study)], tmp_path)
    assert code == 3
    assert "internal error (a bug in appendix): ZeroDivisionError('simulated bug')" in err
    log = tmp_path / "appendix-error-20260301T120000.log"
    text = log.read_text(encoding="utf-8")
    assert text.startswith(f"appendix {__version__} internal error")
    assert "scipy " in text and "ZeroDivisionError: simulated bug" in text


def test_python_dash_m_runs_the_cli():
    done = subprocess.run([sys.executable, "-m", "appendix", "--version"],
                          capture_output=True, text=True, check=False)
    assert done.returncode == 0
    assert done.stdout.strip() == f"appendix {__version__}"


@pytest.mark.slow
def test_failed_run_leaves_previous_appendix_untouched(demo_study: Path, monkeypatch):
    from appendix import render

    root = demo_study.parent
    code, out, _ = run_cli(["run", "study.yaml", "--no-pdf", "--out", "run"], root)
    assert code == 0 and out.startswith("wrote ")
    before = tree(root / "run")

    def fail(*_args, **_kwargs):
        raise RuntimeError("simulated crash while rendering the PDF")

    monkeypatch.setattr(render, "render_pdf", fail)
    code, _, err = run_cli(["run", "study.yaml", "--out", "run"], root)
    assert code == 3 and "simulated crash" in err
    assert tree(root / "run") == before
    assert sorted(p.name for p in root.iterdir() if p.name.startswith(".")) == []


def test_selftest_reproduces_the_nist_certified_values(tmp_path: Path):
    # NIST StRD ANOVA certified values, read from scipy's installed nist_anova files
    code, out, err = run_cli(["selftest"], tmp_path)
    lines = out.splitlines()
    assert (code, err) == (0, "")
    assert lines[-1] == "11 passed, 0 failed"
    assert "  SmLs09   lowest LRE 15.0 (every value)  pass" in lines


def test_selftest_reports_a_missing_or_failing_check(tmp_path: Path, monkeypatch):
    from appendix import nist

    monkeypatch.setattr(nist, "SELFTEST_FLOOR", 15.5)  # beyond the 15 certified digits
    code, out, _ = run_cli(["selftest"], tmp_path)
    assert code == 1 and out.splitlines()[-1] == "0 passed, 11 failed"
    monkeypatch.setattr(nist, "NIST_DIR", tmp_path / "absent")
    code, out, _ = run_cli(["selftest"], tmp_path)
    assert code == 1
    assert out.strip() == (f"NIST StRD ANOVA data not found under {tmp_path / 'absent'}; "
                           "nothing was checked")


def test_run_prints_the_decision_of_each_tested_term_of_a_factorial_outcome(tmp_path: Path):
    # Reference: statsmodels' formula OLS and anova_lm (type 2) on the same rows decide each
    # term at the plan's alpha (.05, the default); the bench block adjusts the model and is
    # not a conclusion. The data are invented (seeded) by the designs' end-to-end tests.
    from tests.test_designs_end_to_end import _factorial, _statsmodels_table

    frame = _factorial(tmp_path, ss=2, covariate=False, interaction=True)
    table, _ = _statsmodels_table(frame, 2, covariate=False, interaction=True)
    p = table["PR(>F)"]
    decided = {term: "rejected" if p[f"C({term})" if ":" not in term else term] < 0.05 else "not rejected"
               for term in ("coating", "water", "C(coating):C(water)")}
    code, out, err = run_cli(["run", "study.yaml", "--no-pdf", "--out", "run"], tmp_path)
    assert (code, err) == (0, "")
    assert out.splitlines() == [
        f"wrote {tmp_path / 'run'}",
        f"  Dry mass (primary): Coating: {decided['coating']}; Water: {decided['water']}; "
        f"Coating × water: {decided['C(coating):C(water)']}"]
