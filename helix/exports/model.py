"""The helix as 3-D parts (triangle meshes) for the building-model exports.

One :class:`Part` per thread, storey and element (running surface, slab, inner and outer
kerb) and one for the outer wall and the central core where the design has them.  The
running surface follows the thread's level exactly at every vertex (``Thread.level``:
the alignment's closed form plus the cross-fall); vertices sit at every alignment
breakpoint, at the middle of each storey and at most ``spacing`` apart along the outer
edge.  Coordinates are the plot's (``x``, ``y``, level; metres); :func:`site_xyz` turns
them into the site grid (easting, northing, level).

The kerb is drawn as an indicative upstand (:data:`KERB_WIDTH` x :data:`KERB_HEIGHT`,
common practice, no single source); the project file gives no kerb section.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..evaluate import Evaluation
from ..geometry import Thread
from ..site_grid import SiteGrid, to_grid

__all__ = ["Part", "model_parts", "groups", "axis_origin", "site_xyz", "KINDS", "KERB_WIDTH", "KERB_HEIGHT"]

#: Element kinds, in drawing order, with the words used in names and legends.
KINDS = {"running_surface": "running surface", "slab": "slab", "kerb": "kerb",
         "outer_wall": "outer wall", "core": "central core"}
KERB_WIDTH = 0.15  # m, indicative upstand kerb (common practice, no single source)
KERB_HEIGHT = 0.15  # m
_CIRCLE = 96  # facets of the wall and core cylinders


@dataclass(frozen=True, eq=False)
class Part:
    """One element of the model: triangles ``faces`` (indices, anticlockwise seen from
    outside) over ``vertices`` (n x 3, plot x, y and level, m).  ``storey`` is the index
    of the storey (the level it starts at) or ``None`` for the full-height walls."""

    name: str
    kind: str
    element: str  # the element's words, e.g. "inner kerb"
    thread: str | None
    storey: int | None
    vertices: np.ndarray
    faces: np.ndarray
    closed: bool

    @property
    def group(self) -> str:
        """The name of the thread's whole element, all storeys: one mesh in the 3-D files."""
        return self.element if self.thread is None else f"{self.thread}: {self.element}"


def site_xyz(vertices: np.ndarray, grid: SiteGrid) -> np.ndarray:
    """Plot vertices (x, y, level) as site-grid (easting, northing, level)."""
    e, n = to_grid(vertices[:, 0], vertices[:, 1], grid)
    return np.column_stack([e, n, vertices[:, 2]])


def _angles(t: Thread, a: float, b: float, radius: float, spacing: float) -> np.ndarray:
    p = t.profile
    n = max(int(math.ceil(radius * (b - a) / spacing)), 2)
    inside = p.t[(p.t > a) & (p.t < b)]
    return np.unique(np.round(np.concatenate([np.linspace(a, b, n + 1), inside, [0.5 * (a + b)]]), 12))


def _grid_faces(n: int, m: int, offset: int = 0, flip: bool = False) -> np.ndarray:
    """Two triangles per cell of an n x m vertex grid (row-major)."""
    i, j = np.meshgrid(np.arange(n - 1), np.arange(m - 1), indexing="ij")
    a = (i * m + j).ravel() + offset
    b, c, d = a + m, a + m + 1, a + 1
    tri = np.concatenate([np.column_stack([a, b, c]), np.column_stack([a, c, d])])
    return tri[:, ::-1] if flip else tri


def _band(t: Thread, theta: np.ndarray, radii: np.ndarray, centre, dz: float) -> np.ndarray:
    """Vertices (row per angle, column per radius) on the surface, raised by ``dz``."""
    th, r = np.meshgrid(theta, radii, indexing="ij")
    x, y = t.xy(th, r, centre)
    z = t.level(th, r) + dz
    return np.stack([x, y, z], axis=-1).reshape(-1, 3)


def _solid(t: Thread, theta: np.ndarray, r0: float, r1: float, centre, bottom: float, top: float) -> tuple:
    """A closed band between radii ``r0``, ``r1`` from ``bottom`` to ``top`` above the surface."""
    radii = np.array([r0, r1])
    n = len(theta)
    upper = _band(t, theta, radii, centre, top)
    lower = _band(t, theta, radii, centre, bottom)
    v = np.concatenate([upper, lower])
    up = _grid_faces(n, 2, flip=t.hand > 0)  # (+theta) x (+r) points down when ascending anticlockwise
    down = _grid_faces(n, 2, offset=2 * n, flip=t.hand < 0)
    sides = []
    for col, outward in ((0, False), (1, True)):  # inner face looks in, outer face out
        u = np.arange(n) * 2 + col
        w = u + 2 * n
        quad = np.column_stack([u[:-1], u[1:], w[1:]]), np.column_stack([u[:-1], w[1:], w[:-1]])
        tri = np.concatenate(quad)
        sides.append(tri if outward == (t.hand < 0) else tri[:, ::-1])
    ends = []
    for row, last in ((0, False), (n - 1, True)):
        a, b = 2 * row, 2 * row + 1
        tri = np.array([[a, b, b + 2 * n], [a, b + 2 * n, a + 2 * n]])
        ends.append(tri if last == (t.hand > 0) else tri[:, ::-1])
    return v, np.concatenate([up, down] + sides + ends)


