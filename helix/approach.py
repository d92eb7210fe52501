"""Where each floor's aisle meets the helix: approach and exit lines and what is over them.

A car does not appear on the helix at a floor connection: it drives in from the floor's
aisle and out onto it.  Near the connection the aisle lies inside the helix's plan
annulus, so turns of the helix (the same thread a turn higher, the other thread of a
double helix falling towards its own connection) may pass over it.  Each connection of
each lane gets an *approach line* in plan, at the floor level (or at a stated grade
away from the helix):

* a straight aisle (default): the tangent to the lane's centre line at the
  connection, or a line turned ``angle`` outward from it (90 deg: along the radius), on
  the side ``before`` the connection in the direction of ascent or ``after`` it, or
  ``ahead`` (the default): before at the lowest floor, after at the top, and at the
  floors between ahead of the lane's traffic (up lanes leave after, down lanes before).
  Its default length is one vehicle length plus the transition at that end of the
  storey.
* ``line``: a polyline of plan points given in the project (site coordinates, as in
  the plan figure and the setting-out table), from the connection outward.

Along each line (the lane's centre and both its edges, carried parallel) the clear
height is the gap to the nearest surface above the aisle, less the structure's depth;
the turn the aisle joins (the connecting thread within half a turn of the connection)
is the surface the car is on, not overhead, and a surface level with the aisle is
crossed at grade; any other surface above the aisle counts, even one whose slab cuts
into the aisle's space (a negative clear height: the aisle runs into a ramp).  The
vehicle's roof on the straight aisle lies its height above the aisle, so its clearance
is the clear height less that height.  The change of grade where the aisle meets the helix is the difference between
the aisle's grade and the helix's grade on the lane centre line at the connection.

The level of a surface overhead is smooth between the alignment breakpoints it passes
over, so the smallest clear height is found on a 5 cm grid along the line and refined
by Brent's bounded minimiser (:func:`helix.roots.brent_minimum`).
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .errors import Node
from .geometry import TWO_PI, Helix, Thread
from .roots import brent_minimum_many

__all__ = ["Approach", "ApproachLine", "ApproachResult", "parse_approach", "approach_lines",
           "overhead_clear", "measure_approach", "measure_approaches", "APPROACH_SIDES"]

APPROACH_SIDES = ("before", "after", "ahead")
_STEP = 0.05
_AT_GRADE = 1e-6  # m
_CELLS = 100_000  # points times turns per array in overhead_clear


@dataclass(frozen=True)
class Approach:
    """How one floor's aisle meets the helix, as the project states it."""

    side: str | None = None  # "before", "after", "ahead"; None: "ahead"
    length: float | None = None  # None: vehicle length plus the transition
    grade: float = 0.0  # rising away from the helix
    line: tuple[tuple[float, float], ...] | None = None  # plan points, site coordinates
    angle: float = 0.0  # plan angle (rad) of a straight aisle off the tangent, turned outward

    def __post_init__(self) -> None:
        if self.side is not None and self.side not in APPROACH_SIDES:
            raise ValueError(f"approach side must be one of {APPROACH_SIDES}")
        if self.line is not None and len(self.line) < 2:
            raise ValueError("an approach line needs at least two points")


def parse_approach(node: Node) -> Approach:
    """``{side: before | after | ahead, length: 8 m, grade: 2%}`` or
    ``{line: [[x, y], ...], grade: 2%}``."""
    node.require_mapping()
    side_node = node.child("side", required=False)
    length_node = node.child("length", required=False)
    line_node = node.child("line", required=False)
    grade_node = node.child("grade", required=False)
    angle_node = node.child("angle", required=False)
    if line_node is not None and (side_node is not None or length_node is not None or angle_node is not None):
        raise node.error("got 'line' with 'side', 'length' or 'angle'; expected a straight aisle "
                         "(side, length, angle) or a given line, not both")
    angle = angle_node.angle() if angle_node is not None else 0.0
    if not 0.0 <= angle <= math.radians(90.0) + 1e-12:
        raise angle_node.error(f"got {angle_node.data!r}; expected an angle from 0 deg (the tangent) "  # type: ignore[union-attr]
                               "to 90 deg (straight out along the radius)")
    line = None
    if line_node is not None:
        pts = []
        for item in line_node.items():
            xy = list(item.items())
            if len(xy) != 2:
                raise item.error("expected a plan point [x, y] such as ['12.4 m', '3.0 m']")
            pts.append((xy[0].length(), xy[1].length()))
        if len(pts) < 2:
            raise line_node.error(f"got {len(pts)} point(s); expected at least two plan points")
        if any(math.hypot(b[0] - a[0], b[1] - a[1]) < 1e-6 for a, b in zip(pts, pts[1:])):
            raise line_node.error("got two equal points in a row; expected distinct plan points")
        line = tuple(pts)
    approach = Approach(
        side=side_node.text(APPROACH_SIDES) if side_node is not None else None,
        length=length_node.length(positive=True) if length_node is not None else None,
        grade=grade_node.gradient(non_negative=False) if grade_node is not None else 0.0,
        line=line, angle=angle)
    node.done(section="approach")
    return approach


