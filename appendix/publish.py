"""The files of a run folder: results, page, figures, PDF/A-3b with its evidence, and the
manifest written last (SHA-256 of every input and output, versions, run time).

`write_run` writes into the staging folder that `appendix.staging.staged_folder` swaps
into place, so a failed or killed run leaves the previous one untouched.
"""

from __future__ import annotations

import datetime as _dt
import json
import os
from collections.abc import Callable, Mapping
from pathlib import Path

from typing_extensions import NotRequired, TypedDict  # the form pydantic validates on 3.10-3.11

from appendix import __version__
from appendix.epoch import source_date
from appendix.hashing import sha256_file
from appendix.names import FIGURES_FOLDER, HTML_FILE, MANIFEST_FILE, PDF_FILE, RESULTS_FILE, figure_file
from appendix.results import InputFile, Software, StudyResults, to_plain
from appendix.versions import installed_distributions

MANIFEST_FORMAT = 1


class ManifestOutput(TypedDict):
    path: str
    sha256: str
    bytes: int


class ManifestTool(TypedDict):
    name: str
    version: str


class RunManifest(TypedDict):
    """The shape of manifest.json (what `write_manifest` writes), checked when read back."""

    format_version: int
    tool: ManifestTool
    run_time: str
    study: str
    plan_sha256: str
    inputs: list[InputFile]
    outputs: list[ManifestOutput]
    software: list[Software]
    environment: dict[str, str]
    distributions: list[Software]
    study_file: NotRequired[str]


def run_time(clock: Callable[[], _dt.datetime] | None = None,
             environ: Mapping[str, str] | None = None) -> _dt.datetime:
    """The run's time: SOURCE_DATE_EPOCH when set (so two runs can be byte-identical),
    else the clock's (UTC now by default)."""
    fixed = source_date(os.environ if environ is None else environ)
    if fixed is not None:
        return fixed
    return (clock or (lambda: _dt.datetime.now(_dt.timezone.utc)))()


def _manifest(folder: Path, results: StudyResults, now: _dt.datetime,
              environment: dict[str, str], study_file: Path | None) -> RunManifest:
    """The manifest of `folder` as it stands (every file in it is listed as an output)."""
    outputs = sorted(p.relative_to(folder).as_posix() for p in folder.rglob("*") if p.is_file())
    manifest: RunManifest = {
        "format_version": MANIFEST_FORMAT,
        "tool": {"name": "appendix", "version": __version__},
        "run_time": now.astimezone(_dt.timezone.utc).isoformat(timespec="seconds"),
        "study": results.study.id,
        "plan_sha256": results.plan_sha256,
        "inputs": to_plain(results.inputs),
        "outputs": [
            {"path": rel, "sha256": sha256_file(folder / rel), "bytes": (folder / rel).stat().st_size}
            for rel in outputs
        ],
        "software": to_plain(results.software),
        "environment": environment,
        "distributions": [{"name": d.name, "version": d.version}
                          for d in installed_distributions()],
    }
    if study_file is not None:
        # where `appendix pack` finds the study file, its lock and its data again
        manifest["study_file"] = str(Path(study_file).resolve())
    return manifest


def manifest_text(manifest: RunManifest) -> str:
    """The canonical text of a manifest: sorted keys, two-space indent, final newline."""
    return json.dumps(manifest, sort_keys=True, indent=2, ensure_ascii=False) + "\n"


def write_manifest(folder: Path, results: StudyResults, now: _dt.datetime,
                   environment: dict[str, str], *,
                   study_file: Path | None = None) -> tuple[str, ...]:
    """Write manifest.json: SHA-256 of every input and output file, versions, run time.

    The run time lives here and nowhere else, so results.json stays byte-identical
    across runs on the same inputs. `study_file` (recorded as an absolute path) lets
    `appendix pack` find the study file, its lock and data. Returns the relative paths
    of the outputs listed.
    """
    manifest = _manifest(folder, results, now, environment, study_file)
    (folder / MANIFEST_FILE).write_text(manifest_text(manifest), encoding="utf-8")
    return (*(item["path"] for item in manifest["outputs"]), MANIFEST_FILE)


def pdf_evidence(manifest: RunManifest) -> RunManifest:
    """The manifest the PDF carries: the run manifest without the PDF's own entry (a file
    cannot hold its own hash). `appendix verify` checks the two agree."""
    carried = RunManifest(**manifest)
    carried["outputs"] = [o for o in manifest["outputs"] if o["path"] != PDF_FILE]
    return carried


def write_pdf(folder: Path, html: str, options, results: StudyResults, now: _dt.datetime,
              environment: dict[str, str], *, study_file: Path) -> None:
    """Typeset appendix.pdf in `folder` as PDF/A-3b carrying its evidence: the study file,
    results.json (already written to `folder`) and the manifest of everything written so
    far (`pdf_evidence`), dated `now`."""
    from appendix import render

    study_file = Path(study_file)
    evidence = manifest_text(_manifest(folder, results, now, environment, study_file))
    attachments = (
        render.PdfAttachment(study_file.name, study_file.read_bytes(), "application/yaml",
                             "The study file (registered analysis plan) of this run.", "Source"),
        render.PdfAttachment(RESULTS_FILE, (folder / RESULTS_FILE).read_bytes(),
                             "application/json", "Every computed result, canonical JSON.",
                             "Data"),
        render.PdfAttachment(MANIFEST_FILE, evidence.encode("utf-8"), "application/json",
                             "SHA-256 of the inputs and of the other outputs; versions; run "
                             "time.", "Supplement"),
    )
    render.render_pdf(html, folder / PDF_FILE, options, attachments=attachments, dated=now)


def write_run(folder: Path, *, results: StudyResults, results_json: str, html: str,
              figures: Mapping[str, str], options, study_file: Path, now: _dt.datetime,
              environment: dict[str, str], pdf: bool = True,
              extra_files: Mapping[str, str] | None = None,
              progress: Callable[[str], None] | None = None) -> tuple[str, ...]:
    """Write every file of a run into `folder` (the staging folder): results.json,
    appendix.html, figures/*.svg, `extra_files` (relative name -> text, e.g. the data
    records), appendix.pdf (PDF/A-3b with its evidence) unless `pdf` is false, and
    manifest.json last. Returns the relative paths written."""
    (folder / RESULTS_FILE).write_text(results_json, encoding="utf-8")
    (folder / HTML_FILE).write_text(html, encoding="utf-8")
    for name, text in sorted((extra_files or {}).items()):
        (folder / name).write_bytes(text.encode("utf-8"))
    (folder / FIGURES_FOLDER).mkdir()
    for stem, svg in sorted(figures.items()):
        (folder / figure_file(stem)).write_text(svg, encoding="utf-8")
    if pdf:
        if progress is not None:
            progress("rendering PDF")
        write_pdf(folder, html, options, results, now, environment, study_file=study_file)
    return write_manifest(folder, results, now, environment, study_file=study_file)
