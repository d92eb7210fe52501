"""Checks where cars actually drive: every segment, each lane, the vehicle at either
kerb, the floor approaches, degenerate storeys and defaults that are not neutral.

Each case is worked by hand in the test (closed forms of the helicoid, the
steady-state offtracking formula) or by an independent calculation (scipy's root
finder and bounded minimiser on the plain geometry)."""
import math
from dataclasses import replace

import numpy as np
import pytest
from scipy.optimize import brentq, minimize_scalar

import helix
from helix.approach import approach_lines, overhead_clear
from helix.checks import inner_kerb_warning_check
from helix.errors import InputError
from helix.layout import build_helix
from helix.project import Level
from helix.rules import load_rule_set
from helix.search import Family, family_project, screen
from helix.vehicle import Vehicle
from helix.vehicle_clearance import PathProfile, _straight_profile, minimum_clearance

METRIC = "configs/demo-metric.yaml"
SEARCH = "configs/demo-search.yaml"
DEPTH = 0.25 + 0.20  # slab and hanging depth of the demos


def _metric(**design):
    p = helix.load_project(METRIC)
    return replace(p, design=replace(p.design, **design))


def _search_demo(rules: str | None = None):
    """The search demo as first issued: a 24.8 m plot, no landings."""
    p = helix.load_project(SEARCH)
    p = replace(p, site=replace(p.site, width=24.8), design=replace(p.design, landing_length=None))
    if rules is not None:
        p = replace(p, rules=load_rule_set(rules))
    return p


# ----------------------------------------------------------------------------------
# 1. Gradient on every segment, by magnitude


def test_landing_fall_steeper_than_the_limit_fails_on_the_landing():
    # Source: IStructE 4th ed. (2011) table 4.4: 1:10 on the centre line for a rise up to 3.0 m.
    # By hand: a landing falling 10.5 % along the centre line has that grade there, whatever
    # the runs do; it is the steepest segment of demo-metric (runs 3.0 / (2 pi 9.0) = 5.3 %).
    ev = helix.evaluate(_metric(landing_length=4.0, landing_fall=0.105), vehicle=False)
    c = ev.check("gradient_centre_line")
    assert c.value == pytest.approx(0.105, abs=1e-12)
    assert not c.ok and "Ground landing" in c.where and "landing" in c.where
    assert not ev.ok


def test_five_metre_landings_at_12_percent_fail_and_warn_at_the_inner_kerb():
    # By hand: 12 % on the centre line (r = 9.0 m) is 12 % x 9.0 / 7.175 = 15.05 % at the
    # inner kerb (r = 9.0 - 3.65 / 2), the value the result's own 'steepest' reports.
    # Common practice, no single source: 15 % at the inner kerb as the warning value.
    ev = helix.evaluate(_metric(landing_length=5.0, landing_fall=0.12), vehicle=False)
    assert ev.check("gradient_centre_line").value == pytest.approx(0.12, abs=1e-12)
    assert not ev.check("gradient_centre_line").ok
    w = ev.check("gradient_inner_kerb_warning")
    assert w.value == pytest.approx(0.12 * 9.0 / 7.175, abs=1e-9)
    assert round(100 * w.value, 2) == 15.05
    assert w.status == "WARN" and w.ok


