"""Generate the invented data of the seed-coating demo study.

Every value is invented: drawn from a seeded random generator, then a few values are
blanked (missing) and a few units are marked as damaged (the registered exclusion).
Rerunning this script rewrites data/units.csv byte for byte.

It also writes data/units-corrected.csv, the same invented data after an (invented)
check against the record sheets: one mis-keyed value fixed and one unit added, so that a
rerun on it shows `appendix diff` at work (see README.md).

    python studies/seed-coating/generate.py
"""

from __future__ import annotations

import csv
from pathlib import Path

import numpy as np

SEED = 20260214
COATINGS = ("uncoated", "chitosan", "seaweed", "humic")
PER_GROUP = 12
# Invented true means: the coatings shift shoot dry mass, not the chlorophyll index.
DRY_MASS_MEAN = {"uncoated": 41.0, "chitosan": 44.5, "seaweed": 47.0, "humic": 42.0}
DRY_MASS_SD = 3.2
CHLOROPHYLL_MEAN = 38.0
CHLOROPHYLL_SD = 2.5


def rows(rng: np.random.Generator) -> list[dict[str, str]]:
    # Units are allocated to coatings by a seeded permutation, as a randomisation list would.
    allocation = rng.permutation(np.repeat(np.arange(len(COATINGS)), PER_GROUP))
    out = []
    for index, code in enumerate(allocation):
        coating = COATINGS[code]
        out.append({
            "unit_id": f"P{index + 1:03d}",
            "tray": str(index // 8 + 1),
            "coating": coating,
            "damaged": "no",
            "shoot_dry_mass_mg": f"{rng.normal(DRY_MASS_MEAN[coating], DRY_MASS_SD):.1f}",
            "chlorophyll_index": f"{rng.normal(CHLOROPHYLL_MEAN, CHLOROPHYLL_SD):.1f}",
        })
    # Two seedlings broken in handling (excluded by the registered rule X1).
    for index in rng.choice(len(out), size=2, replace=False):
        out[index]["damaged"] = "yes"
    # A few measurements lost (a scale fault, a mislabelled leaf): missing values.
    for index in rng.choice(len(out), size=3, replace=False):
        out[index]["shoot_dry_mass_mg"] = ""
    for index in rng.choice(len(out), size=2, replace=False):
        out[index]["chlorophyll_index"] = ""
    return out


# The invented correction: unit P024's dry mass was keyed with its first digit wrong
# (37.2 for the sheet's 47.2), and the sheet of a 49th seedling turned up late.
MISKEYED_UNIT = "P024"
MISKEYED_COLUMN = "shoot_dry_mass_mg"
MISKEYED_AS, SHEET_VALUE = "37.2", "47.2"
ADDED_UNIT = "P049"
ADDED_COATING = "humic"
CORRECTION_SEED = SEED + 1


def corrected(data: list[dict[str, str]], rng: np.random.Generator) -> list[dict[str, str]]:
    """The rows after the invented check: the mis-keyed value fixed, one unit appended
    (its values drawn from the same invented distributions as the others)."""
    out = [dict(row) for row in data]
    (row,) = [r for r in out if r["unit_id"] == MISKEYED_UNIT]
    if row[MISKEYED_COLUMN] != MISKEYED_AS:
        raise RuntimeError(f"{MISKEYED_UNIT} no longer reads {MISKEYED_AS}: the story is out of date")
    row[MISKEYED_COLUMN] = SHEET_VALUE
    index = len(out)
    out.append({
        "unit_id": ADDED_UNIT,
        "tray": str(index // 8 + 1),
        "coating": ADDED_COATING,
        "damaged": "no",
        "shoot_dry_mass_mg": f"{rng.normal(DRY_MASS_MEAN[ADDED_COATING], DRY_MASS_SD):.1f}",
        "chlorophyll_index": f"{rng.normal(CHLOROPHYLL_MEAN, CHLOROPHYLL_SD):.1f}",
    })
    return out


def write(target: Path, data: list[dict[str, str]]) -> None:
    target.parent.mkdir(exist_ok=True)
    with target.open("w", newline="", encoding="utf-8") as handle:
        writer = csv.DictWriter(handle, fieldnames=list(data[0]), lineterminator="\n")
        writer.writeheader()
        writer.writerows(data)
    print(f"wrote {len(data)} invented units to {target}")


def main() -> None:
    folder = Path(__file__).with_name("data")
    data = rows(np.random.default_rng(SEED))
    write(folder / "units.csv", data)
    write(folder / "units-corrected.csv", corrected(data, np.random.default_rng(CORRECTION_SEED)))


if __name__ == "__main__":
    main()
