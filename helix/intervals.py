"""Sets of radii as unions of closed intervals, and the two ways helix finds them.

The design search describes "the radii where a constraint is met" exactly, as an
:class:`IntervalSet` whose ends are roots of the constraint's margin (or the radii where
the alignment switches, such as transitions appearing).  Margins monotone on a piece
get one Brent root each (:func:`helix.search._regions_of`); a margin that is not
monotone but whose change over a radius interval has a computable bound (headroom) is
resolved by :func:`certified_region`: adaptive bisection that keeps or drops a cell only
when the bound proves its sign, so no window of feasible radii, however narrow, falls
between samples.

References
----------
R. P. Brent, *Algorithms for Minimization without Derivatives*, Prentice-Hall, 1973,
chapter 4 (the root finder used for every boundary).
R. E. Moore, R. B. Kearfott and M. J. Cloud, *Introduction to Interval Analysis*, SIAM,
2009, chapter 8 (bounding a function on a box to exclude or include it: the idea behind
:func:`certified_region`).
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Callable, Iterable

import numpy as np

__all__ = ["Interval", "IntervalSet", "Cell", "certified_region", "RegionError"]

#: Radii closer than this are one point (m); boundaries are found to about a tenth of it.
TOL = 1e-6


class RegionError(RuntimeError):
    """A margin broke the assumption its finder relies on (e.g. not monotone)."""


@dataclass(frozen=True)
class Interval:
    """Closed interval ``[lo, hi]`` of radii with what bounds each end."""

    lo: float
    hi: float
    lo_by: str = ""
    hi_by: str = ""


@dataclass(frozen=True)
class IntervalSet:
    """A union of disjoint closed intervals, sorted; empty when ``parts`` is empty."""

    parts: tuple[Interval, ...] = ()

    @staticmethod
    def of(lo: float, hi: float, lo_by: str = "", hi_by: str = "") -> "IntervalSet":
        return IntervalSet((Interval(lo, hi, lo_by, hi_by),)) if hi >= lo else IntervalSet()

    @staticmethod
    def union_of(parts: Iterable[Interval]) -> "IntervalSet":
        items = sorted((p for p in parts if p.hi >= p.lo), key=lambda p: (p.lo, p.hi))
        out: list[Interval] = []
        for p in items:
            if out and p.lo <= out[-1].hi + TOL:
                last = out[-1]
                if p.hi > last.hi:
                    out[-1] = Interval(last.lo, p.hi, last.lo_by, p.hi_by)
            else:
                out.append(p)
        return IntervalSet(tuple(out))

    def __bool__(self) -> bool:
        return bool(self.parts)

    @property
    def lo(self) -> float:
        return self.parts[0].lo

    @property
    def hi(self) -> float:
        return self.parts[-1].hi

    @property
    def lo_by(self) -> str:
        return self.parts[0].lo_by

    @property
    def hi_by(self) -> str:
        return self.parts[-1].hi_by

    def __and__(self, other: "IntervalSet") -> "IntervalSet":
        out = []
        i = j = 0
        a, b = self.parts, other.parts
        while i < len(a) and j < len(b):
            p, q = a[i], b[j]
            lo, lo_by = (p.lo, p.lo_by) if p.lo >= q.lo else (q.lo, q.lo_by)
            hi, hi_by = (p.hi, p.hi_by) if p.hi <= q.hi else (q.hi, q.hi_by)
            if hi >= lo:
                out.append(Interval(lo, hi, lo_by, hi_by))
            if p.hi < q.hi:
                i += 1
            else:
                j += 1
        return IntervalSet(tuple(out))

    def label_at(self, r: float) -> str:
        """What bounds the set at ``r`` (an end of one of its intervals), or ''."""
        for p in self.parts:
            if abs(r - p.lo) <= TOL:
                return p.lo_by
            if abs(r - p.hi) <= TOL:
                return p.hi_by
        return ""

    def as_list(self) -> list[tuple[float, float]]:
        return [(p.lo, p.hi) for p in self.parts]


@dataclass(frozen=True)
class Cell:
    """A radius interval whose margin was bounded: ``upper`` bounds the margin on it."""

    lo: float
    hi: float
    upper: float


def certified_region(f: Callable[[np.ndarray], np.ndarray],
                     bound: Callable[[np.ndarray, np.ndarray], np.ndarray],
                     a: float, b: float, label: str, cells: int = 32, tol: float = TOL,
                     budget: int = 200_000) -> tuple[IntervalSet, list[Cell]]:
    """Radii of ``[a, b]`` where ``f >= 0``, for ``f`` continuous with a known bound on
    its change.

    ``f(r)`` is evaluated for many radii at once; ``bound(lo, hi)`` bounds
    ``|f(r) - f(lo)|`` and ``|f(r) - f(hi)|`` for every ``r`` in each cell
    ``[lo, hi]``.  A cell whose ends' values and bound prove one sign is kept or
    dropped whole; the others are halved until they are shorter than ``tol``, then
    their boundary is placed at the evaluated end that meets the constraint.  Returns
    the set and the cells with an upper bound of ``f`` on each (for objectives that
    maximise ``f``).  Raises :class:`RegionError` past ``budget`` evaluations.
    """
    if b <= a:
        v = float(f(np.array([a]))[0])
        return (IntervalSet.of(a, a, label, label) if v >= 0 else IntervalSet()), [Cell(a, a, v)]
    edges = np.linspace(a, b, cells + 1)
    values = f(edges)
    lo_x, hi_x = edges[:-1], edges[1:]
    lo_v, hi_v = values[:-1], values[1:]
    kept: list[Interval] = []
    out_cells: list[Cell] = []
    used = len(edges)
    while len(lo_x):
        slack = bound(lo_x, hi_x)
        worst = np.maximum(lo_v - slack, hi_v - slack)
        best = np.minimum(lo_v + slack, hi_v + slack)
        met = worst >= 0
        failed = best < 0
        tiny = (hi_x - lo_x) <= tol
        for i in np.flatnonzero(met | failed | tiny):
            out_cells.append(Cell(float(lo_x[i]), float(hi_x[i]), float(best[i])))
        for i in np.flatnonzero(met):
            kept.append(Interval(float(lo_x[i]), float(hi_x[i]), label, label))
        for i in np.flatnonzero(tiny & ~met & ~failed):
            # The boundary lies within tol: keep the evaluated ends that meet it.
            if lo_v[i] >= 0:
                kept.append(Interval(float(lo_x[i]), float(lo_x[i]), label, label))
            if hi_v[i] >= 0:
                kept.append(Interval(float(hi_x[i]), float(hi_x[i]), label, label))
        split = ~(met | failed | tiny)
        if not np.any(split):
            break
        mid = 0.5 * (lo_x[split] + hi_x[split])
        used += len(mid)
        if used > budget:
            raise RegionError(f"{label}: more than {budget} evaluations to resolve on [{a:.6g}, {b:.6g}]")
        mid_v = f(mid)
        lo_x, hi_x = np.concatenate([lo_x[split], mid]), np.concatenate([mid, hi_x[split]])
        lo_v, hi_v = np.concatenate([lo_v[split], mid_v]), np.concatenate([mid_v, hi_v[split]])
    region = IntervalSet.union_of(kept)
    # Ends inside [a, b] are the constraint's own boundary; the range ends are not.
    parts = tuple(Interval(p.lo, p.hi, label if p.lo > a else "", label if p.hi < b else "")
                  for p in region.parts)
    return IntervalSet(parts), out_cells
