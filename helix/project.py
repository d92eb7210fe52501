"""The project file: levels, structure, site, traffic, vehicle, rules and design.

:func:`load_project` reads a YAML file (``yaml.safe_load``), converts every quantity
to SI once, checks every key, and returns a frozen :class:`Project`.  Any problem
raises :class:`~helix.errors.InputError` naming the file and the key path.

>>> from helix import demo_file
>>> p = load_project(demo_file("demo-imperial"))
>>> p.units, p.storeys
('imperial', 3)
"""
from __future__ import annotations

import math
from dataclasses import dataclass, replace
from pathlib import Path

from .approach import Approach, parse_approach
from . import units
from .assumptions import ComparisonAssumptions
from .errors import MAX_LENGTH, MAX_NAME, InputError, InvalidValue, Node, finite, require
from .library_files import read_yaml
from .rules import RuleSet, load_rule_set
from . import plot
from .site_grid import SiteGrid
from .vehicle import Vehicle, load_vehicle

__all__ = ["Level", "Structure", "Site", "Drawing", "DesignSpec", "SearchSpace", "Project", "NoBuild", "load_project",
           "DEFAULT_RULE_SET", "DEFAULT_VEHICLE", "MAX_LEVELS"]

#: Most levels one helix may serve: the tallest car parks have a few dozen; the limit
#: bounds the work (which grows linearly with the levels, see benchmarks/levels.py).
MAX_LEVELS = 200
#: Smallest storey height: levels closer than this are one level written twice.
MIN_STOREY = 0.001
#: Longest thread, in plan along its centre line (200 storeys of one turn at 9 m are
#: 11 km): the work of the vehicle and headroom checks grows linearly with this length.
MAX_THREAD_LENGTH = 50_000.0

DEFAULT_RULE_SET = "conservative-default"
DEFAULT_VEHICLE = "aashto-p"
TRAFFIC = ("one-way", "two-way")
LAYOUT_CHOICES = ("single", "double", "concentric")
TRANSITION_KINDS = ("segment", "curve")
CONNECTION_CHOICES = ("free", "same_side", "alternate")


@dataclass(frozen=True)
class Level:
    name: str
    level: float  # finished floor level at the helix connection, m
    bearing: float | None = None  # pinned plan bearing of the connection, rad
    approach: Approach | None = None  # how the floor's aisle meets the helix (None: design's)

    def __post_init__(self):
        require(isinstance(self.name, str) and 0 < len(self.name.strip()) <= MAX_NAME, self, "name", self.name,
                f"a name of 1 to {MAX_NAME} characters")
        require(finite(self.level), self, "level", self.level, "a finite level in metres")
        require(self.bearing is None or finite(self.bearing), self, "bearing", self.bearing,
                "None or a finite plan bearing in radians")


@dataclass(frozen=True)
class Structure:
    """What lies between one running surface and the clear space under it."""

    slab_depth: float
    hanging_depth: float = 0.0  # downstand beams, services, signs below the slab
    wall_thickness: float = 0.0  # outer wall of the helix
    cover_soffit: float | None = None  # underside of a roof or deck over the helix

    def __post_init__(self):
        require(finite(self.slab_depth, 0, MAX_LENGTH, open_low=True), self, "slab_depth", self.slab_depth,
                "a positive depth in metres")
        for key in ("hanging_depth", "wall_thickness"):
            require(finite(getattr(self, key), 0, MAX_LENGTH), self, key, getattr(self, key),
                    "a depth of zero or more in metres")
        require(self.cover_soffit is None or finite(self.cover_soffit), self, "cover_soffit", self.cover_soffit,
                "None or a finite level in metres")

    @property
    def depth(self) -> float:
        """Structural depth to subtract from a stacked gap to get clear headroom."""
        return self.slab_depth + self.hanging_depth


Point = tuple[float, float]


@dataclass(frozen=True)
class NoBuild:
    """A zone of the plot the helix must keep out of: a polygon or a circle (a column, a
    core, a lift shaft)."""

    name: str
    polygon: tuple[Point, ...] | None = None  # anticlockwise
    centre: Point | None = None
    radius: float = 0.0

    def __post_init__(self):
        require((self.polygon is None) != (self.centre is None), self, "polygon", self.polygon,
                "either a polygon or a circle's centre")
        require(self.centre is None or finite(self.radius, 0, MAX_LENGTH, open_low=True), self, "radius",
                self.radius, "a positive radius in metres")


