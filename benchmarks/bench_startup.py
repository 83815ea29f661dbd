"""Start-up: `appendix check` on the demo study against importing pandas and scipy.stats.

    python benchmarks/bench_startup.py      # prints its row (about half a minute)

Both commands run as fresh subprocesses of this Python, best of five wall-clock runs each,
measured in this run: `python -m appendix check studies/seed-coating/study.yaml` over
`python -c "import pandas, scipy.stats"` (what any statistics script pays before work).
"""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

HERE = Path(__file__).resolve().parent
ROOT = HERE.parent
sys.path.insert(0, str(HERE))

from common import Measurement, best_time  # noqa: E402

STUDY = ROOT / "studies" / "seed-coating" / "study.yaml"


def _run(argv: list[str]) -> None:
    done = subprocess.run([sys.executable, *argv], cwd=ROOT, capture_output=True, text=True)
    if done.returncode != 0:
        raise RuntimeError(f"{' '.join(argv)} exited {done.returncode}: {done.stderr[-2000:]}")


def measurements() -> list[Measurement]:
    check = ["-m", "appendix", "check", str(STUDY)]
    bare = ["-c", "import pandas, scipy.stats"]
    _run(check)  # warm the file cache and the bytecode of both before timing
    _run(bare)
    ours = best_time(lambda: _run(check), repeat=5)
    base = best_time(lambda: _run(bare), repeat=5)
    return [Measurement("start-up: appendix check (demo) / import pandas, scipy.stats",
                        ours / base, 2.0, "lower",
                        detail=f"check {ours:.2f} s, imports {base:.2f} s, best of 5")]


if __name__ == "__main__":
    for row in measurements():
        print(row.line(), flush=True)
