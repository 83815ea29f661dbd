"""Reference designs and published expected values for the factorial, blocked and covariate
linear-model engine (`appendix.stats.design`, `.linear`, `.marginal`).

Every dataset and every expected value names its source beside it. Values printed by a
source are kept as the text it prints (`"2.339693"`), and `printed_tolerance` turns that
text into half a unit in its last printed digit, so a check is exactly as strict as the
source's precision. Values recalled rather than read from an installed file say "from
memory"; each of those is also recomputed with statsmodels in the tests, so a mis-recalled
number cannot pass silently.

These are test data for software, not evidence about any treatment: statistical output is
not a clinical or regulatory decision; defer to local regulations, a qualified, licensed
statistician and the study's own governance.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from decimal import Decimal

import numpy as np
import pandas as pd
import pingouin

Term = tuple[str, ...]


@dataclass(frozen=True, eq=False)
class Design:
    """One dataset in the engine's input form: factor level codes (Grid order), y, covariates."""

    name: str
    source: str
    factors: tuple[str, ...]
    levels: tuple[tuple[str, ...], ...]
    codes: tuple[np.ndarray, ...]
    y: np.ndarray
    covariates: dict[str, np.ndarray] = field(default_factory=dict)
    decimals: int | None = None  # places of y as its source prints it (exact path), or None

    def frame(self) -> pd.DataFrame:
        """The same rows as a data frame for the reference libraries (level names as text)."""
        columns: dict[str, object] = {
            name: [levels[c] for c in code]
            for name, levels, code in zip(self.factors, self.levels, self.codes)
        }
        columns["y"] = self.y
        columns.update(self.covariates)
        return pd.DataFrame(columns)


@dataclass(frozen=True)
class PrintedRow:
    """One row of a published variance table, each number as the source prints it."""

    term: Term
    df: int
    ss: str | None = None
    statistic: str | None = None
    p: str | None = None
    partial_eta_squared: str | None = None


@dataclass(frozen=True)
class PrintedTable:
    """A published variance table for `design` fitted with `terms` (in order) and `ss_type`."""

    design: str
    terms: tuple[Term, ...]
    ss_type: int
    rows: tuple[PrintedRow, ...]
    residual_df: int
    residual_ss: str
    source: str


@dataclass(frozen=True)
class PrintedMeans:
    """Published (estimated) marginal means of `factors`, keyed by level tuple."""

    design: str
    terms: tuple[Term, ...]
    factors: Term
    means: dict[tuple[str, ...], str]
    source: str


def printed_tolerance(text: str) -> float:
    """Half a unit in the last digit of a number as printed: "0.952" -> 5e-4, "3.9e-06" -> 5e-8."""
    exponent = Decimal(text).as_tuple().exponent
    assert isinstance(exponent, int)
    return 0.5 * 10.0**exponent


def _coded(frame: pd.DataFrame, factors: tuple[str, ...]) -> tuple[tuple[tuple[str, ...], ...], tuple[np.ndarray, ...]]:
    """Levels in sorted order (as the reference libraries sort them) and each row's code."""
    levels = tuple(tuple(sorted(str(v) for v in frame[f].unique())) for f in factors)
    codes = tuple(
        np.array([lv.index(str(v)) for v in frame[f]], dtype=np.intp) for f, lv in zip(factors, levels)
    )
    return levels, codes


def _from_frame(name: str, source: str, frame: pd.DataFrame, factors: tuple[str, ...], dv: str,
                covariates: tuple[str, ...] = (), decimals: int | None = None) -> Design:
    """Rows missing any value used are left out (listwise deletion, as pingouin does)."""
    frame = frame.dropna(subset=[*factors, dv, *covariates]).reset_index(drop=True)
    levels, codes = _coded(frame, factors)
    return Design(
        name=name, source=source, factors=factors, levels=levels, codes=codes,
        y=frame[dv].to_numpy(np.float64),
        covariates={c: frame[c].to_numpy(np.float64) for c in covariates},
        decimals=decimals,
    )


