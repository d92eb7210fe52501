"""Plan of the chosen helix as DXF for the drawing office (optional: ``helix[cad]``).

Layers: ``KERBS`` (2-D arcs in plan, storey by storey, and 3-D polylines at the kerb
levels), ``LANE_CENTRE_LINES``, ``STRUCTURE`` (outer wall faces and central core),
``LEVEL_CONNECTIONS`` (a radial line at each floor connection) and ``TEXT``.
Drawing units are metres in the site grid (:mod:`helix.site_grid`: x easting, y northing,
grid north up); with the default grid that is the plot's frame, origin at its corner.
The file is deterministic: the same design gives the same bytes.

References
----------
Autodesk, DXF Reference (AutoCAD 2010 format); written with the ezdxf library.
"""
from __future__ import annotations

import io
import math

import numpy as np

from ..evaluate import Evaluation
from ..site_grid import to_grid
from ..units import format_level

__all__ = ["dxf_available", "plan_dxf", "dxf_files", "LAYERS"]

LAYERS = {"KERBS": 7, "LANE_CENTRE_LINES": 5, "STRUCTURE": 8, "LEVEL_CONNECTIONS": 6, "TEXT": 7}


def dxf_available() -> bool:
    try:
        import ezdxf  # noqa: F401
    except ImportError:
        return False
    return True


def _kerb_points(thread, radius: float, spacing: float = 0.25) -> np.ndarray:
    """Plan angles along a kerb: every ``spacing`` metres and every breakpoint."""
    p = thread.profile
    n = max(int(math.ceil(radius * (p.end - p.start) / spacing)), 2)
    return np.unique(np.concatenate([np.linspace(p.start, p.end, n + 1), p.t]))


def _sorted_classes(text: str) -> str:
    """The CLASSES section with its entries in name order.

    ezdxf registers some classes in an order that follows Python's string hashing, so
    it differs from one process to the next; the order of CLASS entries carries no
    meaning in a file without proxy entities, so sorting them makes the bytes repeat.
    """
    lines = text.split("\n")
    try:
        start = next(i for i in range(0, len(lines) - 3, 2)
                     if lines[i].strip() == "0" and lines[i + 1] == "SECTION" and lines[i + 3] == "CLASSES")
    except StopIteration:
        return text
    body_start = start + 4
    end = next(i for i in range(body_start, len(lines) - 1, 2)
               if lines[i].strip() == "0" and lines[i + 1] == "ENDSEC")
    entries: list[list[str]] = []
    for i in range(body_start, end, 2):
        if lines[i].strip() == "0" and lines[i + 1] == "CLASS":
            entries.append([])
        entries[-1] += lines[i:i + 2]
    entries.sort(key=lambda e: (e[3], e[5]))  # DXF name (code 1), C++ class name (code 2)
    return "\n".join(lines[:body_start] + [x for e in entries for x in e] + lines[end:])


