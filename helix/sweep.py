"""A parameter study: the main results of a fixed design over a grid of parameters.

:func:`sweep` varies the centre-line radius, the storey height, the turns per storey
and the lane width of a project's fixed design over the cartesian product of the given
values, and returns one row per design.  Designs that share everything but the radius
are measured together by the search's batch path (:func:`helix.search.screen`: closed
forms of every margin and the exact smallest headroom, as arrays over the radii), so a
study of thousands of designs takes about a second.

The rows carry the checks the screen measures (gradients, kerb radii, lane widths and
the swept path, side friction, cross-fall, footprint, clear height, and the geometry
rule that the radius must exceed the carriageway); the checks that roll the design
vehicle along the ramp and measure the floor approaches need :func:`helix.evaluate` of
the chosen design.

>>> import helix
>>> p = helix.load_project(helix.demo_file("demo-metric"))
>>> rows = helix.sweep(p, centre_radius=[8.0, 12.0], storey_height=[2.9, 3.2])
>>> len(rows), rows[2]["failed"], round(rows[2]["diameter"], 2)
(4, ('footprint',), 29.35)
>>> [(r["centre_radius"], r["storey_height"], r["ok"]) for r in rows]
[(8.0, 2.9, True), (8.0, 3.2, True), (12.0, 2.9, False), (12.0, 3.2, False)]
"""
from __future__ import annotations

import itertools
import math
from dataclasses import replace
from typing import Any, Sequence

import numpy as np

from .project import Project

__all__ = ["sweep", "MAX_DESIGNS", "SCREENED_CHECKS"]

#: Most designs one study may hold (memory and time stay bounded: about 1 kB a row).
MAX_DESIGNS = 200_000

#: The check ids a row's ``failed`` and ``binding`` may name (others are not measured).
SCREENED_CHECKS = ("gradient_*", "inner_kerb_radius", "outer_kerb_radius", "lane_width",
                   "lane_width_swept", "side_friction", "cross_fall", "footprint", "clear_height",
                   "geometry")

_PARAMETERS = ("centre_radius", "storey_height", "turns_per_storey", "lane_width")


def _values(name: str, values: Any) -> list[float]:
    """The values of one parameter: a number or a non-empty list of positive numbers."""
    seq = [values] if isinstance(values, (int, float)) else list(values)
    if not seq:
        raise ValueError(f"sweep: {name} is empty; expected one or more positive numbers (SI units)")
    out = []
    for v in seq:
        if isinstance(v, bool) or not isinstance(v, (int, float, np.floating, np.integer)) \
                or not math.isfinite(float(v)) or not float(v) > 0:
            raise ValueError(f"sweep: {name} holds {v!r}; expected positive finite numbers (SI units)")
        out.append(float(v))
    return out


def _with_storey_height(project: Project, height: float) -> Project:
    base = project.levels[0].level
    levels = tuple(replace(lv, level=base + i * height) for i, lv in enumerate(project.levels))
    return replace(project, levels=levels)


def _family(project: Project, turns: float | None, lane: float | None):
    from .search import Family
    d = project.design
    layout = d.layout
    if layout == "single":
        layout = "single-two-way" if project.traffic == "two-way" else "single-one-way"
    per_storey = d.turns_per_storey if turns is None else (turns,) * project.storeys
    widths = d.lane_widths if lane is None else (lane,) * len(d.lane_widths)
    return Family(layout, tuple(per_storey), tuple(widths))


def sweep(project: Project, centre_radius: Sequence[float] | float | None = None,
          storey_height: Sequence[float] | float | None = None,
          turns_per_storey: Sequence[float] | float | None = None,
          lane_width: Sequence[float] | float | None = None,
          as_frame: bool = False) -> Any:
    """The main results of every design in the cartesian product of the given values.

    Each parameter left out keeps the project's own value.  ``centre_radius`` (m) is
    the first thread's centre-line radius; ``storey_height`` (m) makes every storey that
    tall from the lowest level; ``turns_per_storey`` applies to every storey;
    ``lane_width`` (m) to every lane.  Returns a list of dicts, in the order of the
    product (radius slowest), with the parameters and ``diameter`` (overall, structure
    included), ``gradient_inner``, ``gradient_centre``, ``gradient_outer`` (steepest of
    any storey, ratio), ``headroom`` (smallest clear headroom, m; ``inf`` with nothing
    overhead), ``ok`` (every screened check met), ``binding`` (the screened check with
    the least margin) and ``failed`` (the screened checks not met).  With ``as_frame``,
    a pandas DataFrame of the same rows (pandas must be installed; it is not a
    dependency of helix).  Raises ``ValueError`` for an empty or non-positive list and
    for more than :data:`MAX_DESIGNS` designs.
    """
    from .search import screen
    given = {"centre_radius": centre_radius, "storey_height": storey_height,
             "turns_per_storey": turns_per_storey, "lane_width": lane_width}
    lists = {k: _values(k, v) for k, v in given.items() if v is not None}
    total = math.prod(len(v) for v in lists.values())
    if total > MAX_DESIGNS:
        raise ValueError(f"sweep: {total:,} designs asked for; at most {MAX_DESIGNS:,} in one study "
                         "(split it into several)")
    radii = np.array(lists.get("centre_radius", [project.design.centre_radius]))
    groups = [k for k in _PARAMETERS[1:] if k in lists]
    results: dict[tuple, dict] = {}
    for combo in itertools.product(*(lists[k] for k in groups)):
        point = dict(zip(groups, combo))
        p = project if "storey_height" not in point else _with_storey_height(project, point["storey_height"])
        family = _family(p, point.get("turns_per_storey"), point.get("lane_width"))
        sc = screen(p, family, radii)
        names = list(sc.margins)
        margins = np.array([sc.margins[k] for k in names]) if names else np.zeros((0, len(radii)))
        for n, r in enumerate(radii.tolist()):
            m = margins[:, n]
            failed = tuple(k for k, v in zip(names, m) if not v >= -1e-9)
            finite = [(v, k) for k, v in zip(names, m) if math.isfinite(v)]
            results[(r,) + tuple(combo)] = {
                "diameter": float(sc.diameter[n]),
                "gradient_inner": float(sc.steepest["inner"][n]),
                "gradient_centre": float(sc.steepest["centre"][n]),
                "gradient_outer": float(sc.steepest["outer"][n]),
                "headroom": float(sc.headroom[n]),
                "ok": not failed,
                "binding": min(finite)[1] if finite else None,
                "failed": failed,
            }
    rows = []
    for r in radii.tolist():
        for combo in itertools.product(*(lists[k] for k in groups)):
            row: dict[str, Any] = {"centre_radius": r}
            row.update(zip(groups, combo))
            row.update(results[(r,) + tuple(combo)])
            rows.append(row)
    if as_frame:
        try:
            import pandas as pd  # type: ignore[import-untyped, import-not-found, unused-ignore]
        except ImportError:
            raise ImportError("sweep(as_frame=True) needs pandas, which helix does not install; "
                              "pip install pandas, or use the list of dicts") from None
        return pd.DataFrame(rows)
    return rows