# ---------------------------------------------------------------------------------------
# 1. Kidney data: unbalanced two-way design, types 1, 2 and 3.
# Source: statsmodels 0.15.0, statsmodels/stats/tests/test_anova.py, the `kidney_table`
# text at the top of that file, copied here as it ships (the file says: "kidney data taken
# from JT's course, do not know the license"). Outcome np.log(Days + 1), factors Duration
# (2 levels) and Weight (3 levels), 10 units per cell. The unbalanced version drops the
# first three rows (`data.drop([0, 1, 2])` in TestAnova2 / TestAnova3).
# `test_kidney_copy_matches_installed_statsmodels` checks this copy against the installed file.
KIDNEY_TABLE = """\
Days      Duration Weight ID
    0.0      1      1      1
    2.0      1      1      2
    1.0      1      1      3
    3.0      1      1      4
    0.0      1      1      5
    2.0      1      1      6
    0.0      1      1      7
    5.0      1      1      8
    6.0      1      1      9
    8.0      1      1     10
    2.0      1      2      1
    4.0      1      2      2
    7.0      1      2      3
   12.0      1      2      4
   15.0      1      2      5
    4.0      1      2      6
    3.0      1      2      7
    1.0      1      2      8
    5.0      1      2      9
   20.0      1      2     10
   15.0      1      3      1
   10.0      1      3      2
    8.0      1      3      3
    5.0      1      3      4
   25.0      1      3      5
   16.0      1      3      6
    7.0      1      3      7
   30.0      1      3      8
    3.0      1      3      9
   27.0      1      3     10
    0.0      2      1      1
    1.0      2      1      2
    1.0      2      1      3
    0.0      2      1      4
    4.0      2      1      5
    2.0      2      1      6
    7.0      2      1      7
    4.0      2      1      8
    0.0      2      1      9
    3.0      2      1     10
    5.0      2      2      1
    3.0      2      2      2
    2.0      2      2      3
    0.0      2      2      4
    1.0      2      2      5
    1.0      2      2      6
    3.0      2      2      7
    6.0      2      2      8
    7.0      2      2      9
    9.0      2      2     10
   10.0      2      3      1
    8.0      2      3      2
   12.0      2      3      3
    3.0      2      3      4
    7.0      2      3      5
   15.0      2      3      6
    4.0      2      3      7
    9.0      2      3      8
    6.0      2      3      9
    1.0      2      3     10
"""


def kidney(drop_first: int = 0) -> Design:
    """The kidney table with log(Days + 1) as y; `drop_first=3` gives the unbalanced panel."""
    lines = KIDNEY_TABLE.splitlines()
    header = lines[0].split()
    frame = pd.DataFrame([[int(float(x)) for x in line.split()] for line in lines[1:]], columns=header)
    frame = frame.iloc[drop_first:].reset_index(drop=True)
    frame["y"] = np.log(frame["Days"] + 1.0)
    frame["Duration"] = frame["Duration"].astype(str)
    frame["Weight"] = frame["Weight"].astype(str)
    label = "kidney" if drop_first == 0 else f"kidney-less-{drop_first}"
    return _from_frame(label, "statsmodels 0.15.0 stats/tests/test_anova.py kidney_table",
                       frame, ("Duration", "Weight"), "y")


KIDNEY_TERMS: tuple[Term, ...] = (("Duration",), ("Weight",), ("Duration", "Weight"))

