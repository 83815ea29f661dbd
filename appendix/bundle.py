"""The reviewer package: `pack` a finished run into one zip, `verify` such a zip.

A package holds, under fixed names::

    VERIFY.txt         how to verify, and what the package is not
    SHA256SUMS         SHA-256 of every other entry (the format ``sha256sum -c`` reads)
    environment.json   Python, platform and every installed distribution, at run and pack
    study/...          the study file, its lock (if any) and data, at their relative paths
    run/...            results.json, appendix.html, appendix.pdf, figures/, manifest.json

Packing twice gives the same bytes: entries in a fixed order, each dated at the run's time
(from its manifest), with fixed permissions. `verify` refuses unsafe entry names before
anything is extracted, checks every hash, cross-checks the run manifest and the PDF's
embedded evidence, recomputes in a temporary folder (with the run the caller passes in,
`appendix.api.run` for `appendix verify`) and compares results.json: strings
(conclusions, decisions) and integers exactly, other numbers to `appendix.tolerance`'s
tolerance. The packaged results.json is read once, typed (`appendix.jsonread.read_results`):
one that is truncated, of another format than `appendix.results.FORMAT_VERSION` or not of
the declared types is refused with a sentence, as nothing can be compared with it.
"""

from __future__ import annotations

import dataclasses
import datetime as _dt
import json
import platform
import re
import shutil
import stat
import sys
import tempfile
import zipfile
from collections.abc import Callable, Iterable, Mapping
from dataclasses import dataclass
from pathlib import Path, PurePosixPath
from typing import Any

from appendix.errors import UserError
from appendix.hashing import copy_hashed, sha256_bytes, sha256_file
from appendix.jsonread import checked, read_json, read_results
from appendix.names import (ENVIRONMENT_FILE, HTML_FILE, LOCK_FILE, MANIFEST_FILE, NOTE_FILE, PDF_FILE,
                            RESULTS_FILE, RUN_FILES, SUMS_FILE)
from appendix.publish import RunManifest, manifest_text, pdf_evidence
from appendix.results import FORMAT_VERSION, Software, StudyResults, to_plain
from appendix.staging import staged_file
from appendix.targets import check_file_target, is_package
from appendix.tolerance import DEFAULT as TOLERANCE
from appendix.versions import installed_distributions

TOLERANCE_TEXT = f"numbers to {TOLERANCE.words()}; conclusions, decisions and every other text exactly"

#: Rerun a study file into a new run folder (results.json and appendix.html at least).
Recompute = Callable[[Path, Path], object]

_ZIP_EPOCH = _dt.datetime(1980, 1, 1, tzinfo=_dt.timezone.utc)  # the earliest zip date
_SUM_LINE = re.compile(r"([0-9a-f]{64})  (\S(?:.*\S)?)")

VERIFY_TEXT = """\
How to verify this package
==========================

This package was written by `appendix pack` from one finished run of the study {study}.

1. With appendix installed, run

       appendix verify THIS-FILE.zip

   It refuses unsafe entry names, checks the SHA-256 of every file against SHA256SUMS,
   checks the run's manifest and the files embedded in appendix.pdf, recomputes every
   result from the packaged study file and data in a temporary folder, and compares the
   new results.json with the packaged one: {tolerance}. It prints "reproduced" or each
   difference, and exits 1 on any mismatch.

2. Without appendix, the hashes alone can be checked after unzipping:

       sha256sum -c SHA256SUMS

appendix.pdf is PDF/A-3b and carries the study file, results.json and the run manifest
as attachments, so the PDF alone shows which plan and which results it belongs to.
environment.json names the Python, platform and library versions of the run.

Caution: this is statistical output. It is not a clinical or regulatory decision. Defer
to local regulations, to a qualified, licensed statistician and to the study's own
governance.
"""


# ----------------------------------------------------------------------------- pack


def _load_json(path: Path, what: str) -> Any:
    return read_json(path, what)


def _inside(relative: str) -> bool:
    """True when a relative posix path stays inside its folder."""
    parts = PurePosixPath(relative).parts
    return bool(parts) and not PurePosixPath(relative).is_absolute() and ".." not in parts


def _checked(path: Path, expected: str, what: str) -> Path:
    """`path`, refusing when its SHA-256 is not the recorded one (read as a stream: data
    files may be large, so files are never held in memory whole)."""
    if not path.is_file():
        raise UserError(f"{what} {path} is missing; the run recorded it, so the package "
                        "cannot be made")
    if sha256_file(path) != expected:
        raise UserError(f"{what} {path} has changed since the run (its SHA-256 is no longer "
                        f"the recorded {expected[:12]}...); rerun the study before packing")
    return path


