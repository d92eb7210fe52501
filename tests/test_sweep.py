"""helix.sweep (the parameter study) against the full evaluation and closed forms."""
import math
from dataclasses import replace

import numpy as np
import pytest

import helix
from helix.project import Level
from helix.sweep import MAX_DESIGNS


def _replaced(p, radius, storey=None):
    if storey is not None:
        base = p.levels[0].level
        p = replace(p, levels=tuple(replace(lv, level=base + i * storey) for i, lv in enumerate(p.levels)))
    return replace(p, design=replace(p.design, centre_radius=radius))


@pytest.mark.parametrize("demo, radii, storeys", [
    ("demo-metric", [7.5, 9.0, 11.5], [2.8, 3.3]),
    ("demo-double", [10.0, 13.0], [3.0, 3.4]),
])
def test_sweep_equals_the_full_evaluation(demo, radii, storeys):
    # Reference: helix.evaluate of the same replaced project (the full check, itself
    # compared with brute force in tests/test_geometry.py and tests/test_vehicle.py).
    p = helix.load_project(helix.demo_file(demo))
    rows = helix.sweep(p, centre_radius=radii, storey_height=storeys)
    assert [(r["centre_radius"], r["storey_height"]) for r in rows] == [(a, b) for a in radii for b in storeys]
    for row in rows:
        ev = helix.evaluate(_replaced(p, row["centre_radius"], row["storey_height"]), vehicle=False)
        assert row["diameter"] == pytest.approx(ev.helix.overall_diameter, abs=1e-9)
        assert row["headroom"] == pytest.approx(ev.headroom.clear, abs=1e-9)
        for key, line in (("gradient_inner", "inner kerb"), ("gradient_centre", "centre line"),
                          ("gradient_outer", "outer kerb")):
            assert row[key] == pytest.approx(ev.max_gradient(line), abs=1e-9)
        screened = {c.id for c in ev.checks} & (set(row["failed"]) | {c.id for c in ev.checks if not c.ok})
        screened -= {"underbody_clearance", "roof_clearance", "approach_clear_height", "approach_roof_clearance"}
        assert set(row["failed"]) == {c for c in screened if not ev.check(c).ok}
        assert row["ok"] == (not row["failed"])


def test_sweep_gradient_is_pitch_over_circumference():
    # Common practice, no single source: on a constant-pitch helicoid without landings
    # or transitions the gradient at radius r is p / (2 pi r), p = H / t (worked here:
    # H = 3.0 m, t = 1, r = 10 m on the centre line: 3.0 / 62.83 = 4.775 %).
    p = helix.load_project(helix.demo_file("demo-metric"))
    p = replace(p, levels=tuple(Level(f"L{i}", 3.0 * i) for i in range(4)),
                design=replace(p.design, landing_length=0.0, transition_length=0.0,
                               turns_per_storey=(1.0,) * 3))
    row, = helix.sweep(p, centre_radius=[10.0])
    assert row["gradient_centre"] == pytest.approx(3.0 / (2 * math.pi * 10.0), rel=1e-12)
    assert row["gradient_centre"] == pytest.approx(0.04775, abs=5e-6)


def test_sweep_refuses_too_many_designs_and_bad_values():
    p = helix.load_project(helix.demo_file("demo-metric"))
    with pytest.raises(ValueError, match="at most"):
        helix.sweep(p, centre_radius=np.linspace(5, 20, 1000), storey_height=np.linspace(2.5, 4.0, MAX_DESIGNS // 1000 + 1))
    with pytest.raises(ValueError, match="centre_radius"):
        helix.sweep(p, centre_radius=[])
    with pytest.raises(ValueError, match="storey_height"):
        helix.sweep(p, storey_height=[3.0, -1.0])


def test_sweep_as_frame_or_a_clear_error():
    p = helix.load_project(helix.demo_file("demo-metric"))
    try:
        import pandas  # noqa: F401
    except ImportError:
        with pytest.raises(ImportError, match="pandas"):
            helix.sweep(p, centre_radius=[9.0], as_frame=True)
    else:
        frame = helix.sweep(p, centre_radius=[9.0, 10.0], as_frame=True)
        assert list(frame["centre_radius"]) == [9.0, 10.0]