@dataclass(frozen=True)
class Site:
    width: float  # along plan x (a polygon's largest x)
    depth: float  # along plan y (a polygon's largest y)
    margin: float = 0.0  # kept clear inside the footprint edges (site.margin or site.setback)
    grid: SiteGrid = SiteGrid()  # the survey grid the setting-out is given in
    boundary: tuple[Point, ...] | None = None  # the plot as a polygon, anticlockwise; None: the rectangle
    no_build: tuple[NoBuild, ...] = ()
    axis: Point | None = None  # the helix axis, pinned; None: the best place (helix.plot)

    def __post_init__(self):
        require(isinstance(self.grid, SiteGrid), self, "grid", self.grid, "a SiteGrid")
        require(self.boundary is None or (len(self.boundary) >= 3 and all(
            finite(x, 0, MAX_LENGTH) and finite(y, 0, MAX_LENGTH) for x, y in self.boundary)), self, "boundary",
            self.boundary, "at least 3 vertices with coordinates from 0 to 1000 m")
        require(all(isinstance(z, NoBuild) for z in self.no_build), self, "no_build", self.no_build,
                "NoBuild zones")
        require(self.axis is None or all(finite(v) for v in self.axis), self, "axis", self.axis,
                "None or a finite point")
        for key in ("width", "depth"):
            require(finite(getattr(self, key), 0, MAX_LENGTH, open_low=True), self, key, getattr(self, key),
                    "a positive length in metres")
        require(finite(self.margin, 0) and 2 * self.margin < min(self.width, self.depth), self, "margin",
                self.margin, "a margin of zero or more, smaller than half the footprint")

    @property
    def usable(self) -> tuple[float, float]:
        return (self.width - 2 * self.margin, self.depth - 2 * self.margin)

    @property
    def is_rectangle(self) -> bool:
        """The width x depth shorthand, with no zones (the helix's plan is then today's)."""
        return self.boundary is None and not self.no_build


@dataclass(frozen=True)
class Drawing:
    """Title-block fields of the drawing sheets, as written (blank: filled in by hand).
    ``number`` is the drawing-number prefix; each sheet appends its own two digits."""

    number: str = ""
    revision: str = ""
    date: str = ""
    drawn: str = ""
    checked: str = ""

    def __post_init__(self):
        for key in DRAWING_KEYS:
            value = getattr(self, key)
            require(isinstance(value, str) and len(value) <= MAX_NAME, self, key, value,
                    f"text of at most {MAX_NAME} characters")


DRAWING_KEYS = ("number", "revision", "date", "drawn", "checked")


@dataclass(frozen=True)
class DesignSpec:
    """A fully specified helix (later: or search ranges)."""

    layout: str
    centre_radius: float
    lane_widths: tuple[float, ...]
    turns_per_storey: tuple[float, ...]
    central_kerb: float
    divider: float
    hand: int
    start_bearing: float
    landing_length: float | None
    transition_length: float | None
    transition_kind: str
    cross_fall: float | None
    cross_fall_inward: bool
    landing_fall: float = 0.0  # grade of the landings along the ascent (drainage)
    transition_auto: bool = False  # size transitions for the design vehicle
    connections: str = "free"  # "free", "same_side" or "alternate"
    keep_right: bool = True  # two-way traffic keeps right
    approach: Approach = Approach()  # every floor's aisle, unless its level says otherwise

    def __post_init__(self):
        require(self.layout in LAYOUT_CHOICES, self, "layout", self.layout, f"one of {', '.join(LAYOUT_CHOICES)}")
        require(finite(self.centre_radius, 0, MAX_LENGTH, open_low=True), self, "centre_radius",
                self.centre_radius, "a positive radius in metres")
        require(isinstance(self.lane_widths, tuple) and len(self.lane_widths) in (1, 2) and
                all(finite(w, 0, MAX_LENGTH, open_low=True) for w in self.lane_widths), self, "lane_widths",
                self.lane_widths, "one or two positive widths in metres")
        require(isinstance(self.turns_per_storey, tuple) and len(self.turns_per_storey) >= 1 and
                all(finite(t, 0, 20, open_low=True) for t in self.turns_per_storey), self, "turns_per_storey",
                self.turns_per_storey, "positive turns, at most 20, one per storey")
        for key in ("central_kerb", "divider"):
            require(finite(getattr(self, key), 0, MAX_LENGTH), self, key, getattr(self, key),
                    "a width of zero or more in metres")
        require(self.hand in (1, -1), self, "hand", self.hand, "1 (anticlockwise) or -1 (clockwise)")
        require(finite(self.start_bearing), self, "start_bearing", self.start_bearing, "a finite angle in radians")
        for key in ("landing_length", "transition_length"):
            v = getattr(self, key)
            require(v is None or finite(v, 0, MAX_LENGTH), self, key, v, "None or a length of zero or more")
        require(self.transition_kind in TRANSITION_KINDS, self, "transition_kind", self.transition_kind,
                f"one of {', '.join(TRANSITION_KINDS)}")
        require(self.cross_fall is None or finite(self.cross_fall, 0, 1), self, "cross_fall", self.cross_fall,
                "None or a cross-fall from 0 to 1 (100 %)")
        require(finite(self.landing_fall, -1, 1), self, "landing_fall", self.landing_fall,
                "a fall from -1 to 1 (100 %)")
        require(self.connections in CONNECTION_CHOICES, self, "connections", self.connections,
                f"one of {', '.join(CONNECTION_CHOICES)}")

    @property
    def carriageway_width(self) -> float:
        return sum(self.lane_widths) + (self.central_kerb if len(self.lane_widths) > 1 else 0.0)


SEARCH_LAYOUTS = ("single-one-way", "single-two-way", "double", "concentric")
OBJECTIVES = ("footprint", "gradient", "drive", "headroom")


