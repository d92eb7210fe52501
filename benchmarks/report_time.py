"""Benchmark of the report against the bare import (prints figures; asserts nothing).

    python benchmarks/report_time.py [--repeat N] [-- EXTRA OPTIONS FOR THE -o RUNS]

Whole processes, medians of ``--repeat`` runs (default 5), all measured in this one run:

- the bare import, ``python -c "import numpy, scipy, matplotlib.pyplot, yaml"`` (the
  reference of issue 15) and the same without scipy (scipy is optional in the core
  install; helix never imports it for ``check`` or ``design``);
- ``helix design configs/demo-search.yaml -o DIR`` (the full report);
- ``helix design configs/demo-search.yaml --json`` (the search alone);
- ``helix check configs/demo-metric.yaml -o DIR``.

Each is printed as wall seconds, CPU seconds (user + system of the child) and the
ratio of its wall time to the import with scipy.  Targets (issue 15): report/import
<= 4, ``--json`` design/import <= 1.5.
"""
from __future__ import annotations

import os
import resource
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def run(cmd: list[str], repeat: int) -> tuple[float, float]:
    """Median wall and CPU seconds of ``cmd`` run ``repeat`` times."""
    walls, cpus = [], []
    for _ in range(repeat):
        before = resource.getrusage(resource.RUSAGE_CHILDREN)
        t0 = time.perf_counter()
        done = subprocess.run(cmd, cwd=ROOT, capture_output=True)
        walls.append(time.perf_counter() - t0)
        after = resource.getrusage(resource.RUSAGE_CHILDREN)
        cpus.append(after.ru_utime - before.ru_utime + after.ru_stime - before.ru_stime)
        if done.returncode not in (0, 1):
            raise SystemExit(f"failed: {' '.join(cmd)}\n{done.stderr.decode()}")
    return statistics.median(walls), statistics.median(cpus)


def main() -> None:
    argv = sys.argv[1:]
    extra: list[str] = []
    if "--" in argv:
        extra = argv[argv.index("--") + 1:]
        argv = argv[:argv.index("--")]
    repeat = int(argv[argv.index("--repeat") + 1]) if "--repeat" in argv else 5
    py = sys.executable
    helix = [py, "-m", "helix"]
    search, metric = "configs/demo-search.yaml", "configs/demo-metric.yaml"
    print(f"{os.cpu_count()} cores; medians of {repeat} runs; ratios against the import with scipy")
    with tempfile.TemporaryDirectory() as tmp:
        cases = [
            ("import numpy, scipy, matplotlib.pyplot, yaml", [py, "-c", "import numpy, scipy, matplotlib.pyplot, yaml"]),
            ("import numpy, matplotlib.pyplot, yaml", [py, "-c", "import numpy, matplotlib.pyplot, yaml"]),
            (f"design {search} -o DIR", helix + ["design", search, "-o", f"{tmp}/d"] + extra),
            (f"design {search} --json", helix + ["design", search, "--json"]),
            (f"check {metric} -o DIR", helix + ["check", metric, "-o", f"{tmp}/c"] + extra),
        ]
        rows = [(name, *run(cmd, repeat)) for name, cmd in cases]
    base = rows[0][1]
    width = max(len(r[0]) for r in rows)
    print(f"{'run':{width}s}  {'wall s':>7s}  {'cpu s':>6s}  {'wall/import':>11s}")
    for name, w, c in rows:
        print(f"{name:{width}s}  {w:7.2f}  {c:6.2f}  {w / base:11.2f}")
    print(f"report/import {rows[2][1] / base:.2f} (target <= 4); "
          f"--json design/import {rows[3][1] / base:.2f} (target <= 1.5); "
          f"check -o/import {rows[4][1] / base:.2f}")


if __name__ == "__main__":
    main()
