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
refined with Brent's bounded minimiser (:func:`helix.roots.brent_minimum`).  At each
position every clearance is exact: the profile under the underbody and the soffit over
the roof are piecewise quadratic, so the gap to a straight line is smallest at an end,
at a breakpoint or where a vertical curve runs parallel to the line, and only those
points are evaluated.  Along a run of positions wholly over one straight grade (and,
for the roof, under straight surfaces) the ground clearances are constant and the roof
clearance concave, so only the two ends of the run are evaluated.  All the wheel paths
and body sides of a thread, both facings, share each numpy call
(:func:`minimum_clearances`).

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
from .clearance import Overhead
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
        # Beyond the ends of the thread the floor continues level.
        return _z(self.profile, np.asarray(s, float), self.radius)

    def grade(self, s) -> np.ndarray:
        """Gradient along the path at ``s`` (0 on the floor beyond the thread's ends)."""
        return _grade(self.profile, np.asarray(s, float), self.radius)

    def theta(self, s) -> np.ndarray:
        return self.profile.start + np.asarray(s, float) / self.radius

    @property
    def breaks(self) -> np.ndarray:
        """Horizontal positions of the alignment's breakpoints along this path."""
        return self.radius * (self.profile.t - self.profile.start)


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


# The vehicle on many wheel paths of one profile at once: every function below takes
# one row per vehicle position, each with its own path radius ``r`` and facing ``up``
# (True: facing up the ramp), so all the paths and both facings of a thread share each
# numpy call.  On one path this is exactly the single-path computation, row by row.

def _column(r, s: np.ndarray):
    """One radius for all of ``s``, or one per row of it, shaped to broadcast."""
    return r if np.ndim(r) == 0 or s.ndim == 1 else r.reshape((-1,) + (1,) * (s.ndim - 1))


def _z(p: Profile, s: np.ndarray, r) -> np.ndarray:
    """Level at ``s`` along each row's path; the floor continues level beyond the ends."""
    return p.level(np.clip(p.start + s / _column(r, s), p.start, p.end))


def _grade(p: Profile, s: np.ndarray, r) -> np.ndarray:
    rr = _column(r, s)
    theta = p.start + s / rr
    inside = (theta >= p.start) & (theta <= p.end)
    return np.where(inside, p.slope(np.clip(theta, p.start, p.end)) / rr, 0.0)


def _stationary(p: Profile, r: np.ndarray, s_lo: np.ndarray, slope: np.ndarray,
                s_hi: np.ndarray) -> np.ndarray:
    """Per row, the points in the segments overlapping ``[s_lo, s_hi]`` where a vertical
    curve's grade equals ``slope`` (NaN where there is none)."""
    seg, valid = _window(p.t, p.start + s_lo / r, p.start + s_hi / r, segments=True)
    valid &= np.abs(p.q[seg]) > 0
    # On segment j the grade is (k_j + q_j u) / r with u the angle from its start.
    q = np.where(valid, p.q[seg], 1.0)
    u = (slope[:, None] * r[:, None] - p.k[seg]) / q
    length = p.t[seg + 1] - p.t[seg]
    ok = valid & (u >= 0) & (u <= length)
    return np.where(ok, r[:, None] * (p.t[seg] - p.start + u), np.nan)


