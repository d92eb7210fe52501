"""The fast vehicle rolling and approach checks against brute-force references.

``helix.evaluate`` rolls the design vehicle along every wheel path and body side of a
thread in shared numpy calls, evaluates only the ends of runs of positions over one
straight grade, finds the roof clearance exactly at the candidate points of a
piecewise-quadratic soffit, leaves out surfaces that are never overhead, and measures
every approach line at once.  Each of these is checked here against a plain,
independent computation that does none of it: every position on a fine grid, every
body line sampled densely, every surface and every turn looked at point by point.

The brute force samples, so it can only overstate a smallest clearance: the fast value
must never exceed it (that would be a missed low point, a wrong "passes"), and must lie
within the sampling resolution below it.
"""
import math
from dataclasses import replace

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings, strategies as st

import helix
from helix.approach import TWO_PI, approach_lines, measure_approach, measure_approaches, overhead_clear
from helix.clearance import Overhead, headroom, overhead_shifts
from helix.evaluate import build_helix, vehicle_positions
from helix.vehicle_clearance import PathProfile, minimum_clearance, minimum_clearances
from strategies import storeys


@st.composite
def projects(draw):
    """Demo projects with their storeys, turns, landings, transitions and cover varied."""
    p = helix.load_project(helix.demo_file(draw(st.sampled_from(["demo-metric", "demo-double", "demo-imperial"]))))
    levels = storeys(draw, 3, 2.6, 4.0)
    n = len(levels) - 1
    turns = tuple(draw(st.sampled_from([0.75, 1.0, 1.25])) for _ in range(n))
    design = replace(p.design, turns_per_storey=turns,
                     landing_length=draw(st.sampled_from([None, 0.0, 4.0])),
                     transition_kind=draw(st.sampled_from(["segment", "curve"])),
                     centre_radius=p.design.centre_radius * draw(st.floats(0.9, 1.3)))
    structure = replace(p.structure, cover_soffit=draw(st.sampled_from([None, float(levels[-1].level) + 2.4])))
    return replace(p, levels=levels, design=design, structure=structure)


def _z(p, s, r):
    return PathProfile(p, r).z(s)


def _grade(p, s, r):
    return PathProfile(p, r).grade(s)


