"""The fast forms of the evaluation and the screening against their reference forms.

The closed-form headroom of the batch path (every alignment's segment located once per
piece between critical angles) must equal the point-by-point form it replaced, and
Brent's minimiser run on many intervals in lockstep must take exactly the steps of the
scalar routine, on generated designs and functions.
"""
import math
from dataclasses import replace

import numpy as np
from hypothesis import HealthCheck, given, settings, strategies as st

import helix
from helix import batch, search
from helix.project import Level
from helix.roots import brent_minimum, brent_minimum_many
from helix.search import Family, screen


@st.composite
def designs(draw):
    p = helix.load_project(helix.demo_file(draw(st.sampled_from(["demo-metric", "demo-double", "demo-search"]))))
    n = draw(st.integers(1, 5))
    heights = [draw(st.floats(2.4, 5.0)) for _ in range(n)]
    levels = tuple(Level(f"L{i}", float(sum(heights[:i]))) for i in range(n + 1))
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
