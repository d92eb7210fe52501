"""Checks of a helix against its rule set: each a value, a limit, a margin and a source.

Each function returns one :class:`Check`.  A rule book that sets no limit for a
check still gets a row (``limit`` is ``None``, status "no limit") so that a report
shows what was not required rather than silently leaving it out.
"""
from __future__ import annotations

import math
import re
from dataclasses import dataclass

import numpy as np

from .clearance import HeadroomPoint
from .plot import axis_of, footprint_span
from .geometry import Helix, Thread
from .project import Project
from .rules import GradientLimit, Limit
from .units import format_angle, format_gradient, format_length, format_speed

__all__ = ["Check", "TITLES", "check_title", "in_words", "reference_radii", "segment_slope", "segment_label", "segment_limit",
           "storey_max_slope", "gradient_check", "inner_kerb_warning_check", "kerb_radius_checks",
           "lane_width_check", "clear_height_check", "footprint_check", "cross_fall_check",
           "lane_width_swept_check", "ground_clearance_check", "roof_clearance_check",
           "side_friction_check", "approach_checks"]

_TOL = 1e-9

#: Every check's name in words, as a reader sees it in the terminal table, the PDF and
#: the Markdown; the id stays in the JSON (beside this ``title``).  Each entry is filled
#: by the ``@titled`` mark on the function that makes the check, so the words sit next
#: to the check's definition and nowhere else.
TITLES: dict[str, str] = {}


def titled(**titles: str):
    """Register the words of the checks the decorated function makes."""
    def mark(fn):
        TITLES.update(titles)
        return fn
    return mark


def check_title(check_id: str) -> str:
    """The words for a check id (an unknown id is shown with spaces for underscores)."""
    return TITLES.get(check_id) or check_id.replace("_", " ")


_ID = re.compile(r"\b[a-z]+(?:_[a-z]+)+\b")


def in_words(text: str) -> str:
    """``text`` with every check id in it replaced by the check's words, for lines made
    elsewhere from ids (a search's binding constraint, a list of failing checks)."""
    return _ID.sub(lambda m: TITLES.get(m.group(0), m.group(0)).lower()
                   if m.start() else TITLES.get(m.group(0), m.group(0)), text)


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
    advisory: bool = False  # a stated practice value, not a rule: exceeding it warns, never fails
    warning: str = ""  # a default that is not neutral, said out loud

    @property
    def margin(self) -> float | None:
        if self.limit is None or self.value is None:
            return None
        return self.limit - self.value if self.sense == "max" else self.value - self.limit

    @property
    def met(self) -> bool:
        m = self.margin
        return m is None or bool(m >= -_TOL)

    @property
    def ok(self) -> bool:
        return self.advisory or self.met

    @property
    def warns(self) -> bool:
        """A warning to show: an advisory value exceeded, or a non-neutral default."""
        return self.ok and (bool(self.warning) or (self.advisory and not self.met))

    @property
    def status(self) -> str:
        if self.warns:
            return "WARN"
        if self.limit is None:
            return "no limit"
        if self.value is None:
            return "n/a"
        return "pass" if self.ok else "FAIL"


def _no_limit(rules_name: str) -> str:
    return f"not set by rule set {rules_name}"


def reference_radii(thread: Thread, limit: GradientLimit, units: str = "metric") -> list[tuple[str, float]]:
    """Radii of the thread on which ``limit`` is measured.

    Each lane of a two-way thread is a driving line of its own: there the centre line
    is each lane's centre line and the inner kerb each lane's inner edge (the middle
    of the whole carriageway, where no car drives, is never a reference)."""
    lanes = thread.lanes if len(thread.lanes) > 1 else ()
    if limit.measured_at == "lane_centre" or (limit.measured_at == "centre_line" and lanes):
        if not lanes:
            return [("lane centre", thread.centre_radius)]
        return [(f"{lane.name} centre line", lane.centre_radius) for lane in lanes]
    if limit.measured_at == "centre_line":
        return [("centre line", thread.centre_radius)]
    offset = limit.offset if limit.measured_at == "inner_kerb_offset" else 0.0
    what = "inner kerb" if offset == 0.0 else f"{format_length(offset, units)} from the inner kerb"
    if lanes:
        return [(f"{lane.name}, {what}", lane.inner_radius + offset) for lane in lanes]
    return [(what, thread.inner_radius + offset)]


