"""Benchmark of re-evaluation, screening and the parameter study (prints figures;
asserts nothing).

    python benchmarks/evaluate_time.py [--repeat N] [--cpu]

(``--cpu``: processor time instead of wall time, for a machine shared with other jobs.)

Measured in one run, medians, next to the time a fresh Python needs to import numpy,
scipy, matplotlib.pyplot and yaml (the same run):
- ``helix.evaluate(project)`` in a warm process, for each demo's fixed design and for
  the search demo's chosen design (target: 50 ms or less each);
- screening (:func:`helix.search.screen`, every margin and the exact smallest headroom)
  in candidate radii per second, for each layout of the search demo at its chosen turns
  (target: 100,000 or more per family);
- ``helix.sweep`` of 10,000 designs (100 radii x 100 storey heights) of the metric demo.
"""
from __future__ import annotations

import os
import statistics
import subprocess
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

import numpy as np  # noqa: E402

import helix  # noqa: E402
from helix.search import screen  # noqa: E402


def _cpu() -> float:
    # Processor time of this process and its finished children: on a shared machine
    # (other jobs on the same cores) wall time measures the neighbours as much as helix.
    t = os.times()
    return time.process_time() + t.children_user + t.children_system


CLOCK = time.perf_counter


def median_time(fn, repeat: int) -> float:
    times = []
    for _ in range(repeat):
        t0 = CLOCK()
        fn()
        times.append(CLOCK() - t0)
    return statistics.median(times)


def main() -> None:
    global CLOCK
    if "--cpu" in sys.argv:
        CLOCK = _cpu
    repeat = int(sys.argv[sys.argv.index("--repeat") + 1]) if "--repeat" in sys.argv else 7
    base = median_time(lambda: subprocess.run(
        [sys.executable, "-c", "import numpy, scipy, matplotlib.pyplot, yaml"], check=True), max(3, repeat // 2))
    print(f"bare import (numpy, scipy, matplotlib.pyplot, yaml): {1000 * base:.0f} ms "
          f"(median, {'processor' if CLOCK is _cpu else 'wall'} time)")
    searched = helix.design(helix.load_project(ROOT / "configs" / "demo-search.yaml"))
    projects = {name: helix.load_project(ROOT / "configs" / f"{name}.yaml")
                for name in ("demo-metric", "demo-imperial", "demo-double")}
    projects["demo-search (chosen)"] = searched.options[searched.best].evaluation.project
    print(f"\n{'helix.evaluate, warm':28s} {'median ms':>10s} {'/ import':>9s}")
    for name, p in projects.items():
        helix.evaluate(p)
        t = median_time(lambda p=p: helix.evaluate(p), repeat)
        print(f"{name:28s} {1000 * t:10.1f} {t / base:9.3f}")
    print("target: 50 ms or less per demo")
    print(f"\n{'screening (search demo)':28s} {'turns':>8s} {'candidates/s':>13s}")
    sp = searched.project.search
    radii = np.linspace(sp.radius_min, sp.radius_max, 20_000)
    for option in searched.options:
        fam = option.family
        if fam is None:
            continue
        screen(searched.project, fam, radii[:10])
        t = median_time(lambda fam=fam: screen(searched.project, fam, radii), max(3, repeat // 2))
        turns = "/".join(f"{x:g}" for x in dict.fromkeys(fam.turns))
        print(f"{option.layout:28s} {turns:>8s} {len(radii) / t:13,.0f}")
    print("target: 100,000 candidates/s or more per family")
    p = projects["demo-metric"]
    if not hasattr(helix, "__all__") or "sweep" not in helix.__all__:  # an older helix, for comparison
        return
    t = median_time(lambda: helix.sweep(p, centre_radius=np.linspace(6.0, 20.0, 100),
                                        storey_height=np.linspace(2.6, 3.6, 100)), max(3, repeat // 2))
    print(f"\nhelix.sweep of 10,000 designs (100 radii x 100 storey heights, metric demo): "
          f"{t:.2f} s (median), {t / base:.2f}x the import, {10_000 / t:,.0f} designs/s")


if __name__ == "__main__":
    main()
