"""The plot as a polygon: the largest inscribed circle against a brute-force grid, the
polygon equal to the rectangle shorthand, a no-build zone that leaves no room, and bad
polygons refused with exit 2."""
import math
import re
from dataclasses import replace
from pathlib import Path

import pytest
import yaml
from hypothesis import example, given, settings, strategies as st

shapely = pytest.importorskip("shapely")

import helix  # noqa: E402
from helix.cli import main  # noqa: E402
from helix.plot import axis_of, best_axis, footprint_span, reach_at  # noqa: E402
from helix.project import NoBuild, Site  # noqa: E402
from helix.search import design, search_layout  # noqa: E402

CONFIGS = Path(__file__).resolve().parent.parent / "configs"


def _star(radii, cx=20.0, cy=20.0):
    """A simple (star-shaped) polygon: vertices at increasing angles round (cx, cy)."""
    n = len(radii)
    return tuple((cx + r * math.cos(2 * math.pi * k / n), cy + r * math.sin(2 * math.pi * k / n))
                 for k, r in enumerate(radii))


@settings(max_examples=25, deadline=None)
@given(st.lists(st.floats(4.0, 18.0), min_size=3, max_size=9), st.floats(0.0, 1.5),
       st.booleans())
# A subnormal setback once made the allowed region empty: "no room" for a 5.2 m circle.
@example(radii=[7.012295760805667, 12.0, 14.0], setback=7.0106300775920615e-286, with_zone=False)
def test_largest_inscribed_circle_against_a_grid(radii, setback, with_zone):
    # Reference: a general-purpose geometry library (shapely/GEOS distance) over a dense
    # grid of candidate centres. Common practice, no single source.
    pts = _star(radii)
    zones = (NoBuild("column", centre=(22.0, 21.0), radius=0.8),) if with_zone else ()
    site = Site(40.0, 40.0, setback, boundary=helix.plot.anticlockwise(pts), no_build=zones)
    poly = shapely.Polygon(pts)
    step = 0.25
    xs = [i * step for i in range(int(40 / step) + 1)]
    grid_best = -math.inf
    for x in xs:
        for y in xs:
            p = shapely.Point(x, y)
            if not poly.contains(p):
                continue
            d = poly.exterior.distance(p) - setback
            if with_zone:
                d = min(d, p.distance(shapely.Point(22.0, 21.0)) - 0.8)
            grid_best = max(grid_best, d)
    ax = best_axis(site)
    if grid_best <= 0:
        return
    # Never worse than the grid by more than the grid step (the grid's own error bound).
    assert ax.reach >= grid_best - step
    assert ax.upper >= grid_best - 1e-9  # the certified upper bound holds too
    # The circle really fits: inside the plot less the setback, clear of the zone.
    c = shapely.Point(ax.x, ax.y)
    assert poly.contains(c) and poly.exterior.distance(c) >= ax.reach + setback - 1e-9
    if with_zone:
        assert c.distance(shapely.Point(22.0, 21.0)) - 0.8 >= ax.reach - 1e-9
    assert reach_at(site, ax.x, ax.y)[0] == pytest.approx(ax.reach, abs=1e-12)


def test_polygon_equal_to_the_rectangle_gives_the_same_search():
    # The rectangle shorthand (today's rule) is the reference.
    rect = helix.load_project(CONFIGS / "demo-search.yaml")
    s = rect.site
    poly_site = Site(s.width, s.depth, s.margin, s.grid,
                     boundary=((0.0, 0.0), (s.width, 0.0), (s.width, s.depth), (0.0, s.depth)))
    poly = replace(rect, site=poly_site)
    # Worked by hand: the 26 m x 30 m plot less 0.3 m each side holds a 25.4 m circle.
    assert footprint_span(s) == pytest.approx(26.0 - 0.6, abs=1e-12)
    assert footprint_span(poly_site) == pytest.approx(26.0 - 0.6, abs=2 * helix.plot.TOLERANCE)
    for layout in ("single-two-way", "double"):
        a, b = search_layout(rect, layout), search_layout(poly, layout)
        assert a.feasible == b.feasible
        if a.feasible:
            assert a.family == b.family
            assert b.radius == pytest.approx(a.radius, abs=1e-3)