def segment_slope(thread: Thread, j: int) -> tuple[float, float]:
    """Steepest slope dz/dtheta (m/rad) on segment ``j`` by magnitude, and its sign
    (+1 rising, -1 falling along the ascent); a vertical curve is steepest at an end."""
    lo, hi = thread.profile.slope_range(j)
    steep = hi if abs(hi) >= abs(lo) else lo
    return abs(steep), (1.0 if steep >= 0 else -1.0)


def storey_max_slope(thread: Thread, storey: int) -> float:
    """Largest slope magnitude |dz/dtheta| (m/rad) in a storey's ramp (runs and
    transitions)."""
    p = thread.profile
    slopes = [segment_slope(thread, j)[0] for j in range(len(p.k)) if p.storey[j] == storey]
    return max(slopes) if slopes else 0.0


def thread_rises(project: Project, thread: Thread) -> list[float]:
    lv = [project.levels[i].level for i in thread.levels]
    return [b - a for a, b in zip(lv, lv[1:])]


def segment_label(project: Project, thread: Thread, j: int) -> str:
    """"Level 1 to Level 2" for a storey's transition or run, "Level 2 landing" for a landing."""
    p = thread.profile
    names = [project.levels[i].name for i in thread.levels]
    s = p.storey[j]
    if s >= 0:
        return f"{names[s]} to {names[s + 1]}"
    c = int(np.argmin(np.abs(p.connections - 0.5 * (p.t[j] + p.t[j + 1]))))
    return f"{names[c]} landing"


def segment_limit(project: Project, thread: Thread, limit: GradientLimit, j: int) -> float:
    """The limit of ``limit`` on segment ``j``: the storey's, by its rise; a landing takes
    the stricter of the storeys it joins."""
    p = thread.profile
    rises = thread_rises(project, thread)
    s = p.storey[j]
    if s >= 0:
        return limit.max_for_rise(rises[s])
    near = [p.storey[i] for i in (j - 1, j + 1) if 0 <= i < len(p.k) and p.storey[i] >= 0]
    return min(limit.max_for_rise(rises[i]) for i in (near or range(len(rises))))


def _gradient_where(project: Project, t: Thread, j: int, line: str, r: float, sign: float) -> str:
    u = project.units
    a, b = t.profile.t[j], t.profile.t[j + 1]
    return (f"{t.name}, {segment_label(project, t, j)}, {t.profile.kind[j]} "
            f"{format_length(float(t.chainage(a)), u)} to {format_length(float(t.chainage(b)), u)}"
            f"{' (falling along the ascent)' if sign < 0 else ''}, {line} (r = {format_length(r, u)})")


@titled(gradient_centre_line="Gradient on the centre line",
        gradient_lane_centre="Gradient on the lane centre line",
        gradient_inner_kerb="Gradient on the inner kerb",
        gradient_inner_kerb_offset="Gradient at the stated offset from the inner kerb")
def gradient_check(project: Project, helix: Helix, limit: GradientLimit) -> Check:
    """Steepest gradient by magnitude (rising or falling) on the limit's reference
    line(s), on every segment: landings, transitions and runs.  Each storey's segments
    get the limit for its rise, a landing the stricter of the storeys it joins; the
    segment with the least margin is reported."""
    worst = None
    for t in helix.threads:
        refs = reference_radii(t, limit, project.units)
        for j in range(len(t.profile.k)):
            k, sign = segment_slope(t, j)
            lim = segment_limit(project, t, limit, j)
            for line, r in refs:
                g = k / r
                if worst is None or lim - g < worst[0]:
                    worst = (lim - g, g, lim, t, j, line, r, sign)
    _, g, lim, t, j, line, r, sign = worst  # type: ignore[misc]
    title = check_title(limit.check_id)
    if limit.measured_at == "inner_kerb_offset":
        title += f" ({format_length(limit.offset, project.units)})"
    return Check(limit.check_id, title, g, lim, "max", "gradient",
                 limit.source, _gradient_where(project, t, j, line, r, sign))


