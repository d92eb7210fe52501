"""Checks of a helix against its rule set: each a value, a limit, a margin and a source.

Each function returns one :class:`Check`.  A rule book that sets no limit for a
check still gets a row (``limit`` is ``None``, status "no limit") so that a report
shows what was not required rather than silently leaving it out.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .clearance import HeadroomPoint
from .geometry import Helix, Thread
from .project import Project
from .rules import GradientLimit, Limit
from .units import format_length

__all__ = ["Check", "reference_radii", "storey_max_slope", "gradient_check", "kerb_radius_checks",
           "lane_width_check", "clear_height_check", "footprint_check", "cross_fall_check",
           "lane_width_swept_check", "ground_clearance_check", "roof_clearance_check",
           "side_friction_check"]

_TOL = 1e-9


@dataclass(frozen=True)
class Check:
    id: str
    title: str
    value: float | None
    limit: float | None
    sense: str  # "max": value must not exceed limit; "min": value must reach it
    quantity: str  # "length", "gradient" or "number"
    source: str
    where: str = ""
    note: str = ""

    @property
    def margin(self) -> float | None:
        if self.limit is None or self.value is None:
            return None
        return self.limit - self.value if self.sense == "max" else self.value - self.limit

    @property
    def ok(self) -> bool:
        m = self.margin
        return m is None or bool(m >= -_TOL)

    @property
    def status(self) -> str:
        if self.limit is None:
            return "no limit"
        if self.value is None:
            return "n/a"
        return "pass" if self.ok else "FAIL"


def _no_limit(rules_name: str) -> str:
    return f"not set by rule set {rules_name}"


def reference_radii(thread: Thread, limit: GradientLimit) -> list[tuple[str, float]]:
    """Radii of the thread on which ``limit`` is measured."""
    if limit.measured_at == "centre_line":
        return [("centre line", thread.centre_radius)]
    if limit.measured_at == "lane_centre":
        return [(f"{lane.name} centre", lane.centre_radius) for lane in thread.lanes]
    if limit.measured_at == "inner_kerb":
        return [("inner kerb", thread.inner_radius)]
    return [(limit.label, thread.inner_radius + limit.offset)]


def storey_max_slope(thread: Thread, storey: int) -> float:
    """Largest slope dz/dtheta (m/rad) anywhere in a storey's ramp (runs and transitions)."""
    p = thread.profile
    slopes = [p.slope_range(j)[1] for j in range(len(p.k)) if p.storey[j] == storey]
    return max(slopes) if slopes else 0.0


def gradient_check(project: Project, helix: Helix, limit: GradientLimit) -> Check:
    """Steepest gradient on the limit's reference line, storey by storey, against the
    limit for that storey's rise; the storey with the least margin is reported."""
    worst = None
    rises = project.storey_heights
    for t in helix.threads:
        for s, rise in enumerate(rises):
            kmax = storey_max_slope(t, s)
            lim = limit.max_for_rise(rise)
            for line, r in reference_radii(t, limit):
                g = kmax / r
                margin = lim - g
                if worst is None or margin < worst[0]:
                    where = (f"{t.name}, {project.levels[s].name} to {project.levels[s + 1].name}, "
                             f"{line} (r = {format_length(r, project.units)})")
                    worst = (margin, g, lim, where)
    _, g, lim, where = worst  # type: ignore[misc]
    return Check(limit.check_id, f"Gradient on the {limit.label}", g, lim, "max", "gradient",
                 limit.source, where)


def kerb_radius_checks(project: Project, helix: Helix) -> list[Check]:
    rules = project.rules
    inner = min(helix.threads, key=lambda t: t.inner_radius)
    lanes = [(t, lane) for t in helix.threads for lane in t.lanes]
    t_out, lane_out = min(lanes, key=lambda tl: tl[1].outer_radius)
    checks = []
    lim = rules.inner_kerb_radius
    checks.append(Check("inner_kerb_radius", "Inner kerb radius", inner.inner_radius,
                        lim.value if lim else None, "min", "length",
                        lim.source if lim else _no_limit(rules.name), inner.name))
    lim = rules.outer_kerb_radius
    note = ""
    if lim is not None and lim.preferred is not None and lane_out.outer_radius < lim.preferred:
        note = f"below the preferred minimum of {format_length(lim.preferred, project.units)}"
    checks.append(Check("outer_kerb_radius", "Outer kerb radius of each lane", lane_out.outer_radius,
                        lim.value if lim else None, "min", "length",
                        lim.source if lim else _no_limit(rules.name),
                        f"{t_out.name}, {lane_out.name}", note))
    return checks


def lane_width_check(project: Project, helix: Helix) -> Check:
    rules = project.rules
    t = helix.threads[0]
    if project.traffic == "two-way" and rules.lane_width_two_way is not None:
        lim: Limit | None = rules.lane_width_two_way
        value = sum(lane.width for lane in t.lanes)
        title, where = "Width of both lanes (central kerb excluded)", t.name
    else:
        lim = rules.lane_width_one_way
        lane_t, lane = min(((th, ln) for th in helix.threads for ln in th.lanes),
                           key=lambda tl: tl[1].width)
        value, title, where = lane.width, "Lane width", f"{lane_t.name}, {lane.name}"
    return Check("lane_width", title, value, lim.value if lim else None, "min", "length",
                 lim.source if lim else _no_limit(rules.name), where)


