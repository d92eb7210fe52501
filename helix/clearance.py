"""Clear headroom along every thread: the gap to whatever lies above, less structure.

At a plan position of thread ``T`` the surfaces overhead are the other turns of every
thread whose annulus covers that radius (``T`` itself a turn higher, the other
thread of a double helix) and, if the project has one, a cover slab over the helix.
Clear headroom is the vertical gap to the nearest of them minus the structural depth
(slab plus whatever hangs below it); for the cover, its soffit level is used directly.

The gap along a thread is piecewise quadratic in plan angle, so its minimum lies at
a breakpoint of one of the alignments involved or where the gap is stationary inside
a piece.  :func:`minimum_headroom` evaluates exactly those points; :func:`headroom`
evaluates any points, for figures and for brute-force cross-checks.
"""
from __future__ import annotations

from dataclasses import dataclass
from functools import cached_property

import numpy as np

from .geometry import TWO_PI, Helix, Thread
from .project import Structure

__all__ = ["HeadroomPoint", "Overhead", "overhead_shifts", "headroom", "minimum_headroom", "check_radii"]


@dataclass(frozen=True)
class HeadroomPoint:
    clear: float  # clear headroom, m (inf where nothing is overhead)
    gap: float  # level difference to the surface (or soffit) overhead, m
    thread: int
    theta: float  # unrolled plan angle on the thread, rad
    radius: float
    above: str  # what is overhead


#: Level difference (m) below which another surface counts as touching, not below.
_TOUCH = 1e-9


def overhead_shifts(helix: Helix, i: int) -> list[tuple[int, float]]:
    """``(j, shift)`` pairs: thread ``j`` at ``theta + shift`` lies over thread ``i`` at
    ``theta`` in plan (same bearing) and may be the nearest surface above it.

    That is the thread's own next turn (``shift = 2 pi``) and every turn of another
    thread less than a full turn away in plan angle: threads on one axis do not cross,
    so any other turn lies above or below one of these.
    """
    t = helix.threads[i]
    pairs = [(i, TWO_PI)]
    for j, u in enumerate(helix.threads):
        if u.hand != t.hand:
            raise ValueError("threads on one axis must ascend the same way round")
        if j == i:
            continue
        base = t.hand * (t.start_bearing - u.start_bearing)
        for k in range(-2, 3):
            shift = base + TWO_PI * k
            if -TWO_PI - 1e-9 <= shift <= TWO_PI + 1e-9 and not (
                    u.profile.start - shift > t.profile.end or u.profile.end - shift < t.profile.start):
                pairs.append((j, shift))
    return pairs


def _unique(x: np.ndarray) -> np.ndarray:
    """The sorted distinct values of ``x`` (as ``np.unique`` gives them for values
    without NaN, without its import of ``numpy.ma`` on a first call: a tenth of the
    time of a whole evaluation)."""
    s = np.sort(np.asarray(x, float).ravel())
    return s[np.concatenate([[True], s[1:] != s[:-1]])] if s.size else s


def check_radii(thread: Thread) -> tuple[float, float, float]:
    """Radii at which headroom is evaluated: the gap is linear across the carriageway
    (cross-falls may differ between threads), so the kerbs and centre line bound it."""
    return (thread.inner_radius, thread.centre_radius, thread.outer_radius)


def _headroom(helix: Helix, structure: Structure, i: int, theta, radius,
              shifts: list[tuple[int, float]] | None):
    """:func:`headroom` without the labels, and the thread's own profile level too."""
    t = helix.threads[i]
    th = np.atleast_1d(np.asarray(theta, float))
    # The profile's own level once, the cross-fall added as Thread.level adds it.
    z_profile = t.profile.level(th)
    z = z_profile + t.cross_fall * (np.asarray(radius, float) - t.centre_radius)
    best = np.full(th.shape, np.inf)
    clear = np.full(th.shape, np.inf)
    above = np.full(th.shape, -1, dtype=int)
    found: list[str] = []
    many = np.ndim(radius) > 0
    for j, shift in overhead_shifts(helix, i) if shifts is None else shifts:
        u = helix.threads[j]
        covered = (u.inner_radius - 1e-9 <= np.asarray(radius)) & (np.asarray(radius) <= u.outer_radius + 1e-9)
        if not np.any(covered):
            continue
        gap = u.level(th + shift, radius) - z
        # Above or touching (a storey flatter than the structure is deep): a surface
        # level with this one leaves no headroom at all, not a pass.
        take = np.isfinite(gap) & (gap > -_TOUCH) & (gap < best)
        if many:
            take &= covered
        if np.any(take):
            found.append(u.name if j != i else "the same thread, a turn higher")
            best = np.where(take, gap, best)
            clear = np.where(take, gap - structure.depth, clear)
            above = np.where(take, len(found) - 1, above)
    if structure.cover_soffit is not None:
        gap = structure.cover_soffit - z
        take = np.isfinite(gap) & (gap < clear)
        if np.any(take):
            found.append("the cover slab")
            best = np.where(take, gap, best)
            clear = np.where(take, gap, clear)
            above = np.where(take, len(found) - 1, above)
    return clear, best, above, found, z_profile


def headroom(helix: Helix, structure: Structure, i: int, theta, radius, labels: bool = True,
             shifts: list[tuple[int, float]] | None = None):
    """Clear headroom and gap over thread ``i`` at plan angles ``theta`` and ``radius``
    (one radius, or one per point), from the surfaces ``shifts`` (default: all of
    :func:`overhead_shifts`).

    Returns ``(clear, gap, above)``: arrays of clear headroom and gap (``inf`` where
    nothing is overhead) and a list naming what is overhead at each point.
    """
    clear, best, above, found, _ = _headroom(helix, structure, i, theta, radius, shifts)
    if not labels:
        return clear, best, None
    names = [found[a] if a >= 0 else "nothing" for a in above]
    return clear, best, names