def test_a_zone_on_the_only_spot_makes_the_layout_fail_with_an_explanation():
    rect = helix.load_project(CONFIGS / "demo-search.yaml")
    s = rect.site
    # A lift shaft in the middle of the 26 m plot: a 25.2 m helix fits nowhere beside it.
    blocked = replace(s, no_build=(NoBuild("lift shaft", centre=(13.0, 15.0), radius=1.5),))
    project = replace(rect, site=blocked, search=replace(rect.search, layouts=("single-two-way",)))
    assert 2 * axis_of(blocked).reach < 25.0
    res = design(project)
    assert res.best is None
    (opt,) = res.options
    foot = [e for e in opt.explanation if e["constraint"] == "footprint"]
    assert foot and "allowed region" in foot[0]["change"] and "limited by" in foot[0]["change"]
    ev = opt.evaluation
    check = {c.id: c for c in ev.checks}["footprint"]
    assert not check.ok and "spare" in check.where and "lift shaft" in check.where


def _write(tmp_path, site):
    data = yaml.safe_load((CONFIGS / "demo-lshaped.yaml").read_text())
    data["site"] = site
    path = tmp_path / "bad.yaml"
    path.write_text(yaml.safe_dump(data, sort_keys=False))
    return path


@pytest.mark.parametrize("site, path, fragment", [
    ({"boundary": [[0, 0], [10, 10], [10, 0], [0, 10]]}, "site.boundary", "cross"),
    ({"boundary": [[0, 0], [10, 0]]}, "site.boundary", "3 to"),
    ({"boundary": [[0, 0], [5, 0], [10, 0]]}, "site.boundary", "no area"),
    ({"boundary": [[0, 0], [-5, 0], [10, 10]]}, "site.boundary[1][0]", "zero or more"),
    ({"boundary": [[0, 0], [40, 0], [40, 40]], "width": 40}, "site.width", "not both"),
    ({"boundary": [[0, 0], [40, 0], [40, 40], [0, 40]],
      "no_build": [{"name": "c", "polygon": [[1, 1], [3, 3], [3, 1], [1, 3]]}]}, "site.no_build[0].polygon", "cross"),
    ({"boundary": [[0, 0], [40, 0], [40, 40], [0, 40]], "axis": [50, 50]}, "site.axis", "inside the plot"),
])
def test_bad_polygons_exit_2_with_position_and_key_path(tmp_path, capsys, site, path, fragment):
    bad = _write(tmp_path, site)
    out = tmp_path / "out"
    assert main(["design", str(bad), "-o", str(out)]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1
    assert re.match(rf"helix: error: {re.escape(str(bad))}:\d+:\d+: {re.escape(path)}:", err[0]), err[0]
    assert fragment in err[0]
    assert not out.exists()


def test_the_lshaped_demo_places_the_axis_in_the_allowed_region():
    p = helix.load_project(CONFIGS / "demo-lshaped.yaml")
    ax = axis_of(p.site)
    # Worked by hand: the lower-left 30 m x 17 m arm plus the 30 m-wide upper arm; with a 1 m
    # setback no circle is wider than the 28 m between the setback lines at x = 1 and 29.
    assert ax.reach <= 14.0 + 1e-9 and ax.reach > 12.61


def test_a_polygon_without_shapely_names_the_extra(tmp_path, capsys, monkeypatch):
    import sys
    monkeypatch.setitem(sys.modules, "shapely", None)  # import shapely now raises ImportError
    path = CONFIGS / "demo-lshaped.yaml"
    assert main(["design", str(path), "-o", str(tmp_path / "out")]) == 2
    (line,) = capsys.readouterr().err.strip().splitlines()
    assert "site.boundary" in line and "helix-ramp-planner[plots]" in line
    # The rectangle shorthand needs no shapely.
    rect = helix.load_project(CONFIGS / "demo-search.yaml")
    assert footprint_span(rect.site) == min(rect.site.usable)
    assert axis_of(rect.site).x == 0.5 * rect.site.width
