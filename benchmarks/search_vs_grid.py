"""Benchmark of the design search (prints figures; asserts nothing).

    python benchmarks/search_vs_grid.py [PROJECT.yaml]

Reports, on the demo project by default:
- candidates screened per second (vectorised margins of one family, many radii);
- the wall time of the whole search (`helix.search.design`, with the full check of
  each layout's choice) and of `helix design` as a command;
- the search against a dense exhaustive grid of the same space (every family, radius
  step 1 mm): the optimum each finds, and how many times faster the search is.
"""
from __future__ import annotations

import subprocess
import sys
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

import helix  # noqa: E402
from helix.search import _best_in_family, _grid, design, families, screen  # noqa: E402


def best_of(times):
    return min(times)


def main() -> None:
    path = sys.argv[1] if len(sys.argv) > 1 else str(ROOT / "configs" / "demo-search.yaml")
    project = helix.load_project(path)
    fams = families(project)
    print(f"project: {project.name}")
    print(f"families (layout x turns): {len(fams)}; radius range {project.search.radius_min:.2f} to "
          f"{project.search.radius_max:.2f} m")

    # 1. Screening throughput.
    radii = np.linspace(project.search.radius_min, project.search.radius_max, 20000)
    t0 = time.perf_counter()
    for fam in fams:
        screen(project, fam, radii)
    dt = time.perf_counter() - t0
    print(f"screening: {len(fams) * len(radii)} candidates in {dt:.3f} s = "
          f"{len(fams) * len(radii) / dt:,.0f} candidates/s")

    # 2. Search (coarse grid + root finding) against the dense exhaustive grid.
    grid = _grid(project)
    step = 0.001
    dense = np.arange(project.search.radius_min, project.search.radius_max + step / 2, step)
    search_times, grid_times = [], []
    for _ in range(3):
        t0 = time.perf_counter()
        found = {}
        for fam in fams:
            c = _best_in_family(project, fam, grid, "footprint", screen(project, fam, grid))
            found[fam] = None if c is None else c.radius
        search_times.append(time.perf_counter() - t0)
        t0 = time.perf_counter()
        exhaustive = {}
        for fam in fams:
            ok = screen(project, fam, dense).feasible()
            exhaustive[fam] = float(dense[np.flatnonzero(ok)[0]]) if np.any(ok) else None
        grid_times.append(time.perf_counter() - t0)
    ts, tg = best_of(search_times), best_of(grid_times)
    print(f"search: {ts * 1000:.1f} ms; exhaustive grid ({len(dense)} radii x {len(fams)} families, "
          f"{step * 1000:.0f} mm step): {tg * 1000:.1f} ms; search is {tg / ts:.0f}x faster")
    agree = True
    for fam in fams:
        a, b = found[fam], exhaustive[fam]
        same = (a is None and b is None) or (a is not None and b is not None and b - step <= a <= b + 1e-9)
        agree &= same
        print(f"  {fam.label():55s} search {('-' if a is None else f'{a:.4f} m'):>10s}  "
              f"grid {('-' if b is None else f'{b:.4f} m'):>10s}  {'same' if same else 'DIFFERENT'}")
    print(f"same optimum within the grid step: {'yes' if agree else 'NO'}")

    # 3. Whole runs.
    t0 = time.perf_counter()
    design(project)
    print(f"helix.search.design (with the full check of each layout's choice): {time.perf_counter() - t0:.2f} s")
    exe = [sys.executable, "-m", "helix", "design", path]
    t0 = time.perf_counter()
    subprocess.run(exe, capture_output=True, cwd=ROOT, check=False)
    print(f"'helix design' command, wall time: {time.perf_counter() - t0:.2f} s")


if __name__ == "__main__":
    main()
