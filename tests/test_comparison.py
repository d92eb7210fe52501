"""The consultant's comparison: sloped deck areas, quantities, lane capacity and drive
times, and the sensitivity of the chosen radius, each against an outside reference."""
from __future__ import annotations

import math
from dataclasses import replace
from pathlib import Path

import numpy as np
import pytest
from scipy import integrate

from helix.alignment import build_profile
from helix.assumptions import ComparisonAssumptions
from helix.capacity import helix_traffic, lane_capacity, lane_spacing, time_to_empty
from helix.geometry import Helix, Lane, Thread
from helix.layout import build_helix
from helix.project import load_project
from helix.quantities import deck_area, quantities, strip_area
from helix.search import design, search_layout
from helix.sensitivity import perturbed, sensitivity

ROOT = Path(__file__).resolve().parents[1]


def _surface_area_dblquad(profile, r1, r2, e, a, b):
    """Area of z(r, t) = Z(t) + e (r - rc) by scipy's dblquad of |X_r x X_t|, the
    cross product taken numerically from the parametrisation (no closed form used)."""
    def integrand(r, t):
        s = float(profile.slope(t))
        x_r = np.array([math.cos(t), math.sin(t), e])
        x_t = np.array([-r * math.sin(t), r * math.cos(t), s])
        return float(np.linalg.norm(np.cross(x_r, x_t)))
    total = 0.0
    cuts = [a] + [float(x) for x in profile.t if a < x < b] + [b]
    for lo, hi in zip(cuts, cuts[1:]):
        # Within one segment the slope is smooth; nudge the ends off the breakpoint.
        mid = 0.5 * (lo + hi)
        value, _ = integrate.dblquad(integrand, lo + 1e-12 * (mid - lo), hi - 1e-12 * (hi - mid), r1, r2,
                                     epsabs=1e-10, epsrel=1e-11)
        total += value
    return total


def test_constant_pitch_helicoid_strip_against_dblquad():
    # Reference: scipy.integrate.dblquad of sqrt(r^2 + c^2) over r1..r2 and one turn.
    c = 3.0 / (2 * math.pi)
    ref, _ = integrate.dblquad(lambda r, t: math.hypot(r, c), 0.0, 2 * math.pi, 6.0, 9.65, epsabs=1e-11)
    assert 2 * math.pi * float(strip_area(6.0, 9.65, c)) == pytest.approx(ref, rel=1e-10)
    # With a cross-fall of 5 %: the parametrised surface's own normal, integrated.
    prof = build_profile([0.0, 3.0], [2 * math.pi], [0.0, 0.0], [0.0])
    ref = _surface_area_dblquad(prof, 6.0, 9.65, 0.05, prof.start, prof.end)
    assert deck_area(prof, 6.0, 9.65, 0.05) == pytest.approx(ref, rel=1e-9)


@pytest.mark.parametrize("kind", ["curve", "segment"])
def test_deck_area_with_landings_and_transitions_against_dblquad(kind):
    # Reference: scipy.integrate.dblquad, piece by piece between the alignment's
    # breakpoints: landings with a 1 % fall, transitions (vertical curves or
    # half-grade segments), runs, on three storeys of different rise and turns.
    plan = [2 * math.pi, math.pi, 1.5 * math.pi]
    prof = build_profile([0.0, 3.2, 6.1, 9.0], plan, [0.5, 0.4, 0.4, 0.5], [0.3, 0.25, 0.3], kind,
                         landing_slope=0.01 * 8.0)
    ref = _surface_area_dblquad(prof, 6.2, 9.8, 0.03, prof.start, prof.end)
    assert deck_area(prof, 6.2, 9.8, 0.03) == pytest.approx(ref, rel=1e-9)
    # A part of it, cutting through segments.
    a, b = prof.start + 0.7, prof.end - 1.9
    assert deck_area(prof, 6.2, 9.8, 0.03, a, b) == pytest.approx(
        _surface_area_dblquad(prof, 6.2, 9.8, 0.03, a, b), rel=1e-9)


