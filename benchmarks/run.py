"""Run every benchmark and print each ratio against its target.

    python benchmarks/run.py            # everything (several minutes, ~4 GB of scratch files)
    python benchmarks/run.py engine     # only the modules whose name contains 'engine'

Each module `bench_*.py` here exposes `measurements() -> list[Measurement]`. Scratch data
goes to $APPENDIX_BENCH_DIR (default: a folder under the system temp dir), outside the repo.
Exit code 0 when every target is met, 1 otherwise.
"""

from __future__ import annotations

import importlib
import sys
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))
sys.path.insert(0, str(HERE.parent))


def main(argv: list[str]) -> int:
    wanted = argv[0] if argv else ""
    modules = sorted(p.stem for p in HERE.glob("bench_*.py") if wanted in p.stem)
    missed = 0
    for name in modules:
        print(f"== {name}", flush=True)
        for row in importlib.import_module(name).measurements():
            print(row.line(), flush=True)
            missed += not row.met
    print(f"{missed} target{'s' if missed != 1 else ''} missed")
    return 1 if missed else 0


if __name__ == "__main__":
    raise SystemExit(main(sys.argv[1:]))
