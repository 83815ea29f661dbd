"""The Python API, for notebooks and scripts; the command line calls exactly these.

>>> from appendix import api
>>> computed = api.compute("studies/seed-coating/study.yaml")        # doctest: +SKIP
>>> computed.results.outcomes[0].tables[0].rows[0].statistic                # doctest: +SKIP
>>> api.run("studies/seed-coating/study.yaml", out_dir="out/demo")  # doctest: +SKIP

Stages: `load_plan` -> `load_data` -> `analyse` -> `render` -> `run` writes the folder.
"""

from __future__ import annotations

import datetime as _dt
import platform
import sys
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from pathlib import Path

from appendix.data.build import build_dataset
from appendix.data.dataset import Dataset
from appendix.deviations import registration_summary
from appendix.deviations import unacknowledged as _unacknowledged
from appendix.errors import UserError
from appendix.plan.load import LoadedPlan, load_plan
from appendix.plan.lock import Lock, LockOutcome, lock_path, lock_plan, read_lock
from appendix.results import Deviation, StudyResults, to_json
from appendix.runner import Residuals, study_analysis
from appendix.versions import software_versions

__all__ = ["Computed", "Rendered", "RunRecord", "load_plan", "load_data", "analyse",
           "compute", "check", "render", "run", "lock", "verify", "unacknowledged",
           "software_versions"]

@dataclass(frozen=True)
class Computed:
    """A plan, its dataset and everything computed from them."""

    loaded: LoadedPlan
    dataset: Dataset
    results: StudyResults
    residuals: Mapping[str, Residuals] = field(default_factory=dict)


@dataclass(frozen=True)
class Rendered:
    """The finished appendix in memory: canonical JSON, figures (SVG) and HTML."""

    results_json: str
    figures: dict[str, str]
    html: str


@dataclass(frozen=True)
class RunRecord:
    folder: Path
    results: StudyResults
    files: tuple[str, ...]


def load_data(loaded: LoadedPlan, *, out_of_core: bool | None = None) -> Dataset:
    """Read, check and exclude: the dataset stage.

    A source with more rows than fit comfortably in memory (Parquet by its metadata,
    CSV/TSV by an estimate; see `appendix.data.outofcore.should_go_out_of_core`) is
    aggregated out of core by DuckDB; `out_of_core` forces either way.
    """
    from appendix.data.checksums import confirm_unchanged, fingerprint

    before = fingerprint(loaded.data_path)
    dataset = _load_data(loaded, out_of_core)
    confirm_unchanged(loaded.data_path, before)  # the bytes hashed are the bytes analysed
    return dataset


def _load_data(loaded: LoadedPlan, out_of_core: bool | None) -> Dataset:
    from appendix.data import outofcore

    one_factor = loaded.plan.data_route == "one-factor"
    if out_of_core is None:
        out_of_core = one_factor and outofcore.should_go_out_of_core(loaded.data_path)
    if out_of_core:
        if not one_factor:
            raise UserError("out-of-core aggregation handles one-factor designs only in this "
                            "version; this plan has several factors, covariates or a within factor")
        return outofcore.build_dataset_out_of_core(loaded)
    return build_dataset(loaded)


def analyse(loaded: LoadedPlan, dataset: Dataset, lock: Lock | None = None) -> StudyResults:
    """Every registered analysis and every deviation from the registered plan; `lock`
    defaults to the registration lock beside the study file (``study.lock.json``)."""
    return _computed(loaded, dataset, lock).results


def _computed(loaded: LoadedPlan, dataset: Dataset, lock: Lock | None = None) -> Computed:
    lock = lock if lock is not None else read_lock(loaded.path)
    analysis = study_analysis(loaded, dataset, software_versions(), lock)
    return Computed(loaded, dataset, analysis.results, analysis.residuals)


def lock(study: str | Path, *, relock: bool = False, reason: str | None = None,
         clock: Callable[[], _dt.datetime] | None = None,
         environ: Mapping[str, str] | None = None) -> LockOutcome:
    """Register the study's plan in ``study.lock.json`` beside it (see `appendix.plan.lock`):
    a first lock, a no-op for the same plan, or a revision with `relock` and a `reason`."""
    return lock_plan(load_plan(Path(study)), relock=relock, reason=reason, clock=clock,
                     environ=environ)