def test_a_descending_run_is_checked_by_its_magnitude():
    # By hand (helix.alignment.storey_run_slope): half a turn per storey (plan pi), 14 m
    # landings on r = 9 m (angle 14/9 rad) falling 40 % (slope 0.4 x 9 = 3.6 m/rad):
    # run slope = (3.0 - 3.6 x 14/9) / (pi - 14/9) = -1.6393 m/rad, grade -18.21 % on the
    # centre line.  The check must see 18.21 % (and the 40 % landings), never -18.21 %.
    p = _metric(turns_per_storey=(0.5,) * 4, landing_length=14.0, landing_fall=0.40,
                transition_length=0.0)
    ev = helix.evaluate(p, vehicle=False)
    lam = 14.0 / 9.0
    k = (3.0 - 3.6 * lam) / (math.pi - lam)
    runs = [s for s in ev.segments if s.kind == "run" and s.storey == "Ground to Level 1"]
    assert runs[0].gradient["centre line"] == pytest.approx(k / 9.0, abs=1e-9)
    assert round(100 * runs[0].gradient["centre line"], 2) == -18.21
    c = ev.check("gradient_centre_line")
    assert c.value == pytest.approx(0.40, abs=1e-12) and not c.ok
    # With the landings level, a run falling at -18.21 % would be reported at +18.21 %:
    from helix.checks import gradient_check, segment_slope
    t = ev.helix.threads[0]
    j = next(i for i, kind in enumerate(t.profile.kind) if kind == "run")
    assert segment_slope(t, j) == (pytest.approx(abs(k)), -1.0)
    g = gradient_check(p, ev.helix, p.rules.gradient[0])
    assert g.value >= abs(k) / 9.0


# ----------------------------------------------------------------------------------
# 2. Each lane of a two-way helix is a driving line


def _two_way_at(project, grade_centre: float):
    """Two-way single helix, half a turn per storey, radius where the carriageway centre
    line has ``grade_centre``: R = p / (2 pi g), p = 2.9 / 0.5 (no landings or transitions)."""
    fam = Family("single-two-way", (0.5,) * project.storeys, None)
    r = (2.9 / 0.5) / (2 * math.pi * grade_centre)
    return family_project(project, fam, r), fam, r


def test_two_way_istructe_half_turns_fails_on_the_inner_lane_centre_line():
    # Source: IStructE 4th ed. (2011) table 4.4: 1:10 on the centre line (a lane's own).
    # By hand: slope 2.9 / pi = 0.92310 m/rad; R = 9.2310 m for 10 % on the carriageway
    # centre; lanes 3.50 m, central kerb 0.5 m: inner kerb 5.4810 m, inner lane centre
    # 7.2310 m: 0.92310 / 7.2310 = 12.77 %, inner kerb 0.92310 / 5.4810 = 16.84 %.
    p, fam, r = _two_way_at(_search_demo(), 0.10)
    ev = helix.evaluate(p, vehicle=False)
    k = 2.9 / math.pi
    c = ev.check("gradient_centre_line")
    assert c.value == pytest.approx(k / (r - 2.0), rel=1e-9)
    assert round(100 * c.value, 2) == 12.77 and not c.ok
    assert "inner lane centre line" in c.where
    w = ev.check("gradient_inner_kerb_warning")
    assert w.value == pytest.approx(k / (r - 3.75), rel=1e-9)
    assert round(100 * w.value, 2) == 16.84 and w.status == "WARN"


def test_two_way_us_ibc_checked_design_now_fails_and_warns():
    # Common practice, no single source: us-ibc-2015 takes 12 % on the centre line and
    # 10 ft (3.048 m) half-grade transitions where the grade changes by 8 % or more.
    # By hand: R = 0.92310 / 0.12 = 7.6925 m; the transitions (plan angle 3.048 / R each)
    # rise at half the run's slope, so the run's slope is 2.9 / (pi - 3.048 / R)
    # (helix.alignment.storey_run_slope) = 1.0563 m/rad.  The lanes the search sizes for
    # the vehicle there (exactly, no rounding) are 3.5923 m and 2.9569 m (inner kerb
    # 4.1679 m): inner lane centre 5.9640 m -> 17.71 %, inner kerb -> 25.34 %, over the
    # 15 % warning value.  The inner lane is exactly the swept need at its inner kerb.
    from helix.turning import lane_width_needed
    p, fam, r = _two_way_at(_search_demo("us-ibc-2015"), 0.12)
    ev = helix.evaluate(p, vehicle=False)
    k = 2.9 / (math.pi - 3.048 / r)
    inner = ev.helix.threads[0].lanes[0]
    w1, w2 = p.design.lane_widths
    assert inner.inner_radius == pytest.approx(r - 0.5 * (w1 + 0.5 + w2), abs=1e-9)
    assert w1 == pytest.approx(lane_width_needed(p.vehicle, inner.inner_radius, 0.0)[0], abs=1e-9)
    c = ev.check("gradient_centre_line")
    assert c.value == pytest.approx(k / inner.centre_radius, rel=1e-9)
    assert round(100 * c.value, 2) == 17.71 and not c.ok
    w = ev.check("gradient_inner_kerb_warning")
    assert w.value == pytest.approx(k / inner.inner_radius, rel=1e-9) and w.status == "WARN"
    assert round(100 * w.value, 2) == 25.34