KIDNEY_TABLES = (
    # statsmodels 0.15.0 stats/tests/test_anova.py, TestAnovaLM.test_results (balanced, type 1;
    # R's 7-significant-digit print: the same file quotes R's anova() output for this model
    # without intercept in TestAnovaLMNoconstant, with the same Weight, interaction and
    # residual rows).
    PrintedTable(
        design="kidney", terms=KIDNEY_TERMS, ss_type=1,
        rows=(
            PrintedRow(("Duration",), 1, ss="2.339693", statistic="4.358293", p="0.0415617"),
            PrintedRow(("Weight",), 2, ss="16.97129", statistic="15.80674", p="3.944502e-06"),
            PrintedRow(("Duration", "Weight"), 2, ss="0.6356584", statistic="0.5920404", p="0.5567479"),
        ),
        residual_df=54, residual_ss="28.9892",
        source="statsmodels 0.15.0 test_anova.py TestAnovaLM",
    ),
    # statsmodels 0.15.0 stats/tests/test_anova.py, TestAnova2.test_results (first three rows
    # dropped, type 2 with sum-to-zero coding; the file quotes car::Anova(type='II') output
    # in TestAnova2Noconstant with the same Weight, interaction and residual rows).
    PrintedTable(
        design="kidney-less-3", terms=KIDNEY_TERMS, ss_type=2,
        rows=(
            PrintedRow(("Duration",), 1, ss="3.067066", statistic="5.667033", p="0.02106078"),
            PrintedRow(("Weight",), 2, ss="13.27205", statistic="12.26141", p="4.487909e-05"),
            PrintedRow(("Duration", "Weight"), 2, ss="0.1905093", statistic="0.1760025", p="0.8391231"),
        ),
        residual_df=51, residual_ss="27.60181",
        source="statsmodels 0.15.0 test_anova.py TestAnova2",
    ),
    # statsmodels 0.15.0 stats/tests/test_anova.py, TestAnova3.test_results (first three rows
    # dropped, type 3, sum-to-zero coding). The file's intercept row (151.4065, F 279.7545) is
    # left out: the engine reports no intercept row.
    PrintedTable(
        design="kidney-less-3", terms=KIDNEY_TERMS, ss_type=3,
        rows=(
            PrintedRow(("Duration",), 1, ss="2.904723", statistic="5.367071", p="0.02457384"),
            PrintedRow(("Weight",), 2, ss="13.45718", statistic="12.43245", p="3.999431e-05"),
            PrintedRow(("Duration", "Weight"), 2, ss="0.1905093", statistic="0.1760025", p="0.8391231"),
        ),
        residual_df=51, residual_ss="27.60181",
        source="statsmodels 0.15.0 test_anova.py TestAnova3",
    ),
)


# ---------------------------------------------------------------------------------------
# 2. pingouin 0.7.0 datasets (read from the installed package's datasets/ folder).
# Expected values: the docstring of pingouin.anova (pingouin/parametric.py), whose examples
# print tables rounded to 3 decimals (`.round(3)`); the docstring says its results "have
# been tested against R, Matlab and JASP". The balanced two-way table comes from pingouin's
# own pure-pandas two-way code; the unbalanced and three-way ones from statsmodels inside
# pingouin, so the tests also compare with statsmodels directly and with the published print.

def crop_yield() -> Design:
    """pingouin dataset "anova2": Yield by fertiliser Blend (2) x Crop (3), 4 per cell
    (datasets.csv names www.real-statistics.com as its origin)."""
    return _from_frame("anova2", "pingouin 0.7.0 datasets/anova2.csv", pingouin.read_dataset("anova2"),
                       ("Blend", "Crop"), "Yield", decimals=0)


def diet_exercise() -> Design:
    """pingouin dataset "anova2_unbalanced": Scores by Diet (2) x Exercise (2), cells of
    4, 1, 1, 4 units (datasets.csv names onlinestatbook.com, "unequal" chapter, as origin)."""
    return _from_frame("anova2_unbalanced", "pingouin 0.7.0 datasets/anova2_unbalanced.csv",
                       pingouin.read_dataset("anova2_unbalanced"), ("Diet", "Exercise"), "Scores",
                       decimals=0)


def cholesterol(unbalanced: bool = False) -> Design:
    """pingouin datasets "anova3" (5 per cell) and "anova3_unbalanced" (4-7 per cell; two
    outcomes missing there, so 69 units): Cholesterol by Sex (2) x Risk (2) x Drug (3);
    datasets.csv gives pingouin as origin."""
    name = "anova3_unbalanced" if unbalanced else "anova3"
    return _from_frame(name, f"pingouin 0.7.0 datasets/{name}.csv", pingouin.read_dataset(name),
                       ("Sex", "Risk", "Drug"), "Cholesterol")


TWO_WAY_TERMS: dict[str, tuple[Term, ...]] = {
    "anova2": (("Blend",), ("Crop",), ("Blend", "Crop")),
    "anova2_unbalanced": (("Diet",), ("Exercise",), ("Diet", "Exercise")),
}
THREE_WAY_TERMS: tuple[Term, ...] = (
    ("Sex",), ("Risk",), ("Drug",), ("Sex", "Risk"), ("Sex", "Drug"), ("Risk", "Drug"),
    ("Sex", "Risk", "Drug"),
)