@dataclass(frozen=True)
class SearchSpace:
    """What ``helix design`` may vary.  A value fixed in the project file is a range of
    one; ``lane_widths`` is ``None`` for "auto" (the larger of the rule minimum and the
    vehicle's swept requirement)."""

    layouts: tuple[str, ...]
    radius_min: float
    radius_max: float
    turns_choices: tuple[float, ...] | None  # None: the fixed turns of the design, storey by storey
    lane_widths: tuple[float, ...] | None
    target_gradient: float | None
    objective: str
    fixed: bool  # the design section gives one fully specified helix
    turns_free: bool = False  # no turns given: each layout's usual turns, storey by storey
    range_from_plot: bool = False  # the radius range was derived from the plot, not given


@dataclass(frozen=True)
class Project:
    """A checked project file, everything in SI: levels, structure, site, traffic, the
    design vehicle, the rule set, the design and (for ``helix design``) its search space.

    Made by :func:`load_project`; each field is checked again when built from Python
    (e.g. with :func:`dataclasses.replace`), so no path builds what the loader refuses.

    >>> import dataclasses, helix
    >>> p = helix.load_project(helix.demo_file("demo-metric"))
    >>> p
    <Project 'Millbrook Street car park (invented demo)': 4 storeys, one-way, single helix, radius 9.000 m, 1 turns per storey; rules istructe-2011, vehicle aashto-p>
    >>> p.storeys, p.rules.name, p.vehicle.name
    (4, 'istructe-2011', 'aashto-p')
    >>> dataclasses.replace(p, traffic="sideways")
    Traceback (most recent call last):
    ...
    helix.errors.InvalidValue: Project: traffic: got 'sideways'; expected one of one-way, two-way
    """

    name: str
    notes: str
    file: str
    units: str
    levels: tuple[Level, ...]
    structure: Structure
    site: Site
    traffic: str
    vehicle: Vehicle
    rules: RuleSet
    design: DesignSpec
    search: SearchSpace | None = None
    comparison: ComparisonAssumptions = ComparisonAssumptions()
    drawing: Drawing = Drawing()

    def __post_init__(self):
        require(isinstance(self.drawing, Drawing), self, "drawing", self.drawing, "a Drawing")
        require(isinstance(self.name, str) and 0 < len(self.name.strip()) <= MAX_NAME, self, "name", self.name,
                f"a name of 1 to {MAX_NAME} characters")
        require(self.units in ("metric", "imperial"), self, "units", self.units, "metric or imperial")
        require(self.traffic in TRAFFIC, self, "traffic", self.traffic, f"one of {', '.join(TRAFFIC)}")
        levels = self.levels
        require(isinstance(levels, tuple) and 2 <= len(levels) <= MAX_LEVELS and
                all(isinstance(lv, Level) for lv in levels), self, "levels", levels,
                f"a tuple of 2 to {MAX_LEVELS} Level")
        require(all(b.level > a.level for a, b in zip(levels, levels[1:])), self, "levels",
                [lv.level for lv in levels], "levels in strictly ascending order")
        require(len({lv.name for lv in levels}) == len(levels), self, "levels", [lv.name for lv in levels],
                "a different name for each level")
        for key, kind in (("structure", Structure), ("site", Site), ("vehicle", Vehicle), ("rules", RuleSet),
                          ("design", DesignSpec)):
            require(isinstance(getattr(self, key), kind), self, key, getattr(self, key), f"a {kind.__name__}")
        require(len(self.design.turns_per_storey) == len(levels) - 1, self, "design.turns_per_storey",
                self.design.turns_per_storey, f"one value per storey ({len(levels) - 1})")
        require(self.structure.cover_soffit is None or self.structure.cover_soffit > levels[-1].level, self,
                "structure.cover_soffit", self.structure.cover_soffit, "a soffit above the top level")

    def __repr__(self) -> str:
        from .notebook import project_repr
        return project_repr(self)

    def _repr_html_(self) -> str:
        from .notebook import project_html
        return project_html(self)

    @property
    def storey_heights(self) -> tuple[float, ...]:
        return tuple(b.level - a.level for a, b in zip(self.levels, self.levels[1:]))

    @property
    def storeys(self) -> int:
        return len(self.levels) - 1


def _levels(node: Node) -> tuple[tuple[Level, ...], bool]:
    if isinstance(node.data, list) and len(node.data) > MAX_LEVELS:
        raise node.error(f"got {len(node.data)} levels; expected at most {MAX_LEVELS}")
    items = list(node.items())
    if len(items) < 2:
        raise node.error(f"got {len(items)} level(s); expected a list of at least two levels")
    levels: list[Level] = []
    imperial = False
    names: set[str] = set()
    for i, item in enumerate(items):
        item.require_mapping()
        name_node = item.child("name")
        name = str(name_node.data).strip() if isinstance(name_node.data, (int, float)) \
            and not isinstance(name_node.data, bool) else name_node.text(max_chars=MAX_NAME)
        if not name:
            raise name_node.error("got an empty name; expected the level's name, e.g. 'Level 2'")
        if name in names:
            raise name_node.error(f"got {name!r} twice; expected a different name for each level")
        names.add(name)
        lv = item.child("level", required=False)
        ht = item.child("height", required=False)
        if lv is not None and ht is not None:
            raise item.error("got both 'level' and 'height'; expected one of them")
        if i == 0:
            if ht is not None:
                raise ht.error("the first level has no storey below it; expected 'level' (e.g. '0.00 m')")
            z = lv.length() if lv is not None else 0.0
            imperial |= lv is not None and lv.is_imperial_length()
        elif ht is not None:
            z = levels[-1].level + ht.length(positive=True)
            imperial |= ht.is_imperial_length()
            if not z >= levels[-1].level + MIN_STOREY:
                raise ht.error(f"got {ht.data!r}; expected a storey height of at least {1000 * MIN_STOREY:g} mm")
        elif lv is not None:
            z = lv.length()
            imperial |= lv.is_imperial_length()
            if not z >= levels[-1].level + MIN_STOREY:
                raise lv.error(f"got {lv.data!r}, not above {levels[-1].name}; "
                               "expected levels in ascending order")
        else:
            raise item.error("missing key 'level' or 'height'; expected a floor level or a storey height")
        bn = item.child("bearing", required=False)
        an = item.child("approach", required=False)
        approach = parse_approach(an) if an is not None else None
        item.done(section="level")
        levels.append(Level(name, z, bn.angle() if bn is not None else None, approach))
    return tuple(levels), imperial