def test_no_inner_kerb_warning_where_the_rule_set_limits_the_inner_kerb():
    # Source: German garage ordinances (GaStellV Bayern s. 3 (1)): 15 % on the inner lane edge.
    p = replace(_search_demo(), rules=load_rule_set("de-garage-ordinance"))
    p, _, _ = _two_way_at(p, 0.10)
    assert inner_kerb_warning_check(p, build_helix(p)) is None


@pytest.mark.parametrize("rules", ["istructe-2011", "conservative-default", "de-garage-ordinance"])
@pytest.mark.parametrize("layout,fall,landing", [("single-two-way", 0.0, 4.0), ("single-one-way", 0.06, 4.0),
                                                 ("double", 0.02, 4.0), ("single-one-way", 0.12, 0.0)])
def test_search_gradient_margins_match_the_full_check(rules, layout, fall, landing):
    # The search's vectorised margins and the full check measure the same lines and
    # segments (landings included; a fall without landings is no segment); compared at
    # several radii.
    p = _search_demo(rules)
    p = replace(p, design=replace(p.design, landing_length=landing, landing_fall=fall))
    fam = Family(layout, (1.0,) * p.storeys, None)
    radii = np.array([8.0, 10.5, 14.0])
    sc = screen(p, fam, radii, with_headroom=False)
    for i, r in enumerate(radii):
        ev = helix.evaluate(family_project(p, fam, float(r)), vehicle=False)
        for g in p.rules.gradient:
            assert sc.margins[g.check_id][i] == pytest.approx(ev.check(g.check_id).margin, abs=1e-9)
        assert sc.margins["lane_width_swept"][i] == pytest.approx(ev.check("lane_width_swept").margin,
                                                                  abs=0.011)


# ----------------------------------------------------------------------------------
# 3. The vehicle at the worst lateral position; one overhang convention


def _brute_underbody(vehicle, path, lo, hi, n=1500, inner=400):
    """Independent crest clearance: scipy's root finder for the upper wheel contact,
    the underbody line sampled densely between the wheels."""
    best = math.inf
    for s_a in np.linspace(lo, hi, n):
        za = float(path.z(s_a))
        f = lambda s_b: math.hypot(s_b - s_a, float(path.z(s_b)) - za) - vehicle.wheelbase
        s_b = brentq(f, s_a + 0.5 * vehicle.wheelbase, s_a + vehicle.wheelbase + 1e-9)
        zb = float(path.z(s_b))
        cos = (s_b - s_a) / vehicle.wheelbase
        s = np.linspace(s_a, s_b, inner)
        chord = za + (zb - za) * (s - s_a) / (s_b - s_a)
        best = min(best, float(np.min((chord - path.z(s)) * cos)) + vehicle.ground_clearance)
    return best


