"""The dataset stage's output: analysable arrays per outcome, with provenance.

A `Dataset` is what the results stage receives; it never sees files. Arrays are
read-only so that nothing downstream can alter the data it was given.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from appendix.results import Finding, InputFile, UnitFlow


def frozen_array(values, dtype=None) -> np.ndarray:
    """A read-only copy of `values`."""
    array = np.array(values, dtype=dtype, copy=True)
    array.flags.writeable = False
    return array


@dataclass(frozen=True)
class OutcomeData:
    """The analysed units of one outcome: after exclusions, without missing values.

    `codes[i]` is the index into `Dataset.levels` of unit `units[i]`, whose value is
    `values[i]` (float64). `lines[i]` is its 1-based line in the data file (header = 1)
    where the format has lines, else its 1-based row number.
    """

    name: str
    values: np.ndarray
    codes: np.ndarray
    units: tuple[str, ...]
    lines: tuple[int, ...]


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