def _structure(node: Node) -> Structure:
    node.require_mapping()
    slab = node.child("slab_depth").length(positive=True)
    hang = node.child("hanging_depth", required=False)
    wall = node.child("wall_thickness", required=False)
    cover = node.child("cover_soffit", required=False)
    node.done(section="structure")
    return Structure(slab_depth=slab,
                     hanging_depth=hang.length(non_negative=True) if hang else 0.0,
                     wall_thickness=wall.length(non_negative=True) if wall else 0.0,
                     cover_soffit=cover.length() if cover else None)


def _site(node: Node) -> Site:
    """``site``: the rectangle ``width`` x ``depth`` (with ``margin``), or a polygon
    ``boundary`` (with ``setback``); optional ``no_build`` zones and a pinned ``axis``."""
    node.require_mapping()
    boundary_node = node.child("boundary", required=False)
    zones_node = node.child("no_build", required=False)
    if (boundary_node is not None or zones_node is not None) and (why := plot.shapely_missing()):
        raise (boundary_node or zones_node).error(why)  # type: ignore[union-attr]
    boundary = None
    if boundary_node is not None:
        for key in ("width", "depth"):
            if (extra := node.child(key, required=False)) is not None:
                raise extra.error("expected either width and depth (a rectangle) or boundary (a polygon), not both")
        boundary = _polygon(boundary_node, "the plot boundary")
        width = max(x for x, _ in boundary)
        depth = max(y for _, y in boundary)
    else:
        width = node.child("width").length(positive=True)
        depth = node.child("depth").length(positive=True)
    margin_node = node.child("margin", required=False)
    setback_node = node.child("setback", required=False)
    if margin_node is not None and setback_node is not None:
        raise setback_node.error("expected margin or setback (the same distance), not both")
    margin_node = margin_node or setback_node
    margin = margin_node.length(non_negative=True) if margin_node else 0.0
    if 2 * margin >= min(width, depth):
        raise margin_node.error(f"got {margin_node.data!r}; expected a margin smaller than half the "  # type: ignore[union-attr]
                                f"footprint ({min(width, depth) / 2:.2f} m)")
    zones = _no_build(zones_node)
    axis_node = node.child("axis", required=False)
    axis = _point(axis_node, "[x, y] of the helix axis, e.g. [12 m, 14 m]") if axis_node is not None else None
    grid = _site_grid(node.child("grid", required=False))
    node.done(section="site")
    site = Site(width, depth, margin, grid, boundary, zones, axis)
    if axis is not None and plot.reach_at(site, *axis)[0] <= 0:
        raise axis_node.error(f"got {units.short_repr(axis_node.data, 60)}; expected a point inside the plot, "  # type: ignore[union-attr]
                              "clear of its setback and of the no-build zones")
    if not site.is_rectangle and site.axis is None and plot.axis_of(site).reach <= 0:
        raise (boundary_node or zones_node).error(  # type: ignore[union-attr]
            "the setback and the no-build zones leave no room inside the plot; expected an allowed region")
    return site


def _point(node: Node, what: str) -> Point:
    items = list(node.items()) if isinstance(node.data, list) else []
    if len(items) != 2:
        raise node.error(f"got {units.short_repr(node.data, 60)}; expected {what}")
    return (items[0].length(non_negative=True), items[1].length(non_negative=True))


#: Most vertices of one polygon of the site (bounds the work of the footprint check).
MAX_VERTICES = 2000


def _polygon(node: Node, what: str) -> tuple[Point, ...]:
    """A simple polygon ``[[x, y], ...]`` (plot coordinates, x and y >= 0), anticlockwise."""
    if not isinstance(node.data, list) or not 3 <= len(node.data) <= MAX_VERTICES:
        raise node.error(f"got {units.short_repr(node.data, 60)}; expected {what} as a list of 3 to "
                         f"{MAX_VERTICES} vertices [[x, y], ...]")
    pts = tuple(_point(item, "a vertex [x, y] with x and y of zero or more, e.g. [0 m, 12 m]")
                for item in node.items())
    if len(pts) > 3 and pts[0] == pts[-1]:
        pts = pts[:-1]  # the closing vertex written again
    if (why := plot.polygon_problem(pts)) is not None:
        raise node.error(f"{why}; expected {what} as a simple polygon")
    return plot.anticlockwise(pts)