def test_vehicle_hugging_the_inner_kerb_has_less_crest_clearance():
    # Search demo's double helix at R = 9.2310 m (10 % on the centre line, 3.65 m lane,
    # no kerb clearance in IStructE): hugging the inner kerb, the rear axle is at
    # R_i + W/2 = 7.406 + 1.05 m (steady-state offtracking, AASHTO Green Book 2011
    # turning geometry), inner wheels at that less half the 1.8 m track.
    p = _search_demo()
    fam = Family("double", (0.5,) * p.storeys, None)
    pp = family_project(p, fam, 9.230986699)
    ev = helix.evaluate(pp)
    c = ev.check("underbody_clearance")
    v = pp.vehicle
    t = ev.helix.threads[0]
    r = t.inner_radius + 0.5 * v.width - 0.5 * v.track
    assert ev.ground.radius == pytest.approx(r, abs=1e-9)
    assert "hugging the inner kerb" in c.where
    path = PathProfile(t.profile, r)
    # The crest where the top run meets the level floor beyond the thread's end.
    s_crest = path.length
    assert ev.ground.contact.s_point == pytest.approx(s_crest, abs=1e-6)
    independent = _brute_underbody(v, path, s_crest - v.wheelbase - 0.1, s_crest + 0.1, n=3500)
    assert c.value == pytest.approx(independent, abs=5e-4)
    assert round(c.value, 4) == 0.0365
    # On the lane centre (the old placement) the same crest clears by more.
    centre = minimum_clearance(v, PathProfile(t.profile, t.centre_radius - 0.5 * v.track), focus=0.005)
    assert round(min(x.clearance for x in centre.values()), 4) == 0.0461 > c.value


def _overhang_independent(wb, of, h, g):
    """Front overhang over a sag from flat to grade ``g``, rear wheel on the flat: the
    least distance of the overhang's lowest point normal to the slope (plain geometry,
    scipy's bounded minimiser over the rear wheel position)."""
    def clearance(x_a):
        # Front wheel on the slope: (x_b - x_a)^2 + (g x_b)^2 = wb^2.
        a, b, cc = 1 + g * g, -2 * x_a, x_a * x_a - wb * wb
        x_b = (-b + math.sqrt(b * b - 4 * a * cc)) / (2 * a)
        ux, uz = (x_b - x_a) / wb, g * x_b / wb
        px, pz = x_b + of * ux - h * uz, g * x_b + of * uz + h * ux
        return (pz - g * px) / math.sqrt(1 + g * g)
    res = minimize_scalar(clearance, bounds=(-wb, 0.0), method="bounded", options={"xatol": 1e-10})
    return res.fun


def test_overhang_clearance_is_the_same_facing_up_or_down_a_sag():
    # By symmetry: facing up with the front over the slope and facing down with the front
    # over the flat mirror each other across the sag's bisector, so the front overhang's
    # clearance must agree (before: -8.07 mm against -7.46 mm at 16 deg, a cos^2 apart).
    g = math.tan(math.radians(16.0))
    v = Vehicle("t", "t", length=4.6, width=1.8, height=1.4, wheelbase=2.8, front_overhang=0.9,
                rear_overhang=0.9, ground_clearance=None, front_overhang_clearance=0.25,
                rear_overhang_clearance=0.30)
    path = _straight_profile([0.0, 20.0, 40.0], [0.0, g])
    up = minimum_clearance(v, path, step=0.02, facings=("up",))["front overhang"].clearance
    down = minimum_clearance(v, path, step=0.02, facings=("down",))["front overhang"].clearance
    assert up == pytest.approx(down, abs=1e-9)
    assert up == pytest.approx(_overhang_independent(2.8, 0.9, 0.25, g), abs=1e-6)


# ----------------------------------------------------------------------------------
# 4. Approaches and exits


