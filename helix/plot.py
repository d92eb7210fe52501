"""The plot: where the helix axis may go and how much room is spare around it.

The helix needs a circle of its structure radius ``R_o`` (outer lanes, the rule set's
structure clearance outside, the outer wall) inside the *allowed region*: the plot
offset inward by its setback, less the no-build zones.  The zones are not grown: the
structure clearance outside is already inside ``R_o`` (a column or a core is
structure), and the setback is a line on the plot boundary, not around a column.

For a centre ``c`` the *reach* is the largest circle that fits there,

    reach(c) = min(dist(c, plot boundary) - setback, dist(c, each zone))

(negative outside the plot or inside a zone), computed exactly with shapely's
distance.  A circle of radius ``R_o`` fits at ``c`` if and only if
``reach(c) >= R_o``; so the best centre, for every radius at once, is the centre of
the largest inscribed circle of the allowed region (its pole of inaccessibility).
The footprint margin of the search is ``2 (reach(axis) - R_o)``, a diameter like the
rectangle's ``min(width, depth) - 2 margin - D``, and monotone in the radius.

The rectangle shorthand (``width``, ``depth``, ``margin``, no zones, no pinned axis)
never touches shapely: its axis is the plot's centre and its reach
``min(width, depth) / 2 - margin``, today's rule.

References
----------
Garcia-Castellanos, D., Lombardo, U. (2007). Poles of inaccessibility: a calculation
algorithm for the remotest places on earth. Scottish Geographical Journal 123(3).
(The grid-refinement idea behind GEOS ``MaximumInscribedCircle``, which
:func:`best_axis` calls through shapely and then certifies.)
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from functools import lru_cache
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:  # pragma: no cover
    from .project import Site

__all__ = ["TOLERANCE", "EXTRA", "Axis", "axis_of", "best_axis", "reach_at", "footprint_span", "needs_shapely",
           "nearest_limit", "setback_outline", "zone_outline", "anticlockwise",
           "shapely_missing", "polygon_problem"]

#: Tolerance of the largest inscribed circle (m): the certified reach at the chosen
#: centre is at most this much (plus the arc approximation below) short of the best.
TOLERANCE = 1e-4
#: Segments per quarter circle where a circular zone or a rounded setback corner is
#: approximated to *find* the centre (the reach itself is computed exactly).
_QUAD_SEGS = 128
#: The optional dependency group that brings shapely.
EXTRA = "plots"


@dataclass(frozen=True)
class Axis:
    """Where the helix axis stands and how far the allowed region reaches from it."""

    x: float
    y: float
    reach: float  # exact: the largest circle centred here that fits (m)
    nearest: str  # what limits it: "the plot boundary (setback)" or "no-build zone 'C3'"
    pinned: bool  # given by site.axis
    upper: float  # no centre reaches further than this (reach + tolerance bound); = reach when exact


def needs_shapely(site: Site) -> bool:
    """A polygon or a zone needs shapely; the rectangle (with or without a pinned axis) does not."""
    return site.boundary is not None or bool(site.no_build)


def shapely_missing() -> str | None:
    """None if shapely imports, else the one-line reason naming the extra."""
    try:
        import shapely  # noqa: F401
    except ImportError:
        return (f"a polygonal site (boundary or no_build) needs shapely: pip install "
                f"'helix-ramp-planner[{EXTRA}]'")
    return None


def _rect_reach(site: Site, x: float, y: float) -> tuple[float, str]:
    m = site.margin
    return min(x - m, site.width - m - x, y - m, site.depth - m - y), "the plot boundary (margin)"


@lru_cache(maxsize=64)
def _geometry(site: Site) -> tuple[Any, list[tuple[str, Any, float]]]:
    """The plot polygon and each zone as (name, shapely geometry, grow): a circle zone is
    its centre point with grow = radius, so its distance is exact."""
    import shapely
    pts = site.boundary if site.boundary is not None else (
        (0.0, 0.0), (site.width, 0.0), (site.width, site.depth), (0.0, site.depth))
    plot = shapely.Polygon(pts)
    zones = []
    for z in site.no_build:
        if z.polygon is not None:
            zones.append((z.name, shapely.Polygon(z.polygon), 0.0))
        else:
            assert z.centre is not None
            zones.append((z.name, shapely.Point(z.centre), z.radius))
    return plot, zones


def reach_at(site: Site, x: float, y: float) -> tuple[float, str]:
    """The exact reach of the allowed region from ``(x, y)`` and what limits it."""
    if not needs_shapely(site):
        return _rect_reach(site, x, y)
    import shapely
    plot, zones = _geometry(site)
    p = shapely.Point(x, y)
    d = float(shapely.distance(p, plot.exterior))
    best = (d - site.margin if plot.covers(p) else -d - site.margin, "the plot boundary (setback)")
    for name, g, grow in zones:
        if grow > 0:
            dz = float(shapely.distance(p, g)) - grow
        else:
            inside = g.covers(p)
            dz = float(shapely.distance(p, g.exterior))
            dz = -dz if inside else dz
        if dz < best[0]:
            best = (dz, f"no-build zone '{name}'")
    return best


@lru_cache(maxsize=64)
def axis_of(site: Site) -> Axis:
    """The helix axis: the pinned one, the rectangle's centre, or the centre of the
    largest circle inside the allowed region (certified by :func:`reach_at`)."""
    if site.axis is not None:
        r, near = reach_at(site, *site.axis)
        return Axis(site.axis[0], site.axis[1], r, near, True, r)
    if not needs_shapely(site):
        x, y = 0.5 * site.width, 0.5 * site.depth
        r, near = _rect_reach(site, x, y)
        return Axis(x, y, r, near, False, r)
    return best_axis(site)


#: Smallest setback worth buffering by, m (a nanometre; far below any drawing tolerance).
MIN_SETBACK = 1e-9


def _region(site: Site) -> Any:
    """The allowed region, approximated from outside (chords of rounded setback corners
    and of circular zones lie inside the true curves), to find the centre only."""
    import shapely
    plot, zones = _geometry(site)
    # GEOS returns an empty polygon for an inward buffer of a subnormal distance (7e-286 m):
    # a setback below MIN_SETBACK is taken as none here.  That region contains the true
    # one, so the centre found in it is still re-measured exactly and ``upper`` still bounds.
    region = plot.buffer(-site.margin, quad_segs=_QUAD_SEGS) if site.margin > MIN_SETBACK else plot
    for _name, g, grow in zones:
        region = region.difference(g.buffer(grow, quad_segs=_QUAD_SEGS) if grow > 0 else g)
    return region


def best_axis(site: Site) -> Axis:
    """Centre of the largest inscribed circle of the allowed region (GEOS
    ``MaximumInscribedCircle`` through shapely, tolerance :data:`TOLERANCE`), with its
    reach recomputed exactly there.  ``upper`` bounds the best reach of any centre: the
    approximate region contains the true one, so its circle plus the tolerance does."""
    import shapely
    region = _region(site)
    if region.is_empty or region.area <= 0:
        return Axis(math.nan, math.nan, -math.inf, "the setback and the no-build zones leave no room",
                    False, -math.inf)
    parts = list(getattr(region, "geoms", [region]))
    best: Axis | None = None
    upper = -math.inf
    for part in parts:
        line = shapely.maximum_inscribed_circle(part, TOLERANCE)
        (cx, cy), (ex, ey) = line.coords[0], line.coords[1]
        upper = max(upper, math.hypot(ex - cx, ey - cy) + TOLERANCE)
        r, near = reach_at(site, cx, cy)
        if best is None or r > best.reach:
            best = Axis(cx, cy, r, near, False, 0.0)
    assert best is not None
    return Axis(best.x, best.y, best.reach, best.nearest, False, max(upper, best.reach))


def footprint_span(site: Site) -> float:
    """The largest structure diameter the plot takes at the helix axis: ``min(usable)``
    for the rectangle shorthand, else twice the exact reach at the axis."""
    if not needs_shapely(site) and site.axis is None:
        return min(site.usable)
    return 2.0 * axis_of(site).reach


def polygon_problem(points: tuple[tuple[float, float], ...]) -> str | None:
    """Why ``points`` is not a simple polygon of non-zero area, or None (needs shapely)."""
    import shapely
    if len(points) < 3:
        return f"got {len(points)} vertices; expected at least 3"
    poly = shapely.Polygon(points)
    if shapely.MultiPoint(points).convex_hull.area <= 1e-9:
        return "the polygon has no area (its vertices lie on one line)"
    if not poly.is_valid or abs(_shoelace(points)) <= 1e-9:
        return "the edges cross or touch (expected a simple polygon, vertices in order round it)"
    return None


def anticlockwise(points: tuple[tuple[float, float], ...]) -> tuple[tuple[float, float], ...]:
    """The vertices in anticlockwise order (the shoelace area positive)."""
    return points if _shoelace(points) > 0 else tuple(reversed(points))


def _shoelace(points: tuple[tuple[float, float], ...]) -> float:
    """Signed area (anticlockwise positive)."""
    return 0.5 * sum(x0 * y1 - x1 * y0 for (x0, y0), (x1, y1) in zip(points, points[1:] + points[:1]))


def nearest_limit(site: Site, x: float, y: float) -> tuple[float, float]:
    """The point of the allowed region's edge nearest ``(x, y)`` (on the setback line or
    a zone's edge), where the spare distance is measured to; for the plan."""
    if not needs_shapely(site):
        m = site.margin
        options = [(x - m, (m, y)), (site.width - m - x, (site.width - m, y)),
                   (y - m, (x, m)), (site.depth - m - y, (x, site.depth - m))]
        return min(options)[1]
    import shapely
    from shapely.ops import nearest_points
    plot, zones = _geometry(site)
    p = shapely.Point(x, y)
    d, name = reach_at(site, x, y)
    geoms = [(f"no-build zone '{n}'", g, grow) for n, g, grow in zones] + [
        ("the plot boundary (setback)", plot.exterior, -site.margin)]
    for label, g, grow in geoms:
        if label != name:
            continue
        q = nearest_points(p, g.exterior if hasattr(g, "exterior") else g)[1]
        dist = math.hypot(q.x - x, q.y - y)
        if dist == 0:
            return (x, y)
        k = (dist + grow) / dist if grow > 0 else (dist - site.margin) / dist if grow < 0 else 1.0
        return (x + (q.x - x) * k, y + (q.y - y) * k)
    return (x, y)  # pragma: no cover - the nearest limit is one of the above


def setback_outline(site: Site) -> list[list[tuple[float, float]]]:
    """The setback line (the plot boundary offset inward) as rings, for the plan."""
    import shapely
    plot, _ = _geometry(site)
    inner = plot.buffer(-site.margin, quad_segs=16)
    return [list(part.exterior.coords) for part in getattr(inner, "geoms", [inner]) if not part.is_empty]


def zone_outline(zone: Any, segments: int = 96) -> list[tuple[float, float]]:
    """A no-build zone's outline as vertices, for drawing."""
    if zone.polygon is not None:
        return list(zone.polygon)
    cx, cy = zone.centre
    return [(cx + zone.radius * math.cos(2 * math.pi * k / segments),
             cy + zone.radius * math.sin(2 * math.pi * k / segments)) for k in range(segments)]
