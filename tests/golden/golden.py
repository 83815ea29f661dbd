"""The golden results files: what each invented demo's results.json and each NIST StRD
one-way case's variance table were when last reviewed.

`python tests/golden/golden.py` rewrites them from the current code; do that only on
purpose, and read the diff of the rewritten files before committing it (a changed number
or sentence there is a changed appendix). The tests compare against them in
tests/golden/test_golden.py.

A rewrite keeps a stored number that the new one agrees with within the tolerance
`verify` uses: the last bits of a double move between CPUs (the BLAS library picks its
kernels by CPU type), and such noise must not show in the diff as a change.
"""

from __future__ import annotations

import json
import sys
from pathlib import Path
from typing import Any

HERE = Path(__file__).resolve().parent
REPO = HERE.parent.parent
DEMOS = ("seed-coating", "greenhouse-split", "wound-dose")
#: results.json keys that depend on the machine rather than on the analysis.
MACHINE_KEYS = ("software",)


def demo_path(name: str) -> Path:
    return HERE / f"{name}.results.json"


def nist_path() -> Path:
    return HERE / "nist-anova.json"


def demo_text(name: str) -> str:
    """The demo's results.json as a run writes it."""
    from appendix import api
    from appendix.results import to_json

    return to_json(api.compute(REPO / "studies" / name / "study.yaml").results)


def nist_text() -> str:
    """Each NIST one-way case's variance table (the one-term engine table, exact decimal
    sums), as canonical JSON keyed by case name."""
    from appendix.nist import NAMES, engine_table, one_factor_cells, read_case
    from appendix.results import to_plain

    tables = {name: to_plain(engine_table(one_factor_cells(read_case(name)))) for name in NAMES}
    return json.dumps(tables, sort_keys=True, indent=2, ensure_ascii=False) + "\n"


def settled(stored: str, fresh: str) -> str:
    """The fresh JSON text with every float that agrees with the stored one (same place,
    within the `verify` tolerance) written as stored; everything else as fresh."""
    from appendix.tolerance import DEFAULT

    def keep(old: Any, new: Any) -> Any:
        if isinstance(old, float) and isinstance(new, float):
            return old if DEFAULT.agree(old, new) else new
        if isinstance(old, dict) and isinstance(new, dict):
            return {k: keep(old[k], v) if k in old else v for k, v in new.items()}
        if isinstance(old, list) and isinstance(new, list) and len(old) == len(new):
            return [keep(a, b) for a, b in zip(old, new)]
        return new

    tree = keep(json.loads(stored), json.loads(fresh))
    return json.dumps(tree, sort_keys=True, indent=2, ensure_ascii=False, allow_nan=False) + "\n"


def _rewrite(path: Path, fresh: str) -> None:
    stored = path.read_text(encoding="utf-8") if path.exists() else fresh
    path.write_text(settled(stored, fresh), encoding="utf-8")


def main() -> int:
    sys.path.insert(0, str(REPO))
    for name in DEMOS:
        _rewrite(demo_path(name), demo_text(name))
    _rewrite(nist_path(), nist_text())
    print(f"rewrote {len(DEMOS) + 1} golden files in {HERE}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