def _brute_rolls(vehicle, p, r, overhead=None, step=0.02, samples=300):
    """Smallest clearance of each part, facing up and down, with the lower wheel at every
    ``step`` along the path: the upper wheel by bisection on the chord length, the
    underbody and roof lines sampled at ``samples`` points, the soffit from
    :func:`helix.clearance.headroom` with every surface of
    :func:`helix.clearance.overhead_shifts`."""
    wb, H = vehicle.wheelbase, vehicle.height
    best: dict[str, float] = {}
    s_all = np.arange(-vehicle.length, r * (p.end - p.start) + vehicle.length + step, step)
    for s_a in np.array_split(s_all, max(1, len(s_all) // 1500)):
        za = _z(p, s_a, r)
        lo, hi = s_a + 0.5 * wb, s_a + wb
        for _ in range(60):
            mid = 0.5 * (lo + hi)
            long = np.hypot(mid - s_a, _z(p, mid, r) - za) > wb
            lo, hi = np.where(long, lo, mid), np.where(long, mid, hi)
        s_b = 0.5 * (lo + hi)
        zb = _z(p, s_b, r)
        us, uz = (s_b - s_a) / wb, (zb - za) / wb
        t = np.linspace(0.0, 1.0, samples)[None, :]
        for facing in ("up", "down"):
            rear_low = facing == "up"
            parts = {}
            if overhead is None:
                s = s_a[:, None] + t * (s_b - s_a)[:, None]
                chord = za[:, None] + t * (zb - za)[:, None]
                parts["underbody"] = np.min((chord - _z(p, s, r)) * us[:, None], axis=1) + vehicle.ground_clearance
                for name, length, h in (("rear overhang", vehicle.rear_overhang, vehicle.rear_overhang_clearance),
                                        ("front overhang", vehicle.front_overhang, vehicle.front_overhang_clearance)):
                    behind = rear_low == (name == "rear overhang")
                    ps = (s_a - length * us if behind else s_b + length * us) - h * uz
                    pz = (za - length * uz if behind else zb + length * uz) + h * us
                    parts[name] = (pz - _z(p, ps, r)) / np.sqrt(1 + _grade(p, ps, r) ** 2)
            else:
                back = vehicle.rear_overhang if rear_low else vehicle.front_overhang
                ahead = vehicle.front_overhang if rear_low else vehicle.rear_overhang
                tt = -back / wb + t * (1 + (back + ahead) / wb)
                ps = s_a[:, None] + tt * (s_b - s_a)[:, None] - H * uz[:, None]
                pz = za[:, None] + tt * (zb - za)[:, None] + H * us[:, None]
                th = p.start + ps / r
                clear, _, _ = headroom(overhead.helix, overhead.structure, overhead.i, th.ravel(), r, labels=False)
                soffit = (p.level(th.ravel()) + clear).reshape(th.shape)
                gap = np.where(np.isfinite(soffit), (soffit - pz) * us[:, None], np.inf)
                parts["roof"] = np.min(gap, axis=1)
            for part, c in parts.items():
                best[part] = min(best.get(part, math.inf), float(np.min(c)))
    return best


def _paths(project, thread):
    v = project.vehicle
    track = v.track if v.track is not None else v.width
    wheels, sides = [], []
    for lane in thread.lanes:
        for rr in vehicle_positions(project, lane).values():
            wheels += [rr - 0.5 * track, rr + 0.5 * track]
            sides += [rr - 0.5 * v.width, rr + 0.5 * v.width]
    return wheels, sides


@settings(max_examples=12, deadline=None, derandomize=True, suppress_health_check=[HealthCheck.too_slow])
@given(projects())
def test_fast_rolling_never_misses_the_brute_force_minimum(p):
    # Reference: the brute force above (a 2 cm grid of positions, 300 points along each
    # line; bisection for the upper wheel).  Its sampled clearances can only be larger
    # than the true ones, so the fast exact minimum must not exceed them; the sampling
    # resolution bounds how far below it may be (the underbody line is sampled every
    # ~1 cm and the positions every 2 cm, against changes of grade under 25 %).
    h = build_helix(p)
    v = p.vehicle
    for i, t in enumerate(h.threads):
        wheels, sides = _paths(p, t)
        on_ground, under_roof = minimum_clearances(v, t.profile, wheels, sides, Overhead(h, p.structure, i))
        for r, fast in zip(wheels[:2], on_ground[:2]):
            brute = _brute_rolls(v, t.profile, r)
            for part, c in fast.items():
                assert c.clearance <= brute[part] + 1e-9, (part, r)
                assert c.clearance >= brute[part] - 3e-3, (part, r)
        for r, fast in zip(sides[:2], under_roof[:2]):
            brute = _brute_rolls(v, t.profile, r, Overhead(h, p.structure, i))
            if "roof" in fast:
                assert fast["roof"].clearance <= brute["roof"] + 1e-9, r
                assert fast["roof"].clearance >= brute["roof"] - 3e-3, r
            else:
                assert brute["roof"] == math.inf


@settings(max_examples=20, deadline=None, derandomize=True, suppress_health_check=[HealthCheck.too_slow])
@given(projects())
def test_many_paths_at_once_equal_one_path_at_a_time(p):
    # Reference: minimum_clearance on one path at a time (one group of rows per call).
    h = build_helix(p)
    v = p.vehicle
    t = h.threads[0]
    wheels, _ = _paths(p, t)
    together, _ = minimum_clearances(v, t.profile, wheels, focus=0.005)
    for r, res in zip(wheels, together):
        alone = minimum_clearance(v, PathProfile(t.profile, r), focus=0.005)
        assert set(alone) == set(res)
        for part in alone:
            assert res[part].clearance == pytest.approx(alone[part].clearance, abs=1e-12)


@settings(max_examples=20, deadline=None, derandomize=True, suppress_health_check=[HealthCheck.too_slow])
@given(projects())
def test_surfaces_left_out_are_never_overhead(p):
    # Reference: helix.clearance.headroom with every surface of overhead_shifts, at a
    # dense grid of plan angles across the carriageway.
    h = build_helix(p)
    for i, t in enumerate(h.threads):
        kept = Overhead(h, p.structure, i).shifts
        th = np.linspace(t.profile.start, t.profile.end, 4001)
        for r in np.linspace(t.inner_radius, t.outer_radius, 5):
            every = headroom(h, p.structure, i, th, r, labels=False)[0]
            some = headroom(h, p.structure, i, th, r, labels=False, shifts=kept)[0]
            assert np.array_equal(every, some)
        assert set(kept) <= set(overhead_shifts(h, i))


def test_demo_roof_and_ground_against_brute_force():
    # The demos' governing contacts, brute-forced on their own paths (as above).
    for name in ("demo-metric", "demo-double"):
        p = helix.load_project(helix.demo_file(name))
        ev = helix.evaluate(p)
        h = ev.helix
        for vc, roof in ((ev.ground, False), (ev.roof, True)):
            t = h.threads[vc.thread]
            brute = _brute_rolls(p.vehicle, t.profile, vc.radius, Overhead(h, p.structure, vc.thread) if roof else None)
            assert vc.contact.clearance <= brute[vc.contact.part] + 1e-9
            assert vc.contact.clearance >= brute[vc.contact.part] - 1e-3


def _overhead_pointwise(h, structure, x, y, z, exclude):
    """Clear height over one plan point: every turn of every thread looked at alone."""
    cx, cy = h.centre
    rho, beta = math.hypot(x - cx, y - cy), math.atan2(y - cy, x - cx)
    best = math.inf
    for j, u in enumerate(h.threads):
        if not u.inner_radius - 1e-9 <= rho <= u.outer_radius + 1e-9:
            continue
        for k in range(-1, int((u.profile.end - u.profile.start) / TWO_PI) + 3):
            th = (u.hand * (beta - u.start_bearing) - u.profile.start) % TWO_PI + u.profile.start + TWO_PI * k
            if not u.profile.start - 1e-12 <= th <= u.profile.end + 1e-12:
                continue
            if j == exclude[0] and abs(th - exclude[1]) < math.pi:
                continue
            gap = float(u.level(th, rho)) - z
            if gap > 1e-6:
                best = min(best, gap)
    clear = best - structure.depth
    if structure.cover_soffit is not None:
        clear = min(clear, structure.cover_soffit - z)
    return clear


@settings(max_examples=10, deadline=None, derandomize=True, suppress_health_check=[HealthCheck.too_slow])
@given(projects())
def test_approaches_against_a_pointwise_brute_force(p):
    # Reference: every line and lane edge sampled every 5 mm, the clear height at each
    # point from _overhead_pointwise (no vectors, no shared calls).
    h = build_helix(p)
    lines = approach_lines(p, h)
    fast = measure_approaches(h, p.structure, lines)
    for line, res in zip(lines[:4], fast[:4]):
        assert res == measure_approach(h, p.structure, line)
        d = np.linspace(0.0, line.length, int(line.length / 0.005) + 1)
        brute = math.inf
        for off in (-0.5 * line.lane_width, 0.0, 0.5 * line.lane_width):
            x, y = line.at(d, off)
            z = line.aisle_level(d)
            brute = min(brute, min(_overhead_pointwise(h, p.structure, a, b, c, (line.thread, line.connection))
                                   for a, b, c in zip(x, y, z)))
        if math.isinf(brute):
            assert math.isinf(res.clear)
            continue
        assert res.clear <= brute + 1e-9
        assert res.clear >= brute - 2e-3
        # The vectorised clear height at the sampled points agrees point by point.
        x, y = line.at(d[::50], 0.0)
        vec = overhead_clear(h, p.structure, x, y, line.aisle_level(d[::50]), (line.thread, line.connection))[0]
        ref = [_overhead_pointwise(h, p.structure, a, b, c, (line.thread, line.connection))
               for a, b, c in zip(x, y, line.aisle_level(d[::50]))]
        assert np.allclose(vec, ref, atol=1e-12, rtol=0.0)


def test_turns_taken_in_chunks_give_the_same_clear_heights(monkeypatch):
    # Reference: the same measurement with every turn in one array (the default chunk
    # holds all the turns of a demo); the chunks only bound the memory.
    import helix.approach as approach
    p = helix.load_project(helix.demo_file("demo-double"))
    h = build_helix(p)
    lines = approach_lines(p, h)
    whole = measure_approaches(h, p.structure, lines)
    monkeypatch.setattr(approach, "_CELLS", 7)
    assert measure_approaches(h, p.structure, lines) == whole