Content = bytes | Path  # an entry's bytes, or the file that holds them


def _run_entries(run: Path, manifest: RunManifest) -> dict[str, Content]:
    """The run folder's files under ``run/``, each checked against the run manifest."""
    entries = {}
    for item in manifest.get("outputs", []):
        if not _inside(item["path"]):
            raise UserError(f"{run / MANIFEST_FILE} lists an output outside the run folder: "
                            f"{item['path']!r}")
        entries[f"run/{item['path']}"] = _checked(run / item["path"], item["sha256"],
                                                  "the run's output")
    entries[f"run/{MANIFEST_FILE}"] = run / MANIFEST_FILE
    missing = [name for name in RUN_FILES if f"run/{name}" not in entries]
    if missing:
        raise UserError(f"the run folder {run} has no {', '.join(missing)}; run the study "
                        "with its PDF before packing")
    return entries


def _study_entries(manifest: RunManifest, run: Path) -> dict[str, Content]:
    """The study file, its lock and data under ``study/``, checked against the run's inputs."""
    if "study_file" not in manifest:
        raise UserError(f"{run / MANIFEST_FILE} does not record where the study file is; "
                        "rerun the study with this version of appendix, then pack")
    study_file = Path(manifest["study_file"])
    folder = study_file.parent
    entries = {}
    for item in manifest["inputs"]:
        if not _inside(item["path"]):
            raise UserError(f"the {item['role']} file {item['path']!r} lies outside the study's "
                            f"folder {folder}; a package keeps the paths the study file uses, "
                            "so move it inside that folder and rerun")
        entries[f"study/{item['path']}"] = _checked(folder / item["path"], item["sha256"],
                                                    f"the {item['role']} file")
    lock = folder / LOCK_FILE
    if f"study/{LOCK_FILE}" not in entries and lock.is_file():
        entries[f"study/{LOCK_FILE}"] = lock
    return entries


def _environment_record(manifest: RunManifest) -> dict[str, Any]:
    here = {"python": sys.version.split()[0], "platform": platform.platform(),
            "distributions": [{"name": d.name, "version": d.version}
                              for d in installed_distributions()]}
    at_run = dict(manifest.get("environment", {}))
    at_run["distributions"] = manifest.get("distributions", [])
    at_run["software"] = manifest.get("software", [])
    return {"format_version": 1, "run": at_run, "pack": here}


def _sha256(content: Content) -> str:
    if isinstance(content, Path):
        return sha256_file(content)
    return sha256_bytes(content)


def sums_text(entries: Mapping[str, Content]) -> str:
    """SHA256SUMS: one ``<hex digest>  <name>`` line per entry, sorted by name."""
    return _sums(_digests(entries))


def _sums(digests: Mapping[str, str]) -> str:
    return "".join(f"{digest}  {name}\n" for name, digest in digests.items())


def _digests(entries: Mapping[str, Content]) -> dict[str, str]:
    return {name: _sha256(entries[name]) for name in sorted(entries)}


def _zip_time(run_time: str | None) -> tuple[int, int, int, int, int, int]:
    moment = _ZIP_EPOCH
    if run_time:
        try:
            moment = max(_dt.datetime.fromisoformat(run_time).astimezone(_dt.timezone.utc),
                         _ZIP_EPOCH)
        except ValueError:
            pass
    return moment.timetuple()[:6]


def _copy_checked(source_path: Path, sink, expected: str) -> None:
    """Copy a file into the archive, refusing if it changed after it was hashed."""
    with open(source_path, "rb") as source:
        digest = copy_hashed(source, sink)
    if digest != expected:
        raise UserError(f"{source_path} changed while the package was being written; "
                        "pack again")


def _write_zip(target: Path, entries: Mapping[str, Content], digests: Mapping[str, str],
               when) -> None:
    """Entries in the given order, one date, fixed permissions, zlib's default level:
    the same bytes every time. Files are copied in as streams."""
    with staged_file(target) as temporary, zipfile.ZipFile(temporary, "w") as archive:
        for name, content in entries.items():
            info = zipfile.ZipInfo(name, date_time=when)
            info.compress_type = zipfile.ZIP_DEFLATED
            info.create_system = 3  # Unix, whatever the packing platform
            info.external_attr = (stat.S_IFREG | 0o644) << 16
            info.file_size = content.stat().st_size if isinstance(content, Path) \
                else len(content)  # decides ZIP64 before writing
            with archive.open(info, "w") as sink:
                if isinstance(content, Path):
                    _copy_checked(content, sink, digests[name])
                else:
                    sink.write(content)