def _one_turn_helix() -> Helix:
    prof = build_profile([0.0, 3.0], [2 * math.pi], [0.0, 0.0], [0.0])
    lane = Lane("lane", 6.0, 9.65, "up")
    t = Thread("helix", 6.0, 9.65, (lane,), prof, (0, 1), traffic="up")
    return Helix("single", "one-way", (t,), structure_radius=10.5, core_radius=5.7)


def test_quantities_against_a_hand_worked_helix():
    # Worked by hand: one storey of 3.00 m in one turn, kerbs at 6.00 m and 9.65 m, no
    # landings, no cross-fall; slab 250 mm; outer wall 250 mm, its outside face at
    # 10.50 m (inside face 10.25 m); core face 5.70 m; parapet 1.10 m.
    #   c = 3 / (2 pi) = 0.477465 m/rad, c^2 = 0.227973
    #   F(x) = (x sqrt(x^2 + c^2) + c^2 asinh(x / c)) / 2
    #   F(9.65) = (9.65 x 9.661805 + 0.227973 x 3.699981) / 2 = 47.03996
    #   F(6.00) = (6.00 x 6.018968 + 0.227973 x 3.225751) / 2 = 18.42459
    #   deck = 2 pi (47.03996 - 18.42459) = 179.796 m2   (flat annulus: 179.458 m2)
    #   slab = 179.796 x 0.25 = 44.949 m3
    #   wall height = 3.00 + 1.10 = 4.10 m; outer wall = 2 pi 10.25 x 4.10 = 264.051 m2
    #   core wall = 2 pi 5.70 x 4.10 = 146.838 m2
    #   kerbs = 2 pi (6.018968 + 9.661805) = 37.8183 + 60.7069 = 98.5252 m
    #   plot square 21.00 m: 441.0 m2 / (2.4 x (4.8 + 6.0 / 2) = 18.72 m2) = 23.56 -> 23 bays
    q = quantities(_one_turn_helix(), (0.0, 3.0), 0.25, 0.25, ComparisonAssumptions())
    assert q.deck_area == pytest.approx(2 * math.pi * (47.03996 - 18.42459), abs=1e-3)
    assert q.plan_area == pytest.approx(math.pi * (9.65 ** 2 - 6.0 ** 2), rel=1e-12)
    assert q.slab_volume == pytest.approx(179.796 * 0.25, abs=1e-3)
    assert q.outer_wall_area == pytest.approx(2 * math.pi * 10.25 * 4.10, rel=1e-12)
    assert q.core_wall_area == pytest.approx(2 * math.pi * 5.70 * 4.10, rel=1e-12)
    assert q.kerb_length == pytest.approx(37.8183 + 60.7069, abs=1e-3)
    assert q.plot_area == pytest.approx(441.0)
    assert q.bays_per_level == 23 and q.bays_all_levels == 46


def test_lane_capacity_formula_and_source():
    # Source: Highway Capacity Manual (TRB, 2010), base saturation flow 1,900 pc/h/ln,
    # s = 3600 / h; from memory; verify.  The space form q = v / spacing gives the same.
    h = 3600 / 1900
    assert lane_capacity(h) == pytest.approx(1900.0)
    v = 15 / 3.6
    assert 3600 * v / lane_spacing(v, h) == pytest.approx(lane_capacity(h))
    assert lane_spacing(v, h) == pytest.approx(7.895, abs=1e-3)  # a 5.8 m car and a 2.1 m gap
    # Time to empty, worked by hand: 500 bays at 1,900 veh/h out and a 36 s drive down:
    # 499 x 3600 / 1900 = 945.47 s, + 36 s = 981.47 s.
    assert time_to_empty(500, 1900.0, 36.0) == pytest.approx(981.47, abs=0.01)


