"""The installed package carries what it needs: templates inside the wheel, a console
script, and a command that renders no PDF never imports WeasyPrint."""

from __future__ import annotations

import subprocess
import sys
import zipfile
from pathlib import Path

REPO = Path(__file__).resolve().parent.parent


def test_wheel_contains_templates_and_entry_point(tmp_path: Path):
    from hatchling.builders.wheel import WheelBuilder

    built = WheelBuilder(str(REPO)).build(directory=str(tmp_path), versions=["standard"])
    wheel = Path(next(iter(built)))
    with zipfile.ZipFile(wheel) as archive:
        names = set(archive.namelist())
        entry_points = next(n for n in names if n.endswith("entry_points.txt"))
        scripts = archive.read(entry_points).decode()
    template_files = {p.relative_to(REPO).as_posix() for p in (REPO / "templates").rglob("*")
                      if p.is_file()}
    assert template_files, "the repository's templates/ folder is empty"
    for name in template_files:
        assert "appendix/" + name in names
    assert "appendix = appendix.cli:console" in scripts
    from appendix.typefaces import FONT_FACES  # the PDF's faces and their licences ship too
    for name in [f for *_, f in FONT_FACES] + ["LICENSE-Liberation.txt", "LICENSE-DejaVu.txt"]:
        assert f"appendix/templates/fonts/{name}" in names


def test_check_does_not_import_weasyprint(demo_study: Path):
    code = ("import sys; from appendix.cli import main; "
            f"rc = main(['check', {str(demo_study)!r}]); "
            "print('weasyprint' in sys.modules, rc)")
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                          check=True)
    assert done.stdout.splitlines()[-1] == "False 0"
