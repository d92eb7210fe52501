"""The vertical alignment of a helix thread as a function of its plan angle.

On a helicoid every radial line is level, so one function ``z(theta)`` of the unrolled
plan angle gives the level of the whole running surface (cross-fall aside); the
gradient at radius ``r`` is ``z'(theta) / r``.  A thread's alignment is piecewise
quadratic in ``theta``: level landings at the floor connections, reduced-grade
transitions or vertical curves, and constant-grade runs between.

Transitions are laid out on the centre line of the thread: a length ``L`` there is a
plan angle ``L / r_centre`` shared by every radius, so at the inner kerb the same
transition is shorter and its change of grade sharper.
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from functools import cached_property

import numpy as np

from .errors import DesignError

__all__ = ["Profile", "build_profile", "storey_run_slope", "SEGMENT_KINDS"]

SEGMENT_KINDS = ("landing", "transition", "run")


@dataclass(frozen=True, eq=False)
class Profile:
    """Piecewise-quadratic level ``z(theta)`` over breakpoints ``t``.

    On segment ``j`` (``t[j] <= theta <= t[j+1]``)::

        z = z0[j] + k[j] * u + 0.5 * q[j] * u**2,   u = theta - t[j]

    ``k`` is the slope in metres per radian at the start of the segment and ``q`` its
    rate of change (non-zero only on vertical curves).  ``kind`` and ``storey`` label
    each segment; ``storey`` is -1 on a landing.
    """

    t: np.ndarray
    z0: np.ndarray
    k: np.ndarray
    q: np.ndarray
    kind: tuple[str, ...]
    storey: tuple[int, ...]
    connections: np.ndarray  # plan angle of each floor connection served, in order
    connection_levels: np.ndarray

    @property
    def start(self) -> float:
        return float(self.t[0])

    @property
    def end(self) -> float:
        return float(self.t[-1])

    @cached_property
    def _interior(self) -> np.ndarray:
        # Searching the interior breakpoints gives the segment index already clipped to
        # [0, segments - 1] (what searchsorted(t) - 1 and a clip would give), in one call:
        # level and slope are called many thousands of times per evaluation.
        return np.ascontiguousarray(self.t[1:-1])

    @cached_property
    def _bounds(self) -> tuple[float, float]:
        return float(self.t[0]) - 1e-12, float(self.t[-1]) + 1e-12

    def _segment(self, theta: np.ndarray) -> np.ndarray:
        return self._interior.searchsorted(theta, side="right")

    def level(self, theta) -> np.ndarray:
        """Level at plan angle ``theta`` (radians); NaN outside the thread."""
        th = np.asarray(theta, dtype=float)
        j = self._segment(th)
        u = th - self.t[j]
        z = self.z0[j] + self.k[j] * u + 0.5 * self.q[j] * u * u
        lo, hi = self._bounds
        return np.where((th >= lo) & (th <= hi), z, np.nan)

    def slope(self, theta) -> np.ndarray:
        """dz/dtheta in metres per radian (right-hand value at a breakpoint)."""
        th = np.asarray(theta, dtype=float)
        j = self._segment(th)
        s = self.k[j] + self.q[j] * (th - self.t[j])
        lo, hi = self._bounds
        return np.where((th >= lo) & (th <= hi), s, np.nan)

    def slope_range(self, j: int) -> tuple[float, float]:
        """Smallest and largest slope on segment ``j`` (a vertical curve varies)."""
        a = self.k[j]
        b = self.k[j] + self.q[j] * (self.t[j + 1] - self.t[j])
        return (min(a, b), max(a, b))

    def length_at_radius(self, r: float, a: float | None = None, b: float | None = None) -> float:
        """Length in 3-D of the path at radius ``r`` between plan angles ``a`` and ``b``.

        Exact: ``integral of sqrt(r^2 + z'(theta)^2) dtheta`` evaluated in closed form
        on every segment (linear ``z'`` on vertical curves).
        """
        a = self.start if a is None else a
        b = self.end if b is None else b
        total = 0.0
        for j in range(len(self.k)):
            lo, hi = max(a, self.t[j]), min(b, self.t[j + 1])
            if hi <= lo:
                continue
            s0 = self.k[j] + self.q[j] * (lo - self.t[j])
            s1 = self.k[j] + self.q[j] * (hi - self.t[j])
            if abs(self.q[j]) < 1e-15:
                total += (hi - lo) * math.hypot(r, s0)
            else:
                f = lambda s: 0.5 * (s * math.hypot(r, s) + r * r * math.asinh(s / r))
                total += (f(s1) - f(s0)) / self.q[j]
        return total

    def segments(self):
        """(kind, storey, theta_start, theta_end) for every segment."""
        return [(self.kind[j], self.storey[j], float(self.t[j]), float(self.t[j + 1]))
                for j in range(len(self.k))]


def storey_run_slope(rise: float, plan_angle: float, landing_below: float,
                     landing_above: float, transition: float, landing_slope: float = 0.0) -> float:
    """Slope (m/rad) of the constant-grade run of one storey.

    The storey spans ``plan_angle``; half of each landing lies in it (rising at
    ``landing_slope``), and a transition at each end rises at the mean of the landing's
    and the run's slopes (a half-grade-change segment and a vertical curve of the same
    length both do), so with ``F`` the plan angle between the landings::

        rise - landing_slope * (landing_below + landing_above) / 2
            = k * (F - transition) + landing_slope * transition

    Returns ``nan`` when landings and transitions leave no room for the run.
    """
    free = plan_angle - 0.5 * (landing_below + landing_above)
    if free - 2 * transition < -1e-9 or free - transition <= 1e-9:
        return math.nan
    ramp_rise = rise - landing_slope * 0.5 * (landing_below + landing_above)
    return (ramp_rise - landing_slope * transition) / (free - transition)


def build_profile(levels, plan_angles, landing_angles, transition_angles,
                  transition_kind: str = "segment", start: float = 0.0,
                  landing_slope: float = 0.0) -> Profile:
    """The alignment of a thread serving ``levels`` (ascending in travel order).

    Parameters
    ----------
    levels : sequence of float
        Floor levels of the connections, one per level served (m).
    plan_angles : sequence of float
        Plan angle of each storey between consecutive connections (rad), > 0.
    landing_angles : sequence of float
        Plan angle of the landing at each connection (rad), centred on it.
    transition_angles : sequence of float
        Plan angle of the transition at each end of each storey's run (rad), one per
        storey; 0 for none.
    transition_kind : {"segment", "curve"}
        Segment at the mean of the adjoining grades, or vertical curve with linearly
        changing grade.
    start : float
        Plan angle of the first connection.
    landing_slope : float
        Slope of every landing (m/rad) along the ascent, e.g. a drainage fall; the
        landing passes through its floor level at the connection.

    Every connection is met exactly: each storey's run slope is solved from its rise.
    """
    levels = np.asarray(levels, dtype=float)
    n = len(levels) - 1
    if n < 1 or len(plan_angles) != n or len(landing_angles) != n + 1 or len(transition_angles) != n:
        raise DesignError("build_profile: inconsistent lengths of levels and storey data")
    t: list[float] = []
    z0: list[float] = []
    k: list[float] = []
    q: list[float] = []
    kind: list[str] = []
    storey: list[int] = []

    def add(theta0, zz, kk, qq, what, s):
        t.append(theta0)
        z0.append(zz)
        k.append(kk)
        q.append(qq)
        kind.append(what)
        storey.append(s)

    kl = landing_slope
    connections = [start]
    if landing_angles[0] > 0:
        add(start - 0.5 * landing_angles[0], levels[0] - 0.5 * kl * landing_angles[0], kl, 0.0,
            "landing", -1)
    for s in range(n):
        c0 = connections[-1]
        c1 = c0 + plan_angles[s]
        rise = levels[s + 1] - levels[s]
        tau = transition_angles[s] if transition_angles[s] > 1e-9 else 0.0
        slope = storey_run_slope(rise, plan_angles[s], landing_angles[s], landing_angles[s + 1], tau, kl)
        if not math.isfinite(slope):
            raise DesignError(f"storey {s + 1}: landings and transitions leave no room for the run")
        a = c0 + 0.5 * landing_angles[s]          # start of the ramp
        b = c1 - 0.5 * landing_angles[s + 1]      # end of the ramp
        if landing_angles[s] > 0 and s > 0:
            add(c0, levels[s], kl, 0.0, "landing", -1)   # upper half of landing s
        z = levels[s] + 0.5 * kl * landing_angles[s]
        if tau > 0:
            if transition_kind == "curve":
                add(a, z, kl, (slope - kl) / tau, "transition", s)
            else:
                add(a, z, 0.5 * (kl + slope), 0.0, "transition", s)
            z += 0.5 * (kl + slope) * tau
        add(a + tau, z, slope, 0.0, "run", s)
        z += slope * (b - a - 2 * tau)
        if tau > 0:
            if transition_kind == "curve":
                add(b - tau, z, slope, (kl - slope) / tau, "transition", s)
            else:
                add(b - tau, z, 0.5 * (kl + slope), 0.0, "transition", s)
        if landing_angles[s + 1] > 0:
            add(b, levels[s + 1] - 0.5 * kl * landing_angles[s + 1], kl, 0.0, "landing", -1)
        connections.append(c1)
    t.append(connections[-1] + 0.5 * landing_angles[-1])
    prof = Profile(t=np.array(t), z0=np.array(z0), k=np.array(k), q=np.array(q),
                   kind=tuple(kind), storey=tuple(storey),
                   connections=np.array(connections), connection_levels=levels.copy())
    return _merge_landings(prof)


def _merge_landings(p: Profile) -> Profile:
    """Join the two halves of each intermediate landing into one segment."""
    keep = [0]
    for j in range(1, len(p.k)):
        if p.kind[j] == "landing" and p.kind[j - 1] == "landing":
            continue
        keep.append(j)
    idx = np.array(keep)
    return Profile(t=np.append(p.t[idx], p.t[-1]), z0=p.z0[idx], k=p.k[idx], q=p.q[idx],
                   kind=tuple(p.kind[j] for j in keep), storey=tuple(p.storey[j] for j in keep),
                   connections=p.connections, connection_levels=p.connection_levels)
