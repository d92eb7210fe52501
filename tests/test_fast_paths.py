"""The fast forms of the evaluation, the screening and the search against their
reference forms.

The closed-form headroom of the batch path (every alignment's segment located once per
piece between critical angles) must equal the point-by-point form it replaced, also for
the double helix measured on one thread without the surfaces that cannot be nearest;
Brent's minimiser run on many intervals in lockstep must take exactly the steps of the
scalar routine; one lane's auto width in closed form must equal the fixed-point
iteration; and a design run that shares its full checks and regions must give what
computing each afresh gives; on generated designs and functions.
"""
import math
from dataclasses import replace

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings, strategies as st

import helix
from helix import batch, search
from helix.errors import Node
from strategies import storeys
from helix.rules import load_rule_set
from helix.vehicle import load_vehicle
from helix.roots import brent_minimum, brent_minimum_many
from helix.search import Family, screen

RULE_SETS = ["istructe-2011", "us-ibc-2015", "de-garage-ordinance", "conservative-default", "us-ibc-2015-ada-van"]
VEHICLES = ["aashto-p", "large-suv", "high-van", "low-sports-car"]


@st.composite
def designs(draw):
    p = helix.load_project(helix.demo_file(draw(st.sampled_from(["demo-metric", "demo-double", "demo-search"]))))
    levels = storeys(draw, 5, 2.4, 5.0)
    n = len(levels) - 1
    layout = draw(st.sampled_from(["single-one-way", "single-two-way", "double", "concentric"]))
    turns = tuple(draw(st.sampled_from([0.5, 0.75, 1.0, 1.5, 2.0])) for _ in range(n))
    design = replace(p.design, turns_per_storey=turns,
                     landing_length=draw(st.sampled_from([None, 0.0, 4.0, 6.0])),
                     transition_kind=draw(st.sampled_from(["segment", "curve"])),
                     landing_fall=draw(st.sampled_from([0.0, 0.01])))
    structure = replace(p.structure, cover_soffit=draw(st.sampled_from([None, float(levels[-1].level) + 2.6])))
    p = replace(p, levels=levels, design=design, structure=structure)
    radii = np.array(draw(st.lists(st.floats(3.0, 30.0), min_size=1, max_size=40)))
    return p, Family(layout, turns, None), radii


@settings(max_examples=60, deadline=None, derandomize=True, suppress_health_check=[HealthCheck.too_slow])
@given(designs())
def test_closed_form_headroom_equals_the_pointwise_form(case):
    # Reference: the point-by-point form (each point located in every alignment by a
    # search of its own), itself compared with helix.clearance.minimum_headroom in
    # tests/test_search.py.
    p, fam, radii = case
    fast = screen(p, fam, radii).headroom
    original = search.batch_min_headroom
    search.batch_min_headroom = batch.batch_min_headroom_reference
    try:
        ref = screen(p, fam, radii).headroom
    finally:
        search.batch_min_headroom = original
    assert np.array_equal(np.isfinite(fast), np.isfinite(ref))
    both = np.isfinite(fast)
    assert np.all(np.abs(fast[both] - ref[both]) <= 1e-9)


@settings(max_examples=60, deadline=None, derandomize=True, suppress_health_check=[HealthCheck.too_slow])
@given(designs(), st.sampled_from([None, (True, False), (False, True), (True, True)]))
def test_headroom_alone_equals_the_full_screen(case, span):
    # Reference: the full screen, every margin computed, of which the headroom is one.
    p, fam, radii = case
    full = screen(p, fam, radii, lower_span=span)
    alone = screen(p, fam, radii, lower_span=span, headroom_only=True)
    assert np.array_equal(alone.headroom, full.headroom, equal_nan=True)
    assert set(alone.margins) == ({"clear_height"} & set(full.margins))
    for key, m in alone.margins.items():
        assert np.array_equal(m, full.margins[key])


@settings(max_examples=60, deadline=None, derandomize=True)
@given(st.lists(st.tuples(st.floats(0.2, 6.0), st.floats(-1.0, 1.0), st.floats(-5.0, 0.0), st.floats(1e-4, 6.0)),
                min_size=1, max_size=12))
def test_lockstep_brent_takes_the_scalar_steps(cases):
    # Reference: helix.roots.brent_minimum, one interval at a time (the minima it finds
    # are compared with scipy.optimize.minimize_scalar in tests/test_geometry.py and
    # tests/test_driving_lines.py).
    fs = [lambda x, c=c, s=s: math.cos(c * x) + s * x * x + 0.1 * abs(x - 0.3) for c, s, _, _ in cases]
    a = np.array([lo for _, _, lo, _ in cases])
    b = a + np.array([w for _, _, _, w in cases])
    xs, fx = brent_minimum_many(lambda idx, x: np.array([fs[i](v) for i, v in zip(idx, x)]), a, b, xtol=1e-6)
    for i, f in enumerate(fs):
        x1, f1 = brent_minimum(f, float(a[i]), float(b[i]), xtol=1e-6)
        assert abs(xs[i] - x1) <= 1e-9 and abs(fx[i] - f1) <= 1e-9


@st.composite
def width_cases(draw):
    p = helix.load_project(helix.demo_file(draw(st.sampled_from(["demo-metric", "demo-imperial", "demo-search"]))))
    rules = load_rule_set(draw(st.sampled_from(RULE_SETS)))
    v = load_vehicle(Node(draw(st.sampled_from(VEHICLES)), "<test>", "vehicle"), None)
    if draw(st.booleans()):  # a vehicle of its own: any width and turning circle
        v = replace(v, width=draw(st.floats(1.4, 2.6)),
                    min_turning_radius=draw(st.one_of(st.none(), st.floats(4.0, 9.0))))
    layout = draw(st.sampled_from(["single-one-way", "single-two-way", "double", "concentric"]))
    radii = np.array(draw(st.lists(st.floats(0.05, 250.0), min_size=1, max_size=30)))
    return replace(p, rules=rules, vehicle=v), Family(layout, (1.0,), None), radii


