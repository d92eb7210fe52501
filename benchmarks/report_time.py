"""Benchmark of the report against the bare import (prints figures; asserts nothing).

    python benchmarks/report_time.py [--repeat N] [--cpu] [--old CHECKOUT] [-- EXTRA OPTIONS FOR THE -o RUNS]

Whole processes, medians of ``--repeat`` runs (default 5), all measured in this one run:

- the bare import, ``python -c "import numpy, scipy, matplotlib.pyplot, yaml"`` (the
  reference of issue 15) and the same without scipy (scipy is optional in the core
  install; helix never imports it for ``check`` or ``design``);
- ``helix design configs/demo-search.yaml -o DIR`` (the full report);
- ``helix design configs/demo-search.yaml --json`` (the search alone);
- ``helix check configs/demo-metric.yaml -o DIR``.

With ``--old`` (a folder holding an earlier ``helix`` package, e.g. from ``git archive``)
the three helix runs are measured for it too, interleaved with the current ones, so
before and after share the machine's load.  Each is printed as wall seconds, CPU seconds (user + system of the child) and the
ratio of its wall time to the import with scipy; ``--cpu`` adds the ratio of the CPU
times (steadier than wall time on a machine shared with others, but a run that keeps two
cores busy counts both).  Targets (issue 15): report/import <= 4, ``--json``
design/import <= 1.5, both in wall time.  Where the time of the report goes, stage by
stage: ``benchmarks/report_stages.py``.
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


def once(cmd: list[str]) -> tuple[float, float]:
    """Wall and CPU seconds (user + system, worker processes included) of one run."""
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    t0 = time.perf_counter()
    done = subprocess.run(cmd, cwd=ROOT, capture_output=True)
    wall = time.perf_counter() - t0
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    if done.returncode not in (0, 1):
        raise SystemExit(f"failed: {' '.join(cmd)}\n{done.stderr.decode()}")
    return wall, after.ru_utime - before.ru_utime + after.ru_stime - before.ru_stime


def medians(cases: list[tuple[str, list[str]]], repeat: int) -> list[tuple[str, float, float]]:
    """Median wall and CPU seconds of each case, the cases taken in turn in every round
    (so a change in the machine's load touches all of them alike)."""
    times: list[list[tuple[float, float]]] = [[] for _ in cases]
    for _ in range(repeat):
        for k, (_, cmd) in enumerate(cases):
            times[k].append(once(cmd))
    return [(name, statistics.median(w for w, _ in t), statistics.median(c for _, c in t))
            for (name, _), t in zip(cases, times)]


def main() -> None:
    argv = sys.argv[1:]
    extra: list[str] = []
    if "--" in argv:
        extra = argv[argv.index("--") + 1:]
        argv = argv[:argv.index("--")]
    repeat = int(argv[argv.index("--repeat") + 1]) if "--repeat" in argv else 5
    old = argv[argv.index("--old") + 1] if "--old" in argv else None
    cpu = "--cpu" in argv
    py = sys.executable
    search, metric = "configs/demo-search.yaml", "configs/demo-metric.yaml"
    # Other people's jobs on the same cores stretch the wall times (and the CPU times a
    # little): the load average before and after says how busy the machine was.
    print(f"{os.cpu_count()} cores, load average {os.getloadavg()[0]:.2f}; medians of {repeat} runs; "
          "ratios against the import with scipy")
    with tempfile.TemporaryDirectory() as tmp:
        def helix_runs(label: str, helix: list[str], more: list[str]) -> list[tuple[str, list[str]]]:
            return [(f"{label}design {search} -o DIR", helix + ["design", search, "-o", f"{tmp}/{label}d"] + more),
                    (f"{label}design {search} --json", helix + ["design", search, "--json"]),
                    (f"{label}check {metric} -o DIR", helix + ["check", metric, "-o", f"{tmp}/{label}c"] + more)]
        cases = [
            ("import numpy, scipy, matplotlib.pyplot, yaml", [py, "-c", "import numpy, scipy, matplotlib.pyplot, yaml"]),
            ("import numpy, matplotlib.pyplot, yaml", [py, "-c", "import numpy, matplotlib.pyplot, yaml"]),
        ] + helix_runs("", [py, "-m", "helix"], extra)
        if old is not None:
            # The earlier package first on the path, ahead of an editable install's finder.
            boot = (f"import sys, runpy; sys.meta_path = [f for f in sys.meta_path if '__editable__' not in repr(f)]; "
                    f"sys.path.insert(0, {str(Path(old).resolve())!r}); sys.argv[0] = 'helix'; "
                    "runpy.run_module('helix', run_name='__main__')")
            cases += helix_runs("old: ", [py, "-c", boot], [])
        rows = medians(cases, repeat)
    print(f"load average after the runs {os.getloadavg()[0]:.2f}")
    base, base_cpu = rows[0][1], rows[0][2]
    width = max(len(r[0]) for r in rows)
    print(f"{'run':{width}s}  {'wall s':>7s}  {'cpu s':>6s}  {'wall/import':>11s}" + ("  cpu/import" if cpu else ""))
    for name, w, c in rows:
        print(f"{name:{width}s}  {w:7.2f}  {c:6.2f}  {w / base:11.2f}" + (f"  {c / base_cpu:10.2f}" if cpu else ""))
    ratio = lambda k: f"{rows[k][1] / base:.2f}" + (f" (cpu {rows[k][2] / base_cpu:.2f})" if cpu else "")
    print(f"report/import {ratio(2)} (target <= 4); --json design/import {ratio(3)} (target <= 1.5); "
          f"check -o/import {ratio(4)}")
    if old is not None:
        print(f"old: report/import {ratio(5)}; --json design/import {ratio(6)}; check -o/import {ratio(7)}")

if __name__ == "__main__":
    main()