def _cylinder(centre, r0: float, r1: float, z0: float, z1: float) -> tuple:
    """A closed tube (``r0 > 0``) or solid cylinder (``r0 == 0``) from ``z0`` to ``z1``."""
    a = np.linspace(0.0, 2 * math.pi, _CIRCLE, endpoint=False)
    ring = np.column_stack([np.cos(a), np.sin(a)])
    m = _CIRCLE
    nxt = (np.arange(m) + 1) % m
    idx = np.arange(m)
    if r0 > 0:
        pts = [(r1, z0), (r1, z1), (r0, z1), (r0, z0)]  # outer bottom, outer top, inner top, inner bottom
        v = np.concatenate([np.column_stack([centre[0] + r * ring[:, 0], centre[1] + r * ring[:, 1],
                                             np.full(m, z)]) for r, z in pts])
        faces = []
        for k in range(4):  # each of the four faces of the section, swept round
            p, q = k * m, ((k + 1) % 4) * m
            faces += [np.column_stack([p + idx, p + nxt, q + nxt]), np.column_stack([p + idx, q + nxt, q + idx])]
        return v, np.concatenate(faces)
    v = np.concatenate([np.column_stack([centre[0] + r1 * ring[:, 0], centre[1] + r1 * ring[:, 1], np.full(m, z)])
                        for z in (z0, z1)] + [np.array([[centre[0], centre[1], z0], [centre[0], centre[1], z1]])])
    side = np.concatenate([np.column_stack([idx, nxt, m + nxt]), np.column_stack([idx, m + nxt, m + idx])])
    bottom = np.column_stack([np.full(m, 2 * m), nxt, idx])
    top = np.column_stack([np.full(m, 2 * m + 1), m + idx, m + nxt])
    return v, np.concatenate([side, bottom, top])


def model_parts(ev: Evaluation, spacing: float = 0.5) -> tuple[Part, ...]:
    """Every part of the helix of ``ev``, in plot coordinates."""
    h, proj = ev.helix, ev.project
    depth = proj.structure.slab_depth
    parts: list[Part] = []
    for t in h.threads:
        conn = t.profile.connections
        for s, (a, b) in enumerate(zip(conn[:-1], conn[1:])):
            storey = t.levels[s]
            theta = _angles(t, float(a), float(b), t.outer_radius + KERB_WIDTH, spacing)
            label = f"{t.name}, storey {s + 1}"
            radii = np.array([t.inner_radius, t.centre_radius, t.outer_radius])
            surface = _band(t, theta, radii, h.centre, 0.0)
            parts.append(Part(f"{label}: {KINDS['running_surface']}", "running_surface", KINDS["running_surface"], t.name, storey, surface,
                              _grid_faces(len(theta), 3, flip=t.hand > 0), False))
            v, f = _solid(t, theta, t.inner_radius, t.outer_radius, h.centre, -depth, 0.0)
            parts.append(Part(f"{label}: {KINDS['slab']}", "slab", KINDS["slab"], t.name, storey, v, f, True))
            for side, r0 in (("inner", t.inner_radius - KERB_WIDTH), ("outer", t.outer_radius)):
                v, f = _solid(t, theta, r0, r0 + KERB_WIDTH, h.centre, 0.0, KERB_HEIGHT)
                parts.append(Part(f"{label}: {side} {KINDS['kerb']}", "kerb", f"{side} {KINDS['kerb']}", t.name, storey, v, f, True))
    z0 = min(lv.level for lv in proj.levels) - depth
    z1 = max(lv.level for lv in proj.levels)
    wall = proj.structure.wall_thickness
    if wall > 0:
        v, f = _cylinder(h.centre, h.structure_radius - wall, h.structure_radius, z0, z1)
        parts.append(Part(KINDS["outer_wall"], "outer_wall", KINDS["outer_wall"], None, None, v, f, True))
    if h.core_radius > 0:
        v, f = _cylinder(h.centre, 0.0, h.core_radius, z0, z1)
        parts.append(Part(KINDS["core"], "core", KINDS["core"], None, None, v, f, True))
    return tuple(parts)


def groups(parts: tuple[Part, ...]) -> dict[str, list[Part]]:
    """Parts by :attr:`Part.group`, in model order."""
    out: dict[str, list[Part]] = {}
    for p in parts:
        out.setdefault(p.group, []).append(p)
    return out


def axis_origin(ev: Evaluation) -> tuple[float, float]:
    """Site-grid easting and northing of the helix axis (the 3-D files' local origin)."""
    cx, cy = ev.helix.centre
    e, n = to_grid(cx, cy, ev.project.site.grid)
    return float(e), float(n)
