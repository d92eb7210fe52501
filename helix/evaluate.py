"""Evaluate a fixed design: build the helix, measure it, run every check.

>>> import helix
>>> result = helix.evaluate(helix.load_project(helix.demo_file("demo-metric")))
>>> result.ok, round(result.headroom.clear, 2)
(True, 2.45)
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from . import checks as ck
from .approach import approach_lines, measure_approaches
from .clearance import HeadroomPoint, Overhead, headroom, minimum_headroom
from .errors import DesignError
from .geometry import Helix, Lane, Thread
from .layout import build_helix
from .project import Project
from .units import format_length
from .vehicle_clearance import GroundContact, PathProfile, minimum_clearances

__all__ = ["StoreyResult", "SegmentResult", "Location", "Evaluation", "evaluate", "locate",
           "wheel_paths", "vehicle_positions", "gradient_lines"]


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
class SegmentResult:
    """One landing, transition or run of one thread, with its steepest grades."""

    thread: str
    kind: str
    storey: str  # "Deck 1 to Deck 2" or "Deck 1 landing"
    chainage_start: float
    chainage_end: float
    gradient: dict  # line name -> steepest gradient on the segment (ratio, signed)


@dataclass(frozen=True)
class Location:
    thread: str
    storey: str  # "Level 1 to Level 2" or "Level 2 landing"
    level: str  # the level below the point
    chainage: float  # horizontal, along the thread's centre line from its start
    radius: float
    bearing_deg: float


@dataclass(frozen=True)
class VehicleContact:
    """The governing clearance of the design vehicle on one line of one thread."""

    thread: int
    lane: str
    line: str  # "inner wheels", "outer body side", ...
    radius: float
    contact: GroundContact


@dataclass(frozen=True)
class Evaluation:
    """The checks of one helix: every check with its value, limit, margin and source,
    each storey's gradients, every segment, the smallest headroom and where it is, the
    vehicle's least ground and roof clearances, and every floor's approach.

    >>> import helix
    >>> ev = helix.evaluate(helix.load_project(helix.demo_file("demo-metric")))
    >>> ev
    <Evaluation of 'Millbrook Street car park (invented demo)': all checks pass, headroom 2.450 m>
    >>> ev.check("clear_height").ok, round(float(ev.max_gradient("centre line")) * 100, 1)
    (True, 5.3)
    """

    project: Project
    helix: Helix
    checks: tuple[ck.Check, ...]
    storeys: tuple[StoreyResult, ...]
    headroom: HeadroomPoint | None
    headroom_at: Location | None
    segments: tuple[SegmentResult, ...] = ()
    ground: VehicleContact | None = None  # smallest underbody or overhang clearance
    roof: VehicleContact | None = None  # smallest roof clearance
    approaches: tuple = ()  # helix.approach.ApproachResult for every floor's aisle

    def __repr__(self) -> str:
        from .notebook import evaluation_repr
        return evaluation_repr(self)

    def _repr_html_(self) -> str:
        from .notebook import evaluation_html
        return evaluation_html(self)

    @property
    def ok(self) -> bool:
        """True when every check passes (warnings do not fail)."""
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


def vehicle_positions(project: Project, lane: Lane) -> dict[str, float]:
    """Rear-axle centre radius of the design vehicle at the extreme lateral positions the
    lane allows: hugging the inner kerb (inner rear body side at the rule set's inner
    clearance) and hugging the outer kerb (outer front corner at the outer clearance),
    the same placements as the swept-width check.  A lane too narrow for both gives the
    inner position only."""
    from .turning import hugging_inner_rear_axle, hugging_outer_rear_axle
    v = project.vehicle
    c_in, c_out = project.rules.kerb_clearances()
    rr_in = hugging_inner_rear_axle(v, lane.inner_radius, c_in)
    rr_out = hugging_outer_rear_axle(v, lane.outer_radius, c_out)
    if not math.isfinite(rr_out) or rr_out <= rr_in + 1e-9:
        return {"hugging the inner kerb": rr_in}
    return {"hugging the inner kerb": rr_in, "hugging the outer kerb": rr_out}


def wheel_paths(project: Project, thread: Thread) -> dict[str, float]:
    """Radii of the design vehicle's outermost and innermost (rear) wheel paths in each
    lane, over the lateral positions the lane allows (:func:`vehicle_positions`)."""
    v = project.vehicle
    track = v.track if v.track is not None else v.width
    paths = {}
    for lane in thread.lanes:
        prefix = "" if len(thread.lanes) == 1 else f"{lane.name} "
        rr = vehicle_positions(project, lane).values()
        paths[f"{prefix}inner wheels"] = min(rr) - 0.5 * track
        paths[f"{prefix}outer wheels"] = max(rr) + 0.5 * track
    return paths


def gradient_lines(project: Project, thread: Thread) -> dict[str, float]:
    """Every line across the carriageway whose grade is reported: kerbs, centre line,
    lane centres, wheel paths and the rule set's reference lines."""
    lines = dict(thread.driving_lines())
    lines.update(wheel_paths(project, thread))
    for limit in project.rules.gradient:
        for name, r in ck.reference_radii(thread, limit):
            lines.setdefault(f"reference: {name}", r)
    return lines


