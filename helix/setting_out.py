"""Setting-out table: stations along each thread for the drawing office.

Stations are at a fixed spacing of chainage along each thread's centre line, plus
every breakpoint of the alignment (where landings, transitions and runs meet), so the
table can be drawn through without losing a change of grade.

Coordinates are given twice: ``x``, ``y`` in the plot's own frame (as on the plan) and
``easting``, ``northing`` in the site grid (:mod:`helix.site_grid`, the project's
``site.grid``; by default the same as ``x``, ``y``).  ``bearing_deg`` is the
whole-circle bearing of the station from the helix axis, clockwise from grid north, as
a surveyor reads it.  The CSV's first line says so.
"""
from __future__ import annotations

import csv
import io
import math

import numpy as np

from .evaluate import Evaluation
from .site_grid import grid_bearing, to_grid
from .units import FOOT, format_level

__all__ = ["stations", "setting_out_csv", "header_line", "COLUMNS"]

COLUMNS = ("thread", "station", "chainage_m", "plan_angle_deg", "bearing_deg", "x_m", "y_m", "easting_m",
           "northing_m",
           "level_inner_kerb_m", "level_centre_m", "level_outer_kerb_m", "grade_centre_pct",
           "cross_fall_pct", "segment", "breakpoint")


def stations(ev: Evaluation, spacing: float) -> list[dict]:
    """Rows of the setting-out table, SI units; ``spacing`` is metres of chainage."""
    if not (spacing > 0 and math.isfinite(spacing)):
        raise ValueError("station spacing must be a positive length")
    rows = []
    for t in ev.helix.threads:
        p = t.profile
        length = float(t.chainage(p.end))
        regular = p.start + np.arange(0.0, length + 1e-9, spacing) / t.centre_radius
        theta = np.unique(np.round(np.concatenate([regular, p.t]), 12))
        is_break = np.isin(np.round(theta, 12), np.round(p.t, 12))
        x, y = t.xy(theta, t.centre_radius, ev.helix.centre)
        east, north = to_grid(x, y, ev.project.site.grid)
        bearing = np.degrees(grid_bearing(t.bearing(theta), ev.project.site.grid))
        z_in = t.level(theta, t.inner_radius)
        z_c = t.level(theta, t.centre_radius)
        z_out = t.level(theta, t.outer_radius)
        grade = t.gradient(theta, t.centre_radius)
        seg = np.clip(np.searchsorted(p.t, theta, side="right") - 1, 0, len(p.k) - 1)
        for n in range(len(theta)):
            rows.append({
                "thread": t.name, "station": n,
                "chainage_m": round(float(t.chainage(theta[n])), 4),
                "plan_angle_deg": round(math.degrees(theta[n]), 3),
                # Rounded, then wrapped again: 359.9999999 deg would round to 360.0.
                "bearing_deg": round(float(bearing[n]), 3) % 360.0,
                "x_m": round(float(x[n]), 4), "y_m": round(float(y[n]), 4),
                "easting_m": round(float(east[n]), 4), "northing_m": round(float(north[n]), 4),
                "level_inner_kerb_m": round(float(z_in[n]), 4), "level_centre_m": round(float(z_c[n]), 4),
                "level_outer_kerb_m": round(float(z_out[n]), 4),
                "grade_centre_pct": round(100 * float(grade[n]), 3),
                "cross_fall_pct": round(100 * t.cross_fall, 3),
                "segment": p.kind[seg[n]], "breakpoint": "yes" if is_break[n] else "",
            })
    return rows


def _imperial(row: dict) -> dict:
    """The same station in feet (decimal, for CAD) with ft-in levels beside them."""
    out = {}
    for key, value in row.items():
        if key.endswith("_m"):
            out[key[:-2] + "_ft"] = round(value / FOOT, 3)
            if key.startswith("level_"):
                out[key[:-2] + "_ftin"] = format_level(value, "imperial")
        else:
            out[key] = value
    return out


def setting_out_csv(ev: Evaluation, spacing: float) -> str:
    """The table as CSV: metres for a metric project, feet (and ft-in levels) for one
    written in feet and inches."""
    rows = stations(ev, spacing)
    if ev.project.units == "imperial":
        rows = [_imperial(r) for r in rows]
    buf = io.StringIO()
    buf.write(header_line(ev) + "\n")
    writer = csv.DictWriter(buf, fieldnames=list(rows[0]) if rows else list(COLUMNS), lineterminator="\n")
    writer.writeheader()
    writer.writerows(rows)
    return buf.getvalue()


def header_line(ev: Evaluation) -> str:
    """The CSV's first line, a comment saying which coordinates and bearings it uses."""
    g = ev.project.site.grid
    unit = "ft" if ev.project.units == "imperial" else "m"
    k = 1.0 / FOOT if unit == "ft" else 1.0
    grid = ("site grid = plot coordinates (no rotation, origin 0, 0)" if g.is_default else
            f"site grid: plot origin at easting {g.origin[0] * k:.4f} {unit}, northing {g.origin[1] * k:.4f} {unit}; "
            f"plot +y on bearing {math.degrees(g.rotation) % 360.0:.4f} deg")
    return (f"# helix setting-out; x, y: plot coordinates; easting, northing: {grid}; bearing_deg: whole-circle "
            "bearing from the helix axis, clockwise from grid north; plan_angle_deg: unrolled plan angle along the "
            "ascent; chainage along the thread centre line")
