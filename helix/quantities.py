"""Quantities of a helix: sloped deck area, slab concrete, walls, kerbs, and the plot
it takes (with the standard bays that plot would otherwise hold).

The running surface of a thread is ``z(r, theta) = Z(theta) + e (r - r_c)``: the
alignment ``Z`` (landings, transitions, runs) plus a cross-fall ``e``.  Its area
element is ``|X_r x X_theta| = sqrt((1 + e^2) r^2 + Z'(theta)^2)``, so the area
between radii ``r1`` and ``r2`` is

    A = integral over theta of  integral from r1 to r2 of  sqrt(a^2 r^2 + s^2) dr  dtheta,
    a = sqrt(1 + e^2),  s = Z'(theta).

The inner integral has the closed form ``(F(a r2, s) - F(a r1, s)) / a`` with
``F(x, s) = (x sqrt(x^2 + s^2) + s^2 asinh(x / |s|)) / 2``.  On landings and runs ``s``
is constant, so the theta integral is a product; on a vertical curve ``s`` is linear
in theta and the smooth integrand is integrated by 32-point Gauss-Legendre quadrature
(exact to rounding for an integrand this smooth over one segment).

References
----------
Area of a parametrised surface and of the helicoid: M. P. do Carmo, *Differential
Geometry of Curves and Surfaces* (1976), section 2-8.  The antiderivative of
``sqrt(x^2 + s^2)``: any table of integrals, e.g. Abramowitz and Stegun, *Handbook of
Mathematical Functions* (1964), 3.3.43.  Gauss-Legendre quadrature: ibid., 25.4.29.
"""
from __future__ import annotations

import functools
import math
from dataclasses import dataclass

import numpy as np

from .alignment import Profile
from .assumptions import ComparisonAssumptions
from .geometry import TWO_PI, Helix, Thread

__all__ = ["strip_area", "deck_area", "Quantities", "quantities"]

@functools.cache
def _gauss_legendre() -> tuple[np.ndarray, np.ndarray]:
    # On first use: numpy.polynomial takes longer to import than a design takes to check.
    return np.polynomial.legendre.leggauss(32)


def _f(x: float | np.ndarray, s: float | np.ndarray) -> np.ndarray:
    """``integral from 0 to x of sqrt(t^2 + s^2) dt``, elementwise (``s`` may be 0)."""
    x = np.asarray(x, float)
    s = np.abs(np.asarray(s, float))
    with np.errstate(divide="ignore", invalid="ignore"):
        tail = np.where(s > 0, s * s * np.arcsinh(x / np.where(s > 0, s, 1.0)), 0.0)
    return 0.5 * (x * np.hypot(x, s) + tail)


def strip_area(r1: float, r2: float, slope: float | np.ndarray, cross_fall: float = 0.0) -> np.ndarray:
    """Sloped area per radian of plan angle of the strip ``r1 <= r <= r2`` where the
    alignment rises ``slope`` metres per radian (``Z'``), with cross-fall ``e``.

    For a constant-pitch helicoid ``slope = p / (2 pi)``.
    """
    a = math.sqrt(1.0 + cross_fall * cross_fall)
    s = np.asarray(slope, float)
    return (_f(a * r2, s) - _f(a * r1, s)) / a


def deck_area(profile: Profile, r1: float, r2: float, cross_fall: float = 0.0,
              start: float | None = None, end: float | None = None) -> float:
    """True sloped area of a thread's running surface between radii ``r1`` and ``r2``
    and plan angles ``start`` and ``end`` (default: the whole alignment)."""
    a = profile.start if start is None else start
    b = profile.end if end is None else end
    total = 0.0
    for j in range(len(profile.k)):
        lo, hi = max(a, float(profile.t[j])), min(b, float(profile.t[j + 1]))
        if hi <= lo:
            continue
        if abs(profile.q[j]) < 1e-15:
            total += (hi - lo) * float(strip_area(r1, r2, profile.k[j], cross_fall))
        else:
            gl_x, gl_w = _gauss_legendre()
            theta = 0.5 * (hi + lo) + 0.5 * (hi - lo) * gl_x
            s = profile.k[j] + profile.q[j] * (theta - profile.t[j])
            total += 0.5 * (hi - lo) * float(np.sum(gl_w * strip_area(r1, r2, s, cross_fall)))
    return total


