"""Vertical alignment and headroom: exactness, continuity and brute-force cross-checks."""
import math
from dataclasses import replace

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import helix
from helix.alignment import build_profile
from helix.clearance import headroom, minimum_headroom
from helix.layout import build_helix, with_design
from helix.project import Level

DEMO = "configs/demo-double.yaml"


def _project(heights, layout="single", turns=1.0, landing=0.0, transition=0.0, kind="segment",
             fall=0.0, cross_fall=0.0, traffic="one-way"):
    base = helix.load_project("configs/demo-metric.yaml")
    levels = [Level("L0", 0.0)]
    for i, h in enumerate(heights):
        levels.append(Level(f"L{i + 1}", levels[-1].level + h))
    widths = (3.5, 3.5) if traffic == "two-way" else (3.5,)
    design = replace(base.design, layout=layout, centre_radius=12.0, lane_widths=widths,
                     central_kerb=0.5 if traffic == "two-way" else 0.0,
                     turns_per_storey=(turns,) * len(heights), landing_length=landing,
                     transition_length=transition, transition_kind=kind, landing_fall=fall,
                     cross_fall=cross_fall)
    return replace(base, levels=tuple(levels), design=design, traffic=traffic)


def test_double_helix_stacked_gap_is_one_storey():
    # Common practice, no single source: in a double interleaved helix each thread
    # rises two storeys per turn, so the surface overhead is one storey height above.
    p = _project([3.0] * 4, layout="double", turns=0.5)
    h = build_helix(p)
    for i, t in enumerate(h.threads):
        theta = np.linspace(t.profile.start, t.profile.end, 2001)
        _, gap, _ = headroom(h, p.structure, i, theta, t.centre_radius)
        finite = gap[np.isfinite(gap)]
        assert finite.size > 0
        assert np.allclose(finite, 3.0, atol=1e-9)


def test_two_way_single_helix_stacked_gap_is_the_pitch():
    # Common practice, no single source: a single thread's turns are one pitch apart.
    p = _project([3.3] * 3, traffic="two-way")
    h = build_helix(p)
    t = h.threads[0]
    theta = np.linspace(t.profile.start, t.profile.end, 2001)
    _, gap, _ = headroom(h, p.structure, 0, theta, t.centre_radius)
    finite = gap[np.isfinite(gap)]
    assert np.allclose(finite, 3.3, atol=1e-9)


def test_concentric_pair_has_two_threads_each_under_itself():
    p = _project([3.0] * 3, layout="concentric", turns=1.0)
    h = build_helix(p)
    assert len(h.threads) == 2
    inner, outer = h.threads
    assert outer.inner_radius == pytest.approx(inner.outer_radius + p.design.divider)
    ev = helix.evaluate(p, h)
    assert ev.headroom.gap == pytest.approx(3.0)
    assert "same thread" in ev.headroom.above


def test_more_turns_in_a_storey_means_a_smaller_gap_overhead():
    # Common practice, no single source: the stacked gap of a single thread is its
    # pitch H / t, so a storey wound in 1.25 turns has turns 2.4 m apart for H = 3.0 m,
    # less than the storey height: the tightest point must be found, not assumed.
    p = _project([3.0, 3.0], turns=1.0)
    p = replace(p, design=replace(p.design, turns_per_storey=(1.25, 0.75)))
    h = build_helix(p)
    head = minimum_headroom(h, p.structure)
    assert head.gap == pytest.approx(3.0 / 1.25, abs=1e-9)
    assert head.clear == pytest.approx(2.4 - p.structure.depth, abs=1e-9)


heights = st.lists(st.floats(2.4, 6.0), min_size=1, max_size=5)


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(heights=heights, landing=st.floats(0.0, 5.0), transition=st.floats(0.0, 4.0),
       kind=st.sampled_from(["segment", "curve"]), fall=st.floats(-0.02, 0.02),
       layout=st.sampled_from(["single", "double", "concentric"]))
def test_alignment_properties(heights, landing, transition, kind, fall, layout):
    turns = 0.5 if layout == "double" else 1.0
    p = _project(heights, layout=layout, turns=turns, landing=landing, transition=transition,
                 kind=kind, fall=fall, cross_fall=0.03)
    try:
        h = build_helix(p)
    except ValueError:
        return  # landings and transitions longer than a storey: refused, not built
    levels = np.array([lv.level for lv in p.levels])
    for t in h.threads:
        prof = t.profile
        # Every connection lands on its floor within 1 mm.
        assert np.allclose(prof.level(prof.connections), levels, atol=1e-3)
        # The level is continuous at every breakpoint.
        left = prof.z0[:-1] + prof.k[:-1] * np.diff(prof.t)[:-1] + 0.5 * prof.q[:-1] * np.diff(prof.t)[:-1] ** 2
        assert np.allclose(left, prof.z0[1:], atol=1e-9)
        # Vertical curves make the grade continuous too; segments change it in steps.
        if kind == "curve" and transition > 1e-6:
            end_slope = prof.k[:-1] + prof.q[:-1] * np.diff(prof.t)[:-1]
            assert np.allclose(end_slope, prof.k[1:], atol=1e-9)
    # Headroom: the exact minimum is never beaten by a dense brute-force sampling,
    # and the sampling gets within 1 mm of it.
    head = minimum_headroom(h, p.structure)
    brute = math.inf
    for i, t in enumerate(h.threads):
        theta = np.linspace(t.profile.start, t.profile.end, 20001)
        for r in (t.inner_radius, t.centre_radius, t.outer_radius):
            clear, _, _ = headroom(h, p.structure, i, theta, r)
            brute = min(brute, float(np.min(clear)))
    if head is None:
        assert brute == math.inf
    else:
        assert head.clear <= brute + 1e-9
        assert brute - head.clear < 1e-3


def test_unequal_storeys_reach_every_floor_in_the_demo():
    ev = helix.evaluate(helix.load_project(DEMO))
    levels = [lv.level for lv in ev.project.levels]
    for t in ev.helix.threads:
        assert np.allclose(t.profile.level(t.profile.connections), levels, atol=1e-6)
    assert len(ev.helix.threads) == 2
    assert ev.headroom_at is not None


def test_pinned_bearings_refuse_inconsistent_turns(tmp_path):
    import yaml
    data = yaml.safe_load(open(DEMO))
    data["levels"][2]["bearing"] = "90 deg"  # the turns put Deck 2 at 0 deg
    f = tmp_path / "p.yaml"
    f.write_text(yaml.safe_dump(data))
    with pytest.raises(helix.InputError, match=r"levels\[2\]\.bearing"):
        helix.load_project(f)
    data["levels"][2]["bearing"] = "0 deg"
    f.write_text(yaml.safe_dump(data))
    helix.load_project(f)


def test_alternate_connections_require_half_turns(tmp_path):
    import yaml
    data = yaml.safe_load(open(DEMO))
    data["design"]["turns_per_storey"] = 1.0
    f = tmp_path / "p.yaml"
    f.write_text(yaml.safe_dump(data))
    with pytest.raises(helix.InputError, match="turns_per_storey"):
        helix.load_project(f)


def test_with_design_changes_only_the_design():
    p = helix.load_project("configs/demo-metric.yaml")
    q = with_design(p, centre_radius=10.0)
    assert q.design.centre_radius == 10.0 and q.levels == p.levels
    assert build_helix(q).threads[0].centre_radius == 10.0


def test_build_profile_refuses_landings_longer_than_the_storey():
    with pytest.raises(ValueError):
        build_profile([0.0, 3.0], [1.0], [1.2, 1.2], [0.0])
