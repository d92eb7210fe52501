"""The design vehicle in the turn: swept path, lane width needed, side friction.

Steady state: a rigid two-axle vehicle on a circle turns about a centre on the line of
its rear axle.  With the rear-axle centre at radius ``Rr``, body width ``W``, wheelbase
``WB`` and front overhang ``OF``, the outer front corner runs at
``sqrt((Rr + W/2)^2 + (WB + OF)^2)`` and the inner rear body side at ``Rr - W/2``.

Transient: the kinematic bicycle model (rear-axle reference point, no tyre slip) is
driven from a straight approach onto the curve with the steering wound on over a
given distance; its swept band converges to the steady-state one.

References
----------
AASHTO, *A Policy on Geometric Design of Highways and Streets* ("Green Book"), 2011:
design vehicle turning paths; point-mass formula ``e + f = V^2 / (127 R)``.
R. Rajamani, *Vehicle Dynamics and Control*, 2nd ed., Springer 2012, section 2.2
(kinematic bicycle model).
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .vehicle import Vehicle

__all__ = ["SweptBand", "steady_swept_band", "rear_radius_from_front", "lane_width_needed", "min_rear_axle_radius",
           "hugging_inner_rear_axle", "hugging_outer_rear_axle",
           "transient_swept_band", "side_friction", "speed_at_friction"]


@dataclass(frozen=True)
class SweptBand:
    rear_axle_radius: float
    inner_radius: float  # inner rear body side
    outer_radius: float  # outer front body corner

    @property
    def width(self) -> float:
        return self.outer_radius - self.inner_radius


def steady_swept_band(vehicle: Vehicle, rear_axle_radius: float, half_width: float | None = None,
                      reach: float | None = None) -> SweptBand:
    """Steady-state swept band of the body turning with its rear-axle centre at
    ``rear_axle_radius``.  ``half_width`` defaults to half the body width and
    ``reach`` (ahead of the rear axle) to wheelbase plus front overhang, the outer
    front corner; ``reach = wheelbase`` gives the outer front wheel instead."""
    w2 = 0.5 * vehicle.width if half_width is None else half_width
    ahead = vehicle.wheelbase + vehicle.front_overhang if reach is None else reach
    return SweptBand(rear_axle_radius, rear_axle_radius - w2, math.hypot(rear_axle_radius + w2, ahead))


def rear_radius_from_front(front_axle_radius: float, wheelbase: float) -> float:
    """Rear-axle centre radius for a front-axle centre on ``front_axle_radius``."""
    if front_axle_radius <= wheelbase:
        raise ValueError("the front axle radius must exceed the wheelbase")
    return math.sqrt(front_axle_radius ** 2 - wheelbase ** 2)


def min_rear_axle_radius(vehicle: Vehicle) -> float:
    """Tightest rear-axle radius the vehicle can steer: its minimum turning radius is
    the path of the outer front wheel, taken at half the body width (as AASHTO's
    design vehicles reproduce); 0 when the vehicle gives none."""
    r = vehicle.min_turning_radius
    if r is None or r <= vehicle.wheelbase:
        return 0.0
    return max(math.sqrt(r * r - vehicle.wheelbase ** 2) - 0.5 * vehicle.width, 0.0)


def lane_width_needed(vehicle: Vehicle, lane_inner_radius: float, clearance: float,
                      outer_clearance: float | None = None) -> tuple[float, SweptBand]:
    """Smallest lane width that holds the steady-state swept band with ``clearance``
    to the inner kerb and ``outer_clearance`` (default: the same) to the outer kerb,
    for a lane whose inner kerb is at ``lane_inner_radius``.

    The narrowest band comes from hugging the inner kerb: the inner rear body side at
    ``lane_inner_radius + clearance``, unless that is tighter than the vehicle can
    steer (its minimum turning radius), in which case it runs on its tightest circle;
    the lane must then reach the outer front corner plus ``outer_clearance``.
    """
    outer_clearance = clearance if outer_clearance is None else outer_clearance
    rr = hugging_inner_rear_axle(vehicle, lane_inner_radius, clearance)
    band = steady_swept_band(vehicle, rr)
    return band.outer_radius + outer_clearance - lane_inner_radius, band


def hugging_inner_rear_axle(vehicle: Vehicle, lane_inner_radius: float, clearance: float) -> float:
    """Rear-axle centre radius of the vehicle hugging the inner kerb: inner rear body
    side ``clearance`` off the kerb, or the tightest circle the vehicle can steer."""
    return max(lane_inner_radius + clearance + 0.5 * vehicle.width, min_rear_axle_radius(vehicle))


def hugging_outer_rear_axle(vehicle: Vehicle, lane_outer_radius: float, clearance: float) -> float:
    """Rear-axle centre radius of the vehicle hugging the outer kerb: outer front body
    corner ``clearance`` inside the kerb, ``sqrt((Ro - c)^2 - (WB + OF)^2) - W/2``
    (the steady-state offtracking formula solved for the rear axle); ``nan`` when the
    lane is too tight for the body at all."""
    reach = vehicle.wheelbase + vehicle.front_overhang
    corner = lane_outer_radius - clearance
    if corner <= reach:
        return math.nan
    return math.sqrt(corner * corner - reach * reach) - 0.5 * vehicle.width


def transient_swept_band(vehicle: Vehicle, rear_axle_radius: float, ramp_length: float = 6.0,
                         approach: float = 10.0, run: float | None = None, points: int = 3000):
    """Body corners of the kinematic bicycle model entering a circle from a tangent.

    The rear-axle centre starts on a straight line; after ``approach`` metres the
    steering angle is wound on linearly over ``ramp_length`` metres to the steady
    value ``atan(WB / Rr)`` and held for ``run`` metres (default two laps).  Returns
    ``(s, outer, inner, centre)``: distance travelled by the rear axle, radius of the
    outer front body corner and of the inner rear body side about the centre of the
    final circle, and that centre.
    """
    try:
        from scipy.integrate import solve_ivp  # only here: scipy is optional, and slow to import
    except ImportError:
        raise ImportError("the transient bicycle model needs scipy, which helix does not install by "
                          "itself: pip install scipy (or the 'test' extra)") from None

    wb = vehicle.wheelbase
    delta_ss = math.atan(wb / rear_axle_radius)
    run = 4 * math.pi * rear_axle_radius if run is None else run
    total = approach + ramp_length + run

    def steer(s: float) -> float:
        return delta_ss * min(1.0, max(0.0, (s - approach) / ramp_length)) if ramp_length > 0 else \
            (delta_ss if s >= approach else 0.0)

    def rhs(s, y):  # y = (x, y, heading) of the rear-axle centre; d/ds by rear-axle distance
        return [math.cos(y[2]), math.sin(y[2]), math.tan(steer(s)) / wb]

    s_eval = np.linspace(0.0, total, points)
    sol = solve_ivp(rhs, (0.0, total), [0.0, 0.0, 0.0], t_eval=s_eval, rtol=1e-10, atol=1e-12,
                    max_step=0.25)
    x, y, psi = sol.y
    # Centre of the final steady circle: the rear-axle radius to the left of the heading.
    cx = x[-1] - rear_axle_radius * math.sin(psi[-1])
    cy = y[-1] + rear_axle_radius * math.cos(psi[-1])
    w2 = 0.5 * vehicle.width
    reach = wb + vehicle.front_overhang
    # Outer front corner: ahead by WB + OF, to the right (outside) by W/2.
    fx = x + reach * np.cos(psi) + w2 * np.sin(psi)
    fy = y + reach * np.sin(psi) - w2 * np.cos(psi)
    # Inner rear body side at the rear axle: to the left by W/2.
    ix = x - w2 * np.sin(psi)
    iy = y + w2 * np.cos(psi)
    outer = np.hypot(fx - cx, fy - cy)
    inner = np.hypot(ix - cx, iy - cy)
    return sol.t, outer, inner, (cx, cy)


def side_friction(speed, radius, superelevation):
    """Side friction demand ``f = V^2 / (127 R) - e`` (V in km/h, R in m).

    References: AASHTO Green Book (2011), point-mass formula for curves.
    """
    v_kmh = np.asarray(speed, float) * 3.6
    return v_kmh ** 2 / (127.0 * np.asarray(radius, float)) - np.asarray(superelevation, float)


def speed_at_friction(f_max, radius, superelevation):
    """Speed (m/s) at which the side friction demand reaches ``f_max``."""
    v_kmh = np.sqrt(np.maximum(127.0 * np.asarray(radius, float) * (f_max + np.asarray(superelevation, float)), 0.0))
    return v_kmh / 3.6
