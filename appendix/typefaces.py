"""The fonts the package ships, and the family names of our own they are declared under.

The PDF and the figures are typeset in these files only (``templates/fonts``, whose
README.md gives their origin and licences), never in the machine's fonts: the families
"Appendix Serif", "Appendix Sans" and "Appendix Mono" name no installed font, so nothing
else can stand in for them and the layout is the same on every machine. The stylesheet
(``templates/appendix.css``) names only these families, then a generic one.
"""

from __future__ import annotations

import importlib.resources
from pathlib import Path

#: Each face: family, CSS weight, CSS style, file in `font_folder()`.
FONT_FACES: tuple[tuple[str, str, str, str], ...] = (
    ("Appendix Serif", "normal", "normal", "LiberationSerif-Regular.ttf"),
    ("Appendix Serif", "bold", "normal", "LiberationSerif-Bold.ttf"),
    ("Appendix Serif", "normal", "italic", "LiberationSerif-Italic.ttf"),
    ("Appendix Serif", "bold", "italic", "LiberationSerif-BoldItalic.ttf"),
    ("Appendix Sans", "normal", "normal", "LiberationSans-Regular.ttf"),
    ("Appendix Sans", "bold", "normal", "LiberationSans-Bold.ttf"),
    ("Appendix Sans", "normal", "italic", "LiberationSans-Italic.ttf"),
    ("Appendix Mono", "normal", "normal", "DejaVuSansMono.ttf"),
    ("Appendix Mono", "bold", "normal", "DejaVuSansMono-Bold.ttf"),
)

#: The family of the figures' text (matplotlib measures it; the PDF draws it).
FIGURE_FAMILY = "Appendix Sans"


def template_root() -> Path:
    """The templates folder: ``appendix/templates`` in a wheel, else the repository's."""
    installed = importlib.resources.files("appendix") / "templates"
    if installed.is_dir():
        return Path(str(installed))
    return Path(__file__).resolve().parent.parent / "templates"


def font_folder() -> Path:
    """The folder of the shipped font files."""
    return template_root() / "fonts"
