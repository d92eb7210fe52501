"""Evaluate a fixed design: build the helix, measure it, run every check.

>>> import helix                                               # doctest: +SKIP
>>> result = helix.evaluate(helix.load_project("configs/demo-riverside.yaml"))  # doctest: +SKIP
>>> result.ok, result.headroom.clear                            # doctest: +SKIP
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from . import checks as ck
from .clearance import HeadroomPoint, minimum_headroom
from .geometry import Helix, Thread
from .layout import build_helix
from .project import Project

__all__ = ["StoreyResult", "Location", "Evaluation", "evaluate", "locate"]


@dataclass(frozen=True)
class StoreyResult:
    """One storey of one thread."""

    thread: str
    from_level: str
    to_level: str
    rise: float
    plan_angle: float  # rad, connection to connection
    turns: float
    pitch: float  # nominal rise per turn, H / t
    gradient: dict  # line name -> steepest gradient in the storey (ratio)
    length_centre: float  # 3-D drive length on the centre line, connection to connection


@dataclass(frozen=True)
class Location:
    thread: str
    storey: str  # "Level 1 to Level 2" or "Level 2 landing"
    level: str  # the level below the point
    chainage: float  # horizontal, along the thread's centre line from its start
    radius: float
    bearing_deg: float


@dataclass(frozen=True)
class Evaluation:
    project: Project
    helix: Helix
    checks: tuple[ck.Check, ...]
    storeys: tuple[StoreyResult, ...]
    headroom: HeadroomPoint | None
    headroom_at: Location | None

    @property
    def ok(self) -> bool:
        return bool(all(c.ok for c in self.checks))

    def check(self, check_id: str) -> ck.Check:
        for c in self.checks:
            if c.id == check_id:
                return c
        raise KeyError(check_id)

    def max_gradient(self, line: str) -> float:
        """Steepest gradient of any storey on 'inner kerb', 'centre line' or 'outer kerb'."""
        return max(s.gradient[line] for s in self.storeys)


def locate(project: Project, thread: Thread, theta: float, radius: float) -> Location:
    p = thread.profile
    j = int(np.clip(np.searchsorted(p.t, theta, side="right") - 1, 0, len(p.k) - 1))
    names = [project.levels[i].name for i in thread.levels]
    s = p.storey[j]
    if s >= 0:
        storey, level = f"{names[s]} to {names[s + 1]}", names[s]
    else:
        c = int(np.argmin(np.abs(p.connections - theta)))
        storey, level = f"{names[c]} landing", names[c]
    bearing = math.degrees(float(thread.bearing(theta))) % 360.0
    return Location(thread.name, storey, level, float(thread.chainage(theta)), radius, bearing)


def _storeys(project: Project, helix: Helix) -> list[StoreyResult]:
    out = []
    for t in helix.threads:
        conn = t.profile.connections
        for s in range(len(t.levels) - 1):
            kmax = ck.storey_max_slope(t, s)
            grad = {name: kmax / r for name, r in t.driving_lines().items()}
            a, b = float(conn[s]), float(conn[s + 1])
            rise = project.levels[t.levels[s + 1]].level - project.levels[t.levels[s]].level
            turns = (b - a) / (2 * math.pi)
            out.append(StoreyResult(
                thread=t.name, from_level=project.levels[t.levels[s]].name,
                to_level=project.levels[t.levels[s + 1]].name, rise=rise, plan_angle=b - a,
                turns=turns, pitch=rise / turns, gradient=grad,
                length_centre=t.profile.length_at_radius(t.centre_radius, a, b)))
    return out


def evaluate(project: Project, helix: Helix | None = None) -> Evaluation:
    """Measure and check ``helix`` (default: the project's fixed design)."""
    helix = build_helix(project) if helix is None else helix
    head = minimum_headroom(helix, project.structure)
    at = None
    if head is not None:
        at = locate(project, helix.threads[head.thread], head.theta, head.radius)
    where = (f"{at.thread}, {at.storey}, chainage {at.chainage:.2f} m, r = {at.radius:.2f} m, "
             f"under {head.above}") if at is not None and head is not None else ""
    results = [ck.gradient_check(project, helix, g) for g in project.rules.gradient]
    results += ck.kerb_radius_checks(project, helix)
    results.append(ck.lane_width_check(project, helix))
    results.append(ck.clear_height_check(project, head, where))
    results.append(ck.cross_fall_check(project, helix))
    results.append(ck.footprint_check(project, helix))
    return Evaluation(project=project, helix=helix, checks=tuple(results),
                      storeys=tuple(_storeys(project, helix)), headroom=head, headroom_at=at)