@dataclass(frozen=True)
class ApproachLine:
    """One lane's approach or exit line at one floor connection."""

    thread: int
    lane: str
    level: int  # index into the project's levels
    connection: float  # plan angle of the connection on the thread
    side: str  # "before", "after" or "given line"
    angle: float  # of a straight aisle off the tangent, rad
    vertices: np.ndarray  # (n, 2) plan points, site coordinates, from the connection outward
    floor_level: float
    grade: float
    lane_width: float
    helix_grade: float  # grade of the helix on the lane centre line where the aisle meets it

    @property
    def length(self) -> float:
        return float(np.sum(np.hypot(*np.diff(self.vertices, axis=0).T)))

    def at(self, d, offset=0.0) -> tuple[np.ndarray, np.ndarray]:
        """Plan points ``d`` along the line, ``offset`` to its left (m)."""
        d = np.atleast_1d(np.asarray(d, float))
        seg = np.diff(self.vertices, axis=0)
        lens = np.hypot(seg[:, 0], seg[:, 1])
        ends = np.concatenate([[0.0], np.cumsum(lens)])
        j = np.clip(np.searchsorted(ends, d, side="right") - 1, 0, len(lens) - 1)
        u = seg[j] / lens[j][:, None]
        p = self.vertices[j] + u * (d - ends[j])[:, None]
        normal = np.stack([-u[:, 1], u[:, 0]], axis=1)
        # ``offset``: one for all points, or one per point.
        p = p + np.asarray(offset, float)[..., None] * normal
        return p[:, 0], p[:, 1]

    def aisle_level(self, d) -> np.ndarray:
        return self.floor_level + self.grade * np.asarray(d, float)


def _transition_length(t: Thread, storey: int, connection: float, radius: float) -> float:
    """Length on ``radius`` of the transition of ``storey`` nearest ``connection``."""
    p = t.profile
    best = None
    for j in range(len(p.k)):
        if p.kind[j] == "transition" and p.storey[j] == storey:
            gap = min(abs(p.t[j] - connection), abs(p.t[j + 1] - connection))
            if best is None or gap < best[0]:
                best = (gap, (p.t[j + 1] - p.t[j]) * radius)
    return best[1] if best else 0.0


def approach_lines(project, helix: Helix) -> list[ApproachLine]:
    """Every lane's approach line at every floor connection of every thread."""
    default = project.design.approach
    out = []
    cx, cy = helix.centre
    for i, t in enumerate(helix.threads):
        p = t.profile
        n = len(t.levels) - 1
        for c, lev in enumerate(t.levels):
            a = project.levels[lev].approach or default
            theta = float(p.connections[c])
            for lane in t.lanes:
                r = lane.centre_radius
                if a.line is not None:
                    side = "given line"
                    verts = np.asarray(a.line, float)
                else:
                    side = a.side or "ahead"
                    if side == "ahead":  # the only open side at the ends of the thread
                        side = "before" if c == 0 else ("after" if c == n else "ahead")
                    if side == "ahead":
                        side = "before" if lane.direction == "down" else "after"
                sign = 1.0 if side == "after" else -1.0
                # The helix side of the connection: a car on an aisle 'before' it drives on
                # into the storey above; 'after' it, in from the storey below.
                storey = c if sign < 0 else c - 1
                eps = 1e-9
                k_helix = float(p.slope(theta + eps if sign < 0 else theta - eps))
                if a.line is None:
                    length = a.length if a.length is not None else (
                        project.vehicle.length + (_transition_length(t, storey, theta, r) if 0 <= storey < n else 0.0))
                    b = float(t.bearing(theta))
                    p0 = np.array([cx + r * math.cos(b), cy + r * math.sin(b)])
                    tangent = t.hand * sign * np.array([-math.sin(b), math.cos(b)])
                    radial = np.array([math.cos(b), math.sin(b)])
                    u = math.cos(a.angle) * tangent + math.sin(a.angle) * radial
                    verts = np.stack([p0, p0 + length * u])
                out.append(ApproachLine(i, lane.name, lev, theta, side, 0.0 if a.line is not None else a.angle, verts,
                                        float(project.levels[lev].level), a.grade, lane.width,
                                        k_helix / r if math.isfinite(k_helix) else 0.0))
    return out