def _chord_end(z: Callable, s_a: np.ndarray, wheelbase: float,
               grade: Callable | None = None) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Upper wheel contact ``s_b`` a chord ``wheelbase`` from ``s_a``: the root of
    ``(s_b - s_a)^2 + (z(s_b) - z(s_a))^2 = wheelbase^2``.  With ``grade`` (dz/ds),
    Newton's steps first (quadratic convergence where the profile is smooth); then,
    for any row not yet converged, the fixed point ``s_b = s_a + sqrt(L^2 - dz^2)``,
    which contracts by about the grade squared and converges even at a sharp kink."""
    za = z(s_a)
    s_b = s_a + wheelbase
    if grade is not None:
        for _ in range(6):
            dz = z(s_b) - za
            ds = s_b - s_a
            step = (ds * ds + dz * dz - wheelbase ** 2) / (2.0 * (ds + dz * grade(s_b)))
            s_new = np.clip(s_b - step, s_a, s_a + wheelbase)
            done = np.max(np.abs(s_new - s_b), initial=0.0) < 1e-12
            s_b = s_new
            if done:
                return s_b, za, z(s_b)
    for _ in range(30):
        dz = z(s_b) - za
        s_new = s_a + np.sqrt(np.maximum(wheelbase ** 2 - dz ** 2, 0.0))
        if np.max(np.abs(s_new - s_b), initial=0.0) < 1e-12:
            s_b = s_new
            break
        s_b = s_new
    return s_b, za, z(s_b)


def _place(vehicle: Vehicle, p: Profile, r: np.ndarray, s_a: np.ndarray):
    s_b, za, zb = _chord_end(lambda s: _z(p, s, r), s_a, vehicle.wheelbase, lambda s: _grade(p, s, r))
    return s_b, za, zb, (s_b - s_a) / vehicle.wheelbase, (zb - za) / vehicle.wheelbase


def _part_clearances(vehicle: Vehicle, p: Profile, r: np.ndarray, up: np.ndarray, s_a: np.ndarray,
                     side: np.ndarray | None = None,
                     overhead: Overhead | None = None) -> dict[str, tuple[np.ndarray, np.ndarray]]:
    """The row-wise core of :func:`body_clearances`: the ground parts on the rows that
    are wheel paths and the roof (with ``overhead``) on the rows marked ``side`` (body
    sides); each part's arrays cover every row, ``inf`` where it is not measured."""
    s_b, za, zb, us, uz = _place(vehicle, p, r, s_a)
    wheel = np.ones(len(s_a), bool) if side is None else ~side
    out: dict[str, tuple[np.ndarray, np.ndarray]] = {}
    measures: tuple[tuple[np.ndarray, Callable[..., dict[str, tuple[np.ndarray, np.ndarray]]] | None], ...] = (
        (wheel, _ground), (~wheel, None if overhead is None else _roof))
    for rows, parts in measures:
        if parts is None or not np.any(rows):
            continue
        whole = bool(np.all(rows))
        cols = [x if whole else x[rows] for x in (r, up, s_a, s_b, za, zb, us, uz)]
        for part, (c, ps) in parts(vehicle, p, *cols, overhead).items():
            if whole:
                out[part] = (c, ps)
            else:
                c_all, ps_all = np.full(len(s_a), np.inf), s_a.copy()
                c_all[rows], ps_all[rows] = c, ps
                out[part] = (c_all, ps_all)
    return out


def _ground(vehicle: Vehicle, p: Profile, r: np.ndarray, up: np.ndarray, s_a: np.ndarray, s_b: np.ndarray,
            za: np.ndarray, zb: np.ndarray, us: np.ndarray, uz: np.ndarray,
            overhead: Overhead | None = None) -> dict[str, tuple[np.ndarray, np.ndarray]]:
    """Underbody and overhang clearances of each row and where along the path they are."""
    nx, nz = -uz, us  # upward normal to the chord
    out: dict[str, tuple[np.ndarray, np.ndarray]] = {}
    h = vehicle.ground_clearance
    if h is not None:
        # Exact: a line under a piecewise-quadratic profile is deepest at one of its
        # breakpoints or where a vertical curve runs parallel to it.
        slope = uz / us
        # Only the breakpoints under the wheelbase: linear work in the thread's length.
        idx, valid = _window(p.t, p.start + s_a / r, p.start + s_b / r)
        brk = np.where(valid, r[:, None] * (p.t[idx] - p.start), s_a[:, None])
        cand = np.concatenate([s_a[:, None], s_b[:, None], brk, _stationary(p, r, s_a, slope, s_b)], axis=1)
        inside = (cand >= s_a[:, None]) & (cand <= s_b[:, None])
        cand = np.where(inside, cand, s_a[:, None])
        chord = za[:, None] + slope[:, None] * (cand - s_a[:, None])
        c = (chord - _z(p, cand, r)) * us[:, None] + h
        k = np.argmin(c, axis=1)
        n = np.arange(len(s_a))
        out["underbody"] = (c[n, k], cand[n, k])
    for name, length, height in (
            ("rear overhang", vehicle.rear_overhang, vehicle.rear_overhang_clearance),
            ("front overhang", vehicle.front_overhang, vehicle.front_overhang_clearance)):
        if height is None:
            continue
        # Facing up, the rear overhang trails behind the lower contact; facing down
        # it leads ahead of the upper one (and the front the other way round).
        behind = up if name == "rear overhang" else ~up
        ps = np.where(behind, s_a - length * us, s_b + length * us) + height * nx
        pz = np.where(behind, za - length * uz, zb + length * uz) + height * nz
        # Normal to the running surface under the point: the same distance whichever
        # way the vehicle faces (a vertical gap would differ by the cosine of the grade).
        out[name] = ((pz - _z(p, ps, r)) / np.sqrt(1.0 + _grade(p, ps, r) ** 2), ps)
    return out


