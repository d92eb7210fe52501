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

import numpy as np

from .geometry import TWO_PI, Helix, Thread
from .project import Structure

__all__ = ["HeadroomPoint", "overhead_shifts", "headroom", "minimum_headroom", "check_radii"]


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


def check_radii(thread: Thread) -> tuple[float, float, float]:
    """Radii at which headroom is evaluated: the gap is linear across the carriageway
    (cross-falls may differ between threads), so the kerbs and centre line bound it."""
    return (thread.inner_radius, thread.centre_radius, thread.outer_radius)


def headroom(helix: Helix, structure: Structure, i: int, theta, radius: float, labels: bool = True):
    """Clear headroom and gap over thread ``i`` at plan angles ``theta`` and ``radius``.

    Returns ``(clear, gap, above)``: arrays of clear headroom and gap (``inf`` where
    nothing is overhead) and a list naming what is overhead at each point.
    """
    t = helix.threads[i]
    th = np.atleast_1d(np.asarray(theta, float))
    z = t.level(th, radius)
    best = np.full(th.shape, np.inf)
    clear = np.full(th.shape, np.inf)
    above = np.full(th.shape, -1, dtype=int)
    found: list[str] = []
    for j, shift in overhead_shifts(helix, i):
        u = helix.threads[j]
        if not u.covers(radius):
            continue
        gap = u.level(th + shift, radius) - z
        # Above or touching (a storey flatter than the structure is deep): a surface
        # level with this one leaves no headroom at all, not a pass.
        take = np.isfinite(gap) & (gap > -_TOUCH) & (gap < best)
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
    if not labels:
        return clear, best, None
    names = [found[a] if a >= 0 else "nothing" for a in above]
    return clear, best, names


def _critical_angles(helix: Helix, i: int) -> np.ndarray:
    """Breakpoints of every alignment overhead, mapped onto thread ``i``, and the
    stationary points of each gap between them."""
    t = helix.threads[i]
    pts = [t.profile.t]
    shifts = overhead_shifts(helix, i)
    for j, shift in shifts:
        pts.append(helix.threads[j].profile.t - shift)
    grid = np.unique(np.clip(np.concatenate(pts), t.profile.start, t.profile.end))
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
    return np.unique(np.concatenate([grid, grid[1:-1] - eps, grid[1:-1] + eps, *extra]))


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
