"""The site grid: plan coordinates of the plot to eastings, northings and bearings.

helix works in plot coordinates: ``x`` along the plot's width, ``y`` along its depth,
origin at the plot's corner, plan angles anticlockwise from ``+x``.  A survey works in
a site grid: eastings and northings from the grid's origin, and whole-circle bearings
read clockwise from grid north.  :class:`SiteGrid` holds the two numbers that join
them: the grid coordinates of the plot's origin, and the bearing of the plot's ``+y``
axis (its depth direction) clockwise from grid north.  With the default (origin 0, 0;
rotation 0) easting is ``x``, northing is ``y`` and grid north is ``+y``.

For a plot point ``(x, y)`` and rotation ``a``::

    E = E0 + x cos a + y sin a
    N = N0 - x sin a + y cos a

and a plan direction at angle ``phi`` (anticlockwise from ``+x``) has the whole-circle
bearing ``(90 deg - phi + a) mod 360 deg``.

References
----------
Whole-circle bearings and the rotation of plane coordinates: any surveying text, e.g.
Uren and Price, *Surveying for Engineers*, 5th ed. (2010), chapter 6 (coordinates,
bearings and the conversion between grids).
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

__all__ = ["SiteGrid", "to_grid", "grid_bearing", "north_angle"]


@dataclass(frozen=True)
class SiteGrid:
    """``origin``: grid (easting, northing) of the plot's origin, m; ``rotation``: bearing
    of the plot's ``+y`` axis clockwise from grid north, rad."""

    origin: tuple[float, float] = (0.0, 0.0)
    rotation: float = 0.0

    def __post_init__(self) -> None:
        from .errors import require
        require(isinstance(self.origin, tuple) and len(self.origin) == 2 and
                all(math.isfinite(v) and abs(v) <= 1e8 for v in self.origin), self, "origin", self.origin,
                "[easting, northing], each a length of at most 100 000 km")
        require(math.isfinite(self.rotation), self, "rotation", self.rotation, "an angle")

    @property
    def is_default(self) -> bool:
        return self.origin == (0.0, 0.0) and self.rotation % (2 * math.pi) == 0.0


def to_grid(x, y, grid: SiteGrid) -> tuple[np.ndarray, np.ndarray]:
    """Grid easting and northing (m) of plot points ``(x, y)`` (m)."""
    c, s = math.cos(grid.rotation), math.sin(grid.rotation)
    x, y = np.asarray(x, float), np.asarray(y, float)
    return grid.origin[0] + c * x + s * y, grid.origin[1] - s * x + c * y


def grid_bearing(plan_angle, grid: SiteGrid) -> np.ndarray:
    """Whole-circle bearing (rad, clockwise from grid north, in [0, 2 pi)) of the plan
    direction at ``plan_angle`` (rad, anticlockwise from the plot's ``+x``)."""
    b = (0.5 * math.pi - np.asarray(plan_angle, float) + grid.rotation) % (2 * math.pi)
    return np.where(b >= 2 * math.pi - 1e-12, 0.0, b)


def north_angle(grid: SiteGrid) -> float:
    """Plan angle (rad, anticlockwise from the plot's ``+x``) of grid north, for the
    north point on a plan drawn in plot coordinates."""
    return 0.5 * math.pi + grid.rotation
