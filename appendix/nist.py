"""Reader for the NIST StRD one-way ANOVA files and the log relative error.

The eleven files (SiRstv, SmLs01-09, AtmWtAg) install with scipy under
``scipy/stats/tests/data/nist_anova``. Each header states its certified values
(NIST Statistical Reference Datasets, https://www.itl.nist.gov/div898/strd/anova/anova.html)
and the line range of its data. `engine_table` gives the variance table the appendix
reports for the one-term model of a case (the design engine on its cell statistics).
Used by `appendix selftest`, the reference tests and `scripts/nist_lre.py`.
"""

from __future__ import annotations

import math
import re
from fractions import Fraction
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import scipy

from appendix.results import ModelTable
from appendix.stats.design import DesignCells, Grid, design_cells

NIST_DIR = Path(scipy.__file__).parent / "stats" / "tests" / "data" / "nist_anova"
SELFTEST_FLOOR = 12.0  # the accuracy every certified value must reach (issue target)
NAMES = ("SiRstv", "SmLs01", "SmLs02", "SmLs03", "SmLs04", "SmLs05", "SmLs06",
         "SmLs07", "SmLs08", "SmLs09", "AtmWtAg")
HIGHER_DIFFICULTY = ("SmLs07", "SmLs08", "SmLs09")
CERTIFIED_DIGITS = 15  # every certified value is printed with 15 significant digits

_NUMBER = r"[-+]?\d+(?:\.\d*)?(?:[Ee][-+]?\d+)?"


@dataclass(frozen=True)
class NistCase:
    """One dataset: certified values and the data as (group code 0.., value float64).

    `decimals` is the most digits after the point in any value's text, counted on the
    text itself (what the data stage reports for a CSV column).
    """

    name: str
    certified: dict[str, float]
    codes: np.ndarray
    values: np.ndarray
    k: int
    decimals: int


def _floats(line: str) -> list[float]:
    return [float(x) for x in re.findall(_NUMBER, line)]


def read_case(name: str) -> NistCase:
    """Parse certified values and data of one NIST ANOVA file."""
    lines = (NIST_DIR / f"{name}.dat").read_text().splitlines()
    first, last = (int(x) for x in re.search(r"Data\s+\(lines (\d+) to (\d+)\)", "\n".join(lines[:12])).groups())
    certified: dict[str, float] = {}
    for line in lines[:first - 1]:
        text = line.strip()
        if text.startswith("Between"):
            df, ss, ms, f = _floats(text)
            certified.update(df_between=df, ss_between=ss, ms_between=ms, f=f)
        elif text.startswith("Within"):
            df, ss, ms = _floats(text)
            certified.update(df_within=df, ss_within=ss, ms_within=ms)
        elif text.startswith("Certified R-Squared"):
            certified["r_squared"] = _floats(text)[0]
        elif text.startswith("Standard Deviation"):
            certified["residual_sd"] = _floats(text)[0]
    if len(certified) != 9:
        raise ValueError(f"{name}: found certified values {sorted(certified)}")
    # Read the numbers as text first: float() of the decimal string is the correctly
    # rounded float64, the best any float64 engine can be given.
    rows = [line.split() for line in lines[first - 1:last]]
    labels = [row[0] for row in rows]
    order = list(dict.fromkeys(labels))
    codes = np.array([order.index(label) for label in labels], dtype=np.intp)
    values = np.array([float(row[1]) for row in rows], dtype=np.float64)
    decimals = max(len(row[1].partition(".")[2]) for row in rows)
    return NistCase(name, certified, codes, values, len(order), decimals)


def lre(computed: float, certified: float, digits: int = CERTIFIED_DIGITS) -> float:
    """Log relative error (McCullough 1998, Am. Stat. 52:358-366), capped at `digits`.

    -log10(|x - c| / |c|); for c == 0 the log absolute error is used instead.
    """
    error = abs(computed - certified)
    if error == 0.0:
        return float(digits)
    scale = abs(certified) if certified != 0.0 else 1.0
    return min(float(digits), -math.log10(error / scale))


def one_factor_cells(case: NistCase, *, exact: bool = True) -> DesignCells:
    """The case's cell statistics on a one-factor grid, as the design engine takes them:
    summed exactly on the decimal text as scaled integers (`case.decimals`, as the data
    stage gives them for a CSV column) when `exact`, else in float64 (two-pass)."""
    grid = Grid(names=("group",), levels=(tuple(str(i + 1) for i in range(case.k)),))
    return design_cells(grid, [case.codes], case.values, decimals=case.decimals if exact else None)


def engine_table(cells: DesignCells, alpha: float = 0.05) -> ModelTable:
    """The variance table the appendix reports for a one-factor outcome: the one-term
    model fitted by the design engine (`appendix.stats.linear.fit_linear`), its critical
    F at `alpha` and its effect-size intervals at 1 - 2 alpha."""
    from appendix.models import model_table
    from appendix.stats.linear import fit_linear, label_of

    return model_table(fit_linear(cells, [cells.grid.names], ss_type=2, alpha=alpha), label_of,
                       alpha=alpha)


def engine_values(table: ModelTable) -> dict[str, float]:
    """The numbers the appendix reports, from a one-term `ModelTable`, under the names of
    the certified values."""
    (between,) = table.rows
    return {
        "df_between": float(between.df),
        "ss_between": between.sum_of_squares,
        "ms_between": between.mean_square,
        "f": between.statistic,
        "df_within": float(table.residual_df),
        "ss_within": table.residual_ss,
        "ms_within": table.residual_ms,
        "r_squared": table.r_squared,
        "residual_sd": table.residual_sd,
    }


def exact_sums_of_squares(case: NistCase) -> tuple[float, float]:
    """SS between and SS within in exact rational arithmetic on the float64 data.

    This is the best any float64 engine can do with these inputs: the distance from it
    to the certified value is the cost of storing the decimal data as float64.
    """
    groups: list[list[Fraction]] = [[] for _ in range(case.k)]
    for code, value in zip(case.codes.tolist(), case.values.tolist()):
        groups[code].append(Fraction(value))
    means = [sum(g, Fraction(0)) / len(g) for g in groups]
    grand = sum((sum(g, Fraction(0)) for g in groups), Fraction(0)) / case.values.size
    between = sum(len(g) * (m - grand) ** 2 for g, m in zip(groups, means))
    within = sum(sum((x - m) ** 2 for x in g) for g, m in zip(groups, means))
    return float(between), float(within)