def default_package_path(run: Path) -> Path:
    """``<run folder>.zip`` beside the run folder."""
    return run.parent / f"{run.name}.zip"


def pack(run: Path, out: Path | None = None) -> Path:
    """Write the reviewer package of the run folder `run` to `out` (default
    `default_package_path`) and return its path; raises `UserError` when the run folder
    is incomplete or its study file, data or outputs changed since the run."""
    run = Path(run)
    if not run.is_dir():
        raise UserError(f"{run} is not a run folder (no such folder)")
    manifest = checked(_load_json(run / MANIFEST_FILE, f"a run folder holds the {MANIFEST_FILE} "
                                  "that `appendix run` writes"),
                       RunManifest, run / MANIFEST_FILE, "a run manifest of this version")
    try:
        body = {**_study_entries(manifest, run), **_run_entries(run, manifest)}
    except (KeyError, TypeError, AttributeError) as error:
        raise UserError(f"{run / MANIFEST_FILE} is not a run manifest (at {error!r}); "
                        "rerun the study, then pack") from None
    body[ENVIRONMENT_FILE] = (json.dumps(_environment_record(manifest), sort_keys=True, indent=2,
                                    ensure_ascii=False) + "\n").encode("utf-8")
    body[NOTE_FILE] = VERIFY_TEXT.format(study=manifest.get("study", "?"),
                                    tolerance=TOLERANCE_TEXT).encode("utf-8")
    digests = _digests(body)
    entries = {NOTE_FILE: body[NOTE_FILE], SUMS_FILE: _sums(digests).encode("ascii")}
    entries.update((name, body[name]) for name in sorted(body) if name != NOTE_FILE)
    target = Path(out) if out is not None else default_package_path(run)
    inputs = [run, *(content for content in body.values() if isinstance(content, Path))]
    check_file_target(target, inputs, "package", is_package, "--out")
    _write_zip(target, entries, digests, _zip_time(manifest.get("run_time")))
    return target


# --------------------------------------------------------------------------- verify


def unsafe_reason(info: zipfile.ZipInfo) -> str | None:
    """Why an archive entry may not be extracted (None when it is safe): an absolute
    path, a drive letter, a ``..`` component, a backslash, or a symbolic link."""
    name = info.filename
    if name.startswith(("/", "\\")):
        return "absolute path"
    if re.match(r"^[A-Za-z]:", name):
        return "drive letter"
    if "\\" in name:
        return "backslash in the name"
    if ".." in name.split("/"):
        return "'..' component"
    if "\x00" in name:
        return "NUL in the name"
    if stat.S_ISLNK(info.external_attr >> 16):
        return "symbolic link"
    return None


#: Bounds on what `verify` extracts, checked on the archive's directory before anything is
#: written: the number of entries, their total expanded size, and the expansion ratio of any
#: entry above 1 MiB (deflate reaches about 1000:1 on crafted input; text data about 10:1).
MAX_ENTRIES, MAX_EXPANDED, MAX_RATIO = 100_000, 64 * 2**30, 200


def _refuse_unsafe(infos: Iterable[zipfile.ZipInfo], package: Path) -> None:
    infos = list(infos)
    problems, seen = [], set()
    for info in infos:
        reason = unsafe_reason(info)
        if reason is None and info.filename in seen:
            reason = "listed twice"
        if reason is None and info.file_size > 2**20 \
                and info.file_size > MAX_RATIO * max(info.compress_size, 1):
            reason = (f"expands {info.file_size / max(info.compress_size, 1):.0f}-fold, above "
                      f"the {MAX_RATIO}-fold a package of ours reaches")
        seen.add(info.filename)
        if reason is not None:
            problems.append(f"  {info.filename!r}: {reason}")
        if len(problems) >= 20:
            problems.append("  ... (first 20 shown)")
            break
    total = sum(info.file_size for info in infos)
    if len(infos) > MAX_ENTRIES:
        problems.append(f"  {len(infos)} entries, more than the {MAX_ENTRIES} allowed")
    if total > MAX_EXPANDED:
        problems.append(f"  {total} bytes when expanded, more than the {MAX_EXPANDED} allowed")
    if problems:
        raise UserError(f"refused {package}: unsafe entries, nothing was extracted:\n"
                        + "\n".join(problems))