@titled(gradient_inner_kerb_warning="Gradient on the inner kerb (warning only)")
def inner_kerb_warning_check(project: Project, helix: Helix) -> Check | None:
    """Where the rule set limits the gradient on other lines only, a warning (not a
    failure) when any lane's inner kerb is steeper than a stated common-practice value."""
    rules = project.rules
    if any(g.measured_at == "inner_kerb" or (g.measured_at == "inner_kerb_offset" and g.offset == 0)
           for g in rules.gradient):
        return None
    warn = rules.inner_kerb_warning()
    worst = None
    for t in helix.threads:
        for j in range(len(t.profile.k)):
            k, sign = segment_slope(t, j)
            for lane in t.lanes:
                g = k / lane.inner_radius
                if worst is None or g > worst[0]:
                    line = "inner kerb" if len(t.lanes) == 1 else f"{lane.name}, inner kerb"
                    worst = (g, t, j, line, lane.inner_radius, sign)
    g, t, j, line, r, sign = worst  # type: ignore[misc]
    return Check("gradient_inner_kerb_warning", check_title("gradient_inner_kerb_warning"), g,
                 warn.value, "max", "gradient",
                 f"{warn.source}; rule set {rules.name} does not limit the inner kerb",
                 _gradient_where(project, t, j, line, r, sign),
                 "steeper than common practice at the inner kerb; not a failure of the rule set",
                 advisory=True)


@titled(inner_kerb_radius="Inner kerb radius",
        outer_kerb_radius="Outer kerb radius of each lane (the smallest)")
def kerb_radius_checks(project: Project, helix: Helix) -> list[Check]:
    rules = project.rules
    inner = min(helix.threads, key=lambda t: t.inner_radius)
    lanes = [(t, lane) for t in helix.threads for lane in t.lanes]
    t_out, lane_out = min(lanes, key=lambda tl: tl[1].outer_radius)
    checks = []
    lim = rules.inner_kerb_radius
    checks.append(Check("inner_kerb_radius", check_title("inner_kerb_radius"), inner.inner_radius,
                        lim.value if lim else None, "min", "length",
                        lim.source if lim else _no_limit(rules.name), inner.name))
    lim = rules.outer_kerb_radius
    note = ""
    if lim is not None and lim.preferred is not None and lane_out.outer_radius < lim.preferred:
        note = f"below the preferred minimum of {format_length(lim.preferred, project.units)}"
    where = f"{t_out.name}, {lane_out.name}"
    if lane_out.outer_radius < helix.outer_radius - 1e-9:  # say which kerb: not the carriageway's
        u = project.units
        outer_t, outer_lane = max(lanes, key=lambda tl: tl[1].outer_radius)
        where = (f"{t_out.name}: the outer kerb of the {lane_out.name}"
                 + (" (beside the central kerb)" if lane_out is not t_out.lanes[-1] else "")
                 + f"; each lane is checked on its own outer kerb, and the carriageway's outer kerb "
                   f"({outer_t.name}, {outer_lane.name}) lies at {format_length(outer_lane.outer_radius, u)}")
    checks.append(Check("outer_kerb_radius", check_title("outer_kerb_radius"), lane_out.outer_radius,
                        lim.value if lim else None, "min", "length",
                        lim.source if lim else _no_limit(rules.name), where, note))
    return checks


@titled(lane_width="Lane width")
def lane_width_check(project: Project, helix: Helix) -> Check:
    rules = project.rules
    t = helix.threads[0]
    if project.traffic == "two-way" and rules.lane_width_two_way is not None:
        lim: Limit | None = rules.lane_width_two_way
        value = sum(lane.width for lane in t.lanes)
        title, where = check_title("lane_width") + " of both lanes together (central kerb excluded)", t.name
    else:
        lim = rules.lane_width_one_way
        lane_t, lane = min(((th, ln) for th in helix.threads for ln in th.lanes),
                           key=lambda tl: tl[1].width)
        value, title, where = lane.width, check_title("lane_width"), f"{lane_t.name}, {lane.name}"
    return Check("lane_width", title, value, lim.value if lim else None, "min", "length",
                 lim.source if lim else _no_limit(rules.name), where)


@titled(clear_height="Clear headroom under the turn above")
def clear_height_check(project: Project, head: HeadroomPoint | None, where: str) -> Check:
    rules = project.rules
    lim = rules.clear_height
    value = head.clear if head is not None else None
    note = "" if head is not None else "nothing lies above the ramp"
    return Check("clear_height", check_title("clear_height"), value,
                 lim.value if lim else None, "min", "length",
                 lim.source if lim else _no_limit(rules.name), where, note)