@dataclass(frozen=True)
class Quantities:
    """Quantities of one helix (SI: m, m^2, m^3)."""

    deck_area: float  # sloped running surface of every thread, kerb to kerb, landings included
    plan_area: float  # the same in plan (for comparison)
    slab_volume: float  # deck_area x slab depth
    wall_height: float  # bottom level to top level plus the parapet
    outer_wall_area: float  # inside face of the outer wall, full height
    core_wall_area: float  # outside face of the core, full height (0 without a core)
    kerb_length: float  # 3-D length of every kerb line
    kerb_lines: tuple[tuple[str, float], ...]  # (name, 3-D length) of each kerb line
    plot_side: float  # side of the square circumscribing the structure
    plot_area: float
    bays_per_level: int  # standard bays that square would hold on one level
    levels: int

    @property
    def bays_all_levels(self) -> int:
        return self.bays_per_level * self.levels


def _kerb_lines(helix: Helix, central: bool) -> list[tuple[str, float, Thread]]:
    lines: list[tuple[str, float, Thread]] = []
    for t in helix.threads:
        lines.append((f"{t.name} inner kerb", t.inner_radius, t))
        if central and len(t.lanes) > 1 and t.lanes[1].inner_radius - t.lanes[0].outer_radius > 1e-9:
            lines.append((f"{t.name} central kerb (inner edge)", t.lanes[0].outer_radius, t))
            lines.append((f"{t.name} central kerb (outer edge)", t.lanes[1].inner_radius, t))
        lines.append((f"{t.name} outer kerb", t.outer_radius, t))
    return lines


def quantities(helix: Helix, levels: tuple[float, ...], slab_depth: float, wall_thickness: float,
               basis: ComparisonAssumptions) -> Quantities:
    """Deck, slab, walls, kerbs and plot of ``helix`` serving floor ``levels``.

    Rules: the deck is every thread's running surface kerb to kerb over its whole
    alignment (half landings beyond the end floors included); the slab is that area
    times the slab depth (no downstands, upstands or kerbs); walls run from the bottom
    level to the top level plus the parapet, the outer wall measured on its inside
    face, the core on its outside face; kerbs are the 3-D lengths of each kerb line at
    its own radius; the plot is the square circumscribing the outside face of the
    structure (outer kerb + clearance + wall), and its bays are that area over one
    bay with half an aisle (``basis.area_per_bay``), rounded down.
    """
    deck = 0.0
    plan = 0.0
    for t in helix.threads:
        deck += deck_area(t.profile, t.inner_radius, t.outer_radius, t.cross_fall)
        plan += 0.5 * (t.outer_radius ** 2 - t.inner_radius ** 2) * (t.profile.end - t.profile.start)
    height = (max(levels) - min(levels)) + basis.parapet_height
    outer_face = helix.structure_radius - wall_thickness
    lines = [(name, t.profile.length_at_radius(r)) for name, r, t in _kerb_lines(helix, True)]
    side = helix.overall_diameter
    return Quantities(
        deck_area=deck, plan_area=plan, slab_volume=deck * slab_depth, wall_height=height,
        outer_wall_area=TWO_PI * outer_face * height,
        core_wall_area=TWO_PI * helix.core_radius * height if helix.core_radius > 0 else 0.0,
        kerb_length=float(sum(x for _, x in lines)), kerb_lines=tuple(lines),
        plot_side=side, plot_area=side * side, bays_per_level=int(math.floor(side * side / basis.area_per_bay + 1e-9)),
        levels=len(levels))
