"""Generate the invented data of the wound-dose demo study.

Every value is invented: drawn from a seeded random generator with the effects written
below, then a few animals are flagged for the registered exclusion (dressing lost) and
a few outcome values are blanked (missing). Rerunning this script rewrites
data/animals.csv byte for byte.

    python studies/wound-dose/generate.py

Layout: 60 mice in four cohorts of 15 (K1 to K4, the blocks); within each cohort three
mice per dose group, allocated by a seeded permutation. One row per mouse.
"""

from __future__ import annotations

import csv
from pathlib import Path

import numpy as np

SEED = 20260309
DOSES = ("vehicle", "1 mg/kg", "3 mg/kg", "10 mg/kg", "30 mg/kg")  # of the invented compound ZQ-118
COHORTS = ("K1", "K2", "K3", "K4")
PER_DOSE_PER_COHORT = 3  # 3 mice x 4 cohorts = 12 mice per dose group
COLUMNS = ("animal_id", "cohort", "dose", "dressing_lost", "wound_area_d0_mm2",
           "wound_area_d7_mm2", "reepithelialisation_pct", "granulation_um")

# Invented effects, of a size plausible for a small-animal skin-wound study.
BASELINE_MEAN, BASELINE_SD = 50.0, 2.5  # wound area right after the biopsy punch (mm2)

AREA_VEHICLE = 24.0  # wound area left at day 7 (mm2)
AREA_DOSE = {"vehicle": 0.0, "1 mg/kg": -0.5, "3 mg/kg": -2.0, "10 mg/kg": -4.5, "30 mg/kg": -5.5}
AREA_COHORT = {"K1": 0.0, "K2": 1.5, "K3": -1.0, "K4": 0.8}
AREA_SLOPE = 0.45  # mm2 at day 7 per mm2 at day 0
AREA_SD = 2.6

EPI_VEHICLE = 42.0  # share of the wound edge re-epithelialised at day 7 (%)
EPI_DOSE = {"vehicle": 0.0, "1 mg/kg": 1.0, "3 mg/kg": 3.0, "10 mg/kg": 7.0, "30 mg/kg": 9.0}
EPI_COHORT = {"K1": 0.0, "K2": -2.0, "K3": 1.5, "K4": 0.5}
EPI_SLOPE = -0.4  # % per mm2 at day 0
EPI_SD = 6.0

GRAN_VEHICLE = 310.0  # granulation tissue thickness at day 7 (micrometres)
GRAN_DOSE = {"vehicle": 0.0, "1 mg/kg": 5.0, "3 mg/kg": 12.0, "10 mg/kg": 25.0, "30 mg/kg": 30.0}
GRAN_COHORT = {"K1": 0.0, "K2": 10.0, "K3": -8.0, "K4": 4.0}
GRAN_SLOPE = 2.0  # micrometres per mm2 at day 0
GRAN_SD = 30.0

DRESSINGS_LOST = 3  # animals flagged for the registered exclusion X1
MISSING = {"wound_area_d7_mm2": 2, "reepithelialisation_pct": 3, "granulation_um": 2}


def rows(rng: np.random.Generator) -> list[dict[str, str]]:
    out = []
    for cohort in COHORTS:
        order = rng.permutation(np.repeat(np.arange(len(DOSES)), PER_DOSE_PER_COHORT))
        for code in order:
            dose = DOSES[code]
            baseline = round(float(rng.normal(BASELINE_MEAN, BASELINE_SD)), 1)
            centred = baseline - BASELINE_MEAN
            area = (AREA_VEHICLE + AREA_DOSE[dose] + AREA_COHORT[cohort] + AREA_SLOPE * centred
                    + rng.normal(0.0, AREA_SD))
            epi = (EPI_VEHICLE + EPI_DOSE[dose] + EPI_COHORT[cohort] + EPI_SLOPE * centred
                   + rng.normal(0.0, EPI_SD))
            gran = (GRAN_VEHICLE + GRAN_DOSE[dose] + GRAN_COHORT[cohort] + GRAN_SLOPE * centred
                    + rng.normal(0.0, GRAN_SD))
            out.append({"animal_id": f"M{len(out) + 1:03d}", "cohort": cohort, "dose": dose,
                        "dressing_lost": "no",
                        "wound_area_d0_mm2": f"{baseline:.1f}",
                        "wound_area_d7_mm2": f"{area:.1f}",
                        "reepithelialisation_pct": f"{min(max(epi, 0.0), 100.0):.1f}",
                        "granulation_um": f"{gran:.0f}"})
    # Dressings lost before day 3: excluded by the registered rule X1.
    for index in rng.choice(len(out), size=DRESSINGS_LOST, replace=False):
        out[index]["dressing_lost"] = "yes"
    # Values lost (an image out of focus, a histology section unreadable): missing values.
    for column, count in MISSING.items():
        for index in rng.choice(len(out), size=count, replace=False):
            out[index][column] = ""
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
    target = Path(__file__).with_name("data") / "animals.csv"
    print(f"wrote {write(target)} invented animals to {target}")


if __name__ == "__main__":
    main()
