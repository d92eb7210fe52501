"""Geometry of helicoidal ramps: threads of running surface on one vertical axis.

Every layout is a set of :class:`Thread` objects sharing an axis: a single helix is
one thread (one lane, or two lanes side by side), a double interleaved helix is two
threads in the same annulus half a turn apart, a concentric pair is two threads in
neighbouring annuli.  A thread's surface level is ``profile.level(theta)`` on its
centre line plus its cross-fall, where ``theta`` is the unrolled plan angle along the
direction of ascent.

The pure functions at the top are the published closed forms; they take and return
numpy arrays.

References
----------
Gradient, length and pitch of a circular helix: any text on differential geometry
of curves, e.g. do Carmo, *Differential Geometry of Curves and Surfaces* (1976),
section 1-5 (the helix ``(r cos t, r sin t, c t)``, arc length ``sqrt(r^2 + c^2) t``).
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .alignment import Profile

__all__ = [
    "pitch", "gradient_at_radius", "helix_length", "radius_for_gradient",
    "Lane", "Thread", "Helix", "LAYOUTS",
]

TWO_PI = 2.0 * math.pi

#: Layouts helix models.
LAYOUTS = ("single", "double", "concentric")


def pitch(storey_height, turns_per_storey):
    """Rise of a thread per full turn, ``p = H / t``."""
    return np.asarray(storey_height, float) / np.asarray(turns_per_storey, float)


def gradient_at_radius(pitch_m, radius):
    """Gradient (rise/run) of a constant-pitch helicoid at ``radius``: ``p / (2 pi r)``."""
    return np.asarray(pitch_m, float) / (TWO_PI * np.asarray(radius, float))


def radius_for_gradient(pitch_m, gradient):
    """Radius at which a helicoid of pitch ``p`` has gradient ``g``: ``p / (2 pi g)``."""
    return np.asarray(pitch_m, float) / (TWO_PI * np.asarray(gradient, float))


def helix_length(plan_angle, radius, pitch_m):
    """3-D length of a circular helix over ``plan_angle`` (rad): ``theta sqrt(r^2 + c^2)``,
    ``c = p / (2 pi)``."""
    c = np.asarray(pitch_m, float) / TWO_PI
    return np.asarray(plan_angle, float) * np.hypot(radius, c)


class _Annulus:
    """Centre and width of anything between ``inner_radius`` and ``outer_radius``."""

    inner_radius: float
    outer_radius: float

    @property
    def centre_radius(self) -> float:
        return 0.5 * (self.inner_radius + self.outer_radius)

    @property
    def width(self) -> float:
        return self.outer_radius - self.inner_radius


@dataclass(frozen=True)
class Lane(_Annulus):
    """One traffic lane between two radii of a thread."""

    name: str
    inner_radius: float
    outer_radius: float
    direction: str  # "up", "down" or "up and down"


@dataclass(frozen=True, eq=False)
class Thread(_Annulus):
    """One continuous helicoidal running surface.

    ``start_bearing`` is the plan bearing (rad, anticlockwise from +x) at
    ``theta = 0``; ``hand`` is +1 when the thread ascends anticlockwise, -1 when it
    ascends clockwise.  ``cross_fall`` is the slope across the carriageway, positive
    when the surface rises towards the outer kerb (falls towards the centre).
    ``levels`` are the indices, into the project's levels, of the floors the thread
    connects, in order of ascent.
    """

    name: str
    inner_radius: float
    outer_radius: float
    lanes: tuple[Lane, ...]
    profile: Profile
    levels: tuple[int, ...]
    start_bearing: float = 0.0
    hand: int = 1
    cross_fall: float = 0.0
    traffic: str = "up"  # direction of the thread's traffic: "up", "down", "up and down"

    def bearing(self, theta):
        """Plan bearing (rad) of unrolled plan angle ``theta``."""
        return self.start_bearing + self.hand * np.asarray(theta, float)

    def level(self, theta, radius=None):
        """Surface level at plan angle ``theta`` and ``radius`` (default: centre line)."""
        z = self.profile.level(theta)
        if radius is None:
            return z
        return z + self.cross_fall * (np.asarray(radius, float) - self.centre_radius)

    def gradient(self, theta, radius):
        """Longitudinal gradient along the circle of ``radius``: ``z'(theta) / r``."""
        return self.profile.slope(theta) / np.asarray(radius, float)

    def xy(self, theta, radius, centre=(0.0, 0.0)):
        b = self.bearing(theta)
        return (centre[0] + np.asarray(radius) * np.cos(b),
                centre[1] + np.asarray(radius) * np.sin(b))

    def chainage(self, theta, radius=None) -> np.ndarray:
        """Horizontal distance along the circle of ``radius`` from the thread's start."""
        r = self.centre_radius if radius is None else radius
        return r * (np.asarray(theta, float) - self.profile.start)

    def covers(self, radius: float, tol: float = 1e-9) -> bool:
        return self.inner_radius - tol <= radius <= self.outer_radius + tol

    def driving_lines(self) -> dict[str, float]:
        """Named radii across the carriageway: kerbs, centre line and lane centres."""
        lines = {"inner kerb": self.inner_radius, "centre line": self.centre_radius,
                 "outer kerb": self.outer_radius}
        if len(self.lanes) > 1:
            for lane in self.lanes:
                lines[f"{lane.name} centre"] = lane.centre_radius
        return lines


@dataclass(frozen=True, eq=False)
class Helix:
    """All the threads of one ramp on a shared axis, placed in the site's footprint.

    ``structure_radius`` is the radius of the outside face of the structure that
    encloses the helix (outer kerb + clearance + wall); ``core_radius`` the radius of
    the central core's face (inner kerb - clearance).
    """

    layout: str
    traffic: str
    threads: tuple[Thread, ...]
    structure_radius: float
    core_radius: float
    centre: tuple[float, float] = (0.0, 0.0)

    @property
    def inner_radius(self) -> float:
        return min(t.inner_radius for t in self.threads)

    @property
    def outer_radius(self) -> float:
        return max(t.outer_radius for t in self.threads)

    @property
    def overall_diameter(self) -> float:
        return 2.0 * self.structure_radius