PINGOUIN_TABLES = (
    # pingouin 0.7.0, docstring of pingouin.anova, "Two-way ANOVA with balanced design"
    # (default ss_type=2; balanced, so every type gives this table).
    PrintedTable(
        design="anova2", terms=TWO_WAY_TERMS["anova2"], ss_type=2,
        rows=(
            PrintedRow(("Blend",), 1, ss="2.042", statistic="0.004", p="0.952", partial_eta_squared="0.000"),
            PrintedRow(("Crop",), 2, ss="2736.583", statistic="2.525", p="0.108", partial_eta_squared="0.219"),
            PrintedRow(("Blend", "Crop"), 2, ss="2360.083", statistic="2.178", p="0.142",
                       partial_eta_squared="0.195"),
        ),
        residual_df=18, residual_ss="9753.250",
        source="pingouin 0.7.0 pingouin.anova docstring, balanced two-way example",
    ),
    # pingouin 0.7.0, docstring of pingouin.anova, "Two-way ANOVA with unbalanced design"
    # (default ss_type=2, effsize="n2"). Its n2 column divides by the sum of the printed SS
    # column, which is not the total SS in an unbalanced design, so it is not compared.
    PrintedTable(
        design="anova2_unbalanced", terms=TWO_WAY_TERMS["anova2_unbalanced"], ss_type=2,
        rows=(
            PrintedRow(("Diet",), 1, ss="390.625", statistic="7.423", p="0.034"),
            PrintedRow(("Exercise",), 1, ss="180.625", statistic="3.432", p="0.113"),
            PrintedRow(("Diet", "Exercise"), 1, ss="15.625", statistic="0.297", p="0.605"),
        ),
        residual_df=6, residual_ss="315.750",
        source="pingouin 0.7.0 pingouin.anova docstring, unbalanced two-way example",
    ),
    # pingouin 0.7.0, docstring of pingouin.anova, "Three-way ANOVA, type 3 sums of squares".
    PrintedTable(
        design="anova3", terms=THREE_WAY_TERMS, ss_type=3,
        rows=(
            PrintedRow(("Sex",), 1, ss="2.075", statistic="2.462", p="0.123", partial_eta_squared="0.049"),
            PrintedRow(("Risk",), 1, ss="11.332", statistic="13.449", p="0.001", partial_eta_squared="0.219"),
            PrintedRow(("Drug",), 2, ss="0.816", statistic="0.484", p="0.619", partial_eta_squared="0.020"),
            PrintedRow(("Sex", "Risk"), 1, ss="0.117", statistic="0.139", p="0.711", partial_eta_squared="0.003"),
            PrintedRow(("Sex", "Drug"), 2, ss="2.564", statistic="1.522", p="0.229", partial_eta_squared="0.060"),
            PrintedRow(("Risk", "Drug"), 2, ss="2.438", statistic="1.446", p="0.245", partial_eta_squared="0.057"),
            PrintedRow(("Sex", "Risk", "Drug"), 2, ss="1.844", statistic="1.094", p="0.343",
                       partial_eta_squared="0.044"),
        ),
        residual_df=48, residual_ss="40.445",
        source="pingouin 0.7.0 pingouin.anova docstring, three-way type 3 example",
    ),
)
# "anova3_unbalanced" has no printed table in pingouin 0.7.0's docstrings: it is checked
# against statsmodels only (types 1, 2, 3), see the tests.


# ---------------------------------------------------------------------------------------
# 3. Randomized complete block designs (textbook worked examples, from memory).

def _blocked(name: str, source: str, treatment: str, block: str,
             rows: dict[str, list[float]]) -> Design:
    """One row of `rows` per treatment level, one value per block (blocks numbered from 1)."""
    frame = pd.DataFrame(
        [(level, str(b + 1), v) for level, values in rows.items() for b, v in enumerate(values)],
        columns=[treatment, block, "y"],
    )
    return _from_frame(name, source, frame, (treatment, block), "y", decimals=1)