@settings(max_examples=200, deadline=None, derandomize=True, suppress_health_check=[HealthCheck.too_slow])
@given(width_cases())
def test_closed_form_lane_width_equals_the_iteration(case):
    # Reference: the fixed-point iteration of the swept requirement (the vectorised
    # helix.turning.lane_width_needed, compared with it in tests/test_search.py), run
    # until it stops moving; the closed form must land on the same fixed point.
    p, fam, radii = case
    fast = search._lane_widths(p, fam, radii)
    ref = search._lane_widths_reference(p, fam, radii)
    assert fast.shape == ref.shape
    assert np.all(np.abs(fast - ref) <= 1e-9)
    one = np.array([search._lane_widths(p, fam, radii[i:i + 1])[0] for i in range(len(radii))])
    assert np.all(np.abs(one - ref) <= 1e-9)


@st.composite
def double_helices(draw):
    p = helix.load_project(helix.demo_file(draw(st.sampled_from(["demo-double", "demo-search"]))))
    levels = storeys(draw, 4, 2.4, 5.0)
    n = len(levels) - 1
    turns = tuple(draw(st.sampled_from([0.5, 0.75, 1.0])) for _ in range(n))
    # Long landings on small radii leave flat half turns (the threads touch), falling
    # landings make the alignment fall: the cases where no surface may be left out.
    design = replace(p.design, turns_per_storey=turns,
                     landing_length=draw(st.sampled_from([None, 0.0, 6.0, 12.0, 30.0])),
                     transition_kind=draw(st.sampled_from(["segment", "curve"])),
                     landing_fall=draw(st.sampled_from([0.0, 0.01, -0.01, -0.02, -0.3, 0.2])))
    structure = replace(p.structure, cover_soffit=draw(st.sampled_from([None, float(levels[-1].level) + 2.6])))
    p = replace(p, levels=levels, design=design, structure=structure)
    radii = np.array(draw(st.lists(st.floats(1.0, 30.0), min_size=1, max_size=40)))
    span = draw(st.sampled_from([None, (True, False), (False, True), (True, True), (False, False)]))
    return p, Family("double", turns, None), radii, span


def _every_surface_on_both_threads(profiles, starts, hand, same_annulus, depth, cover_soffit, spans):
    # The closed form before the double helix's shortcuts: both threads, every surface.
    best = np.full(profiles[0].t.shape[0], np.inf)
    for i, p in enumerate(profiles):
        overhead = batch._overhead(profiles, i, starts, hand, same_annulus)
        best = np.minimum(best, batch._thread_min_headroom(p, overhead, depth, cover_soffit,
                                                           None if spans is None else spans[i]))
    return best


def _headroom_with(form, p, fam, radii, span):
    original = search.batch_min_headroom
    search.batch_min_headroom = form
    try:
        return screen(p, fam, radii, lower_span=span).headroom
    finally:
        search.batch_min_headroom = original


@settings(max_examples=150, deadline=None, derandomize=True, suppress_health_check=[HealthCheck.too_slow])
@given(double_helices())
def test_double_helix_headroom_on_one_thread_equals_both(case):
    # References: the closed form over both threads and every surface overhead, and
    # the point-by-point form (each point located in every alignment by a search of its
    # own), itself compared with helix.clearance.minimum_headroom in tests/test_search.py.
    p, fam, radii, span = case
    sc = screen(p, fam, radii, lower_span=span)
    # Only where the helix can be built: where landings and transitions leave no room
    # for a run, or the lanes no room inside the centre line, there is none (screen
    # marks those radii infeasible; the forms need not agree there).
    built = np.isfinite(sc.steepest["centre"]) & (sc.margins["geometry"] > 0)
    fast = sc.headroom[built]
    full = _headroom_with(_every_surface_on_both_threads, p, fam, radii, span)[built]
    assert np.array_equal(np.isfinite(fast), np.isfinite(full))
    both = np.isfinite(fast)
    assert np.all(np.abs(fast[both] - full[both]) <= 1e-9)
    if abs(p.design.landing_fall) <= 0.02:  # not where steeply falling landings cross
        ref = _headroom_with(batch.batch_min_headroom_reference, p, fam, radii, span)[built]
        assert np.array_equal(np.isfinite(fast), np.isfinite(ref))
        # The reference also measures 1e-9 rad either side of each breakpoint, where
        # steep alignments (long landings on small radii) move by a few nanometres.
        assert np.all(np.abs(fast[both] - ref[both]) <= 1e-8)


def _design_json(project, sharing: bool) -> str:
    from helix.results import design_dict, to_json
    old = search.SHARING
    search.SHARING = sharing
    try:
        return to_json(design_dict(search.design(project)))
    finally:
        search.SHARING = old


@pytest.mark.parametrize("demo", ["demo-search", "demo-lshaped"])
def test_shared_memo_changes_no_result(demo):
    # Reference: the same design run computing every search and full check afresh
    # (no memo shared between the layouts, the explanations and their changes).
    p = helix.load_project(helix.demo_file(demo))
    assert _design_json(p, True) == _design_json(p, False)


def test_shared_memo_changes_no_result_of_a_varied_space():
    # Reference: as above, on the search demo with every rule set and its usual turns
    # (wider turns, more relaxed searches, other failing rules).
    p = helix.load_project(helix.demo_file("demo-search"))
    for name in ("us-ibc-2015", "de-garage-ordinance"):
        q = replace(p, rules=load_rule_set(name))
        assert _design_json(q, True) == _design_json(q, False)
