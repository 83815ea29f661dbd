"""Generate the invented data of the greenhouse-split demo study.

Every value is invented: drawn from a seeded random generator with the effects written
below, then a few chlorophyll readings are blanked (missed visits). Rerunning this
script rewrites data/pots.csv byte for byte.

    python studies/greenhouse-split/generate.py

Layout: 72 pots, 12 per coating x irrigation cell, set out on four benches (blocks) with
3 pots of every cell on each bench, in a seeded random order along the bench. Long
format: one row per pot and visit; a pot's bench, factors, baseline height and final dry
mass repeat on each of its three rows.
"""

from __future__ import annotations

import csv
from pathlib import Path

import numpy as np

SEED = 20260302
COATINGS = ("none", "thin", "thick")
IRRIGATION = ("steady", "pulsed")
BENCHES = ("B1", "B2", "B3", "B4")
VISITS = ("day7", "day14", "day21")
PER_CELL_PER_BENCH = 3  # 3 pots x 4 benches = 12 pots per coating x irrigation cell
COLUMNS = ("pot_id", "bench", "coating", "irrigation", "visit", "baseline_height_mm",
           "chlorophyll_index", "dry_mass_g")

# Invented effects, all of plausible size for a seedling trial.
BASELINE_MEAN, BASELINE_SD = 45.0, 6.0  # seedling height at potting (mm)
CHLOROPHYLL_BY_VISIT = {"day7": 30.0, "day14": 34.0, "day21": 37.0}
# The coating effect grows as the plants age: a coating x visit interaction.
COATING_BY_VISIT = {"none": (0.0, 0.0, 0.0), "thin": (0.6, 1.5, 2.4), "thick": (1.2, 3.0, 4.6)}
PULSED_CHLOROPHYLL = 0.8
THICK_PULSED_CHLOROPHYLL = 0.6  # a small coating x irrigation interaction
BENCH_CHLOROPHYLL = {"B1": 0.0, "B2": 1.2, "B3": -0.9, "B4": 0.5}
CHLOROPHYLL_SLOPE = 0.15  # index units per mm of baseline height
POT_SD, VISIT_SD = 1.2, 1.0  # between-pot and within-pot (visit to visit) spread

DRY_MASS_MEAN = 4.0  # g at day 21
DRY_MASS_COATING = {"none": 0.0, "thin": 0.25, "thick": 0.45}
DRY_MASS_PULSED = -0.15
DRY_MASS_BENCH = {"B1": 0.0, "B2": 0.12, "B3": -0.1, "B4": 0.05}
DRY_MASS_SLOPE = 0.04  # g per mm of baseline height
DRY_MASS_SD = 0.3

MISSED_VISITS = 5  # chlorophyll readings lost (pots missed on a visit)


def pots(rng: np.random.Generator) -> list[dict[str, str | float]]:
    """One record per pot: its bench, cell, baseline height and the pot's own level."""
    cells = [(c, w) for c in COATINGS for w in IRRIGATION]
    out = []
    for bench in BENCHES:
        order = rng.permutation(np.repeat(np.arange(len(cells)), PER_CELL_PER_BENCH))
        for code in order:
            coating, irrigation = cells[code]
            out.append({"pot_id": f"G{len(out) + 1:03d}", "bench": bench, "coating": coating,
                        "irrigation": irrigation,
                        "baseline": float(rng.normal(BASELINE_MEAN, BASELINE_SD)),
                        "pot_effect": float(rng.normal(0.0, POT_SD))})
    return out


def rows(rng: np.random.Generator) -> list[dict[str, str]]:
    out = []
    for pot in pots(rng):
        coating, irrigation, bench = pot["coating"], pot["irrigation"], pot["bench"]
        pulsed = irrigation == "pulsed"
        baseline = round(pot["baseline"], 1)
        centred = baseline - BASELINE_MEAN
        dry_mass = (DRY_MASS_MEAN + DRY_MASS_COATING[coating] + DRY_MASS_PULSED * pulsed
                    + DRY_MASS_BENCH[bench] + DRY_MASS_SLOPE * centred
                    + rng.normal(0.0, DRY_MASS_SD))
        for v, visit in enumerate(VISITS):
            chlorophyll = (CHLOROPHYLL_BY_VISIT[visit] + COATING_BY_VISIT[coating][v]
                           + PULSED_CHLOROPHYLL * pulsed
                           + THICK_PULSED_CHLOROPHYLL * (pulsed and coating == "thick")
                           + BENCH_CHLOROPHYLL[bench] + CHLOROPHYLL_SLOPE * centred
                           + pot["pot_effect"] + rng.normal(0.0, VISIT_SD))
            out.append({"pot_id": pot["pot_id"], "bench": bench, "coating": coating,
                        "irrigation": irrigation, "visit": visit,
                        "baseline_height_mm": f"{baseline:.1f}",
                        "chlorophyll_index": f"{chlorophyll:.1f}",
                        "dry_mass_g": f"{dry_mass:.2f}"})
    # Missed visits: a few later readings lost (a pot out of reach, a meter fault), so
    # that the registered complete-units rule leaves those pots out.
    later = [i for i, row in enumerate(out) if row["visit"] != VISITS[0]]
    for index in rng.choice(later, size=MISSED_VISITS, replace=False):
        out[index]["chlorophyll_index"] = ""
    return out


def write(target: Path) -> int:
    """Write the invented data to `target`; the number of rows written."""
    data = rows(np.random.default_rng(SEED))
    target.parent.mkdir(parents=True, exist_ok=True)
    with target.open("w", newline="", encoding="utf-8") as handle:
        writer = csv.DictWriter(handle, fieldnames=list(COLUMNS), lineterminator="\n")
        writer.writeheader()
        writer.writerows(data)
    return len(data)


def main() -> None:
    target = Path(__file__).with_name("data") / "pots.csv"
    print(f"wrote {write(target)} invented rows (pots x visits) to {target}")


if __name__ == "__main__":
    main()
