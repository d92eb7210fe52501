"""Benchmark of the design search against brute force (prints figures; asserts nothing).

    python benchmarks/search_vs_grid.py [PROJECT.yaml ...]

For each project (by default the search demo, the three other demos searched over
their default space, and an invented 10-level building with unequal storeys), and each
layout:
- the wall time of the exact search (:func:`helix.search.search_layout`: feasible radii
  by roots and certified headroom regions, turns per storey by branch and bound);
- the turns combinations in the space and the partial designs and storey headroom
  regions the search examined;
- the brute-force reference of the property test (every combination, every radius on a
  1 mm grid): its optimum next to the search's, and its time, measured where it has at
  most 64 combinations and otherwise scaled up from the combinations of the first three
  storeys;
- the whole `helix.design` (full checks and explanations included).
"""
from __future__ import annotations

import math
import sys
import tempfile
import time
from dataclasses import replace
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "tests"))

import helix  # noqa: E402
from helix.search import default_space, search_layout, storey_choices  # noqa: E402
import test_search_exhaustive as T  # noqa: E402
from test_search_exhaustive import exhaustive  # noqa: E402

TALL = """\
# Invented benchmark scenario, not a real building: ten levels, unequal storeys.
project: {name: Ten levels with unequal storeys (invented benchmark)}
levels:
  - {name: Ground, level: 0 m}
  - {name: L1, height: 4.2 m}
  - {name: L2, height: 3.1 m}
  - {name: L3, height: 2.9 m}
  - {name: L4, height: 2.9 m}
  - {name: L5, height: 3.3 m}
  - {name: L6, height: 2.9 m}
  - {name: L7, height: 2.9 m}
  - {name: L8, height: 3.6 m}
  - {name: L9, height: 2.9 m}
structure: {slab_depth: 250 mm, hanging_depth: 200 mm, wall_thickness: 250 mm}
site: {width: 34 m, depth: 36 m, margin: 0.3 m}
vehicle: aashto-p
rules: istructe-2011
design:
  layouts: [single-one-way, single-two-way, double, concentric]
  centre_radius: {min: 3 m, max: 30 m}
  turns_per_storey: {choices: [0.5, 1, 1.5]}
  lane_width: auto
"""


def projects() -> list[tuple[str, helix.Project]]:
    out = []
    for name in sys.argv[1:] or ["demo-search.yaml", "demo-metric.yaml", "demo-imperial.yaml", "demo-double.yaml"]:
        p = helix.load_project(ROOT / "configs" / name if "/" not in name else name)
        if p.search.fixed:
            p = replace(p, search=default_space(p))
        out.append((name, p))
    if not sys.argv[1:]:
        path = Path(tempfile.mkdtemp()) / "ten-levels.yaml"
        path.write_text(TALL)
        out.append(("ten levels (invented)", helix.load_project(path)))
    return out


def main() -> None:
    for name, project in projects():
        print(f"== {name}: {project.storeys} storeys, objective {project.search.objective}, radius "
              f"{project.search.radius_min:.2f} to {project.search.radius_max:.2f} m")
        for layout in project.search.layouts:
            t0 = time.perf_counter()
            got = search_layout(project, layout)
            t_search = time.perf_counter() - t0
            sr = got.searched
            combos = sr["combinations"]
            if combos <= 64:
                t0 = time.perf_counter()
                ref = exhaustive(project, layout, project.search.objective)
                t_ref, estimated = time.perf_counter() - t0, False
            else:  # time 8 combinations of the brute force, scale to all of them
                sample = [c if i < 3 else c[:1] for i, c in enumerate(storey_choices(project, layout))]
                k = math.prod(len(c) for c in sample)
                original = T.storey_choices
                T.storey_choices = lambda p, lay, sample=sample: sample
                try:
                    t0 = time.perf_counter()
                    exhaustive(project, layout, project.search.objective)
                    t_ref = (time.perf_counter() - t0) / k * combos
                finally:
                    T.storey_choices = original
                ref, estimated = None, True
            found = (f"R = {got.radius:.4f} m, turns {'/'.join(f'{t:g}' for t in got.family.turns)}"
                     if got.feasible else "nothing feasible")
            refs = ("(not run)" if estimated else
                    (f"R = {ref[1]:.4f} m, turns {'/'.join(f'{t:g}' for t in ref[2])}" if ref else "nothing feasible"))
            print(f"  {layout:15s} search {1000 * t_search:8.1f} ms: {found}; {combos} combinations, "
                  f"{sr.get('nodes', 0)} partial designs, {sr.get('headroom_windows', 0)} headroom regions")
            print(f"  {'':15s} brute force {'~' if estimated else ''}{t_ref:9.1f} s: {refs}; "
                  f"{t_ref / max(t_search, 1e-9):,.0f}x the search")
        t0 = time.perf_counter()
        helix.design(project)
        print(f"  helix.design (full checks and explanations): {time.perf_counter() - t0:.2f} s")


if __name__ == "__main__":
    main()