def test_lane_drives_on_each_lanes_own_line_against_quad():
    # Reference: scipy.integrate.quad of sqrt(r^2 + z'(theta)^2) along each lane's centre.
    p = load_project(ROOT / "configs" / "demo-imperial.yaml")
    h = build_helix(p)
    t = helix_traffic(h, 15 / 3.6, 2.0, 100)
    thread = h.threads[0]
    prof = thread.profile
    assert {ln.direction for ln in t.lanes} == {"up", "down"}
    for ln in t.lanes:
        assert ln.radius == pytest.approx(next(x for x in thread.lanes if x.name == ln.lane).centre_radius)
        c = prof.connections
        for s in range(len(c) - 1):
            pts = [x for x in prof.t if c[s] < x < c[s + 1]]
            ref, _ = integrate.quad(lambda th: math.hypot(ln.radius, float(prof.slope(th))), c[s], c[s + 1],
                                    points=pts or None, epsabs=1e-10, limit=200)
            assert ln.per_storey[s] == pytest.approx(ref, rel=1e-9)
    # Two-way single helix: one lane each way, each at 3600 / 2.0 = 1800 veh/h.
    assert t.inbound == pytest.approx(1800.0) and t.outbound == pytest.approx(1800.0)
    outer = max(t.lanes, key=lambda ln: ln.radius)
    assert outer.total > min(t.lanes, key=lambda ln: ln.radius).total
    # A one-way single helix carries one way: no outbound capacity, nothing emptied.
    one = helix_traffic(build_helix(load_project(ROOT / "configs" / "demo-metric.yaml")), 15 / 3.6, 2.0, 100)
    assert one.outbound == 0 and one.empty_time is None and one.inbound == pytest.approx(1800.0)


def _double_project():
    """The search demo with only the double helix, its turns fixed at 0.5 and the plot
    large enough that the centre-line gradient binds the radius."""
    p = load_project(ROOT / "configs" / "demo-search.yaml")
    site = replace(p.site, width=40.0, depth=40.0)
    sp = replace(p.search, layouts=("double",), turns_choices=None, turns_free=False)
    design_ = replace(p.design, turns_per_storey=(0.5,) * p.storeys)
    return replace(p, site=site, search=sp, design=design_)


@pytest.mark.parametrize("parameter,delta,rel", [
    # The gradient boundary is linear in the storey height: a 10 mm step is exact to the
    # search's radius tolerance (1e-6 m over 20 mm: 5e-5 of the 0.3 m change).
    ("storey_height", 0.01, 1e-4),
    # r ~ 1/g: a central difference of 0.1 percentage point is off by (dg/g)^2 / 6 ~ 2e-5.
    ("gradient", 0.001, 1e-3),
])
def test_sensitivity_against_finite_differences_of_the_exact_search(parameter, delta, rel):
    p = _double_project()
    base = search_layout(p, "double")
    assert base.binding.startswith("gradient")
    s = sensitivity(p, base.family, base.radius, base.binding)
    row = next(r for r in s.rows if r.parameter == parameter)
    up = search_layout(perturbed(p, parameter, delta), "double")
    down = search_layout(perturbed(p, parameter, -delta), "double")
    fd = (up.radius - down.radius) / (2 * delta)
    assert row.d_radius / row.step == pytest.approx(fd, rel=rel)
    # The footprint moves by twice the radius (the helix is a circle).
    assert row.d_diameter == pytest.approx(2 * row.d_radius, rel=1e-6)


def test_sensitivity_zero_where_the_binding_rule_ignores_the_parameter():
    # The slab depth does not enter the gradient boundary: the exact search keeps the
    # radius to its tolerance, and the derivative is zero.
    p = _double_project()
    base = search_layout(p, "double")
    s = sensitivity(p, base.family, base.radius, base.binding)
    row = next(r for r in s.rows if r.parameter == "slab_depth")
    moved = search_layout(perturbed(p, "slab_depth", 0.1), "double")
    assert abs(row.d_radius) < 1e-9
    assert moved.radius == pytest.approx(base.radius, abs=2e-6)