def clear_height_check(project: Project, head: HeadroomPoint | None, where: str) -> Check:
    rules = project.rules
    lim = rules.clear_height
    value = head.clear if head is not None else None
    note = "" if head is not None else "nothing lies above the ramp"
    return Check("clear_height", "Clear headroom under the turn above", value,
                 lim.value if lim else None, "min", "length",
                 lim.source if lim else _no_limit(rules.name), where, note)


def footprint_check(project: Project, helix: Helix) -> Check:
    """The helix, its clearances to structure and its outer wall, in the usable plot."""
    usable = min(project.site.usable)
    return Check("footprint", "Overall diameter within the footprint", helix.overall_diameter,
                 usable, "max", "length",
                 "site footprint in the project file, less its margin; structure clearance "
                 "from the rule set",
                 f"footprint {format_length(project.site.width, project.units)} x "
                 f"{format_length(project.site.depth, project.units)}, "
                 f"margin {format_length(project.site.margin, project.units)}")


def cross_fall_check(project: Project, helix: Helix) -> Check:
    rules = project.rules
    lim = rules.cross_fall_min
    value = float(np.min([abs(t.cross_fall) for t in helix.threads]))
    return Check("cross_fall", "Cross-fall of the curved ramp", value, lim.value if lim else None,
                 "min", "gradient", lim.source if lim else _no_limit(rules.name),
                 "all threads")


# ----------------------------------------------------------------------------------
# The design vehicle

def lane_width_swept_check(project: Project, helix: Helix) -> Check:
    """Each lane against the width the vehicle's steady-state swept band needs, with the
    rule set's clearance to both kerbs; the lane with the least margin is reported."""
    from .turning import lane_width_needed
    rules = project.rules
    lim = rules.swept_path_clearance
    clearance = lim.value if lim else 0.0
    worst = None
    for t in helix.threads:
        for lane in t.lanes:
            need, band = lane_width_needed(project.vehicle, lane.inner_radius, clearance)
            margin = lane.width - need
            if worst is None or margin < worst[0]:
                worst = (margin, lane.width, need, f"{t.name}, {lane.name}", band)
    _, width, need, where, band = worst  # type: ignore[misc]
    src = ("steady-state offtracking of the design vehicle (AASHTO Green Book 2011 turning "
           f"geometry) plus {clearance:.2f} m to each kerb"
           + (f" ({lim.source})" if lim else " (no kerb clearance set by the rule set)"))
    note = (f"swept band {format_length(band.inner_radius, project.units)} to "
            f"{format_length(band.outer_radius, project.units)}, "
            f"width {format_length(band.width, project.units)}")
    return Check("lane_width_swept", "Lane width for the vehicle's swept path", width, need, "min",
                 "length", src, where, note)


def _vehicle_clearance_check(check_id: str, title: str, lim: Limit | None, contact, where: str,
                             geometric: str, missing: str) -> Check:
    """A clearance of the design vehicle against the rule set's margin (0 if none)."""
    value = contact.clearance if contact is not None else None
    return Check(check_id, title, value, lim.value if lim else 0.0, "min", "length",
                 lim.source if lim else geometric, where, "" if contact is not None else missing)


def ground_clearance_check(project: Project, contact, where: str) -> Check:
    return _vehicle_clearance_check(
        "underbody_clearance", "Underbody and overhang clearance at changes of grade",
        project.rules.ground_clearance_margin, contact, where,
        "geometric: the body must not touch the running surface", "vehicle gives no ground clearances")


def roof_clearance_check(project: Project, contact, where: str) -> Check:
    return _vehicle_clearance_check(
        "roof_clearance", "Vehicle roof below the soffit overhead", project.rules.vehicle_roof_clearance,
        contact, where, "geometric: the roof must not touch the structure", "nothing lies above the ramp")


def side_friction_check(project: Project, helix: Helix) -> Check:
    """Side friction demand at the design speed on each lane's centre line."""
    from .turning import side_friction, speed_at_friction
    rules = project.rules
    speed = rules.design_speed.value if rules.design_speed else 15 / 3.6
    lim = rules.side_friction_max
    worst = None
    for t in helix.threads:
        for lane in t.lanes:
            f = float(side_friction(speed, lane.centre_radius, t.cross_fall))
            if worst is None or f > worst[0]:
                worst = (f, t, lane)
    f, t, lane = worst  # type: ignore[misc]
    note = ""
    if lim is not None:
        v_lim = float(speed_at_friction(lim.value, lane.centre_radius, t.cross_fall))
        note = f"limit reached at {v_lim * 3.6:.0f} km/h"
    src_speed = rules.design_speed.source if rules.design_speed else "15 km/h, common practice, no single source"
    return Check("side_friction", "Side friction demand at the design speed", f,
                 lim.value if lim else None, "max", "number",
                 (lim.source if lim else _no_limit(rules.name)) + f"; design speed {speed * 3.6:.0f} km/h "
                 f"({src_speed}); f = V^2/(127 R) - e, AASHTO Green Book 2011",
                 f"{t.name}, {lane.name} centre (r = {format_length(lane.centre_radius, project.units)}), "
                 f"e = {100 * t.cross_fall:.1f} %", note)