def vascular_graft() -> Design:
    """Extrusion pressure (4 levels, psi) x resin batch (6 blocks), percentage of good grafts.

    Source: D. C. Montgomery, *Design and Analysis of Experiments*, 8th ed. (Wiley, 2013),
    Example 4.1 (vascular graft experiment, Table 4.3); data from memory."""
    return _blocked("vascular-graft", "Montgomery 2013, 8th ed., Example 4.1 (from memory)",
                    "Pressure", "Batch", {
                        "8500": [90.3, 89.2, 98.2, 93.9, 87.4, 97.9],
                        "8700": [92.5, 89.5, 90.6, 94.7, 87.0, 95.8],
                        "8900": [85.5, 90.8, 89.6, 86.2, 88.0, 93.4],
                        "9100": [82.5, 89.5, 85.6, 87.4, 78.9, 90.7],
                    })


def hardness_tips() -> Design:
    """Rockwell hardness by tip (4) on metal test coupons (4 blocks).

    Source: D. C. Montgomery, *Design and Analysis of Experiments*, 5th ed. (Wiley, 2001),
    section 4-1, hardness-testing experiment (Table 4-3); data from memory. The book's
    variance table uses coded data 10 (y - 9.5), whose sums of squares are 100 times these."""
    return _blocked("hardness", "Montgomery 2001, 5th ed., section 4-1 (from memory)",
                    "Tip", "Coupon", {
                        "1": [9.3, 9.4, 9.6, 10.0],
                        "2": [9.4, 9.3, 9.8, 9.9],
                        "3": [9.2, 9.4, 9.5, 9.7],
                        "4": [9.7, 9.6, 10.0, 10.2],
                    })


BLOCK_TABLES = (
    # Montgomery 2013, 8th ed., Example 4.1, variance table (Table 4.4), from memory: treatments
    # 178.17 (3 df), blocks 192.25 (5 df), error 109.89 (15 df), F0 = 8.11, P = 0.0019. The
    # treatment and block sums of squares were recalled first; the error row was recalled
    # only after the data had been entered, so the statsmodels check in the tests carries it.
    PrintedTable(
        design="vascular-graft", terms=(("Pressure",), ("Batch",)), ss_type=1,
        rows=(
            PrintedRow(("Pressure",), 3, ss="178.17", statistic="8.11", p="0.0019"),
            PrintedRow(("Batch",), 5, ss="192.25"),
        ),
        residual_df=15, residual_ss="109.89",
        source="Montgomery 2013, 8th ed., Example 4.1 (from memory)",
    ),
    # Montgomery 2001, 5th ed., section 4-1, from memory: on coded data, tips 38.50 (3 df),
    # blocks 82.50 (3 df), error 8.00 (9 df), F0 = 14.44; divided by 100 here.
    PrintedTable(
        design="hardness", terms=(("Tip",), ("Coupon",)), ss_type=1,
        rows=(
            PrintedRow(("Tip",), 3, ss="0.3850", statistic="14.44"),
            PrintedRow(("Coupon",), 3, ss="0.8250"),
        ),
        residual_df=9, residual_ss="0.0800",
        source="Montgomery 2001, 5th ed., section 4-1 (from memory)",
    ),
)

BLOCK_MEANS = (
    # Montgomery 2013, Example 4.1: treatment totals 556.9, 550.1, 533.5, 514.6 over 6 batches
    # (from memory; they are also the row sums of the data above). In a complete block design
    # the estimated marginal means of the treatment are these totals / 6.
    PrintedMeans(
        design="vascular-graft", terms=(("Pressure",), ("Batch",)), factors=("Pressure",),
        means={("8500",): "92.8167", ("8700",): "91.6833", ("8900",): "88.9167", ("9100",): "85.7667"},
        source="Montgomery 2013, 8th ed., Example 4.1 totals / 6 (from memory)",
    ),
)


# ---------------------------------------------------------------------------------------
# 4. Analysis of covariance with adjusted means.

def teaching_methods() -> Design:
    """pingouin dataset "ancova": reading Scores by teaching Method (4), covariates family
    Income and BMI (datasets.csv names www.real-statistics.com as its origin)."""
    return _from_frame("ancova", "pingouin 0.7.0 datasets/ancova.csv", pingouin.read_dataset("ancova"),
                       ("Method",), "Scores", covariates=("Income", "BMI"), decimals=0)