def _no_build(node: Node | None) -> tuple[NoBuild, ...]:
    """``no_build: [{name, polygon: [[x, y], ...]} or {name, circle: {centre, radius}}]``."""
    if node is None:
        return ()
    if not isinstance(node.data, list):
        raise node.error(f"got {units.short_repr(node.data, 60)}; expected a list of zones "
                         "[{name: ..., polygon: [[x, y], ...]} or {name: ..., circle: {centre: [x, y], radius: ...}}]")
    zones = []
    for item in node.items():
        item.require_mapping()
        name = item.child("name").text()
        poly_node = item.child("polygon", required=False)
        circle_node = item.child("circle", required=False)
        if (poly_node is None) == (circle_node is None):
            raise item.error("expected exactly one of polygon or circle")
        if poly_node is not None:
            zones.append(NoBuild(name, polygon=_polygon(poly_node, "a no-build zone")))
        else:
            assert circle_node is not None
            circle_node.require_mapping()
            centre = _point(circle_node.child("centre"), "[x, y] of the circle's centre")
            radius = circle_node.child("radius").length(positive=True)
            circle_node.done(section="no_build_circle")
            zones.append(NoBuild(name, centre=centre, radius=radius))
        item.done(section="no_build")
    return tuple(zones)


def _site_grid(node: Node | None) -> SiteGrid:
    """``site.grid: {origin: [easting, northing], rotation: angle}``: the grid coordinates
    of the plot's origin and the bearing of the plot's +y axis clockwise from grid north."""
    if node is None:
        return SiteGrid()
    node.require_mapping()
    origin_node = node.child("origin", required=False)
    origin = (0.0, 0.0)
    if origin_node is not None:
        items = list(origin_node.items())
        if len(items) != 2:
            raise origin_node.error(f"got {len(items)} value(s); expected [easting, northing], "
                                    "e.g. [500000 m, 180000 m]")
        origin = (items[0].length(maximum=1e8), items[1].length(maximum=1e8))
    rot_node = node.child("rotation", required=False)
    rotation = rot_node.angle() if rot_node is not None else 0.0
    node.done(section="site_grid")
    return SiteGrid(origin, rotation)


def _drawing(node: Node | None) -> Drawing:
    """The optional ``drawing:`` section: title-block text, each field optional."""
    if node is None:
        return Drawing()
    node.require_mapping()
    values = {}
    fields = (("number", node.child("number", required=False)), ("revision", node.child("revision", required=False)),
              ("date", node.child("date", required=False)), ("drawn", node.child("drawn", required=False)),
              ("checked", node.child("checked", required=False)))
    for key, child in fields:
        if child is None:
            continue
        data = child.data
        if isinstance(data, (int, float)) and not isinstance(data, bool) or hasattr(data, "isoformat"):
            data = data.isoformat() if hasattr(data, "isoformat") else str(data)  # YAML reads 2026-12-01 as a date
            child = Node(data, child.file, child.path)
        values[key] = child.text(max_chars=MAX_NAME).strip()
    node.done(section="drawing")
    return Drawing(**values)


