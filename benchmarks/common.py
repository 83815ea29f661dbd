"""Shared pieces of the benchmark scripts: timing, peak memory, and the result row.

Every benchmark prints ratios measured side by side in the same run, never absolute
times compared with a constant, so a slow machine does not change the verdict.
"""

from __future__ import annotations

import gc
import time
from collections.abc import Callable
from dataclasses import dataclass


@dataclass(frozen=True)
class Measurement:
    """One printed line: `value` compared with `target` (`better` says which way wins);
    a `target` of None marks a row printed for comparison only."""

    name: str
    value: float
    target: float | None
    better: str  # "lower" or "higher"
    unit: str = "x"
    detail: str = ""

    @property
    def met(self) -> bool:
        if self.target is None:
            return True
        return self.value <= self.target if self.better == "lower" else self.value >= self.target

    def line(self) -> str:
        if self.target is None:
            goal = "for comparison"
        else:
            sign = "<=" if self.better == "lower" else ">="
            goal = f"target {sign} {self.target:g}{self.unit}  {'met' if self.met else 'MISSED'}"
        text = f"{self.name:<58} {self.value:>10.2f}{self.unit}  {goal}"
        return text + (f"  ({self.detail})" if self.detail else "")


def best_time(function: Callable[[], object], repeat: int = 3) -> float:
    """The fastest of `repeat` wall-clock runs, in seconds (the least disturbed one)."""
    times = []
    for _ in range(repeat):
        gc.collect()
        start = time.perf_counter()
        function()
        times.append(time.perf_counter() - start)
    return min(times)