def _extract(archive: zipfile.ZipFile, folder: Path) -> tuple[dict[str, str], list[str]]:
    """Extract every file entry (names already checked), hashing as it streams; returns
    {name: sha256} and the names whose data are damaged (CRC or deflate errors)."""
    digests, damaged = {}, []
    for info in archive.infolist():
        if info.is_dir():
            continue
        target = folder.joinpath(*info.filename.split("/"))
        try:
            target.parent.mkdir(parents=True, exist_ok=True)
            with archive.open(info) as source, open(target, "wb") as sink:
                digests[info.filename] = copy_hashed(source, sink)
        except (zipfile.BadZipFile, OSError, EOFError, ValueError) as error:
            damaged.append(f"{info.filename} ({error})")
    return digests, damaged


def parse_sums(text: str) -> tuple[dict[str, str], list[str]]:
    """SHA256SUMS as {name: digest}, and every line that breaks the strict format
    (lower-case hex, two spaces, a name, a final newline)."""
    listed, problems = {}, []
    if text and not text.endswith("\n"):
        problems.append(f"{SUMS_FILE} does not end with a newline")
    for number, line in enumerate(text.split("\n")[:-1] if text.endswith("\n")
                                  else text.split("\n"), start=1):
        match = _SUM_LINE.fullmatch(line)
        if match is None:
            problems.append(f"{SUMS_FILE} line {number} is malformed: {line!r}")
        elif match.group(2) in listed:
            problems.append(f"{SUMS_FILE} line {number} lists {match.group(2)} again")
        else:
            listed[match.group(2)] = match.group(1)
    return listed, problems


def _hash_problems(digests: Mapping[str, str], folder: Path) -> list[str]:
    """Every changed, missing or extra file, against SHA256SUMS."""
    if SUMS_FILE not in digests:
        return [f"missing: {SUMS_FILE} (the package's list of hashes)"]
    try:
        text = (folder / SUMS_FILE).read_bytes().decode("ascii")
    except UnicodeDecodeError:
        return [f"{SUMS_FILE} is not plain ASCII text"]
    listed, problems = parse_sums(text)
    present = {name for name in digests if name != SUMS_FILE}
    problems += [f"changed: {name}" for name in sorted(present & listed.keys())
                 if digests[name] != listed[name]]
    problems += [f"missing: {name}" for name in sorted(listed.keys() - present)]
    problems += [f"extra (not in {SUMS_FILE}): {name}" for name in sorted(present - listed.keys())]
    return problems


def _manifest_problems(folder: Path) -> tuple[list[str], RunManifest | None]:
    """The run manifest against the packaged files: each output and input it records."""
    path = folder / "run" / MANIFEST_FILE
    if not path.is_file():
        return ["missing: run/manifest.json"], None
    try:
        manifest = json.loads(path.read_text(encoding="utf-8"))
        checked(manifest, RunManifest, Path("run/manifest.json"), "a run manifest of this version")
        outputs = [(f"run/{o['path']}", o["sha256"]) for o in manifest["outputs"]]
        inputs = [(f"study/{i['path']}", i["sha256"]) for i in manifest["inputs"]
                  if isinstance(i["role"], str)]
    except UserError as error:
        return [str(error)], None
    except (UnicodeDecodeError, json.JSONDecodeError, KeyError, TypeError, RecursionError) as error:
        return [f"run/manifest.json is not a run manifest ({error!r})"], None
    problems = []
    for name, expected in outputs + inputs:
        file = folder / name
        if not _inside(name) or not file.is_file():
            problems.append(f"run/manifest.json records {name}, which the package lacks")
        elif sha256_file(file) != expected:
            problems.append(f"{name} differs from the SHA-256 run/manifest.json records")
    return problems, manifest


def _pdf_problems(folder: Path, manifest: RunManifest) -> tuple[list[str], list[str]]:
    """The PDF's embedded study file, results.json and manifest against the packaged ones."""
    try:
        import pypdf
    except ImportError:
        return [], ["the PDF's attachments were not checked: pypdf is not installed"]
    study = next((i["path"] for i in manifest["inputs"] if i["role"] == "study"), None)
    expected = {
        RESULTS_FILE: (folder / "run" / RESULTS_FILE).read_bytes(),
        MANIFEST_FILE: manifest_text(pdf_evidence(manifest)).encode("utf-8"),
    }
    if isinstance(study, str) and _inside_package(folder / "study", study) \
            and (folder / "study" / study).is_file():
        expected[PurePosixPath(study).name] = (folder / "study" / study).read_bytes()
    try:
        attached = pypdf.PdfReader(folder / "run" / PDF_FILE).attachments
        carried = {name: attached[name] for name in attached}
    except Exception as error:  # noqa: BLE001 - any parse failure is a finding, not a crash
        return [f"run/{PDF_FILE} could not be read as a PDF ({error!r})"], []
    problems = []
    for name, content in expected.items():
        if name not in carried:
            problems.append(f"run/{PDF_FILE} does not carry {name}")
        elif carried[name] != [content]:
            problems.append(f"the {name} embedded in run/{PDF_FILE} differs from the package's")
    return problems, []