def test_double_helix_ground_entry_passes_under_the_other_thread():
    # By hand: at distance d along the up thread's entry tangent (before the Ground
    # connection, centre line R = 9.2310 m) the plan angle back from the connection is
    # atan(d / R); overhead is the down thread at pi - atan(d / R) of its first storey,
    # level 2.9 / pi per radian (no landings), so clear = 2.9 - 0.45 - (2.9 / pi) atan(d / R).
    # 2.10 m is reached at d = R tan(0.35 pi / 2.9) = 3.68 m; where the tangent leaves the
    # outer kerb (R_o = 11.056 m), atan -> acos(R / R_o) and clear = 1.91 m.
    p = _search_demo()
    fam = Family("double", (0.5,) * p.storeys, None)
    pp = family_project(p, fam, 9.230986699)
    h = build_helix(pp)
    line = approach_lines(pp, h)[0]
    assert (line.thread, line.level, line.side) == (0, 0, "before")
    R, Ro, k = 9.230986699, 9.230986699 + 1.825, 2.9 / math.pi
    d = np.array([1.0, 3.0, 3.678, 5.0, 5.8])
    x, y = line.at(d)
    clear, _ = overhead_clear(h, pp.structure, x, y, line.aisle_level(d), (line.thread, line.connection))
    assert clear == pytest.approx(2.9 - DEPTH - k * np.arctan(d / R), abs=1e-9)
    assert R * math.tan(0.35 / k) == pytest.approx(3.678, abs=1e-3)
    assert round(2.9 - DEPTH - k * math.acos(R / Ro), 2) == 1.91
    # The check over the lane (centre and both edges, one vehicle length): the inner edge,
    # carried parallel from R_i = 7.406 m, is 5.8 m out at atan(5.8 / 7.406) back.
    ev = helix.evaluate(pp, vehicle=False)
    c = ev.check("approach_clear_height")
    assert c.value == pytest.approx(2.9 - DEPTH - k * math.atan(5.8 / (R - 1.825)), abs=1e-6)
    assert round(c.value, 3) == 1.837 and not c.ok
    roof = ev.check("approach_roof_clearance")
    assert roof.value == pytest.approx(c.value - pp.vehicle.height, abs=1e-12)


def test_radial_approach_line_stays_under_the_landing_overhead():
    # By hand: straight out along the radius at the up thread's Ground connection the
    # down thread overhead is at its Level 1 connection, pi either side of which it falls
    # or rises; the lane edges, 1.825 m to either side, see it at pi -/+ atan(1.825 / rho),
    # least at rho = R: 2.45 - (2.9 / pi) atan(1.825 / 9.2310) = 2.2698 m.  The same line
    # given as plan points, and as a straight aisle 90 deg off the tangent.
    p = _search_demo()
    fam = Family("double", (0.5,) * p.storeys, None)
    pp = family_project(p, fam, 9.230986699)
    h = build_helix(pp)
    cx, cy = h.centre
    b = pp.design.start_bearing
    R = 9.230986699
    pts = ((cx + R * math.cos(b), cy + R * math.sin(b)), (cx + (R + 5) * math.cos(b), cy + (R + 5) * math.sin(b)))
    expected = 2.9 - DEPTH - (2.9 / math.pi) * math.atan(1.825 / R)
    from helix.approach import Approach
    for approach in (Approach(line=pts), Approach(angle=math.pi / 2, length=5.0)):
        ground = replace(pp.levels[0], approach=approach)
        q = replace(pp, levels=(ground,) + pp.levels[1:])
        ev = helix.evaluate(q, vehicle=False)
        up_ground = [r for r in ev.approaches if r.line.thread == 0 and r.line.level == 0][0]
        assert up_ground.clear == pytest.approx(expected, abs=1e-6)


def test_default_approach_length_and_grade_change():
    # Default: one vehicle length (AASHTO P 5.8 m) plus the transition (3.0 m in the
    # double demo).  Grade change where demo-metric's level aisle meets its run with no
    # landing: 3.0 / (2 pi 9.0) = 5.305 % on the centre line.
    p = helix.load_project("configs/demo-double.yaml")
    h = build_helix(p)
    lines = approach_lines(p, h)
    assert lines[0].length == pytest.approx(p.vehicle.length + 3.0, abs=1e-9)
    ev = helix.evaluate(helix.load_project(METRIC), vehicle=False)
    c = ev.check("approach_grade_change")
    assert c.value == pytest.approx(3.0 / (2 * math.pi * 9.0), abs=1e-12)
    q = replace(helix.load_project(METRIC), rules=load_rule_set("us-ibc-2015"))
    # Common practice, no single source: transitions where the grade changes by 8 % or more.
    assert helix.evaluate(q, vehicle=False).check("approach_grade_change").limit == pytest.approx(0.08)