def _design(node: Node, traffic: str, storeys: int, rules: RuleSet,
            units: str = "metric") -> tuple[DesignSpec, SearchSpace]:
    node.require_mapping()
    fixed = True
    layouts_node = node.child("layouts", required=False)
    layout_node = node.child("layout", required=False)
    if layouts_node is not None:
        if layout_node is not None:
            raise node.error("got both 'layout' and 'layouts'; expected one of them")
        layouts = tuple(item.text(SEARCH_LAYOUTS) for item in layouts_node.items())
        if not layouts:
            raise layouts_node.error(f"got an empty list; expected some of {', '.join(SEARCH_LAYOUTS)}")
        fixed = False
        layout = "single"
    else:
        layout = layout_node.text(LAYOUT_CHOICES) if layout_node else "single"
        layouts = (f"single-{traffic}",) if layout == "single" else (layout,)
    if layout != "single" and traffic == "two-way":
        raise layout_node.error(  # type: ignore[union-attr]
            f"a {layout} helix carries one-way traffic on each thread; expected layout 'single' "
            "with traffic 'two-way', or traffic 'one-way'")
    rc_node = node.child("centre_radius")
    if isinstance(rc_node.data, dict):
        fixed = False
        lo_node = rc_node.child("min")
        hi_node = rc_node.child("max")
        r_lo, r_hi = lo_node.length(positive=True), hi_node.length(positive=True)
        rc_node.done(section="radius_range")
        if r_hi <= r_lo:
            raise hi_node.error(f"got {hi_node.data!r}; expected a maximum above the minimum ({lo_node.data!r})")
        rc = r_lo
    else:
        rc = rc_node.length(positive=True)
        r_lo = r_hi = rc

    lw = node.child("lane_width", required=False)
    n_lanes = 2 if traffic == "two-way" else 1
    auto_width = lw is not None and lw.data == "auto"
    if auto_width:
        fixed = False
    if lw is None or auto_width:
        default = rules.lane_width_one_way.value if rules.lane_width_one_way else 3.65
        if traffic == "two-way" and rules.lane_width_two_way:
            default = 0.5 * rules.lane_width_two_way.value
        widths = (default,) * n_lanes
    elif isinstance(lw.data, list):
        widths = tuple(item.length(positive=True) for item in lw.items())
        if len(widths) != n_lanes:
            raise lw.error(f"got {len(widths)} lane widths; expected {n_lanes} for {traffic} traffic")
    else:
        widths = (lw.length(positive=True),) * n_lanes

    ck = node.child("central_kerb", required=False)
    central = ck.length(non_negative=True) if ck else (
        rules.central_kerb_width.value if rules.central_kerb_width and n_lanes > 1 else 0.0)
    dv = node.child("divider", required=False)
    divider = dv.length(non_negative=True) if dv else 0.3
    carriageway = sum(widths) + (central if n_lanes > 1 else 0.0)
    # A fixed radius must leave an inner kerb; a search range is clipped to what can be
    # built instead (the search says so).
    if rc <= carriageway and not auto_width and r_lo == r_hi:
        from .units import format_length
        raise rc_node.error(f"got {rc_node.data!r}; expected a centre-line radius larger than the "
                            f"carriageway width ({format_length(carriageway, units)})")

    tps = node.child("turns_per_storey", required=False)
    choices = None
    turns_free = False
    if tps is not None and isinstance(tps.data, dict):
        fixed = False
        ch = tps.child("choices")
        choices = tuple(item.number(positive=True, what="a positive number of turns such as 1 or 0.75")
                        for item in ch.items())
        tps.done(section="turns_choices")
        if not choices:
            raise ch.error("got an empty list; expected turns per storey to choose from, e.g. [0.5, 1]")
        turns = (choices[0],) * storeys
    elif tps is None:
        turns = (0.5 if layout == "double" else 1.0,) * storeys
        turns_free = True
    elif isinstance(tps.data, list):
        turns = tuple(item.number(positive=True, what="a positive number of turns such as 1 or 0.75")
                      for item in tps.items())
        if len(turns) != storeys:
            raise tps.error(f"got {len(turns)} values; expected one per storey ({storeys})")
    else:
        turns = (tps.number(positive=True, what="a positive number of turns such as 1 or 0.75"),) * storeys
    for t in (choices or ()) + turns:
        if t > 20:
            raise tps.error(f"got {t:g} turns per storey; expected at most 20")  # type: ignore[union-attr]

    hand_node = node.child("hand", required=False)
    hand = -1 if hand_node and hand_node.text(("anticlockwise", "clockwise")) == "clockwise" else 1
    sb = node.child("start_bearing", required=False)
    start = sb.angle() if sb else 0.0

    ll = node.child("landing_length", required=False)
    landing = ll.length(non_negative=True) if ll else None
    tr = node.child("transition", required=False)
    t_len, t_kind, t_auto = None, "segment", False
    if tr is not None:
        if tr.data in ("none", False, 0):
            t_len = 0.0
        else:
            tr.require_mapping()
            ln = tr.child("length")
            if ln.data == "vehicle":
                t_auto = True
            else:
                t_len = ln.length(non_negative=True)
            kind = tr.child("kind", required=False)
            t_kind = kind.text(TRANSITION_KINDS) if kind else "segment"
            tr.done(section="transition")
    cf = node.child("cross_fall", required=False)
    cross = cf.gradient() if cf else None
    cfd = node.child("cross_fall_direction", required=False)
    inward = (cfd.text(("inward", "outward")) == "inward") if cfd else True
    lf = node.child("landing_fall", required=False)
    landing_fall = lf.gradient(non_negative=False) if lf else 0.0
    keep = node.child("keep", required=False)
    keep_right = keep.text(("right", "left")) == "right" if keep else True
    ap = node.child("approach", required=False)
    approach = parse_approach(ap) if ap is not None else Approach()
    cn = node.child("connections", required=False)
    connections = cn.text(CONNECTION_CHOICES) if cn else "free"
    obj = node.child("objective", required=False)
    objective = obj.text(OBJECTIVES) if obj else "footprint"
    tg = node.child("target_gradient", required=False)
    target = tg.gradient() if tg else None
    if target is not None:
        fixed = False
    if choices is not None:
        allowed = tuple(t for t in choices if _turns_fit(t, connections))
        if not allowed:
            raise tps.error(f"none of the turns {list(choices)} suit connections '{connections}'; expected "  # type: ignore[union-attr]
                            f"{'whole turns' if connections == 'same_side' else 'a whole number and a half'}")
        choices = allowed
        turns = (choices[0],) * storeys
    for k, t in enumerate(turns):
        if not _turns_fit(t, connections):
            where = tps if tps is not None else cn
            raise where.error(  # type: ignore[union-attr]
                f"got {t:g} turns for storey {k + 1}; connections '{connections}' expected "
                f"{'a whole number of turns' if connections == 'same_side' else 'a whole number and a half'}")
    node.done(section="design")
    search = SearchSpace(layouts=layouts, radius_min=r_lo, radius_max=r_hi, turns_choices=choices,
                         lane_widths=None if auto_width else widths, target_gradient=target,
                         objective=objective, fixed=fixed, turns_free=turns_free)
    return DesignSpec(layout=layout, centre_radius=rc, lane_widths=widths, turns_per_storey=turns,
                      central_kerb=central if n_lanes > 1 else 0.0, divider=divider, hand=hand,
                      start_bearing=start, landing_length=landing, transition_length=t_len,
                      transition_kind=t_kind, cross_fall=cross, cross_fall_inward=inward,
                      landing_fall=landing_fall, connections=connections, keep_right=keep_right,
                      transition_auto=t_auto, approach=approach), search