@titled(footprint="Overall diameter within the footprint")
def footprint_check(project: Project, helix: Helix) -> Check:
    """The helix, its clearances to structure and its outer wall, in the usable plot: for
    a polygon or a pinned axis, the circle of the structure radius inside the allowed
    region (plot less setback, less no-build zones) at the axis (:mod:`helix.plot`)."""
    site, u = project.site, project.units
    if site.is_rectangle and site.axis is None:
        return Check("footprint", check_title("footprint"), helix.overall_diameter,
                     min(site.usable), "max", "length",
                     "site footprint in the project file, less its margin; structure clearance "
                     "from the rule set",
                     f"footprint {format_length(site.width, u)} x "
                     f"{format_length(site.depth, u)}, "
                     f"margin {format_length(site.margin, u)}")
    ax = axis_of(site)
    spare = ax.reach - 0.5 * helix.overall_diameter
    place = "pinned axis" if ax.pinned else "axis at the centre of the largest circle in the allowed region"
    note = (f"{place} ({format_length(ax.x, u)}, {format_length(ax.y, u)}); spare "
            f"{format_length(spare, u, precision=3)} to the nearest limit, {ax.nearest}; setback "
            f"{format_length(site.margin, u)}, {len(site.no_build)} no-build zone(s)")
    if not ax.pinned and ax.upper > ax.reach:
        note += f"; no centre reaches more than {format_length(ax.upper - ax.reach, u, precision=4)} further"
    return Check("footprint", check_title("footprint"), helix.overall_diameter, footprint_span(site), "max",
                 "length", "site boundary, setback and no-build zones in the project file (limit: twice the "
                 "reach from the axis); structure clearance from the rule set", note)


@titled(cross_fall="Cross-fall of the curved ramp")
def cross_fall_check(project: Project, helix: Helix) -> Check:
    rules = project.rules
    lim = rules.cross_fall_min
    value = float(np.min([abs(t.cross_fall) for t in helix.threads]))
    warning = ""
    if lim is None and value == 0.0:
        warning = ("no cross-fall: the rule set sets no minimum and the design gives none, so the "
                   "curved ramp has no drainage fall and no superelevation")
    return Check("cross_fall", check_title("cross_fall"), value, lim.value if lim else None,
                 "min", "gradient", lim.source if lim else _no_limit(rules.name),
                 "all threads", warning, warning=warning)


# ----------------------------------------------------------------------------------
# The design vehicle

@titled(lane_width_swept="Lane width for the vehicle's swept path")
def lane_width_swept_check(project: Project, helix: Helix) -> Check:
    """Each lane against the width the vehicle's steady-state swept band needs, with the
    rule set's clearances to the inner and the outer kerb; the lane with the least
    margin is reported."""
    from .turning import lane_width_needed
    rules = project.rules
    c_in, c_out = rules.kerb_clearances()
    worst = None
    for t in helix.threads:
        for lane in t.lanes:
            need, band = lane_width_needed(project.vehicle, lane.inner_radius, c_in, c_out)
            margin = lane.width - need
            if worst is None or margin < worst[0]:
                worst = (margin, lane.width, need, f"{t.name}, {lane.name}", band)
    _, width, need, where, band = worst  # type: ignore[misc]
    lim_in = rules.swept_path_clearance_inner or rules.swept_path_clearance
    lim_out = rules.swept_path_clearance_outer or rules.swept_path_clearance
    sources = dict.fromkeys(lim.source for lim in (lim_in, lim_out) if lim is not None)
    src = ("steady-state offtracking of the design vehicle (AASHTO Green Book 2011 turning "
           f"geometry) plus {format_length(c_in, project.units)} to the inner and "
           f"{format_length(c_out, project.units)} to the outer kerb"
           + (f" ({'; '.join(sources)})" if sources else " (no kerb clearance set by the rule set)"))
    note = (f"swept band {format_length(band.inner_radius, project.units)} to "
            f"{format_length(band.outer_radius, project.units)}, "
            f"width {format_length(band.width, project.units)}")
    warning = ""
    if c_in == 0.0 or c_out == 0.0:
        sides = " and ".join(n for n, c in (("inner", c_in), ("outer", c_out)) if c == 0.0)
        warning = (f"no clearance to the {sides} kerb: the rule set sets none, so the swept band may "
                   "touch the kerb")
        note = f"{note}; {warning}"
    return Check("lane_width_swept", check_title("lane_width_swept"), width, need, "min",
                 "length", src, where, note, warning=warning)


def _vehicle_clearance_check(check_id: str, title: str, lim: Limit | None, contact, where: str,
                             geometric: str, missing: str) -> Check:
    """A clearance of the design vehicle against the rule set's margin (0 if none)."""
    value = contact.clearance if contact is not None else None
    return Check(check_id, title, value, lim.value if lim else 0.0, "min", "length",
                 lim.source if lim else geometric, where, "" if contact is not None else missing)


@titled(underbody_clearance="Underbody and overhang clearance at changes of grade")
def ground_clearance_check(project: Project, contact, where: str) -> Check:
    return _vehicle_clearance_check(
        "underbody_clearance", check_title("underbody_clearance"),
        project.rules.ground_clearance_margin, contact, where,
        "geometric: the body must not touch the running surface", "vehicle gives no ground clearances")