def test_approach_keys_are_checked(tmp_path):
    base = open(METRIC).read()
    for bad, path in (("  approach: {side: sideways}\n", "design.approach.side"),
                      ("  approach: {line: [[0, 0]]}\n", "design.approach.line"),
                      ("  approach: {angle: 120 deg}\n", "design.approach.angle"),
                      ("  approach: {line: [[0, 0], [1, 1]], length: 3 m}\n", "design.approach")):
        f = tmp_path / "p.yaml"
        f.write_text(base + bad)
        with pytest.raises(InputError) as e:
            helix.load_project(f)
        assert e.value.path == path


# ----------------------------------------------------------------------------------
# 5. Inner and outer kerb clearances


def test_separate_kerb_clearances_in_the_swept_width(tmp_path):
    # Steady-state offtracking (AASHTO Green Book 2011 turning geometry): with the inner
    # rear body side 0.3 m off the inner kerb R_i = 7.175 m, the rear axle is at
    # 7.175 + 0.3 + 1.05 = 8.525 m; outer front corner sqrt((8.525 + 1.05)^2 + (3.4 + 0.9)^2)
    # = 10.496 m; lane needed = 10.496 + 0.6 - 7.175 = 3.921 m.
    f = tmp_path / "p.yaml"
    f.write_text(open(METRIC).read().replace(
        "rules: istructe-2011",
        "rules: {use: istructe-2011, override: {swept_path_clearance: {inner: 0.3 m, outer: 0.6 m, "
        "source: test}}}"))
    p = helix.load_project(f)
    assert p.rules.kerb_clearances() == (0.3, 0.6)
    c = helix.evaluate(p, vehicle=False).check("lane_width_swept")
    need = math.hypot(7.175 + 0.3 + 1.05 + 1.05, 3.4 + 0.9) + 0.6 - 7.175
    assert c.limit == pytest.approx(need, abs=1e-9)
    assert round(need, 3) == 3.921 and not c.ok and not c.warns
    fam = Family("single-one-way", (1.0,) * p.storeys, (3.65,))
    sc = screen(p, fam, [9.0], with_headroom=False)
    assert sc.margins["lane_width_swept"][0] == pytest.approx(c.margin, abs=1e-12)
    # The shorthand still sets both; one side alone is refused.
    f.write_text(open(METRIC).read().replace(
        "rules: istructe-2011",
        "rules: {use: istructe-2011, override: {swept_path_clearance: {inner: 0.3 m, source: test}}}"))
    with pytest.raises(InputError):
        helix.load_project(f)
    assert load_rule_set("conservative-default").kerb_clearances() == (0.3, 0.3)


# ----------------------------------------------------------------------------------
# 6. Defaults that are not neutral are said


def test_no_cross_fall_and_no_kerb_clearance_are_warned():
    ev = helix.evaluate(helix.load_project(METRIC), vehicle=False)  # IStructE: neither set
    assert ev.check("cross_fall").status == "WARN" and ev.check("cross_fall").ok
    assert ev.check("lane_width_swept").status == "WARN" and "kerb" in ev.check("lane_width_swept").note
    ev = helix.evaluate(_metric(cross_fall=0.02), vehicle=False)
    assert ev.check("cross_fall").status == "no limit"
    q = replace(helix.load_project(METRIC), rules=load_rule_set("conservative-default"))
    ev = helix.evaluate(q, vehicle=False)
    assert ev.check("cross_fall").status == "pass" and ev.check("lane_width_swept").status != "WARN"


# ----------------------------------------------------------------------------------
# 7. Degenerate storeys


def test_storey_thinner_than_the_structure_fails_clear_height_with_its_real_value():
    # By hand: a storey of 1e-9 m puts the turn above level with the connection below it,
    # so the clear height there is 1e-9 - (0.25 + 0.20) = -0.45 m.
    p = helix.load_project(METRIC)
    lv = list(p.levels)
    lv[2] = Level(lv[2].name, lv[1].level + 1e-9)
    lv[3:] = [Level(x.name, x.level - 3.0 + 1e-9) for x in p.levels[3:]]
    p = replace(p, levels=tuple(lv))
    c = helix.evaluate(p, vehicle=False).check("clear_height")
    assert c.value == pytest.approx(1e-9 - DEPTH, abs=1e-9) and not c.ok