def _overlapping(a: np.ndarray, b: np.ndarray, lo: np.ndarray, hi: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Per row, the indices of the disjoint sorted intervals ``[a_j, b_j]`` that overlap
    ``[lo, hi]``, padded to a rectangle, and a mask of the real ones."""
    first = np.searchsorted(b, lo, side="left")
    last = np.searchsorted(a, hi, side="right")
    width = int(np.max(last - first, initial=0))
    idx = first[:, None] + np.arange(width)[None, :]
    return np.clip(idx, 0, max(len(a) - 1, 0)), idx < last[:, None]


def _roof(vehicle: Vehicle, p: Profile, r: np.ndarray, up: np.ndarray, s_a: np.ndarray, s_b: np.ndarray,
          za: np.ndarray, zb: np.ndarray, us: np.ndarray, uz: np.ndarray,
          overhead: Overhead | None) -> dict[str, tuple[np.ndarray, np.ndarray]]:
    """Smallest roof clearance of each row and where along the path it is.

    The roof is a straight line at the vehicle's height above the chord, from end to
    end; the soffit over the path is piecewise quadratic between ``overhead.breaks``, so
    the vertical gap from the line is smallest at an end of the roof, at a break under
    it, or where a curved piece of the soffit runs parallel to it: exact at those
    points, which are all that is evaluated.  The clearance is that gap times the
    cosine of the body's pitch."""
    assert overhead is not None
    H = vehicle.height
    behind = np.where(up, vehicle.rear_overhang, vehicle.front_overhang)
    ahead = np.where(up, vehicle.front_overhang, vehicle.rear_overhang)
    lo_s = s_a - behind * us - H * uz
    lo_z = za - behind * uz + H * us
    hi_s = s_b + ahead * us - H * uz
    slope = uz / us
    th_lo, th_hi = p.start + lo_s / r, p.start + hi_s / r
    idx, valid = _window(overhead.breaks, th_lo, th_hi)
    cols = [lo_s[:, None], hi_s[:, None], np.where(valid, r[:, None] * (overhead.breaks[idx] - p.start), np.nan)]
    for a, b, base, k, q in overhead.curves:
        j, ok = _overlapping(a, b, th_lo, th_hi)
        th = base[j] + (slope[:, None] * r[:, None] - k[j]) / q[j]
        ok &= (th >= a[j]) & (th <= b[j])
        cols.append(np.where(ok, r[:, None] * (th - p.start), np.nan))
    cand = np.concatenate(cols, axis=1)
    use = (cand >= lo_s[:, None]) & (cand <= hi_s[:, None])
    # Evaluate the soffit only where there is a candidate (a few per row).
    rows, col = np.nonzero(use)
    ps = cand[rows, col]
    gap = overhead.level(p.start + ps / r[rows], r[rows]) - (lo_z[rows] + slope[rows] * (ps - lo_s[rows]))
    c = np.full(cand.shape, np.inf)
    c[rows, col] = np.where(np.isfinite(gap), gap * us[rows], np.inf)
    k_min = np.argmin(c, axis=1)
    n = np.arange(len(s_a))
    return {"roof": (c[n, k_min], np.where(np.isfinite(cand[n, k_min]), cand[n, k_min], lo_s))}


def place(vehicle: Vehicle, path: PathProfile, s_a, facing: str = "up"):
    """Wheel contacts, chord direction and normal for the lower contact at ``s_a``."""
    s_a = np.atleast_1d(np.asarray(s_a, float))
    s_b, za, zb, us, uz = _place(vehicle, path.profile, np.full(s_a.shape, float(path.radius)), s_a)
    return s_a, za, s_b, zb, us, uz


def body_clearances(vehicle: Vehicle, path: PathProfile, s_a, facing: str = "up",
                    overhead: Overhead | None = None) -> dict[str, tuple[np.ndarray, np.ndarray]]:
    """Clearances of every part with the vehicle's lower contact at ``s_a``.

    Returns ``part -> (clearance, s_point)`` arrays over ``s_a``.  The underbody
    clearance is the distance of the surface, normal to the chord, from the underbody
    line; an overhang's is the distance of its lowest point, normal to the running
    surface below it (one convention facing up or down: the configurations mirror each
    other across the bisector of a sag); the roof's is the vertical gap to the soffit
    times the cosine of the body's pitch.  ``overhead`` (the underside of the structure
    over the path's thread, :class:`~helix.clearance.Overhead`) adds the "roof" part.
    """
    s_a = np.atleast_1d(np.asarray(s_a, float))
    n = len(s_a)
    r = np.full(2 * n if overhead is not None else n, float(path.radius))
    up = np.full(r.shape, facing == "up")
    if overhead is None:
        return _part_clearances(vehicle, path.profile, r, up, s_a)
    # The path is both a wheel path and a body side: each row twice.
    res = _part_clearances(vehicle, path.profile, r, up, np.concatenate([s_a, s_a]),
                           np.repeat([False, True], n), overhead)
    return {part: (c[:n], ps[:n]) if part != "roof" else (c[n:], ps[n:]) for part, (c, ps) in res.items()}


def _plain(vehicle: Vehicle, p: Profile, r: np.ndarray, s_a: np.ndarray,
           overhead: Overhead | None = None) -> np.ndarray:
    """Rows whose whole vehicle lies over one straight piece of the path (no breakpoint
    under it, no vertical curve, or wholly on the floor beyond the thread) and, with
    ``overhead`` (body sides), under straight pieces of whatever is above.

    Along a run of such positions each ground clearance is exactly its own height (the
    underbody and overhangs stay parallel to the surface) and the roof clearance, the
    smaller of two linear functions of the position, is concave: so the smallest of
    each over the run is at one of its two ends, and only those need evaluating."""
    reach = max(vehicle.front_overhang, vehicle.rear_overhang)
    height = vehicle.height if overhead is not None else max(
        h for h in (vehicle.ground_clearance, vehicle.front_overhang_clearance,
                    vehicle.rear_overhang_clearance, 0.0) if h is not None)
    # The chord is never longer than the wheelbase, and a point a height off the chord
    # along its normal moves along the path by at most that height times the steepest
    # grade of the path (the normal's horizontal part is the chord's rise over its
    # length): so this span holds every point the parts look at.
    steepest = float(np.max(np.abs(np.concatenate([p.k, p.k + p.q * np.diff(p.t)]))))
    lift = height * np.minimum(1.0, steepest / r)
    th_lo = p.start + (s_a - reach - lift - 1e-6) / r
    th_hi = p.start + (s_a + vehicle.wheelbase + reach + lift + 1e-6) / r
    breaks = p.t if overhead is None else overhead.breaks
    plain = np.searchsorted(breaks, th_lo, side="left") == np.searchsorted(breaks, th_hi, side="right")
    beyond = (th_hi < p.start) | (th_lo > p.end)
    seg = np.clip(np.searchsorted(p.t, th_lo, side="right") - 1, 0, len(p.q) - 1)
    plain &= beyond | (p.q[seg] == 0)
    if overhead is not None:
        for a, b, *_ in overhead.curves:
            _, hit = _overlapping(a, b, th_lo, th_hi)
            plain &= ~np.any(hit, axis=1)
    return plain


_BLOCK = 20_000  # vehicle positions per block of the grid in minimum_clearances


def minimum_clearances(vehicle: Vehicle, profile: Profile, wheel_radii, side_radii=(),
                       overhead: Overhead | None = None, step: float = 0.1, facings=("up", "down"),
                       focus: float | None = None) -> tuple[list[dict[str, GroundContact]], list[dict[str, GroundContact]]]:
    """:func:`minimum_clearance` on many paths of one profile at once: the ground parts
    (underbody, overhangs) on the wheel paths of ``wheel_radii`` and the roof under
    ``overhead`` (:class:`~helix.clearance.Overhead`, of the profile's thread) on the
    body sides of ``side_radii``.  ``focus`` applies per path.  Returns one dict per
    wheel path and one per body side.
    """
    radii = [float(x) for x in wheel_radii] + [float(x) for x in side_radii]
    n_wheels = len(wheel_radii)
    if overhead is None and len(radii) > n_wheels:
        raise ValueError("the roof needs what is overhead")
    reach = vehicle.length
    span = profile.end - profile.start
    # One group of rows per path and facing, in that order, each the grid of positions
    # from wholly on the floor below the thread to wholly on the floor above it.
    groups = [(i, facing) for i in range(len(radii)) for facing in facings]
    limits = [(-reach, radii[i] * span + reach) for i, _ in groups]
    grids = [np.arange(lo, hi + step, step) for lo, hi in limits]
    s_all = np.concatenate(grids) if grids else np.zeros(0)
    g_all = np.repeat(np.arange(len(groups)), [len(g) for g in grids])
    r_g = np.array([radii[i] for i, _ in groups])
    up_g = np.array([f == "up" for _, f in groups], bool)
    side_g = np.array([i >= n_wheels for i, _ in groups], bool)
    if len(s_all):
        # Only the ends of each run of plain positions can hold its smallest values.
        side = side_g[g_all]
        plain = np.zeros(len(s_all), bool)
        for rows, above in ((~side, None), (side, overhead)):
            if np.any(rows):
                plain[rows] = _plain(vehicle, profile, r_g[g_all[rows]], s_all[rows], above)
        same = np.diff(g_all) == 0
        inner = np.zeros(len(s_all), bool)
        inner[1:-1] = plain[:-2] & plain[2:] & same[:-1] & same[1:]
        keep = ~(plain & inner)
        s_all, g_all = s_all[keep], g_all[keep]

    def clearances(gs: np.ndarray, s: np.ndarray) -> dict[str, tuple[np.ndarray, np.ndarray]]:
        return _part_clearances(vehicle, profile, r_g[gs], up_g[gs], s, side_g[gs], overhead)

    best: list[dict[str, tuple[float, float]]] = [{} for _ in groups]
    # In blocks of positions: memory stays bounded however long the thread is.
    for b0 in range(0, len(s_all), _BLOCK):
        s, g = s_all[b0:b0 + _BLOCK], g_all[b0:b0 + _BLOCK]
        res = clearances(g, s)
        cuts = np.flatnonzero(np.diff(g)) + 1
        for lo, hi in zip(np.concatenate([[0], cuts]), np.concatenate([cuts, [len(g)]])):
            gi = int(g[lo])
            for part, (c, _) in res.items():
                cg = c[lo:hi]
                if np.any(np.isfinite(cg)):
                    k = int(np.argmin(cg))
                    if part not in best[gi] or float(cg[k]) < best[gi][part][0]:
                        best[gi][part] = (float(cg[k]), float(s[lo + k]))
    found = [(val, part, gi, s0) for gi in range(len(groups)) for part, (val, s0) in best[gi].items()]
    floor: dict[int, float] = {}
    for val, _, gi, _ in found:
        i = groups[gi][0]
        floor[i] = min(floor.get(i, math.inf), val)
    # Refine every part near its path's floor by Brent's method, all in lockstep (each
    # interval takes the steps it would take alone; the calls are shared).
    jobs = [n for n, (val, part, gi, s0) in enumerate(found)
            if min(limits[gi][1], s0 + step) > max(limits[gi][0], s0 - step)
            and (focus is None or val <= floor[groups[gi][0]] + focus)]
    refined: dict[int, tuple[float, float]] = {}
    if jobs:
        job_g = np.array([found[n][2] for n in jobs])
        job_part = [found[n][1] for n in jobs]
        a = np.array([max(limits[found[n][2]][0], found[n][3] - step) for n in jobs])
        b = np.array([min(limits[found[n][2]][1], found[n][3] + step) for n in jobs])

        def f(idx, s):
            res = clearances(job_g[idx], s)
            return np.array([res[job_part[int(j)]][0][m] for m, j in enumerate(idx)])

        x_min, f_min = brent_minimum_many(f, a, b, xtol=1e-6)
        refined = dict(zip(jobs, zip(x_min.tolist(), f_min.tolist())))
    chosen: list[tuple[float, float]] = []
    for n, (val, part, gi, s0) in enumerate(found):
        if n in refined and refined[n][1] < val:
            s0, val = refined[n][0], refined[n][1]
        chosen.append((val, s0))
    # Where each minimum lies along the path: one call for all.
    points: list[float] = []
    if found:
        res = clearances(np.array([gi for _, _, gi, _ in found]), np.array([s for _, s in chosen]))
        points = [float(res[found[n][1]][1][n]) for n in range(len(found))]
    out: list[dict[str, GroundContact]] = [{} for _ in radii]
    for n, (_, part, gi, _) in enumerate(found):
        i, facing = groups[gi]
        val, s0 = chosen[n]
        if part not in out[i] or val < out[i][part].clearance:
            out[i][part] = GroundContact(part, val, s0, points[n], facing)
    return out[:n_wheels], out[n_wheels:]


def minimum_clearance(vehicle: Vehicle, path: PathProfile, overhead: Overhead | None = None,
                      step: float = 0.1, facings=("up", "down"),
                      focus: float | None = None) -> dict[str, GroundContact]:
    """Smallest clearance of each part over every position along the path.

    The vehicle runs from wholly on the floor below the thread to wholly on the floor
    above it (the floor continues level beyond the ends); the grid minimum is then
    refined by a bounded scalar minimiser within one grid step either side.  With
    ``focus``, only the parts whose grid minimum lies within ``focus`` metres of the
    smallest of all are refined (enough when only the worst clearance is wanted);
    with ``overhead`` the roof is measured too, the path taken as a body side.
    """
    sides = [path.radius] if overhead is not None else []
    wheels, roof = minimum_clearances(vehicle, path.profile, [path.radius], sides, overhead, step, facings, focus)
    return {**wheels[0], **(roof[0] if roof else {})}


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