@titled(roof_clearance="Vehicle roof below the soffit overhead")
def roof_clearance_check(project: Project, contact, where: str) -> Check:
    return _vehicle_clearance_check(
        "roof_clearance", check_title("roof_clearance"), project.rules.vehicle_roof_clearance,
        contact, where, "geometric: the roof must not touch the structure", "nothing lies above the ramp")


@titled(side_friction="Side friction demand at the design speed")
def side_friction_check(project: Project, helix: Helix) -> Check:
    """Side friction demand at the design speed on each lane's centre line."""
    from .turning import side_friction, speed_at_friction
    rules, u = project.rules, project.units
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
        note = f"limit reached at {format_speed(v_lim, u)}"
    src_speed = rules.design_speed.source if rules.design_speed else "common practice, no single source"
    return Check("side_friction", check_title("side_friction"), f,
                 lim.value if lim else None, "max", "number",
                 (lim.source if lim else _no_limit(rules.name)) + f"; design speed {format_speed(speed, u)} "
                 f"({src_speed}); f = V^2/(127 R) - e (V in km/h, R in m), AASHTO Green Book 2011",
                 f"{t.name}, {lane.name} centre (r = {format_length(lane.centre_radius, u)}), "
                 f"e = {format_gradient(t.cross_fall, u)}", note)


# ----------------------------------------------------------------------------------
# Approaches and exits: where each floor's aisle meets the helix

@titled(approach_clear_height="Clear headroom over the floor approaches and exits",
        approach_roof_clearance="Vehicle roof below the structure over the approaches",
        approach_grade_change="Change of grade where the aisle meets the helix")
def approach_checks(project: Project, helix: Helix, results) -> list[Check]:
    """Clear height and roof clearance over every floor's approach and exit lines, and
    the change of grade where each aisle meets the helix (see :mod:`helix.approach`)."""
    rules, u = project.rules, project.units

    def where(res) -> str:
        ln = res.line
        t = helix.threads[ln.thread]
        lane = "" if len(t.lanes) == 1 else f", {ln.lane}"
        how = ("given approach line" if ln.side == "given line" else
               (f"tangent {ln.side} the connection" if ln.angle == 0 else
                f"straight aisle {ln.side} the connection, {format_angle(math.degrees(ln.angle), 0)} off the tangent"))
        edge = ("lane centre" if abs(res.offset) < 1e-9 else
                ("left lane edge" if res.offset > 0 else "right lane edge"))
        return (f"{t.name}{lane}, {project.levels[ln.level].name}, {how}, "
                f"{format_length(res.distance, u)} from the connection, {edge}, under {res.above}")

    covered = [r for r in results if np.isfinite(r.clear)]
    head = min(covered, key=lambda r: r.clear) if covered else None
    lim = rules.clear_height
    out = [Check("approach_clear_height", check_title("approach_clear_height"),
                 head.clear if head else None, lim.value if lim else None, "min", "length",
                 lim.source if lim else _no_limit(rules.name), where(head) if head else "",
                 "" if head else "nothing lies over any approach")]
    lim = rules.vehicle_roof_clearance
    h = project.vehicle.height
    out.append(Check("approach_roof_clearance", check_title("approach_roof_clearance"),
                     head.clear - h if head else None, lim.value if lim else 0.0, "min", "length",
                     (lim.source if lim else "geometric: the roof must not touch the structure")
                     + f"; the roof lies the vehicle height ({format_length(h, u)}) above the straight aisle",
                     where(head) if head else "", "" if head else "nothing lies over any approach"))
    worst = max(results, key=lambda r: abs(r.line.helix_grade - r.line.grade), default=None)
    if worst is not None:
        ln = worst.line
        change = abs(ln.helix_grade - ln.grade)
        rule = rules.transition
        t = helix.threads[ln.thread]
        lane = "" if len(t.lanes) == 1 else f", {ln.lane}"
        out.append(Check(
            "approach_grade_change", check_title("approach_grade_change"), change,
            rule.when_grade_change_over if rule else None, "max", "gradient",
            (f"{rule.source} (the change of grade above which a transition is needed)" if rule
             else _no_limit(rules.name)),
            f"{t.name}{lane}, {project.levels[ln.level].name}: aisle {format_gradient(ln.grade, u)}, "
            f"helix {format_gradient(ln.helix_grade, u)} on the lane centre line"))
    return out