def _segments(project: Project, helix: Helix) -> list[SegmentResult]:
    out = []
    for t in helix.threads:
        p = t.profile
        lines = gradient_lines(project, t)
        for j, (kind, s, a, b) in enumerate(p.segments()):
            k, sign = ck.segment_slope(t, j)
            out.append(SegmentResult(t.name, kind, ck.segment_label(project, t, j), float(t.chainage(a)),
                                     float(t.chainage(b)),
                                     {name: sign * k / r for name, r in lines.items()}))
    return out


def vehicle_clearances(project: Project, helix: Helix) -> tuple[VehicleContact | None, VehicleContact | None]:
    """Roll the design vehicle along every wheel path (underbody, overhangs) and every
    body side (roof against the soffit overhead) of every lane, at each lateral position
    the lane allows (:func:`vehicle_positions`: hugging either kerb within its
    clearance, as the swept-width check places it); return the governing ground and
    roof contacts.  All the paths of a thread are rolled together
    (:func:`~helix.vehicle_clearance.minimum_clearances`)."""
    v = project.vehicle
    track = v.track if v.track is not None else v.width
    ground = roof = None
    rolled: dict[tuple, list[dict[str, GroundContact]]] = {}
    for i, t in enumerate(helix.threads):
        wheels: list[tuple[str, str, float]] = []
        sides: list[tuple[str, str, float]] = []
        for lane in t.lanes:
            for where, rr in vehicle_positions(project, lane).items():
                wheels += [(lane.name, f"inner wheels, {where}", rr - 0.5 * track),
                           (lane.name, f"outer wheels, {where}", rr + 0.5 * track)]
                sides += [(lane.name, f"inner body side, {where}", rr - 0.5 * v.width),
                          (lane.name, f"outer body side, {where}", rr + 0.5 * v.width)]

        # The ground clearances depend only on the profile and the wheel paths' radii:
        # the congruent threads of a double helix share them.
        key = (tuple(x.tobytes() for x in (t.profile.t, t.profile.z0, t.profile.k, t.profile.q)),
               tuple(r for _, _, r in wheels))
        known = rolled.get(key)
        on_ground, overhead = minimum_clearances(v, t.profile, [] if known else [r for _, _, r in wheels],
                                                 [r for _, _, r in sides], Overhead(helix, project.structure, i),
                                                 focus=0.005)
        on_ground = known or rolled.setdefault(key, on_ground)
        for (lane_name, line, r), res in zip(wheels, on_ground):
            for c in res.values():
                if ground is None or c.clearance < ground.contact.clearance:
                    ground = VehicleContact(i, lane_name, line, r, c)
        for (lane_name, line, r), res in zip(sides, overhead):
            c_roof = res.get("roof")
            if c_roof is not None and math.isfinite(c_roof.clearance) and (
                    roof is None or c_roof.clearance < roof.contact.clearance):
                roof = VehicleContact(i, lane_name, line, r, c_roof)
    return ground, roof


def _contact_where(project: Project, helix: Helix, vc: VehicleContact | None) -> str:
    if vc is None:
        return ""
    t = helix.threads[vc.thread]
    path = PathProfile(t.profile, vc.radius)
    theta = float(path.theta(vc.contact.s_point))
    at = locate(project, t, theta, vc.radius)
    u = project.units
    return (f"{t.name}, {vc.lane}, {vc.line} (r = {format_length(vc.radius, u)}), {vc.contact.part} "
            f"facing {vc.contact.facing}, {at.storey}, chainage {format_length(at.chainage, u)}")


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