def _turns_fit(turns: float, connections: str) -> bool:
    frac = turns % 1.0
    if connections == "same_side":
        return min(frac, 1 - frac) <= 1e-6
    if connections == "alternate":
        return abs(frac - 0.5) <= 1e-6
    return True


def _pin_bearings(levels_node: Node, levels: tuple[Level, ...], design: DesignSpec,
                  check_turns: bool = True) -> DesignSpec:
    """Check pinned connection bearings against the turns; the first pin may set the start.

    With ``check_turns`` false (turns searched) the pins only set the start; the search
    keeps to them."""
    import dataclasses
    pins = [(i, lv.bearing) for i, lv in enumerate(levels) if lv.bearing is not None]
    if not pins:
        return design
    if pins[0][0] == 0:
        design = dataclasses.replace(design, start_bearing=pins[0][1])
    if not check_turns:
        return design
    bearing = design.start_bearing
    for i, lv in enumerate(levels):
        if i > 0:
            bearing += design.hand * 2 * math.pi * design.turns_per_storey[i - 1]
        if lv.bearing is not None:
            diff = (lv.bearing - bearing + math.pi) % (2 * math.pi) - math.pi
            if abs(diff) > math.radians(0.5):
                raise InputError(levels_node.file, f"levels[{i}].bearing",
                                 f"got {math.degrees(lv.bearing) % 360:.1f} deg but the turns per storey "
                                 f"put the connection at {math.degrees(bearing) % 360:.1f} deg; expected "
                                 "turns_per_storey consistent with the pinned bearings")
    return design


def _rules(node: Node | None, project_dir: Path) -> RuleSet:
    if node is None:
        return load_rule_set(DEFAULT_RULE_SET, project_dir, file="<default>", path="rules")
    if isinstance(node.data, str):
        return load_rule_set(node.text(), project_dir, file=node.file, path=node.path)
    node.require_mapping()
    use = node.child("use")
    override = node.child("override", required=False)
    node.done(section="rules")
    if override is not None:
        override.require_mapping()
    return load_rule_set(use.text(), project_dir, override.data if override else None,
                         file=node.file, path=use.path)


#: Where a field of each dataclass is written in a project file, for the rare value
#: the loader lets through and the dataclass refuses (see :func:`helix.errors.require`).
_KEY_OF = {"Project": "", "Structure": "structure.", "Site": "site.", "SiteGrid": "site.grid.", "NoBuild": "site.no_build",
           "Drawing": "drawing.", "Level": "levels", "Vehicle": "vehicle.",
           "DesignSpec": "design.", "Limit": "rules", "GradientLimit": "rules.gradient",
           "ComparisonAssumptions": "comparison."}
_DESIGN_KEYS = {"lane_widths": "lane_width", "transition_length": "transition.length",
                "transition_kind": "transition.kind", "cross_fall_inward": "cross_fall_direction"}


def _comparison(node: Node | None) -> ComparisonAssumptions:
    """The optional ``comparison:`` section: what the comparison of options assumes
    (headway in seconds, bays to empty, the standard bay and aisle, the parapet).  A key
    left out keeps its sourced default (:mod:`helix.assumptions`)."""
    base = ComparisonAssumptions()
    if node is None:
        return base
    node.require_mapping()
    values: dict[str, float | int | str] = {}

    def length(child: Node | None, key: str, low: float, what: str) -> None:
        if child is None:
            return
        x = child.length(non_negative=True)
        if not low <= x <= 30.0:
            raise child.error(f"got {units.short_repr(child.data, 60)}; expected {what}")
        values[key] = x

    headway = node.child("headway", required=False)
    if headway is not None:
        values["headway"] = headway.number(low=0.1, high=60.0, what="a headway in seconds from 0.1 to 60, such as 2.0")
        values["headway_source"] = "project file"
    bays = node.child("bays_to_empty", required=False)
    if bays is not None:
        what = "a whole number of bays from 0 to 1000000, such as 400"
        n = bays.number(low=0, high=1_000_000, what=what)
        if n != int(n):
            raise bays.error(f"got {units.short_repr(bays.data, 60)}; expected {what}")
        values["bays_to_empty"] = int(n)
        values["bays_source"] = "project file"
    bay = node.child("bay", required=False)
    if bay is not None:
        bay.require_mapping()
        length(bay.child("width", required=False), "bay_width", 0.5, "a bay width of 0.5 to 30 m, such as '2.4 m'")
        length(bay.child("length", required=False), "bay_length", 0.5, "a bay length of 0.5 to 30 m, such as '4.8 m'")
        bay.done(section="bay")
        if "bay_width" in values or "bay_length" in values:
            values["bay_source"] = "project file"
    length(node.child("aisle_width", required=False), "aisle_width", 0.0, "a length of 0 to 30 m, such as '6.0 m'")
    length(node.child("parapet_height", required=False), "parapet_height", 0.0,
           "a length of 0 to 30 m, such as '1.1 m'")
    if "aisle_width" in values:
        values["aisle_source"] = "project file"
    if "parapet_height" in values:
        values["parapet_source"] = "project file"
    node.done(section="comparison")
    return replace(base, **values)  # type: ignore[arg-type]


