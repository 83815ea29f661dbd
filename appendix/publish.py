"""Writing a run folder so that a failed or killed run leaves the previous one untouched.

Everything is written into a hidden staging folder beside the target; only when all files
are complete is the old folder swapped out and the new one renamed into place.
"""

from __future__ import annotations

import datetime as _dt
import hashlib
import json
import os
import shutil
import tempfile
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path

from appendix import __version__
from appendix.results import StudyResults, to_plain

MANIFEST_FORMAT = 1


@contextmanager
def staged_folder(target: Path) -> Iterator[Path]:
    """Yield an empty staging folder that replaces `target` when the block completes.

    If the block raises, the staging folder is removed and `target` is left as it was.
    """
    target = Path(target)
    target.parent.mkdir(parents=True, exist_ok=True)
    staging = Path(tempfile.mkdtemp(prefix=f".{target.name}.staging-", dir=target.parent))
    try:
        yield staging
    except BaseException:
        shutil.rmtree(staging, ignore_errors=True)
        raise
    os.chmod(staging, 0o755)
    retired = None
    if target.exists():
        retired = Path(tempfile.mkdtemp(prefix=f".{target.name}.old-", dir=target.parent))
        os.replace(target, retired / target.name)
    os.replace(staging, target)
    if retired is not None:
        shutil.rmtree(retired, ignore_errors=True)


def sha256_file(path: Path) -> str:
    digest = hashlib.sha256()
    with open(path, "rb") as handle:
        for block in iter(lambda: handle.read(1 << 20), b""):
            digest.update(block)
    return digest.hexdigest()


def write_manifest(folder: Path, results: StudyResults, now: _dt.datetime,
                   environment: dict[str, str]) -> tuple[str, ...]:
    """Write manifest.json: SHA-256 of every input and output file, versions, run time.

    The run time lives here and nowhere else, so results.json stays byte-identical
    across runs on the same inputs. Returns the relative paths of the outputs listed.
    """
    outputs = sorted(p.relative_to(folder).as_posix() for p in folder.rglob("*") if p.is_file())
    manifest = {
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
    }
    text = json.dumps(manifest, sort_keys=True, indent=2, ensure_ascii=False) + "\n"
    (folder / "manifest.json").write_text(text, encoding="utf-8")
    return (*outputs, "manifest.json")