def plan_dxf(ev: Evaluation) -> bytes:
    """The plan as DXF (R2010) bytes."""
    import ezdxf

    h, proj = ev.helix, ev.project
    grid = proj.site.grid

    def at(x, y) -> tuple[float, float]:
        e, n = to_grid(x, y, grid)
        return float(e), float(n)

    turn = -math.degrees(grid.rotation)  # plot angles to angles from grid east
    cx, cy = at(*h.centre)
    old = ezdxf.options.write_fixed_meta_data_for_testing
    ezdxf.options.write_fixed_meta_data_for_testing = True  # no time stamps: byte-identical output
    try:
        doc = ezdxf.new("R2010", setup=False)
        doc.units = ezdxf.units.M
        doc.header["$INSUNITS"] = 6  # metres
        doc.header["$FINGERPRINTGUID"] = "{6A1E1C00-0000-4000-8000-000000000001}"
        doc.header["$VERSIONGUID"] = "{6A1E1C00-0000-4000-8000-000000000002}"
        for name, colour in LAYERS.items():
            doc.layers.add(name, color=colour)
        msp = doc.modelspace()
        for t in h.threads:
            conn = t.profile.connections
            for r in (t.inner_radius, t.outer_radius):
                # 2-D arcs in plan between consecutive connections (anticlockwise in DXF).
                for a, b in zip(conn[:-1], conn[1:]):
                    b0, b1 = float(t.bearing(a)), float(t.bearing(b))
                    start, end = (b0, b1) if t.hand > 0 else (b1, b0)
                    sweep = abs(b1 - b0)
                    pieces = max(int(math.ceil(sweep / (1.5 * math.pi))), 1)  # arcs under 360 deg
                    for k in range(pieces):
                        s0 = start + (end - start) * k / pieces
                        s1 = start + (end - start) * (k + 1) / pieces
                        msp.add_arc((cx, cy), r, math.degrees(s0) + turn, math.degrees(s1) + turn, dxfattribs={"layer": "KERBS"})
                # 3-D polyline at the kerb's levels.
                theta = _kerb_points(t, r)
                px, py = t.xy(theta, r, h.centre)
                x, y = to_grid(px, py, grid)
                z = t.level(theta, r)
                msp.add_polyline3d(list(zip(np.round(x, 6), np.round(y, 6), np.round(z, 6))),
                                   dxfattribs={"layer": "KERBS"})
            for lane in t.lanes:
                msp.add_circle((cx, cy), lane.centre_radius, dxfattribs={"layer": "LANE_CENTRE_LINES"})
            for k, theta in enumerate(conn):
                b = float(t.bearing(theta))
                b -= grid.rotation
                p0 = (cx + t.inner_radius * math.cos(b), cy + t.inner_radius * math.sin(b))
                p1 = (cx + h.structure_radius * math.cos(b), cy + h.structure_radius * math.sin(b))
                msp.add_line(p0, p1, dxfattribs={"layer": "LEVEL_CONNECTIONS"})
                lvl = proj.levels[t.levels[k]]
                msp.add_text(f"{lvl.name} {format_level(lvl.level, proj.units)} ({t.name})",
                             height=0.25, dxfattribs={"layer": "TEXT", "rotation": 0.0}).set_placement(
                    (cx + (h.structure_radius + 0.5) * math.cos(b),
                     cy + (h.structure_radius + 0.5) * math.sin(b) - 0.35 * k))
        msp.add_circle((cx, cy), h.structure_radius, dxfattribs={"layer": "STRUCTURE"})
        if proj.structure.wall_thickness > 0:
            msp.add_circle((cx, cy), h.structure_radius - proj.structure.wall_thickness,
                           dxfattribs={"layer": "STRUCTURE"})
        if h.core_radius > 0:
            msp.add_circle((cx, cy), h.core_radius, dxfattribs={"layer": "STRUCTURE"})
        site = proj.site
        if site.boundary is not None:
            outline = list(site.boundary)
        else:
            outline = [(0.0, 0.0), (site.width, 0.0), (site.width, site.depth), (0.0, site.depth)]
        msp.add_lwpolyline([at(x, y) for x, y in outline], close=True, dxfattribs={"layer": "STRUCTURE"})
        for zone in site.no_build:  # columns, cores, shafts: kept clear of the helix
            from ..plot import zone_outline
            msp.add_lwpolyline([at(x, y) for x, y in zone_outline(zone)], close=True,
                               dxfattribs={"layer": "STRUCTURE"})
        msp.add_text(f"{proj.name}: helix plan, metres, site grid. Design aid only: verify against the codes "
                     "in force.", height=0.35, dxfattribs={"layer": "TEXT", "rotation": turn}).set_placement(at(0.0, -1.0))
        stream = io.StringIO()
        doc.write(stream)
        return _sorted_classes(stream.getvalue()).encode("utf-8")
    finally:
        ezdxf.options.write_fixed_meta_data_for_testing = old


def dxf_files(ev: Evaluation) -> dict[str, bytes]:
    """The registry's writer (:data:`helix.exports.FORMATS`)."""
    return {"plan.dxf": plan_dxf(ev)}
