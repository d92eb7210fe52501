"""Benchmark of whole runs against Python's own import time (prints figures; asserts nothing).

    python benchmarks/run_time.py [--repeat N]

For each demo project: the median wall time of `helix design` without outputs (the
search and the full check of each layout's choice) and with `-o` (figures, report,
DXF), next to the median time a fresh Python needs just to import numpy, scipy,
matplotlib and yaml, measured in the same run; printed as ratios.  Targets: search
within 2x the import time, the full report within 4x.
"""
from __future__ import annotations

import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
DEMOS = ["demo-metric.yaml", "demo-imperial.yaml", "demo-double.yaml", "demo-search.yaml"]


def wall(cmd: list[str], repeat: int) -> float:
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        done = subprocess.run(cmd, cwd=ROOT, capture_output=True)
        times.append(time.perf_counter() - t0)
        if done.returncode not in (0, 1):
            raise SystemExit(f"failed: {' '.join(cmd)}\n{done.stderr.decode()}")
    return statistics.median(times)


def main() -> None:
    repeat = int(sys.argv[sys.argv.index("--repeat") + 1]) if "--repeat" in sys.argv else 3
    py = sys.executable
    base = wall([py, "-c", "import numpy, scipy, matplotlib, yaml"], repeat)
    print(f"import numpy, scipy, matplotlib, yaml: {base:.2f} s (median of {repeat})")
    print(f"{'demo':22s} {'search s':>9s} {'ratio':>6s} {'report s':>9s} {'ratio':>6s}")
    for demo in DEMOS:
        cfg = str(ROOT / "configs" / demo)
        t_search = wall([py, "-m", "helix", "design", cfg], repeat)
        with tempfile.TemporaryDirectory() as tmp:
            t_full = wall([py, "-m", "helix", "design", cfg, "-o", str(Path(tmp) / "out")], repeat)
        print(f"{demo:22s} {t_search:9.2f} {t_search / base:6.1f} {t_full:9.2f} {t_full / base:6.1f}")
    print("targets: search within 2x the import time, full report within 4x")


if __name__ == "__main__":
    main()