def compare_results(expected: Any, actual: Any, path: str = "") -> list[str]:
    """Each difference between two results (typed results, or plain trees), by key path
    as results.json writes it (fields in key order): text, booleans, None and integers
    exactly; a float against a number to `appendix.tolerance.DEFAULT`.

    >>> compare_results({"f": 5.0, "d": "reject"}, {"f": 5.0 + 1e-12, "d": "retain"})
    ["d: 'reject' packaged, 'retain' recomputed"]
    """
    where = path or "(top)"
    number = (int, float)
    if isinstance(expected, bool) or isinstance(actual, bool) or \
            not (isinstance(expected, number) and isinstance(actual, number)):
        if dataclasses.is_dataclass(expected) and type(expected) is type(actual):
            found = []
            for name in sorted(f.name for f in dataclasses.fields(expected)):
                found += compare_results(getattr(expected, name), getattr(actual, name),
                                         f"{path}.{name}" if path else name)
            return found
        if isinstance(expected, dict) and isinstance(actual, dict):
            found = []
            for key in sorted(expected.keys() | actual.keys()):
                sub = f"{path}.{key}" if path else key
                if key not in actual:
                    found.append(f"{sub}: packaged, absent from the recomputation")
                elif key not in expected:
                    found.append(f"{sub}: recomputed, absent from the package")
                else:
                    found += compare_results(expected[key], actual[key], sub)
            return found
        if isinstance(expected, (list, tuple)) and isinstance(actual, (list, tuple)):
            if len(expected) != len(actual):
                return [f"{where}: {len(expected)} items packaged, {len(actual)} recomputed"]
            found = []
            for index, (a, b) in enumerate(zip(expected, actual)):
                found += compare_results(a, b, f"{path}[{index}]")
            return found
        if type(expected) is type(actual) and expected == actual:
            return []
        return [f"{where}: {_shown(expected)} packaged, {_shown(actual)} recomputed"]
    if isinstance(expected, int) and isinstance(actual, int):
        same = expected == actual
    else:
        same = TOLERANCE.agree(float(expected), float(actual))
    return [] if same else [f"{where}: {expected!r} packaged, {actual!r} recomputed"]


def _shown(value: Any) -> str:
    """A value in a difference, as results.json writes it."""
    return repr(to_plain(value))


def _version_notes(packaged: Iterable[Software], recomputed: Iterable[Software]) -> list[str]:
    before = {s.name: s.version for s in packaged}
    now = {s.name: s.version for s in recomputed}
    return [f"versions differ: {name} {before[name]} in the package, {now[name]} here"
            for name in sorted(before.keys() & now.keys()) if before[name] != now[name]]


def _inside_package(root: Path, path: str | Path) -> bool:
    """Whether `path` (absolute, or relative to `root`) resolves to a place inside `root`."""
    base = root.resolve()
    place = (root / path).resolve()
    return place != base and base in place.parents


#: Ends the sentence that refuses packaged results of another format.
_OTHER_FORMAT = (f"verifies results of format {FORMAT_VERSION} only: verify the package with the "
                 "appendix version its environment.json names")


def _packaged_results(folder: Path, package: Path, problems: list[str]) -> StudyResults | None:
    """The package's results.json, typed (None when it has none). One that is not a results
    file of this version is refused with a `UserError` naming it (nothing can be compared
    with it), unless the hashes already show it changed or damaged since packing: then
    that is one more difference, added to `problems`."""
    name = f"run/{RESULTS_FILE}"
    if not (folder / name).is_file():
        return None
    try:
        return read_results(folder / name, "a package holds the results.json `appendix run` "
                            "wrote", other_format=_OTHER_FORMAT, shown=f"{name} in {package}")
    except UserError as error:
        if not any(p == f"changed: {name}" or p.startswith(f"damaged: {name} (") for p in problems):
            raise
        problems.append(f"{name} cannot be compared: {error}")
        return None