def unacknowledged(results: StudyResults) -> tuple[Deviation, ...]:
    """The run's deviations that neither the plan nor a revision of its lock acknowledges."""
    return _unacknowledged(results.deviations)


def compute(study: str | Path, *, out_of_core: bool | None = None) -> Computed:
    """Plan, data and results for a study file; raises `appendix.errors.UserError`."""
    loaded = load_plan(Path(study))
    dataset = load_data(loaded, out_of_core=out_of_core)
    return _computed(loaded, dataset)


def check(study: str | Path) -> list[str]:
    """What a run would compute, as lines of text; reads the plan and data, writes nothing."""
    from appendix.preview import describe_run

    loaded = load_plan(Path(study))
    lines = describe_run(loaded, load_data(loaded))
    tail = lines[-1:] if lines and lines[-1] == "nothing was written" else []
    registered = registration_summary(loaded.plan.model_dump(mode="json"),
                                      read_lock(loaded.path))
    return [*lines[:len(lines) - len(tail)], *registered, *tail]


def render(computed: Computed, options=None) -> Rendered:
    """Figures and HTML from the results; rendering sees only the typed results (what
    results.json holds) and the figures."""
    from appendix import figures, render as html

    options = options or html.RenderOptions()
    text = to_json(computed.results)
    svgs = figures.make_figures(computed.dataset, computed.results, computed.residuals)
    page = html.render_html(computed.results, svgs, options)
    return Rendered(results_json=text, figures=svgs, html=page)


def run(study: str | Path, out_dir: str | Path | None = None, *,
        out_root: str | Path = "out", options=None,
        pdf: bool = True, clock: Callable[[], _dt.datetime] | None = None,
        progress: Callable[[str], None] | None = None,
        out_of_core: bool | None = None,
        notice: Callable[[str], None] | None = None) -> RunRecord:
    """Compute and render a study into its run folder (`out_dir`, by default
    ``<out_root>/<study id>/``), replacing the folder only once everything is written.
    `notice` hears what was put right of an earlier run that was killed (default: `progress`)."""
    from appendix import publish, render as html
    from appendix.data.checksums import confirm_unchanged, fingerprint
    from appendix.names import RECORDS_FILE
    from appendix.records import records_text
    from appendix.staging import recover, staged_folder
    from appendix.targets import check_run_target

    say = progress or (lambda _message: None)
    say("reading plan and data")
    loaded = load_plan(Path(study))
    folder = Path(out_dir) if out_dir is not None else Path(out_root) / loaded.plan.study.id
    inputs = (loaded.path, loaded.data_path, lock_path(loaded.path))
    for note in recover(folder):  # what a killed run left, put right first
        (notice or say)(note)
    check_run_target(folder, inputs)  # before any work: a refused folder costs nothing
    before = fingerprint(loaded.data_path)
    dataset = load_data(loaded, out_of_core=out_of_core)
    computed = _computed(loaded, dataset)
    say("computing figures and HTML")
    options = options or html.RenderOptions()
    rendered = render(computed, options)
    now = publish.run_time(clock)  # SOURCE_DATE_EPOCH when set, else the clock
    records = records_text(computed.loaded, computed.dataset)
    confirm_unchanged(loaded.data_path, before)  # the records read the file once more

    with staged_folder(folder, check=lambda: check_run_target(folder, inputs)) as staging:
        written = publish.write_run(
            staging, results=computed.results, results_json=rendered.results_json,
            html=rendered.html, figures=rendered.figures, options=options,
            study_file=computed.loaded.path, now=now, pdf=pdf, progress=say,
            extra_files={RECORDS_FILE: records},
            environment={"python": sys.version.split()[0], "platform": platform.platform()})
    say(f"wrote {folder}")
    return RunRecord(folder=folder, results=computed.results, files=written)


def verify(package: str | Path):
    """Check a reviewer package (`appendix.bundle.verify`): every hash, the run manifest and
    the PDF's evidence, and its results recomputed by `run` from the packaged plan and data;
    returns the `appendix.bundle.Verification`."""
    from appendix import bundle

    return bundle.verify(Path(package), recompute=lambda study, folder: run(study, folder, pdf=False))
