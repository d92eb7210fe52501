"""Build the threads of a helix from a project's design: radii, lanes, alignments.

Single, double interleaved and concentric layouts all come out as
:class:`~helix.geometry.Helix` objects; everything after this (headroom, checks,
figures) works on threads and never asks which layout it has.
"""
from __future__ import annotations

import math
from dataclasses import replace
from functools import lru_cache

from .alignment import build_profile, storey_run_slope
from .errors import DesignError
from .geometry import TWO_PI, Helix, Lane, Thread
from .plot import axis_of
from .project import DesignSpec, Project

__all__ = ["build_helix", "landing_length", "transition_length", "cross_fall"]


def landing_length(project: Project, spec: DesignSpec) -> float:
    if spec.landing_length is not None:
        return spec.landing_length
    rule = project.rules.landing_length
    return rule.value if rule is not None else 0.0


def cross_fall(project: Project, spec: DesignSpec) -> float:
    """Signed cross-fall: positive rises towards the outer kerb."""
    if spec.cross_fall is not None:
        value = spec.cross_fall
    else:
        rule = project.rules.cross_fall_min
        value = rule.value if rule is not None else 0.0
    return value if spec.cross_fall_inward else -value


def transition_length(project: Project, spec: DesignSpec, grade_change: float) -> float:
    """Transition length at each end of a run whose grade differs from the landing's by
    ``grade_change`` (centre line).

    A length fixed in the design applies to every run; otherwise the rule set's
    transition applies where the change of grade from the landing exceeds its
    threshold.
    """
    if spec.transition_length is not None:
        return spec.transition_length
    rule = project.rules.transition
    if rule is None or grade_change < rule.when_grade_change_over:
        return 0.0
    return rule.length


@lru_cache(maxsize=256)
def _shortest(vehicle, grade: float, kind: str, margin: float, landing_grade: float) -> float:
    from .vehicle_clearance import shortest_transition
    return shortest_transition(vehicle, grade, kind, margin, landing_grade)


def vehicle_transition(project: Project, spec: DesignSpec, centre_radius: float, inner_kerb: float,
                       rise: float, plan_angle: float, landing_below: float, landing_above: float) -> float:
    """Plan angle of the transitions that the design vehicle needs on one storey.

    Sized on the innermost wheel path (the vehicle hugging the inner kerb, as every
    vehicle check places it), where the change of grade is sharpest, then carried to
    the centre line (same plan angle); the run steepens as the transitions grow, so the
    size is iterated to a fixed point.
    """
    from .turning import hugging_inner_rear_axle
    v = project.vehicle
    track = v.track if v.track is not None else v.width
    r_w = hugging_inner_rear_axle(v, inner_kerb, project.rules.kerb_clearances()[0]) - 0.5 * track
    margin = project.rules.ground_clearance_margin.value if project.rules.ground_clearance_margin else 0.0
    tau = 0.0
    for _ in range(6):
        k = storey_run_slope(rise, plan_angle, landing_below, landing_above, tau,
                             spec.landing_fall * centre_radius)
        if not math.isfinite(k):
            raise DesignError("the transitions the vehicle needs leave no room for the run")
        grade_w = round(k / r_w, 5)  # rounded: storeys of equal rise share one sizing
        fall_w = round(spec.landing_fall * centre_radius / r_w, 5)
        length_w = _shortest(v, grade_w, spec.transition_kind, margin, fall_w)
        if not math.isfinite(length_w):
            raise DesignError(f"no {spec.transition_kind} transition lets {v.name} clear a change of "
                             f"grade of {100 * abs(grade_w - fall_w):.1f} %; use kind 'curve' or a flatter ramp")
        new_tau = length_w / r_w
        if abs(new_tau - tau) < 1e-6:
            break
        tau = max(tau, new_tau)
    return tau


def _lanes(inner: float, widths: tuple[float, ...], central: float, hand: int,
           keep_right: bool, one_way_direction: str) -> tuple[Lane, ...]:
    if len(widths) == 1:
        return (Lane("lane", inner, inner + widths[0], one_way_direction),)
    # Two-way: keeping right while ascending anticlockwise puts the up lane outside.
    up_outside = (hand > 0) == keep_right
    a = Lane("inner lane", inner, inner + widths[0], "down" if up_outside else "up")
    b_in = a.outer_radius + central
    b = Lane("outer lane", b_in, b_in + widths[1], "up" if up_outside else "down")
    return (a, b)


