"""The design vehicle on the helix: swept path, grounding, roof, side friction."""
import math
from dataclasses import replace

import numpy as np
import pytest
from scipy.optimize import brentq

import helix
from helix.errors import Node
from helix.project import Level
from helix.turning import (lane_width_needed, rear_radius_from_front, side_friction, speed_at_friction,
                           steady_swept_band, transient_swept_band)
from helix.vehicle import load_vehicle
from helix.vehicle_clearance import (breakover_angle, minimum_clearance, sharp_crest_profile,
                                     shortest_transition, _straight_profile)

VEHICLES = ("aashto-p", "large-suv", "high-van", "low-sports-car")


def vehicle(name):
    return load_vehicle(Node(name, "test", "vehicle"), None)


def test_aashto_passenger_car_turning_values():
    # From memory: AASHTO Green Book 2011, passenger car P: centre-line (front axle)
    # turning radius 6.4 m, minimum inside radius 4.4 m, minimum design turning radius
    # (outer front wheel) 7.3 m; verify.  The steady-state model with the wheels at
    # half the 2.1 m body width reproduces them.
    p = vehicle("aashto-p")
    rr = rear_radius_from_front(6.4, p.wheelbase)
    assert rr == pytest.approx(5.42, abs=0.005)
    band = steady_swept_band(p, rr, reach=p.wheelbase)
    assert band.inner_radius == pytest.approx(4.4, abs=0.05)
    assert band.outer_radius == pytest.approx(7.3, abs=0.05)


def test_lane_width_needed_is_the_narrowest_placement():
    # Source: reference root finding and a brute-force sweep of every placement of the
    # rear axle across the lane: hugging the inner kerb gives the smallest outer radius.
    p = vehicle("aashto-p")
    ri, c = 7.0, 0.3
    need, band = lane_width_needed(p, ri, c)
    placements = np.linspace(ri + c + p.width / 2, ri + 6.0, 2001)
    outer = np.hypot(placements + p.width / 2, p.wheelbase + p.front_overhang)
    assert need == pytest.approx(outer.min() + c - ri, abs=1e-9)
    # The lane width at which the band just fits, by brentq on the fit condition.
    fit = lambda w: (ri + w - c) - steady_swept_band(p, ri + c + p.width / 2).outer_radius
    assert brentq(fit, 0.5, 10.0) == pytest.approx(need, abs=1e-9)


def test_kinematic_bicycle_model_converges_to_the_steady_swept_band():
    # Source: kinematic bicycle model (Rajamani, Vehicle Dynamics and Control, 2nd ed.,
    # 2012, s. 2.2) integrated with scipy.integrate.solve_ivp; its steady state is the
    # rigid-body turn about a centre on the rear-axle line.
    for name in ("aashto-p", "high-van"):
        v = vehicle(name)
        for rr in (6.0, 9.0, 14.0):
            band = steady_swept_band(v, rr)
            s, outer, inner, _ = transient_swept_band(v, rr, ramp_length=5.0)
            late = s > s[-1] - 2 * math.pi * rr
            assert np.max(np.abs(outer[late] - band.outer_radius)) < 1e-3
            assert np.max(np.abs(inner[late] - band.inner_radius)) < 1e-3


@pytest.mark.parametrize("name", VEHICLES)
def test_sharp_crest_grounds_at_the_breakover_angle(name):
    # Source: SAE J1100, ramp breakover angle; for a sharp crest it is 2 atan(2 h / L)
    # with h the ground clearance at mid-wheelbase and L the wheelbase.
    v = vehicle(name)
    f = lambda a: minimum_clearance(v, sharp_crest_profile(a), facings=("up",))["underbody"].clearance
    angle = brentq(f, 1e-3, 0.8, xtol=1e-12)
    assert angle == pytest.approx(breakover_angle(v.ground_clearance, v.wheelbase), abs=1e-7)