def load_project(path: str | Path, *, source: bytes | None = None, base_dir: str | Path | None = None) -> Project:
    """Read and check a project file; see the README (and ``helix/project.schema.json``)
    for its keys.

    ``source``: the file's bytes, read instead of ``path`` (which is then only the name
    shown in errors), e.g. standard input; ``base_dir``: the folder that relative paths
    of rule-set and vehicle files start from (default: the project file's folder).
    Any problem raises :class:`~helix.errors.InputError`, one line naming the file, the
    line and column where the YAML gives them, the key path and what was expected.

    >>> from helix import demo_file, load_project
    >>> p = load_project(demo_file("demo-metric"))
    >>> [round(h, 2) for h in p.storey_heights]
    [3.0, 3.0, 2.9, 2.9]
    >>> load_project("x.yaml", source=b"project: {name: x}\\nlevels: 3\\n")
    Traceback (most recent call last):
    ...
    helix.errors.InputError: x.yaml:2:1: levels: got 3; expected a list
    """
    positions: dict[str, tuple[int, int]] = {}
    try:
        try:
            return _load_project(Path(path), source, None if base_dir is None else Path(base_dir), positions)
        except InvalidValue as exc:
            owner = exc.file
            field = _DESIGN_KEYS.get(exc.path, exc.path) if owner == "DesignSpec" else exc.path
            key = _KEY_OF.get(owner, "")
            key = key if owner in ("Level", "Limit", "GradientLimit") else key + field
            raise InputError(str(path), key, exc.message) from None
    except InputError as exc:
        if exc.file == str(path):  # positions are known in the project file only
            exc.located(positions)
        raise


def _load_project(path: Path, source: bytes | None = None, base_dir: Path | None = None,
                  positions: dict[str, tuple[int, int]] | None = None) -> Project:
    shown = str(path)
    root = Node(read_yaml(path, shown, raw=source, positions=positions), shown).require_mapping()
    project_dir = base_dir if base_dir is not None else path.resolve().parent

    meta = root.child("project")
    meta.require_mapping()
    name = meta.child("name").text(max_chars=MAX_NAME)
    notes_node = meta.child("notes", required=False)
    notes = notes_node.text() if notes_node else ""
    meta.done(section="project")

    levels, imperial = _levels(root.child("levels"))
    structure = _structure(root.child("structure"))
    site = _site(root.child("site"))
    traffic_node = root.child("traffic", required=False)
    traffic = traffic_node.text(TRAFFIC) if traffic_node else "one-way"
    rules = _rules(root.child("rules", required=False), project_dir)
    vehicle_node = root.child("vehicle", required=False)
    vehicle = load_vehicle(vehicle_node if vehicle_node is not None else
                           Node(DEFAULT_VEHICLE, shown, "vehicle"), project_dir)
    units_node = root.child("units", required=False)
    units = units_node.text(("metric", "imperial")) if units_node else ("imperial" if imperial else "metric")
    design, search = _design(root.child("design"), traffic, len(levels) - 1, rules, units)
    design = _pin_bearings(root.child("levels"), levels, design, check_turns=search.fixed or
                           (search.turns_choices is None and not search.turns_free))
    comparison = _comparison(root.child("comparison", required=False))
    drawing = _drawing(root.child("drawing", required=False))
    root.done(section="top")
    if structure.cover_soffit is not None and structure.cover_soffit <= levels[-1].level:
        raise InputError(shown, "structure.cover_soffit",
                         f"got {structure.cover_soffit:.3f} m; expected a soffit above the top level "
                         f"({levels[-1].level:.3f} m)")
    project = Project(name=name, notes=notes, file=shown, units=units, levels=levels,
                      structure=structure, site=site, traffic=traffic, vehicle=vehicle,
                      rules=rules, design=design, search=search, comparison=comparison, drawing=drawing)
    _check_extent(project)
    return project


def _check_extent(project: Project) -> None:
    """Refuse a helix longer than :data:`MAX_THREAD_LENGTH` (the largest radius and
    turns the design allows, the outer helix of a concentric pair included)."""
    d, sp = project.design, project.search
    radius = max(d.centre_radius, sp.radius_max if sp is not None else 0.0)
    if d.layout == "concentric" or (sp is not None and "concentric" in sp.layouts):
        radius += d.carriageway_width + d.divider
    turns = list(d.turns_per_storey)
    if sp is not None and sp.turns_choices:
        turns = [max(sp.turns_choices)] * len(turns)
    length = 2 * math.pi * radius * sum(turns)
    if length > MAX_THREAD_LENGTH:
        raise InputError(project.file, "design", f"the helix would be {length / 1000:,.0f} km long in plan along its "
                         f"centre line ({len(turns)} storeys of up to {max(turns):g} turns at a radius of up to "
                         f"{radius:.1f} m); expected at most {MAX_THREAD_LENGTH / 1000:g} km (fewer levels, fewer "
                         "turns per storey or a smaller radius)")
