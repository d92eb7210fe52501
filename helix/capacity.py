"""Traffic through a helix: drive lengths and times on each lane's own driving line,
lane capacity from a headway, the capacity of the helix at the inbound and outbound
peaks, and the time to empty a number of bays through it.

A lane's driving line is its own centre line (half way between its kerbs), not the
carriageway's centre line: on a two-way helix the outer lane's line is longer.  Its
3-D length is exact on every landing, transition and run
(:meth:`helix.alignment.Profile.length_at_radius`).  The cross-fall does not change
the length along a circle: it adds a constant to the level at that radius.

References
----------
Highway Capacity Manual (Transportation Research Board, 2010): the saturation flow of
a lane of queued passenger cars, ``s = 3600 / h`` vehicles per hour for a saturation
headway of ``h`` seconds (base value 1,900 pc/h/ln, ``h`` = 1.89 s).  The equivalent
space form ``q = v / spacing`` with ``spacing = v h`` follows from the fundamental
relation of traffic flow ``q = k v`` (density ``k = 1 / spacing``): e.g. F. L. Mannering
and S. S. Washburn, *Principles of Highway Engineering and Traffic Analysis*, chapter 5.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

from .geometry import Helix

__all__ = ["LaneDrive", "HelixTraffic", "lane_capacity", "lane_spacing", "lane_drives", "helix_traffic",
           "time_to_empty"]


@dataclass(frozen=True)
class LaneDrive:
    """One lane's driving line: where it runs and how long it takes."""

    thread: str
    lane: str
    direction: str  # "up", "down", or "up and down" (a one-lane thread used both ways)
    radius: float  # the lane's centre line (m)
    per_storey: tuple[float, ...]  # 3-D length of each storey, connection to connection (m)
    capacity: float  # vehicles per hour

    @property
    def total(self) -> float:
        """Top to bottom (or bottom to top): the sum of the storeys (m)."""
        return float(sum(self.per_storey))

    def time(self, speed: float) -> float:
        """Seconds to drive the whole line at ``speed`` (m/s)."""
        return self.total / speed


@dataclass(frozen=True)
class HelixTraffic:
    lanes: tuple[LaneDrive, ...]
    speed: float  # m/s
    headway: float  # s
    inbound: float  # vehicles per hour climbing (all up lanes)
    outbound: float  # vehicles per hour descending (all down lanes)
    bays: int
    empty_time: float | None  # seconds to empty ``bays`` through the down lanes; None: no down lane

    def down_time(self) -> float | None:
        """Seconds to drive the longest down line from the top level to the bottom."""
        down = [ln.time(self.speed) for ln in self.lanes if "down" in ln.direction]
        return max(down) if down else None


def lane_capacity(headway: float) -> float:
    """Vehicles per hour through one lane at a steady ``headway`` (s): ``3600 / h``.

    >>> round(lane_capacity(3600 / 1900))
    1900
    """
    return 3600.0 / headway


def lane_spacing(speed: float, headway: float) -> float:
    """Front-to-front spacing (m) of vehicles at ``speed`` (m/s) and ``headway`` (s):
    ``v h`` (the same flow as ``3600 v / spacing`` vehicles per hour)."""
    return speed * headway


def lane_drives(helix: Helix, headway: float) -> tuple[LaneDrive, ...]:
    """Every lane of every thread: its centre line and 3-D length of each storey."""
    out = []
    cap = lane_capacity(headway)
    for t in helix.threads:
        c = t.profile.connections
        for ln in t.lanes:
            r = ln.centre_radius
            lengths = tuple(t.profile.length_at_radius(r, float(c[s]), float(c[s + 1])) for s in range(len(c) - 1))
            out.append(LaneDrive(t.name, ln.name, ln.direction, r, lengths, cap))
    return tuple(out)


def time_to_empty(bays: int, outbound: float, drive_time: float) -> float:
    """Seconds from the first car entering the top of the helix to the last leaving the
    bottom: the last enters ``(bays - 1)`` outbound headways after the first (the flow
    ``outbound`` per hour shared by the down lanes) and then drives the whole helix.

    >>> time_to_empty(1, 1800.0, 60.0)
    60.0
    """
    if bays <= 0:
        return 0.0
    return (bays - 1) * 3600.0 / outbound + drive_time


def helix_traffic(helix: Helix, speed: float, headway: float, bays: int) -> HelixTraffic:
    """Capacity of the whole helix at the peaks and the time to empty ``bays``.

    A one-way single helix carries one direction (its thread's); a lane used both ways
    (never the case in a layout helix builds) would count for neither peak.  Each up
    lane adds to the inbound capacity, each down lane to the outbound.
    """
    lanes = lane_drives(helix, headway)
    inbound = sum(ln.capacity for ln in lanes if ln.direction == "up")
    outbound = sum(ln.capacity for ln in lanes if ln.direction == "down")
    down = [ln.time(speed) for ln in lanes if ln.direction == "down"]
    empty = time_to_empty(bays, outbound, max(down)) if outbound > 0 and down else None
    if empty is not None and not math.isfinite(empty):  # pragma: no cover - finite inputs
        empty = None
    return HelixTraffic(lanes, speed, headway, inbound, outbound, bays, empty)