def overhead_clear(helix: Helix, structure, x, y, level, exclude=None, labels: bool = False):
    """Clear height over plan points ``(x, y)`` at running level ``level``: the gap to the
    nearest helix surface (or cover soffit) above, less the structure's depth.

    ``exclude = (thread, theta)`` (each one value, or one per point) leaves out that
    thread within half a turn of plan angle ``theta`` (the turn the aisle joins).
    Returns ``(clear, names)``; ``clear`` is ``inf`` where nothing is overhead."""
    x, y = np.atleast_1d(np.asarray(x, float)), np.atleast_1d(np.asarray(y, float))
    z = np.broadcast_to(np.asarray(level, float), x.shape)
    cx, cy = helix.centre
    rho = np.hypot(x - cx, y - cy)
    beta = np.arctan2(y - cy, x - cx)
    best = np.full(x.shape, np.inf)
    which = np.full(x.shape, -1)
    names: list[str] = []
    if exclude is not None:
        ex_thread = np.broadcast_to(np.asarray(exclude[0]), x.shape)
        ex_theta = np.broadcast_to(np.asarray(exclude[1], float), x.shape)
    for j, u in enumerate(helix.threads):
        inside = (rho >= u.inner_radius - 1e-9) & (rho <= u.outer_radius + 1e-9)
        if not np.any(inside):
            continue
        own = ex_thread == j if exclude is not None else np.zeros(x.shape, bool)
        base = np.mod(u.hand * (beta - u.start_bearing) - u.profile.start, TWO_PI) + u.profile.start
        turns = int(math.ceil((u.profile.end - u.profile.start) / TWO_PI)) + 1
        # Many turns of the thread over each point at once, (points, turns), in chunks
        # that keep the arrays small however many turns the thread has.
        nearest = np.full(x.shape, np.inf)
        chunk = max(1, _CELLS // max(len(x), 1))
        for k0 in range(0, turns + 1, chunk):
            th = base[:, None] + TWO_PI * np.arange(k0, min(k0 + chunk, turns + 1))[None, :]
            gap = u.level(th, rho[:, None]) - z[:, None]
            # A surface level with the aisle is crossed at grade, not passed under.
            above = np.isfinite(gap) & (gap > _AT_GRADE)
            if exclude is not None:
                above &= ~own[:, None] | (np.abs(th - ex_theta[:, None]) >= math.pi)
            nearest = np.minimum(nearest, np.min(np.where(above, gap, np.inf), axis=1))
        ok = inside & (nearest < best)
        if np.any(ok):
            for label, take in ((u.name, ok & ~own), ("another turn of the same thread", ok & own)):
                if np.any(take):
                    if label not in names:
                        names.append(label)
                    which = np.where(take, names.index(label), which)
            best = np.where(ok, nearest, best)
    clear = best - structure.depth
    if structure.cover_soffit is not None:
        cover = structure.cover_soffit - z
        take = cover < clear
        if np.any(take):
            names.append("the cover slab")
            clear = np.where(take, cover, clear)
            which = np.where(take, len(names) - 1, which)
    if not labels:
        return clear, None
    return clear, [names[w] if w >= 0 else "nothing" for w in which]


class _Aisles:
    """Plan points along many approach lines at once: each line's segments padded to a
    table, so a point on line ``n`` at distance ``d`` is found with the arithmetic of
    :meth:`ApproachLine.at`."""

    def __init__(self, lines: list[ApproachLine]):
        most = max(len(line.vertices) - 1 for line in lines)
        n = len(lines)
        self.vert = np.zeros((n, most, 2))
        self.unit = np.zeros((n, most, 2))
        self.ends = np.full((n, most + 1), np.inf)
        for i, line in enumerate(lines):
            seg = np.diff(line.vertices, axis=0)
            lens = np.hypot(seg[:, 0], seg[:, 1])
            m = len(lens)
            self.vert[i, :m] = line.vertices[:-1]
            self.unit[i, :m] = seg / lens[:, None]
            self.ends[i, :m + 1] = np.concatenate([[0.0], np.cumsum(lens)])
        self.segments = np.array([len(line.vertices) - 1 for line in lines])
        self.floor = np.array([line.floor_level for line in lines])
        self.grade = np.array([line.grade for line in lines])

    def at(self, n: np.ndarray, d: np.ndarray, offset: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        # The segment: how many of the line's segment ends (after its first) lie at or
        # before d, at most its last segment.
        j = np.minimum(np.sum(self.ends[n, 1:-1] <= d[:, None], axis=1), self.segments[n] - 1)
        u = self.unit[n, j]
        p = self.vert[n, j] + u * (d - self.ends[n, j])[:, None]
        normal = np.stack([-u[:, 1], u[:, 0]], axis=1)
        p = p + offset[:, None] * normal
        return p[:, 0], p[:, 1]

    def level(self, n: np.ndarray, d: np.ndarray) -> np.ndarray:
        return self.floor[n] + self.grade[n] * d


@dataclass(frozen=True)
class ApproachResult:
    line: ApproachLine
    clear: float  # smallest clear height over the aisle, m (inf: nothing overhead)
    distance: float  # along the line from the connection, m
    offset: float  # to the left of the line's centre, m
    above: str


def measure_approach(helix: Helix, structure, line: ApproachLine) -> ApproachResult:
    """The smallest clear height over ``line``'s aisle: its centre and both lane edges."""
    return measure_approaches(helix, structure, [line])[0]


def measure_approaches(helix: Helix, structure, lines) -> tuple[ApproachResult, ...]:
    """:func:`measure_approach` of every line, all in shared calls: the grids of every
    line and lane edge in one, then every refinement in lockstep (the same Brent steps
    as one at a time)."""
    lines = list(lines)
    if not lines:
        return ()
    table = _Aisles(lines)
    thread = np.array([line.thread for line in lines])
    connection = np.array([line.connection for line in lines])

    def f(n, d, off):
        x, y = table.at(n, d, off)
        return overhead_clear(helix, structure, x, y, table.level(n, d), (thread[n], connection[n]))[0]

    # One job per line and lane edge (right edge, centre, left edge), each on its grid.
    grids, job_line, job_off = [], [], []
    for i, line in enumerate(lines):
        length = line.length
        grid = np.linspace(0.0, length, max(int(math.ceil(length / _STEP)), 1) + 1)
        for off in (-0.5 * line.lane_width, 0.0, 0.5 * line.lane_width):
            grids.append(grid)
            job_line.append(i)
            job_off.append(off)
    sizes = [len(g) for g in grids]
    jl = np.array(job_line)
    jo = np.array(job_off)
    every = np.repeat(np.arange(len(grids)), sizes)
    c_all = np.split(f(jl[every], np.concatenate(grids), jo[every]), np.cumsum(sizes)[:-1])
    start: dict[int, tuple[float, float]] = {}
    lo, hi, refine = [], [], []
    for n, (grid, c) in enumerate(zip(grids, c_all)):
        if not np.any(np.isfinite(c)):
            continue
        k = int(np.argmin(c))
        start[n] = (float(grid[k]), float(c[k]))
        a, b = grid[max(k - 1, 0)], grid[min(k + 1, len(grid) - 1)]
        if b > a:
            refine.append(n)
            lo.append(a)
            hi.append(b)
    found: dict[int, tuple[float, float]] = {}
    if refine:
        sel = np.array(refine)
        x_m, f_m = brent_minimum_many(lambda idx, s: f(jl[sel[idx]], s, jo[sel[idx]]),
                                      np.array(lo), np.array(hi), xtol=1e-6)
        found = dict(zip(refine, zip(x_m.tolist(), f_m.tolist())))
    best = [(math.inf, 0.0, 0.0)] * len(lines)
    for n, (d_min, c_min) in start.items():
        if n in found and found[n][1] < c_min:
            d_min, c_min = found[n]
        if c_min < best[job_line[n]][0]:
            best[job_line[n]] = (c_min, d_min, job_off[n])
    # What is overhead at each line's lowest point: one call for all.
    hit = [i for i in range(len(lines)) if math.isfinite(best[i][0])]
    above = ["nothing"] * len(lines)
    if hit:
        n_h = np.array(hit)
        d_h = np.array([best[i][1] for i in hit])
        x, y = table.at(n_h, d_h, np.array([best[i][2] for i in hit]))
        names = overhead_clear(helix, structure, x, y, table.level(n_h, d_h),
                               (thread[n_h], connection[n_h]), labels=True)[1]
        for i, name in zip(hit, names or []):
            above[i] = name
    return tuple(ApproachResult(line, c, d, off, above[i]) for i, (line, (c, d, off)) in enumerate(zip(lines, best)))