@dataclass(frozen=True, eq=False)
class Overhead:
    """The underside of whatever lies over thread ``i``, in the frame of that thread's
    own profile: ``level(theta, r)`` is the profile's level plus the clear headroom
    (:func:`headroom`), so on the wheel path of radius ``r`` the gap to it is the clear
    height over that path.  Between :attr:`breaks` each surface overhead is one
    quadratic in ``theta`` (plus a constant for the cross-falls), and :attr:`curves`
    lists the pieces that curve: a line under it comes closest at a break, at an end, or
    where a curved piece runs parallel to it.
    """

    helix: Helix
    structure: Structure
    i: int

    @cached_property
    def shifts(self) -> list[tuple[int, float]]:
        """The surfaces of :func:`overhead_shifts` that are ever above this thread.

        Threads on one axis do not cross, so a surface below at one place is below
        wherever it is over the thread; to be exact rather than rely on that, a surface
        is left out only if its gap is below touching at every critical angle (where a
        piecewise-quadratic gap has its extremes) at both edges of the radii it covers
        (the gap is linear across them)."""
        h, i = self.helix, self.i
        t = h.threads[i]
        angles = _critical_angles(h, i)
        keep = []
        for j, shift in overhead_shifts(h, i):
            u = h.threads[j]
            lo, hi = max(t.inner_radius, u.inner_radius), min(t.outer_radius, u.outer_radius)
            if hi < lo - 1e-9:
                continue
            gaps = [u.level(angles + shift, r) - t.level(angles, r) for r in (lo, hi)]
            if np.any(np.concatenate(gaps) > -_TOUCH):
                keep.append((j, shift))
        return keep

    def level(self, theta, radius) -> np.ndarray:
        """Soffit level over plan angles ``theta`` at ``radius`` (arrays of one shape);
        ``inf`` where nothing is overhead."""
        th = np.asarray(theta, float)
        clear, _, _, _, z_profile = _headroom(self.helix, self.structure, self.i, th.ravel(),
                                              np.broadcast_to(np.asarray(radius, float), th.shape).ravel(),
                                              self.shifts)
        return (z_profile + clear).reshape(th.shape)

    @cached_property
    def breaks(self) -> np.ndarray:
        """Plan angles (this thread's) of every breakpoint of the surfaces overhead and of
        this thread's own alignment (where the soffit begins and ends)."""
        own = self.helix.threads[self.i].profile.t
        pts = [own] + [self.helix.threads[j].profile.t - shift for j, shift in self.shifts]
        return _unique(np.concatenate(pts))

    @cached_property
    def curves(self) -> tuple[tuple[np.ndarray, ...], ...]:
        """Per surface overhead, ``(a, b, base, k, q)`` of its curved pieces in order:
        on ``[a, b]`` its slope is ``k + q (theta - base)`` metres per radian."""
        out = []
        for j, shift in self.shifts:
            p = self.helix.threads[j].profile
            s = np.flatnonzero(np.abs(p.q) > 0)
            if s.size:
                out.append((p.t[s] - shift, p.t[s + 1] - shift, p.t[s] - shift, p.k[s], p.q[s]))
        return tuple(out)


def _critical_angles(helix: Helix, i: int) -> np.ndarray:
    """Breakpoints of every alignment overhead, mapped onto thread ``i``, and the
    stationary points of each gap between them."""
    t = helix.threads[i]
    pts = [t.profile.t]
    shifts = overhead_shifts(helix, i)
    for j, shift in shifts:
        pts.append(helix.threads[j].profile.t - shift)
    grid = _unique(np.clip(np.concatenate(pts), t.profile.start, t.profile.end))
    extra = []
    eps = 1e-9
    for j, shift in shifts:
        u = helix.threads[j]
        a, b = grid[:-1] + eps, grid[1:] - eps
        ok = b > a
        da = u.profile.slope(a + shift) - t.profile.slope(a)
        db = u.profile.slope(b + shift) - t.profile.slope(b)
        cross = ok & np.isfinite(da) & np.isfinite(db) & (da * db < 0)
        if np.any(cross):
            extra.append(a[cross] + (b[cross] - a[cross]) * da[cross] / (da[cross] - db[cross]))
    # Both sides of each breakpoint: the overhead surface may change there.
    return _unique(np.concatenate([grid, grid[1:-1] - eps, grid[1:-1] + eps, *extra]))


def minimum_headroom(helix: Helix, structure: Structure) -> HeadroomPoint | None:
    """The smallest clear headroom over all threads, exact at alignment breakpoints.

    ``None`` when nothing lies above any part of any thread.
    """
    best: HeadroomPoint | None = None
    for i, t in enumerate(helix.threads):
        angles = _critical_angles(helix, i)
        for r in check_radii(t):
            clear, gap, names = headroom(helix, structure, i, angles, r)
            if not np.any(np.isfinite(clear)):
                continue
            # Ties (a plateau of equal headroom) resolve to the lowest point reached first.
            low = float(np.min(clear))
            k = int(np.flatnonzero(clear <= low + 1e-7)[0])
            if best is None or low < best.clear - 1e-7:
                best = HeadroomPoint(low, float(gap[k]) - float(clear[k]) + low, i, float(angles[k]),
                                     r, names[k])
    return best
