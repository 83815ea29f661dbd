"""`appendix selftest`: the published reference checks, run on this installation.

The NIST StRD one-way ANOVA datasets with certified values ship inside scipy's installed
test data. Each is read from its decimal text and analysed as the appendix analyses a
one-factor outcome (the design engine's one-term model on exact cell statistics), and
every certified value (df, sums of squares, mean squares, F, R squared, residual SD) of
the variance table it reports is compared by its log relative error (McCullough 1998),
which must reach `SELFTEST_FLOOR`.
"""

from __future__ import annotations

from dataclasses import dataclass

from appendix import nist
from appendix.nist import (CERTIFIED_DIGITS, NAMES, engine_table, engine_values, lre,
                           one_factor_cells, read_case)


@dataclass(frozen=True)
class CheckResult:
    """One reference dataset: the lowest LRE over its certified values, and which value."""

    dataset: str
    lowest_lre: float
    weakest: str
    passed: bool


def nist_checks() -> tuple[CheckResult, ...]:
    """Every NIST StRD ANOVA dataset through the exact path; empty if scipy lacks them."""
    if not nist.NIST_DIR.is_dir():
        return ()
    results = []
    for name in NAMES:
        case = read_case(name)
        got = engine_values(engine_table(one_factor_cells(case, exact=True)))
        scores = {key: lre(got[key], value) for key, value in case.certified.items()}
        weakest = min(scores, key=scores.get)
        results.append(CheckResult(name, scores[weakest], weakest,
                                   scores[weakest] >= nist.SELFTEST_FLOOR))
    return tuple(results)


def report(results: tuple[CheckResult, ...]) -> list[str]:
    """Lines for the terminal: one per dataset, then the verdict."""
    if not results:
        return [f"NIST StRD ANOVA data not found under {nist.NIST_DIR}; nothing was checked"]
    lines = [f"NIST StRD one-way ANOVA, certified values, log relative error "
             f"(at least {nist.SELFTEST_FLOOR:g} required):"]
    for r in results:
        which = "every value" if r.lowest_lre >= CERTIFIED_DIGITS else r.weakest
        lines.append(f"  {r.dataset:<8} lowest LRE {r.lowest_lre:4.1f} ({which})  "
                     f"{'pass' if r.passed else 'FAIL'}")
    failed = sum(not r.passed for r in results)
    lines.append(f"{len(results) - failed} passed, {failed} failed")
    return lines
