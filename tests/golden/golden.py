"""The golden results files: what each invented demo's results.json and each NIST StRD
one-way case's variance table were when last reviewed.

`python tests/golden/golden.py` rewrites them from the current code; do that only on
purpose, and read the diff of the rewritten files before committing it (a changed number
or sentence there is a changed appendix). The tests compare against them in
tests/golden/test_golden.py.
"""

from __future__ import annotations

import sys
from pathlib import Path

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
    import json

    from appendix.nist import NAMES, engine_table, one_factor_cells, read_case
    from appendix.results import to_plain

    tables = {name: to_plain(engine_table(one_factor_cells(read_case(name)))) for name in NAMES}
    return json.dumps(tables, sort_keys=True, indent=2, ensure_ascii=False) + "\n"


def main() -> int:
    sys.path.insert(0, str(REPO))
    for name in DEMOS:
        demo_path(name).write_text(demo_text(name), encoding="utf-8")
    nist_path().write_text(nist_text(), encoding="utf-8")
    print(f"rewrote {len(DEMOS) + 1} golden files in {HERE}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