def _recompute(folder: Path, manifest: RunManifest, packaged: StudyResults,
               recompute: Recompute) -> tuple[list[str], list[str]]:
    """Rerun the packaged study in `folder` and compare its results with the package's."""
    from appendix.plan.load import load_plan

    study = next((i.get("path") for i in manifest["inputs"]
                  if isinstance(i, dict) and i.get("role") == "study"), None)
    if not isinstance(study, str) or not _inside_package(folder / "study", study):
        return ["the package names no study file inside it to recompute from"], []
    if not (folder / "study" / study).is_file():
        return ["the package has no study file to recompute from"], []
    try:
        loaded = load_plan(folder / "study" / study)
        if not _inside_package(folder / "study", loaded.data_path):
            return [f"the packaged study names a data file outside the package "
                    f"({loaded.plan.data.source}); nothing outside it is read"], []
        recompute(folder / "study" / study, folder / "recomputed")
    except UserError as error:
        return [f"the packaged study could not be recomputed: {error}"], []
    again = read_results(folder / "recomputed" / RESULTS_FILE, "the results just recomputed",
                         other_format=_OTHER_FORMAT)
    notes = _version_notes(packaged.software, again.software)
    problems = compare_results(dataclasses.replace(packaged, software=()),
                               dataclasses.replace(again, software=()))
    html = folder / "run" / HTML_FILE
    if html.is_file() and html.read_bytes() != (folder / "recomputed" / HTML_FILE).read_bytes():
        # the same versions render the same bytes; other versions may draw figures differently
        if notes:
            notes.append("run/appendix.html differs from the page rendered again here, "
                         "which other library versions can explain")
        else:
            problems.append("run/appendix.html differs from the page rendered again from the "
                            "recomputed results with the same versions")
    return problems, notes


@dataclass(frozen=True)
class Verification:
    """What `verify` found: `problems` (each a mismatch; none means reproduced),
    `notes` (worth knowing, never a mismatch) and the number of files hashed."""

    package: Path
    files_hashed: int
    problems: tuple[str, ...]
    notes: tuple[str, ...]

    @property
    def reproduced(self) -> bool:
        return not self.problems


def verify(package: Path, recompute: Recompute) -> Verification:
    """Check a package made by `pack` (see the module docstring), rerunning its study with
    `recompute(study file, new run folder)`; raises `UserError` for a file that is not a
    zip archive, holds unsafe entry names, or whose results.json, unchanged since packing,
    is not a results file of this version (truncated, of another format, or not of the
    declared types)."""
    package = Path(package)
    if not package.is_file():
        raise UserError(f"{package} not found: give the zip that `appendix pack` wrote")
    try:
        archive = zipfile.ZipFile(package)
    except (zipfile.BadZipFile, OSError) as error:
        raise UserError(f"{package} is not a readable zip archive ({error})") from None
    with archive, tempfile.TemporaryDirectory(prefix="appendix-verify-") as scratch:
        folder = Path(scratch)
        _refuse_unsafe(archive.infolist(), package)
        digests, damaged = _extract(archive, folder)
        problems = [f"damaged: {name}" for name in damaged]
        problems += _hash_problems(digests, folder)
        packaged = _packaged_results(folder, package, problems)
        found, manifest = _manifest_problems(folder)
        problems += found
        notes: list[str] = []
        if manifest is not None:
            if (folder / "run" / PDF_FILE).is_file() and (folder / "run" / RESULTS_FILE).is_file():
                found, noted = _pdf_problems(folder, manifest)
                problems += found
                notes += noted
            if packaged is not None:
                found, noted = _recompute(folder, manifest, packaged, recompute)
                problems += found
                notes += noted
            elif not (folder / "run" / RESULTS_FILE).is_file():
                problems.append("missing: run/results.json")
        shutil.rmtree(folder / "recomputed", ignore_errors=True)
    return Verification(package, len(digests), tuple(problems), tuple(notes))


def report(result: Verification) -> list[str]:
    """The lines `appendix verify` prints."""
    lines = [f"package {result.package}: {result.files_hashed} files hashed",
             f"compared: {TOLERANCE_TEXT}"]
    lines += [f"  note: {note}" for note in result.notes]
    if result.reproduced:
        return [*lines, "reproduced"]
    count = len(result.problems)
    return [*lines, *(f"  {problem}" for problem in result.problems),
            f"not reproduced: {count} difference{'s' if count != 1 else ''}"]

