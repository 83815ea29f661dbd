"""Versions of appendix, Python and the libraries that compute or render.

Kept free of heavy imports so that even a run that failed early can name its versions.
"""

from __future__ import annotations

import platform
from importlib import metadata

from appendix import __version__
from appendix.results import Software

# Libraries whose versions can change a number or a page; recorded in every run.
LIBRARIES = ("numpy", "scipy", "pandas", "statsmodels", "pydantic", "PyYAML", "pyarrow",
             "openpyxl", "matplotlib", "Jinja2", "weasyprint")


def software_versions() -> tuple[Software, ...]:
    """appendix, Python and every library that computes or renders, by installed version."""
    found = [Software("appendix", __version__),
             Software("Python", platform.python_version())]
    for name in LIBRARIES:
        try:
            found.append(Software(name, metadata.version(name)))
        except metadata.PackageNotFoundError:
            found.append(Software(name, "not installed"))
    return tuple(found)


def installed_distributions() -> tuple[Software, ...]:
    """Every installed Python distribution by name and version, sorted by lower-cased
    name; a name installed twice on the path is listed once (the first found, which is
    the one Python imports)."""
    found: dict[str, Software] = {}
    for dist in metadata.distributions():
        name = dist.metadata["Name"]
        if name and name.lower() not in found:
            found[name.lower()] = Software(name, dist.version)
    return tuple(found[key] for key in sorted(found))