def test_sensitivity_of_a_lane_width_regime_change_against_the_exact_search():
    # The search demo's two-way helix sits where the inner lane leaves its rule width
    # for the swept path: a function of the vehicle and the rules only, so the radius
    # does not move with the storey height; the search run again agrees to its tolerance.
    p = load_project(ROOT / "configs" / "demo-search.yaml")
    p = replace(p, search=replace(p.search, layouts=("single-two-way",)))
    base = search_layout(p, "single-two-way")
    assert base.binding.startswith("lane_width_swept (")
    s = sensitivity(p, base.family, base.radius, base.binding)
    assert s.movable and s.dm_dr == pytest.approx(1.0)
    for par in ("storey_height", "gradient"):
        row = next(r for r in s.rows if r.parameter == par)
        moved = search_layout(perturbed(p, par, 0.5 * row.step), "single-two-way")
        assert row.d_radius == 0.0
        assert moved.radius == pytest.approx(base.radius, abs=2e-6)


def test_sensitivity_of_a_full_check_boundary_against_the_verified_search():
    # The imperial demo's two-way helix is bound by the floor approach's clear height,
    # which only the full check measures: the search moves the radius to that root.
    # Finite differences of the whole verified search (2 mm steps) against the implicit
    # derivative of that check's margin; 1e-3: the root is found to about 1e-6 m, so
    # 2e-6 / 4e-3 = 5e-4 m per m on a derivative of about 20.
    from helix.search import _verified, default_space
    p = load_project(ROOT / "configs" / "demo-imperial.yaml")
    p = replace(p, search=replace(default_space(p), layouts=("single-two-way",)))
    ls, _ = _verified(p, "single-two-way")
    assert ls.binding == "approach_clear_height"
    s = sensitivity(p, ls.family, ls.radius, ls.binding)
    row = next(r for r in s.rows if r.parameter == "slab_depth")
    d = 0.002
    up = _verified(perturbed(p, "slab_depth", d), "single-two-way")[0]
    down = _verified(perturbed(p, "slab_depth", -d), "single-two-way")[0]
    assert up.binding == down.binding == "approach_clear_height"
    assert row.d_radius / row.step == pytest.approx((up.radius - down.radius) / (2 * d), rel=1e-3)


def test_demo_search_carries_the_comparison(tmp_path):
    from helix.results import comparison_tables, design_dict, design_table
    result = design(load_project(ROOT / "configs" / "demo-search.yaml"))
    data = design_dict(result)
    first = data["options"][0]["comparison"]
    assert first["capacity_inbound_veh_h"] == pytest.approx(1900.0, abs=0.1)
    assert first["quantities"]["deck_area_m2"] > first["quantities"]["deck_plan_area_m2"]
    text = design_table(result)
    for title, _, _, _ in comparison_tables(result):
        assert title in text
    part = text[text.index("Drive and capacity per lane"):text.index("does not work:")]
    table_lines = [ln for ln in part.splitlines() if ln and not ln.startswith("  ")]
    assert len(table_lines) > 20 and max(len(ln) for ln in table_lines) <= 100


def test_comparison_section_parses_and_refuses_bad_values(tmp_path):
    src = (ROOT / "configs" / "demo-metric.yaml").read_text()
    good = tmp_path / "good.yaml"
    good.write_text(src + "\ncomparison:\n  headway: 2.5\n  bays_to_empty: 320\n  bay: {width: 2.5 m, length: 5.0 m}\n"
                    "  aisle_width: 6.5 m\n  parapet_height: 1.2 m\n")
    c = load_project(good).comparison
    assert (c.headway, c.bays_to_empty, c.bay_width, c.bay_length, c.aisle_width, c.parapet_height) == \
        (2.5, 320, 2.5, 5.0, 6.5, 1.2)
    assert c.headway_source == "project file"
    from helix.errors import InputError
    bad = tmp_path / "bad.yaml"
    bad.write_text(src + "\ncomparison:\n  headway: 0\n")
    with pytest.raises(InputError, match=r"comparison\.headway"):
        load_project(bad)
    bad.write_text(src + "\ncomparison:\n  bays_to_empty: 12.5\n")
    with pytest.raises(InputError, match=r"comparison\.bays_to_empty"):
        load_project(bad)
    bad.write_text(src + "\ncomparison:\n  bay: {widht: 2.5 m}\n")
    with pytest.raises(InputError, match=r"comparison\.bay\.widht"):
        load_project(bad)