def _thread(project: Project, spec: DesignSpec, name: str, centre_radius: float,
            start_bearing: float, traffic: str) -> Thread:
    width = spec.carriageway_width
    inner = centre_radius - 0.5 * width
    if not inner > 0:
        raise DesignError(f"the inner kerb of the {name} would be at a radius of {inner:.3f} m",
                          "design.centre_radius", "a centre-line radius larger than half the carriageway "
                          f"width ({0.5 * width:.2f} m)")
    levels = [lv.level for lv in project.levels]
    plan = [TWO_PI * t for t in spec.turns_per_storey]
    land = landing_length(project, spec) / centre_radius
    landings = [land] * len(levels)
    landing_slope = spec.landing_fall * centre_radius
    transitions = []
    for s, rise in enumerate(project.storey_heights):
        if spec.transition_auto:
            transitions.append(vehicle_transition(project, spec, centre_radius, inner, rise, plan[s],
                                                  landings[s], landings[s + 1]))
            continue
        # First the run grade with no transition, to decide whether one is needed.
        k0 = storey_run_slope(rise, plan[s], landings[s], landings[s + 1], 0.0, landing_slope)
        change = abs(k0 / centre_radius - spec.landing_fall) if math.isfinite(k0) else math.inf
        transitions.append(transition_length(project, spec, change) / centre_radius)
    profile = build_profile(levels, plan, landings, transitions, spec.transition_kind, start=0.0,
                            landing_slope=landing_slope)
    lanes = _lanes(inner, spec.lane_widths, spec.central_kerb, spec.hand, spec.keep_right, traffic)
    return Thread(name=name, inner_radius=inner, outer_radius=inner + width, lanes=lanes,
                  profile=profile, levels=tuple(range(len(levels))), start_bearing=start_bearing,
                  hand=spec.hand, cross_fall=cross_fall(project, spec),
                  traffic="up and down" if len(lanes) > 1 else traffic)


def build_helix(project: Project, spec: DesignSpec | None = None) -> Helix:
    """The helix of ``spec`` (default: the project's fixed design).

    Raises ``ValueError`` when landings and transitions leave no room for a run.
    """
    spec = project.design if spec is None else spec
    rc = spec.centre_radius
    if spec.layout == "single":
        direction = "up and down" if project.traffic == "two-way" else "up"
        threads: tuple[Thread, ...] = (_thread(project, spec, "helix", rc, spec.start_bearing, direction),)
    elif spec.layout == "double":
        threads = (
            _thread(project, spec, "up thread", rc, spec.start_bearing, "up"),
            _thread(project, spec, "down thread", rc, spec.start_bearing + math.pi, "down"),
        )
    elif spec.layout == "concentric":
        width = spec.carriageway_width
        outer_rc = rc + width + spec.divider
        threads = (
            _thread(project, spec, "inner helix (up)", rc, spec.start_bearing, "up"),
            _thread(project, spec, "outer helix (down)", outer_rc, spec.start_bearing, "down"),
        )
    else:  # pragma: no cover - the loader refuses other layouts
        raise ValueError(f"unknown layout {spec.layout!r}")
    rules = project.rules
    outer = max(t.outer_radius for t in threads)
    inner = min(t.inner_radius for t in threads)
    return Helix(layout=spec.layout, traffic=project.traffic, threads=threads,
                 structure_radius=outer + rules.clearance_outside() + project.structure.wall_thickness,
                 core_radius=max(0.0, inner - rules.clearance_inside()),
                 centre=_centre(project))


def _centre(project: Project) -> tuple[float, float]:
    """The helix axis: the rectangle's centre, the pinned axis, or the centre of the
    largest circle inside the allowed region (:func:`helix.plot.axis_of`)."""
    if project.site.is_rectangle and project.site.axis is None:
        return (0.5 * project.site.width, 0.5 * project.site.depth)
    ax = axis_of(project.site)
    return (ax.x, ax.y)


def with_design(project: Project, **changes) -> Project:
    """A copy of ``project`` with some design values changed (for scripting and search)."""
    return replace(project, design=replace(project.design, **changes))