def require_own_helix(project: Project, helix: Helix) -> None:
    """Refuse a helix built for another project: its threads must serve this project's
    levels, at their levels."""
    n = len(project.levels)
    for t in helix.threads:
        ok = (len(t.levels) >= 2 and all(0 <= i < n for i in t.levels)
              and len(t.profile.connection_levels) == len(t.levels))
        if ok:
            want = np.array([project.levels[i].level for i in t.levels])
            ok = bool(np.allclose(t.profile.connection_levels, want, rtol=0.0, atol=1e-6))
        if not ok:
            raise DesignError(f"the helix's {t.name} does not serve the levels of project {project.name!r}; "
                              "it was built for another project", "helix",
                              "a helix built from this project (helix.build_helix(project))")


def require_vehicle_fits(project: Project, helix: Helix) -> None:
    """The design vehicle must be able to run on every lane at all: its wheel paths and
    body sides at positive radii.  (Whether it fits *well* is the swept-path check.)"""
    v = project.vehicle
    track = v.track if v.track is not None else v.width
    half = 0.5 * max(track, v.width)
    for t in helix.threads:
        for lane in t.lanes:
            r = lane.centre_radius - half
            if not r > 0:
                raise DesignError(
                    f"the design vehicle {v.name} ({format_length(v.width, project.units)} wide) cannot run on "
                    f"the {lane.name} of the {t.name}: its inner side would be at a radius of "
                    f"{format_length(r, project.units)}", "design.centre_radius",
                    f"a centre-line radius that puts each lane's centre more than half the vehicle's width "
                    f"({format_length(half, project.units)}) from the axis")


def evaluate(project: Project, helix: Helix | None = None, vehicle: bool = True) -> Evaluation:
    """Measure and check ``helix`` (default: the project's fixed design).

    ``vehicle=False`` leaves out the checks that roll the design vehicle along the
    ramp (underbody and roof clearance), the slow part, for designs already known to
    fail.  Raises :class:`~helix.errors.DesignError` for a helix of another project
    and for a design the vehicle cannot run on at all.

    >>> import helix
    >>> ev = helix.evaluate(helix.load_project(helix.demo_file("demo-double")))
    >>> ev.ok, len(ev.helix.threads)
    (True, 2)
    """
    helix = build_helix(project) if helix is None else helix
    require_own_helix(project, helix)
    require_vehicle_fits(project, helix)
    head = minimum_headroom(helix, project.structure)
    at = None
    if head is not None:
        at = locate(project, helix.threads[head.thread], head.theta, head.radius)
    u = project.units
    where = (f"{at.thread}, {at.storey}, chainage {format_length(at.chainage, u)}, "
             f"r = {format_length(at.radius, u)}, "
             f"under {head.above}") if at is not None and head is not None else ""
    results = [ck.gradient_check(project, helix, g) for g in project.rules.gradient]
    warn = ck.inner_kerb_warning_check(project, helix)
    if warn is not None:
        results.append(warn)
    results += ck.kerb_radius_checks(project, helix)
    results.append(ck.lane_width_check(project, helix))
    results.append(ck.clear_height_check(project, head, where))
    results.append(ck.cross_fall_check(project, helix))
    results.append(ck.footprint_check(project, helix))
    results.append(ck.lane_width_swept_check(project, helix))
    ground = roof = None
    if vehicle:
        ground, roof = vehicle_clearances(project, helix)
        results.append(ck.ground_clearance_check(project, ground.contact if ground else None,
                                                 _contact_where(project, helix, ground)))
        results.append(ck.roof_clearance_check(project, roof.contact if roof else None,
                                               _contact_where(project, helix, roof)))
    results.append(ck.side_friction_check(project, helix))
    approaches = measure_approaches(helix, project.structure, approach_lines(project, helix))
    results += ck.approach_checks(project, helix, approaches)
    return Evaluation(project=project, helix=helix, checks=tuple(results),
                      storeys=tuple(_storeys(project, helix)), headroom=head, headroom_at=at,
                      segments=tuple(_segments(project, helix)), ground=ground, roof=roof,
                      approaches=approaches)