def test_hand_computed_crest_and_sag():
    # Common practice, no single source (plain geometry, worked by hand):
    # crest of 6 deg, vehicle symmetric over it: clearance h - (L/2) tan(3 deg);
    # sag from level to a 12 % grade, front wheels at the kink: the overhang's lowest point
    # h_f - 0.12 * OF above the slope, (h_f - 0.12 * OF) / sqrt(1 + 0.12^2) normal to it.
    v = vehicle("aashto-p")
    a = math.radians(6.0)
    crest = minimum_clearance(v, sharp_crest_profile(a), facings=("up",))["underbody"]
    assert crest.clearance == pytest.approx(0.14 - 1.7 * math.tan(math.radians(3.0)), abs=1e-6)
    sag = _straight_profile([0.0, 20.0, 40.0], [0.0, 0.12])
    front = minimum_clearance(v, sag, facings=("up",))["front overhang"]
    assert front.clearance == pytest.approx((0.20 - 0.12 * 0.9) / math.sqrt(1 + 0.12 ** 2), abs=1e-6)


def test_common_practice_transition_against_the_vehicles():
    # Common practice, no single source (North American parking-structure guidance):
    # where the grade changes by 8 % or more, a transition of at least 10 ft (3.048 m)
    # at half the grade change.  What the vehicle model says of it:
    ten_feet = 3.048
    p, low = vehicle("aashto-p"), vehicle("low-sports-car")
    # A 14 % change: the passenger car needs no transition at all; the low car needs
    # one, and the 10 ft half-grade segment is enough for it.
    assert shortest_transition(p, 0.14, "segment") == 0.0
    assert 0.0 < shortest_transition(low, 0.14, "segment") <= ten_feet
    # A 20 % change: the rule holds for the passenger car, but no half-grade segment
    # of any length saves the low car (each kink is still 10 %), and even a vertical
    # curve must be longer than 10 ft.
    assert 0.0 < shortest_transition(p, 0.20, "segment") <= ten_feet
    assert shortest_transition(low, 0.20, "segment") == math.inf
    assert shortest_transition(low, 0.20, "curve") > ten_feet


def test_side_friction_point_mass_formula():
    # Source: AASHTO Green Book 2011, point-mass formula e + f = V^2 / (127 R).
    f = side_friction(15 / 3.6, 9.0, 0.03)
    assert f == pytest.approx(15 ** 2 / (127 * 9.0) - 0.03, rel=1e-12)
    assert speed_at_friction(f, 9.0, 0.03) == pytest.approx(15 / 3.6, rel=1e-12)


def _low_car_project(transition):
    base = helix.load_project("configs/demo-double.yaml")
    levels = (Level("Ground", 0.0), Level("Deck 1", 4.2), Level("Deck 2", 7.2))
    design = replace(base.design, turns_per_storey=(0.5, 0.5), transition_length=transition,
                     transition_auto=transition is None, transition_kind="segment")
    return replace(base, levels=levels, design=design, vehicle=vehicle("low-sports-car"))


def test_long_low_car_grounds_on_sharp_changes_and_clears_sized_transitions():
    sharp = helix.evaluate(_low_car_project(0.0))
    assert not sharp.check("underbody_clearance").ok
    sized = helix.evaluate(_low_car_project(None))
    assert sized.check("underbody_clearance").ok
    assert sized.check("underbody_clearance").value == pytest.approx(0.0, abs=2e-3)
    assert any(g.kind == "transition" for g in sized.segments)


def test_demo_reports_the_four_vehicle_checks():
    ev = helix.evaluate(helix.load_project("configs/demo-metric.yaml"))
    ids = [c.id for c in ev.checks]
    for cid in ("lane_width_swept", "underbody_clearance", "roof_clearance", "side_friction"):
        assert cid in ids
    roof = ev.check("roof_clearance")
    # The roof can never clear more than the clear headroom less the vehicle height.
    assert roof.value <= ev.headroom.clear - ev.project.vehicle.height + 1e-9
    assert ev.check("underbody_clearance").where
