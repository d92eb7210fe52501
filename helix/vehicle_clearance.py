"""The design vehicle rolled along the vertical profile of its wheel paths.

Each wheel path is a circle of radius ``r``; unrolled, its profile is ``z(s)`` with
``s = r * theta`` the horizontal distance along it, so at the inner wheels the same
rise comes over a shorter length and every change of grade is sharper.  The vehicle is
a rigid side view on that profile: two wheel contacts a wheelbase apart (measured along
the chord), the underbody a line at the ground clearance above the chord between them,
and the lowest points of the two overhangs at their heights above the chord at the
vehicle's ends; the roof is a line at the vehicle's height above the chord from end to
end.  Wheels are points (tyre radius ignored).

* Crest: the underbody between the axles is the first to touch.  For a sharp crest of
  angle ``a`` the mid-wheelbase point is ``(L/2) tan(a/2)`` above the chord, so the
  vehicle grounds at the breakover angle ``2 atan(2 h / L)`` (SAE J1100 definition).
* Sag: the overhang ends are the first to touch.

The vehicle is rolled facing up and facing down the ramp (front and rear overhangs
swap ends); the smallest clearance over all positions is found on a dense grid and
refined with Brent's bounded minimiser (:func:`helix.roots.brent_minimum`).

References
----------
SAE J1100, Motor Vehicle Dimensions (ramp breakover, approach and departure angles).
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Callable

import numpy as np

from .alignment import Profile
from .roots import brent_minimum_many, brent_root
from .vehicle import Vehicle

__all__ = ["PathProfile", "GroundContact", "place", "body_clearances", "minimum_clearance",
           "worst_ground_clearance", "shortest_transition",
           "breakover_angle", "sharp_crest_profile", "transition_test_profile"]


@dataclass(frozen=True, eq=False)
class PathProfile:
    """Levels along one wheel path, extended level beyond the thread's ends (the floor).

    ``z(s)`` for horizontal distance ``s`` along the circle of ``radius``; ``s = 0`` at
    the thread's start.
    """

    profile: Profile
    radius: float

    @property
    def length(self) -> float:
        return self.radius * (self.profile.end - self.profile.start)

    def z(self, s) -> np.ndarray:
        p = self.profile
        theta = p.start + np.asarray(s, float) / self.radius
        # Beyond the ends of the thread the floor continues level.
        return p.level(np.clip(theta, p.start, p.end))

    def grade(self, s) -> np.ndarray:
        """Gradient along the path at ``s`` (0 on the floor beyond the thread's ends)."""
        p = self.profile
        theta = p.start + np.asarray(s, float) / self.radius
        inside = (theta >= p.start) & (theta <= p.end)
        return np.where(inside, p.slope(np.clip(theta, p.start, p.end)) / self.radius, 0.0)

    def theta(self, s) -> np.ndarray:
        return self.profile.start + np.asarray(s, float) / self.radius

    @property
    def breaks(self) -> np.ndarray:
        """Horizontal positions of the alignment's breakpoints along this path."""
        return self.radius * (self.profile.t - self.profile.start)

    def stationary(self, s_lo: np.ndarray, slope: np.ndarray, s_hi: np.ndarray | None = None) -> np.ndarray:
        """For each row, the points where a vertical curve's grade equals ``slope``
        (NaN where there is none): where a straight line parallel to a chord comes
        closest to, or goes deepest into, a curved profile.  With ``s_hi``, only the
        segments overlapping ``[s_lo, s_hi]`` of each row are looked at, so the work
        stays proportional to the rows, not rows times segments."""
        p = self.profile
        r = self.radius
        if s_hi is None:
            curved = np.flatnonzero(np.abs(p.q) > 0)
            if curved.size == 0:
                return np.full((len(s_lo), 0), np.nan)
            seg = np.broadcast_to(curved[None, :], (len(s_lo), curved.size))
            valid = np.ones(seg.shape, bool)
        else:
            seg, valid = _window(self.breaks, s_lo, s_hi, segments=True)
            valid &= np.abs(p.q[seg]) > 0
        # On segment j the grade is (k_j + q_j u) / r with u the angle from its start.
        q = np.where(valid, p.q[seg], 1.0)
        u = (slope[:, None] * r - p.k[seg]) / q
        length = p.t[seg + 1] - p.t[seg]
        ok = valid & (u >= 0) & (u <= length)
        s_pt = r * (p.t[seg] - p.start + u)
        return np.where(ok, s_pt, np.nan)


def _window(breaks: np.ndarray, s_lo: np.ndarray, s_hi: np.ndarray,
            segments: bool = False) -> tuple[np.ndarray, np.ndarray]:
    """Per row, the indices of the breakpoints inside ``[s_lo, s_hi]`` (or, with
    ``segments``, of the segments overlapping it), padded to a rectangle; and a mask of
    the real ones.  A wheelbase spans a few breakpoints however long the thread is."""
    if segments:
        n = len(breaks) - 1
        lo = np.clip(np.searchsorted(breaks, s_lo, side="right") - 1, 0, n - 1)
        hi = np.clip(np.searchsorted(breaks, s_hi, side="left") - 1, 0, n - 1) + 1
    else:
        n = len(breaks)
        lo = np.searchsorted(breaks, s_lo, side="left")
        hi = np.searchsorted(breaks, s_hi, side="right")
    width = int(np.max(hi - lo, initial=0))
    idx = lo[:, None] + np.arange(width)[None, :]
    valid = idx < hi[:, None]
    return np.clip(idx, 0, max(n - 1, 0)), valid


@dataclass(frozen=True)
class GroundContact:
    part: str  # "underbody", "front overhang", "rear overhang" or "roof"
    clearance: float
    s_rear: float  # horizontal position of the lower wheel contact along the path
    s_point: float  # where along the path the clearance is smallest
    facing: str  # "up" or "down" the ramp


def _chord_end(z: Callable, s_a: np.ndarray, wheelbase: float) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Upper wheel contact ``s_b`` a chord ``wheelbase`` from ``s_a``; fixed point."""
    za = z(s_a)
    s_b = s_a + wheelbase
    for _ in range(30):
        dz = z(s_b) - za
        s_new = s_a + np.sqrt(np.maximum(wheelbase ** 2 - dz ** 2, 0.0))
        if np.max(np.abs(s_new - s_b)) < 1e-12:
            s_b = s_new
            break
        s_b = s_new
    return s_b, za, z(s_b)


def place(vehicle: Vehicle, path: PathProfile, s_a, facing: str = "up"):
    """Wheel contacts, chord direction and normal for the lower contact at ``s_a``."""
    s_a = np.atleast_1d(np.asarray(s_a, float))
    s_b, za, zb = _chord_end(path.z, s_a, vehicle.wheelbase)
    us = (s_b - s_a) / vehicle.wheelbase
    uz = (zb - za) / vehicle.wheelbase
    return s_a, za, s_b, zb, us, uz


def _ends(vehicle: Vehicle, facing: str):
    """(length, height) of the overhang behind the lower contact and ahead of the upper."""
    f = (vehicle.front_overhang, vehicle.front_overhang_clearance)
    r = (vehicle.rear_overhang, vehicle.rear_overhang_clearance)
    return (r, f) if facing == "up" else (f, r)


def body_clearances(vehicle: Vehicle, path: PathProfile, s_a, facing: str = "up",
                    soffit: Callable | None = None, samples: int = 25) -> dict[str, tuple[np.ndarray, np.ndarray]]:
    """Clearances of every part with the vehicle's lower contact at ``s_a``.

    Returns ``part -> (clearance, s_point)`` arrays over ``s_a``.  The underbody
    clearance is the distance of the surface, normal to the chord, from the underbody
    line; an overhang's is the distance of its lowest point, normal to the running
    surface below it (one convention facing up or down: the configurations mirror each
    other across the bisector of a sag); the roof's is the vertical gap to the soffit
    times the cosine of the body's pitch.  ``soffit(s)`` (level of the underside of the structure overhead) adds the
    "roof" part.
    """
    s_a, za, s_b, zb, us, uz = place(vehicle, path, s_a, facing)
    nx, nz = -uz, us  # upward normal to the chord
    out: dict[str, tuple[np.ndarray, np.ndarray]] = {}

    def gap(ps, pz):
        # Normal to the running surface under the point: the same distance whichever
        # way the vehicle faces (a vertical gap would differ by the cosine of the grade).
        return (pz - path.z(ps)) / np.sqrt(1.0 + path.grade(ps) ** 2)

    def minimum(c, ps):
        k = np.argmin(c, axis=1)
        rows = np.arange(c.shape[0])
        return c[rows, k], ps[rows, k]

    h = vehicle.ground_clearance
    if h is not None:
        # Exact: a line under a piecewise-quadratic profile is deepest at one of its
        # breakpoints or where a vertical curve runs parallel to it.
        slope = uz / us
        # Only the breakpoints under the wheelbase: linear work in the thread's length.
        idx, valid = _window(path.breaks, s_a, s_b)
        brk = np.where(valid, path.breaks[idx], s_a[:, None])
        cand = np.concatenate([s_a[:, None], s_b[:, None], brk, path.stationary(s_a, slope, s_b)], axis=1)
        inside = (cand >= s_a[:, None]) & (cand <= s_b[:, None])
        cand = np.where(inside, cand, s_a[:, None])
        chord = za[:, None] + slope[:, None] * (cand - s_a[:, None])
        c = (chord - path.z(cand)) * us[:, None] + h
        out["underbody"] = minimum(c, cand)
    (len_lo, h_lo), (len_hi, h_hi) = _ends(vehicle, facing)
    names = ("rear overhang", "front overhang") if facing == "up" else ("front overhang", "rear overhang")
    if h_lo is not None:
        ps = s_a - len_lo * us + h_lo * nx
        pz = za - len_lo * uz + h_lo * nz
        out[names[0]] = (gap(ps[:, None], pz[:, None])[:, 0], ps)
    if h_hi is not None:
        ps = s_b + len_hi * us + h_hi * nx
        pz = zb + len_hi * uz + h_hi * nz
        out[names[1]] = (gap(ps[:, None], pz[:, None])[:, 0], ps)
    if soffit is not None:
        t = np.linspace(-len_lo / vehicle.wheelbase, 1.0 + len_hi / vehicle.wheelbase, samples)[None, :]
        H = vehicle.height
        ps = s_a[:, None] + t * (s_b - s_a)[:, None] + H * nx[:, None]
        pz = za[:, None] + t * (zb - za)[:, None] + H * nz[:, None]
        c = (soffit(ps) - pz) * us[:, None]
        c = np.where(np.isfinite(c), c, np.inf)
        out["roof"] = minimum(c, ps)
    return out


_BLOCK = 20_000  # vehicle positions per block of the grid in minimum_clearance


def minimum_clearance(vehicle: Vehicle, path: PathProfile, soffit: Callable | None = None,
                      step: float = 0.1, facings=("up", "down"),
                      focus: float | None = None) -> dict[str, GroundContact]:
    """Smallest clearance of each part over every position along the path.

    The vehicle runs from wholly on the floor below the thread to wholly on the floor
    above it (the floor continues level beyond the ends); the grid minimum is then
    refined by a bounded scalar minimiser within one grid step either side.  With
    ``focus``, only the parts whose grid minimum lies within ``focus`` metres of the
    smallest of all are refined (enough when only the worst clearance is wanted).
    """
    reach = vehicle.length
    lo, hi = -reach, path.length + reach
    grid = np.arange(lo, hi + step, step)
    found = []
    for facing in facings:
        best: dict[str, tuple[float, float]] = {}
        # In blocks of positions: memory stays bounded however long the thread is.
        for i in range(0, len(grid), _BLOCK):
            block = grid[i:i + _BLOCK]
            for part, (c, _) in body_clearances(vehicle, path, block, facing, soffit).items():
                if np.any(np.isfinite(c)):
                    k = int(np.argmin(c))
                    if part not in best or float(c[k]) < best[part][0]:
                        best[part] = (float(c[k]), float(block[k]))
        found += [(c, part, facing, s) for part, (c, s) in best.items()]
    if not found:
        return {}
    floor = min(f[0] for f in found)
    # Refine every part near the floor by Brent's method, the parts of one facing in
    # lockstep (the same steps as one at a time; body_clearances gives all parts at once).
    refined: dict[int, tuple[float, float]] = {}
    for facing in facings:
        jobs = [i for i, (grid_c, part, fc, s0) in enumerate(found)
                if fc == facing and min(hi, s0 + step) > max(lo, s0 - step)
                and (focus is None or grid_c <= floor + focus)]
        if not jobs:
            continue
        parts = [found[i][1] for i in jobs]
        a = np.array([max(lo, found[i][3] - step) for i in jobs])
        b = np.array([min(hi, found[i][3] + step) for i in jobs])

        def f(idx, s, facing=facing, parts=parts):
            res = body_clearances(vehicle, path, s, facing, soffit)
            return np.array([res[parts[int(j)]][0][n] for n, j in enumerate(idx)])

        x_min, f_min = brent_minimum_many(f, a, b, xtol=1e-6)
        refined.update(zip(jobs, zip(x_min.tolist(), f_min.tolist())))
    result: dict[str, GroundContact] = {}
    for i, (grid_c, part, facing, s0) in enumerate(found):
        best_s, best_c = s0, grid_c
        if i in refined and refined[i][1] < best_c:
            best_s, best_c = refined[i]
        point = float(body_clearances(vehicle, path, [best_s], facing, soffit)[part][1][0])
        if part not in result or best_c < result[part].clearance:
            result[part] = GroundContact(part, best_c, best_s, point, facing)
    return result


def breakover_angle(ground_clearance: float, wheelbase: float) -> float:
    """Ramp breakover angle (rad) of a sharp crest, ``2 atan(2 h / L)`` (SAE J1100)."""
    return 2.0 * math.atan(2.0 * ground_clearance / wheelbase)


def _straight_profile(breaks_s, grades, radius: float = 1.0) -> PathProfile:
    """A path profile of straight grades meeting at ``breaks_s`` (for tests and sizing)."""
    from .alignment import Profile as P
    t = np.asarray(breaks_s, float) / radius
    k = np.asarray(grades, float) * radius  # one grade per segment: len(t) - 1
    z0 = np.concatenate([[0.0], np.cumsum(k * np.diff(t))[:-1]])
    prof = P(t=t, z0=z0, k=k, q=np.zeros(len(t) - 1),
             kind=("run",) * (len(t) - 1), storey=(0,) * (len(t) - 1),
             connections=np.array([t[0], t[-1]]), connection_levels=np.array([0.0, 0.0]))
    return PathProfile(prof, radius)


def sharp_crest_profile(angle: float, approach: float = 20.0) -> PathProfile:
    """Symmetric sharp crest of ``angle`` (rad): grades ``+tan(a/2)`` then ``-tan(a/2)``."""
    g = math.tan(0.5 * angle)
    return _straight_profile([0.0, approach, 2 * approach], [g, -g])


def transition_test_profile(grade: float, length: float, kind: str = "segment",
                            run: float = 20.0, flat: float = 15.0, landing_grade: float = 0.0) -> PathProfile:
    """Flat, transition, run at ``grade``, transition, flat: one sag and one crest."""
    from .alignment import Profile as P
    z0: list[float] = []
    k: list[float] = []
    q: list[float] = []
    kinds: list[str] = []
    z = 0.0
    def transition(g_from: float, g_to: float) -> list[tuple[float, float, float, str]]:
        if length <= 0:
            return []
        if kind == "curve":
            return [(length, g_from, (g_to - g_from) / length, "transition")]
        return [(length, 0.5 * (g_from + g_to), 0.0, "transition")]

    segs = ([(flat, landing_grade, 0.0, "landing")] + transition(landing_grade, grade)
            + [(run, grade, 0.0, "run")] + transition(grade, landing_grade)
            + [(flat, landing_grade, 0.0, "landing")])
    starts = np.concatenate([[0.0], np.cumsum([sg[0] for sg in segs])])
    for sg in segs:
        z0.append(z)
        k.append(sg[1])
        q.append(sg[2])
        kinds.append(sg[3])
        z += sg[1] * sg[0] + 0.5 * sg[2] * sg[0] ** 2
    prof = P(t=starts, z0=np.array(z0), k=np.array(k), q=np.array(q), kind=tuple(kinds),
             storey=tuple(0 if kd != "landing" else -1 for kd in kinds),
             connections=np.array([starts[0], starts[-1]]), connection_levels=np.array([0.0, z]))
    return PathProfile(prof, 1.0)


def worst_ground_clearance(vehicle: Vehicle, path: PathProfile) -> float:
    """Smallest underbody or overhang clearance anywhere along ``path``."""
    res = minimum_clearance(vehicle, path, focus=0.005)
    return min(c.clearance for c in res.values()) if res else math.inf


def shortest_transition(vehicle: Vehicle, grade: float, kind: str = "segment", margin: float = 0.0,
                        landing_grade: float = 0.0, longest: float = 15.0, step: float = 0.25) -> float:
    """Shortest transition (m, along the wheel path) between a landing at
    ``landing_grade`` and a run at ``grade`` that keeps every underbody and overhang
    clearance at least ``margin``, at both the sag and the crest.

    Returns 0 when a sharp change already clears and ``inf`` when no transition up to
    ``longest`` does (a half-grade segment cannot help once half the change is more
    than the vehicle clears).  The clearance is not monotonic in the length of a
    half-grade segment near the wheelbase, so lengths are scanned down from
    ``longest`` to the first that fails and the boundary refined there by Brent's method.
    """
    run = max(12.0, 2 * vehicle.length)
    flat = vehicle.length + 2.0
    f = lambda length: worst_ground_clearance(vehicle, transition_test_profile(
        grade, length, kind, run=run, flat=flat, landing_grade=landing_grade)) - margin
    if f(0.0) >= 0:
        return 0.0
    # Coarse scan, then a fine scan down from the first coarse length after which
    # every coarse length clears, then the root.
    coarse = [L for L in (0.5, 1.0, 1.5, 2.0, 3.0, 4.0, 6.0, 8.0, 11.0) if L < longest] + [longest]
    values = [f(L) for L in coarse]
    if values[-1] < 0:
        return math.inf
    last_bad = max((i for i, v in enumerate(values) if v < 0), default=-1)
    upper = coarse[last_bad + 1]
    floor = coarse[last_bad] if last_bad >= 0 else 0.0
    while upper - step > floor + 1e-9:
        lower = upper - step
        if f(lower) < 0:
            return float(brent_root(f, lower, upper, xtol=1e-4))
        upper = lower
    return float(brent_root(f, floor, upper, xtol=1e-4))
