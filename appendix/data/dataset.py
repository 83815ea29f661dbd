"""The dataset stage's output: analysable arrays per outcome, with provenance.

A `Dataset` is what the results stage receives; it never sees files. Arrays are
read-only so that nothing downstream can alter the data it was given.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from appendix.results import Finding, InputFile, UnitFlow


def frozen_array(values, dtype=None) -> np.ndarray:
    """A read-only copy of `values`."""
    array = np.array(values, dtype=dtype, copy=True)
    array.flags.writeable = False
    return array


@dataclass(frozen=True)
class CellSummary:
    """Per-level sufficient statistics of all analysed units, computed where the rows
    are (for a source too large to load): n, mean and sum of squared deviations from the
    level mean, each an array over `Dataset.levels`."""

    n: np.ndarray
    mean: np.ndarray
    ssd: np.ndarray


@dataclass(frozen=True)
class OutcomeData:
    """The analysed units of one outcome: after exclusions, without missing values.

    `codes[i]` is the index into `Dataset.levels` of unit `units[i]`, whose value is
    `values[i]` (float64). `lines[i]` is its 1-based line in the data file (header = 1)
    where the format has lines, else its 1-based row number. `units` and `lines` are
    read-only sequences (tuples, or lazy views of the columns for large files).

    `decimals` is set when every analysed value was written as plain decimal text with
    at most that many digits after the point (CSV/TSV): the engine then sums them
    exactly as scaled integers. None means the float64 path.

    `summary` and `sample_of` are set together for a source aggregated out of core:
    `summary` holds the full-data cell statistics (the variance table and every test
    built on cell statistics use it), `sample_of` is the number of analysed units, and
    the arrays hold a deterministic subsample of them, used only for figures and
    row-level diagnostics.

    For designs beyond one factor, `factors[j]` holds each row's level code of the plan's
    j-th factor (`codes` is then that of `Plan.factor`) and `covariates[j]` each row's
    value of the j-th covariate; with a within factor a row is one (unit, within level)
    observation, rows unit by unit, and `units` repeats a unit's id on each of its rows.
    """

    name: str
    values: np.ndarray
    codes: np.ndarray
    units: Sequence[str]
    lines: Sequence[int]
    decimals: int | None = None
    summary: CellSummary | None = None
    sample_of: int | None = None
    factors: tuple[np.ndarray, ...] = ()
    covariates: tuple[np.ndarray, ...] = ()


@dataclass(frozen=True)
class Dataset:
    levels: tuple[str, ...]
    inputs: tuple[InputFile, ...]
    unit_flow: UnitFlow
    outcomes: tuple[OutcomeData, ...]
    findings: tuple[Finding, ...]

    def outcome(self, name: str) -> OutcomeData:
        for item in self.outcomes:
            if item.name == name:
                return item
        raise KeyError(name)