def fiber_strength() -> Design:
    """Breaking strength (y, pounds) of monofilament fibre from three machines, fibre
    diameter (x, 10^-3 inch) as covariate, 5 specimens per machine.

    Source: D. C. Montgomery, *Design and Analysis of Experiments*, analysis of covariance
    chapter (ch. 15 in the 8th ed., Wiley, 2013; the example number is not recalled); data
    from memory."""
    strength = {"1": [36, 41, 39, 42, 49], "2": [40, 48, 39, 45, 44], "3": [35, 37, 42, 34, 32]}
    diameter = {"1": [20, 25, 24, 25, 32], "2": [22, 28, 22, 30, 28], "3": [21, 23, 26, 21, 15]}
    frame = pd.DataFrame(
        [(m, float(y), float(x)) for m in strength for y, x in zip(strength[m], diameter[m])],
        columns=["Machine", "y", "Diameter"],
    )
    return _from_frame("fiber", "Montgomery 2013, 8th ed., ch. 15 (from memory)", frame,
                       ("Machine",), "y", covariates=("Diameter",), decimals=0)


COVARIATE_TABLES = (
    # pingouin 0.7.0, docstring of pingouin.ancova, example 1 (one covariate; pingouin fits
    # dv ~ C(between) + covar with statsmodels and prints anova_lm(typ=2)): full precision print.
    PrintedTable(
        design="ancova", terms=(("Income",), ("Method",)), ss_type=2,
        rows=(
            PrintedRow(("Method",), 3, ss="571.029883", statistic="3.336482", p="0.031940",
                       partial_eta_squared="0.244077"),
            PrintedRow(("Income",), 1, ss="1678.352687", statistic="29.419438", p="0.000006",
                       partial_eta_squared="0.486920"),
        ),
        residual_df=31, residual_ss="1768.522313",
        source="pingouin 0.7.0 pingouin.ancova docstring, example 1",
    ),
    # pingouin 0.7.0, docstring of pingouin.ancova, example 2 (covariates Income and BMI,
    # effsize="n2"; n2 there is SS / sum of printed SS, not compared).
    PrintedTable(
        design="ancova", terms=(("Income",), ("BMI",), ("Method",)), ss_type=2,
        rows=(
            PrintedRow(("Method",), 3, ss="552.284043", statistic="3.232550", p="0.036113"),
            PrintedRow(("Income",), 1, ss="1573.952434", statistic="27.637304", p="0.000011"),
            PrintedRow(("BMI",), 1, ss="60.013656", statistic="1.053790", p="0.312842"),
        ),
        residual_df=30, residual_ss="1708.508657",
        source="pingouin 0.7.0 pingouin.ancova docstring, example 2",
    ),
    # Montgomery 2013, ch. 15, from memory: machines adjusted for diameter SS 13.28 (2 df),
    # error 27.99 (11 df), F0 = 2.61; the adjusted treatment SS is the type 2 (= type 3) row.
    PrintedTable(
        design="fiber", terms=(("Diameter",), ("Machine",)), ss_type=2,
        rows=(PrintedRow(("Machine",), 2, ss="13.28", statistic="2.61"),),
        residual_df=11, residual_ss="27.99",
        source="Montgomery 2013, 8th ed., ch. 15 (from memory)",
    ),
)

COVARIATE_MEANS = (
    # Montgomery 2013, ch. 15, from memory: adjusted machine means 40.38, 41.42, 38.80 (slope
    # 0.954, diameter mean 24.13).
    PrintedMeans(
        design="fiber", terms=(("Diameter",), ("Machine",)), factors=("Machine",),
        means={("1",): "40.38", ("2",): "41.42", ("3",): "38.80"},
        source="Montgomery 2013, 8th ed., ch. 15 (from memory)",
    ),
)

# Montgomery 2013, ch. 15, from memory: common within-machine slope 0.954.
FIBER_SLOPE = "0.954"


DESIGNS = {
    d.name: d
    for d in (
        kidney(), kidney(drop_first=3), crop_yield(), diet_exercise(), cholesterol(),
        cholesterol(unbalanced=True), vascular_graft(), hardness_tips(), teaching_methods(),
        fiber_strength(),
    )
}
