"""Alignments and headroom for many candidate helices at once, as numpy arrays.

The design search varies the centre-line radius (and the turns per storey) of one
layout.  For a fixed number of storeys every candidate's alignment has the same
sequence of segments (landing, transition, run, transition, landing, ...), only the
plan angles differ, so all candidates fit in arrays of shape ``(candidates,
breakpoints)``.  Segments a candidate does not need (no transition) simply have zero
length.  The functions here are the batched counterparts of
:func:`helix.alignment.build_profile` and :func:`helix.clearance.minimum_headroom`,
and are tested against them.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

__all__ = ["BatchProfile", "build_profiles", "run_slopes", "batch_min_headroom", "batch_min_headroom_reference"]

TWO_PI = 2.0 * math.pi


@dataclass(frozen=True, eq=False)
class BatchProfile:
    """Piecewise-quadratic levels of ``C`` alignments: rows of ``t`` (C, m+1), and
    ``z0``, ``k``, ``q`` (C, m), as in :class:`helix.alignment.Profile`."""

    t: np.ndarray
    z0: np.ndarray
    k: np.ndarray
    q: np.ndarray

    @property
    def start(self) -> np.ndarray:
        return self.t[:, 0]

    @property
    def end(self) -> np.ndarray:
        return self.t[:, -1]

    def _locate(self, theta: np.ndarray) -> np.ndarray:
        """Segment index of every query, row by row, in one searchsorted call: rows
        are separated by adding a large offset per row to both arrays."""
        c, m1 = self.t.shape
        span = float(np.nanmax(self.t) - np.nanmin(self.t)) + float(np.nanmax(np.abs(theta))) + 10.0
        offset = (np.arange(c) * 4.0 * span)[:, None]
        flat_t = (self.t + offset).ravel()
        q = np.where(np.isfinite(theta), theta, self.t[:, :1]) + offset
        j = np.searchsorted(flat_t, q.ravel(), side="right").reshape(theta.shape) - 1
        j = j - (np.arange(c) * m1)[:, None]
        return np.clip(j, 0, m1 - 2)

    def level(self, theta: np.ndarray) -> np.ndarray:
        """Levels at ``theta`` (C, P); NaN outside each row's alignment."""
        j = self._locate(theta)
        rows = np.arange(theta.shape[0])[:, None]
        u = theta - self.t[rows, j]
        z = self.z0[rows, j] + self.k[rows, j] * u + 0.5 * self.q[rows, j] * u * u
        inside = (theta >= self.start[:, None] - 1e-12) & (theta <= self.end[:, None] + 1e-12)
        return np.where(inside, z, np.nan)


def run_slopes(rises: np.ndarray, plan: np.ndarray, landing: np.ndarray, transition: np.ndarray,
               landing_slope: np.ndarray) -> np.ndarray:
    """Run slope (m/rad) of every storey of every candidate; NaN where landings and
    transitions leave no room.  Shapes: rises (n,), plan (C, n), landing (C,), transition
    (C, n), landing_slope (C,).  Same formula as
    :func:`helix.alignment.storey_run_slope`."""
    free = plan - landing[:, None]  # half a landing at each end
    ramp_rise = rises[None, :] - landing_slope[:, None] * landing[:, None]
    k = (ramp_rise - landing_slope[:, None] * transition) / (free - transition)
    ok = (free - 2 * transition >= -1e-9) & (free - transition > 1e-9)
    return np.where(ok, k, np.nan)


def build_profiles(levels: np.ndarray, plan: np.ndarray, landing: np.ndarray, transition: np.ndarray,
                   kind: str = "segment", landing_slope: np.ndarray | None = None) -> tuple[BatchProfile, np.ndarray]:
    """Alignments of ``C`` candidates serving the same ``levels``.

    ``plan`` (C, n) storey plan angles, ``landing`` (C,) landing plan angle (the same at
    every level), ``transition`` (C, n) transition plan angle per storey.  Returns the
    profiles and the run slopes (C, n).  The first connection is at plan angle 0.
    """
    levels = np.asarray(levels, float)
    c, n = plan.shape
    kl = np.zeros(c) if landing_slope is None else np.asarray(landing_slope, float)
    k = run_slopes(np.diff(levels), plan, landing, transition, kl)
    m = 1 + 4 * n
    t = np.empty((c, m + 1))
    z0 = np.empty((c, m))
    kk = np.empty((c, m))
    qq = np.zeros((c, m))
    conn = np.concatenate([np.zeros((c, 1)), np.cumsum(plan, axis=1)], axis=1)
    half = 0.5 * landing
    t[:, 0] = -half
    z0[:, 0] = levels[0] - kl * half
    kk[:, 0] = kl
    for s in range(n):
        j = 1 + 4 * s
        a = conn[:, s] + half
        b = conn[:, s + 1] - half
        tau = transition[:, s]
        ks = k[:, s]
        z_a = levels[s] + kl * half
        # Transition, run, transition, then the landing at level s+1 from b; the next
        # storey's transition (or the end) closes that landing.
        t[:, j], t[:, j + 1], t[:, j + 2], t[:, j + 3] = a, a + tau, b - tau, b
        z0[:, j] = z_a
        if kind == "curve":
            kk[:, j] = kl
            qq[:, j] = np.where(tau > 0, (ks - kl) / np.where(tau > 0, tau, 1.0), 0.0)
        else:
            kk[:, j] = 0.5 * (kl + ks)
        z_run = z_a + 0.5 * (kl + ks) * tau
        z0[:, j + 1] = z_run
        kk[:, j + 1] = ks
        z_end_run = z_run + ks * (b - a - 2 * tau)
        z0[:, j + 2] = z_end_run
        if kind == "curve":
            kk[:, j + 2] = ks
            qq[:, j + 2] = np.where(tau > 0, (kl - ks) / np.where(tau > 0, tau, 1.0), 0.0)
        else:
            kk[:, j + 2] = 0.5 * (kl + ks)
        z0[:, j + 3] = levels[s + 1] - kl * half
        kk[:, j + 3] = kl
    t[:, m] = conn[:, n] + half
    return BatchProfile(t=t, z0=z0, k=kk, q=qq), k


_CHUNK = 512  # candidates per block in batch_min_headroom


def _overhead(profiles: list[BatchProfile], i: int, start_bearings: list[float], hand: int,
              same_annulus: bool) -> list[tuple[BatchProfile, float]]:
    """``(profile, shift)`` of every surface that may be nearest overhead of thread ``i``:
    its own next turn (shift 2 pi) and, in one annulus, every turn of another thread less
    than a turn away in plan angle; anything further lies above or below one of those
    (threads do not cross)."""
    overhead = [(profiles[i], TWO_PI)]
    if same_annulus:
        for j, u in enumerate(profiles):
            if j == i:
                continue
            base = hand * (start_bearings[i] - start_bearings[j])
            for kk in range(-2, 3):
                shift = base + TWO_PI * kk
                if -TWO_PI - 1e-9 <= shift <= TWO_PI + 1e-9:
                    overhead.append((u, shift))
    return overhead


def _critical_grid(profiles: list[BatchProfile], i: int, start_bearings: list[float], hand: int,
                   same_annulus: bool, spans) -> tuple[list[tuple[BatchProfile, float]], np.ndarray]:
    """The surfaces overhead of thread ``i`` and its critical angles (C, K), sorted: its
    breakpoints and every overhead one, shifted, clipped to the span measured."""
    overhead = _overhead(profiles, i, start_bearings, hand, same_annulus)
    return overhead, _grid(profiles[i], overhead, None if spans is None else spans[i])


def _grid(p: BatchProfile, overhead: list[tuple[BatchProfile, float]],
          span: tuple[np.ndarray, np.ndarray] | None) -> np.ndarray:
    """The critical angles (C, K) of thread ``p`` under ``overhead``, sorted: its
    breakpoints and every overhead one, shifted, clipped to ``span`` (default: all of it)."""
    pts = [p.t] + [u.t - shift for u, shift in overhead]
    grid = np.sort(np.concatenate(pts, axis=1), axis=1)
    lo, hi = (p.start, p.end) if span is None else span
    return np.clip(grid, lo[:, None], hi[:, None])


def _pieces(bp: BatchProfile, theta_mid: np.ndarray) -> tuple[np.ndarray, ...]:
    """Coefficients ``(t, z0, k, q)`` (C, W) of the segment of ``bp`` under each piece,
    located once by the piece's midpoint: on a piece between consecutive critical angles
    no alignment changes segment, so every point of the piece shares them."""
    j = bp._locate(theta_mid)
    c, m = bp.k.shape
    # Flat indices into each row-major array (one take each, the same elements as
    # indexing by row and segment).
    row = np.arange(c)[:, None]
    at, at_t = j + row * m, j + row * (m + 1)
    return (np.take(bp.t, at_t), np.take(bp.z0, at), np.take(bp.k, at), np.take(bp.q, at))


def _pieces_many(bp: BatchProfile, mids: list[np.ndarray]) -> list[tuple[np.ndarray, ...]]:
    """:func:`_pieces` of ``bp`` for several sets of midpoints (C, W) at once (one
    search and one gather for a thread and its own turns)."""
    if len(mids) == 1:
        return [_pieces(bp, mids[0])]
    w = mids[0].shape[1]
    coef = _pieces(bp, np.concatenate(mids, axis=1))
    return [tuple(a[:, i * w:(i + 1) * w] for a in coef) for i in range(len(mids))]


def _level_on(coef: tuple[np.ndarray, ...], bp: BatchProfile, theta: np.ndarray) -> np.ndarray:
    t0, z0, k, q = coef
    u = theta - t0
    z = z0 + k * u + 0.5 * q * u * u
    inside = (theta >= bp.start[:, None] - 1e-12) & (theta <= bp.end[:, None] + 1e-12)
    return np.where(inside, z, np.nan)


def batch_min_headroom(profiles: list[BatchProfile], start_bearings: list[float], hand: int,
                       same_annulus: bool, depth: float, cover_soffit: float | None = None,
                       spans: list[tuple[np.ndarray, np.ndarray]] | None = None) -> np.ndarray:
    """Smallest clear headroom (C,) over the threads of every candidate.

    ``profiles`` holds one :class:`BatchProfile` per thread (same candidates); when
    ``same_annulus`` is false (a concentric pair) each thread only has its own turns
    overhead.  Exact like :func:`helix.clearance.minimum_headroom`: every breakpoint of
    every alignment involved, both sides of it, and the vertex of the gap on every piece
    between them.  ``inf`` where nothing is overhead.  ``spans`` (one ``(lo, hi)`` pair
    of (C,) arrays per thread) limits the points measured on each thread to those plan
    angles.

    In closed form piece by piece: the critical angles cut each thread into pieces on
    which every alignment involved is one quadratic, so each alignment's segment is
    located once per piece (not once per point) and the points of the piece (its ends,
    just inside them, and the vertex of the gap) are evaluated from those coefficients.

    A double helix (two threads of one alignment, half a turn apart) is measured on its
    first thread only, and where its alignment never falls, without the thread's own
    next turn (:func:`_half_turn_pair`, :func:`_never_falls`).
    """
    c = profiles[0].t.shape[0]
    if c > _CHUNK:
        # In blocks of candidates: the arrays of a block stay in the processor's cache
        # (about twice as fast as one pass over tens of thousands of rows).
        out = np.empty(c)
        for s in range(0, c, _CHUNK):
            sl = slice(s, s + _CHUNK)
            part = [BatchProfile(p.t[sl], p.z0[sl], p.k[sl], p.q[sl]) for p in profiles]
            out[sl] = batch_min_headroom(part, start_bearings, hand, same_annulus, depth, cover_soffit,
                                         None if spans is None else [(a[sl], b[sl]) for a, b in spans])
        return out
    if _half_turn_pair(profiles, start_bearings, hand, same_annulus, spans):
        # The second thread is the first turned half a turn about the axis: what lies
        # over it at plan angle theta (the first thread at theta - pi and theta + pi, its
        # own next turn at theta + 2 pi, all of the one alignment z) is what lies over
        # the first at theta, so both have the same smallest headroom.
        #
        # Where z never falls, the other thread half a turn on, z(theta + pi), lies
        # between z(theta) and the own next turn z(theta + 2 pi), and exists wherever
        # that turn does (an alignment is one interval of plan angle): it is overhead
        # (a gap >= 0) and at least as near, so the own next turn is never the nearest.
        # Where besides every half turn rises by at least 1 um (_half_turn_rise), the
        # other thread half a turn back, z(theta - pi), is that far below z(theta) and
        # never counts as overhead (only gaps above -1e-9 do).  Dropping a surface
        # drops its breakpoints too: on the coarser pieces the one gap left, z(theta +
        # pi) - z(theta) >= 0, is still one quadratic, whose least value the ends and
        # the vertex give, as on the finer pieces.
        p = profiles[0]
        own, *others = _overhead(profiles, 0, start_bearings, hand, same_annulus)
        ahead = [(u, s) for u, s in others if s > 0]
        rising = _never_falls(p)
        steep = rising & (_half_turn_rise(p) >= 1e-6)
        out = np.empty(c)
        span = None if spans is None else spans[0]
        for rows, overhead in ((steep, ahead), (rising & ~steep, others), (~rising, [own] + others)):
            if not np.any(rows):
                continue
            sub = BatchProfile(p.t[rows], p.z0[rows], p.k[rows], p.q[rows])
            out[rows] = _thread_min_headroom(
                sub, [(sub, shift) for _, shift in overhead], depth, cover_soffit,
                None if span is None else (span[0][rows], span[1][rows]))
        return out
    best = np.full(c, np.inf)
    for i, p in enumerate(profiles):
        overhead = _overhead(profiles, i, start_bearings, hand, same_annulus)
        best = np.minimum(best, _thread_min_headroom(p, overhead, depth, cover_soffit,
                                                     None if spans is None else spans[i]))
    return best


def _half_turn_pair(profiles: list[BatchProfile], start_bearings: list[float], hand: int,
                    same_annulus: bool, spans) -> bool:
    """Two threads in one annulus with the same alignment (equal arrays) and the same
    measured spans, starting half a turn apart: a double helix."""
    if not same_annulus or len(profiles) != 2:
        return False
    a, b = profiles
    if a is not b and not all(np.array_equal(x, y, equal_nan=True)
                              for x, y in ((a.t, b.t), (a.z0, b.z0), (a.k, b.k), (a.q, b.q))):
        return False
    if spans is not None and not all(np.array_equal(x, y) for x, y in zip(spans[0], spans[1])):
        return False
    gap = (hand * (start_bearings[1] - start_bearings[0])) % TWO_PI
    return abs(gap - math.pi) <= 1e-12


def _never_falls(p: BatchProfile) -> np.ndarray:
    """(C,) True where the alignment's slope is >= 0 on every segment (a quadratic
    segment's slope is linear, so its ends decide); False where any is not a number."""
    end_slope = p.k + p.q * np.diff(p.t, axis=1)
    return np.all((p.k >= 0) & (end_slope >= 0), axis=1)


def _half_turn_rise(p: BatchProfile) -> np.ndarray:
    """(C,) a lower bound of the rise of a never-falling alignment of
    :func:`build_profiles` over any half turn (plan angle pi) of it; 0 where none is
    known.

    Its runs are the segments 2, 6, 10, ... (slope ``k``, no curvature); between and
    around them lie transitions and landings, which do not fall.  A half turn inside
    the alignment that meets no run lies within one stretch between runs; one that
    meets a single run and leaves it on one side only holds pi less that stretch of
    run; any other holds a whole run.  So it holds at least ``min(shortest run, pi -
    longest stretch)`` of run, rising at least the least run slope on it."""
    m = p.k.shape[1]
    if m % 4 != 1:
        return np.zeros(p.t.shape[0])
    runs = np.arange(2, m, 4)
    if np.any(p.q[:, runs] != 0):
        return np.zeros(p.t.shape[0])
    a, b = p.t[:, runs], p.t[:, runs + 1]
    between = np.concatenate([a[:, :1] - p.t[:, :1], a[:, 1:] - b[:, :-1], p.t[:, -1:] - b[:, -1:]], axis=1)
    run = np.minimum(np.min(b - a, axis=1), math.pi - np.max(between, axis=1)) - 1e-9
    rise = np.min(p.k[:, runs], axis=1) * run
    return np.where((run > 0) & (rise > 0), rise, 0.0)


def _thread_min_headroom(p: BatchProfile, overhead: list[tuple[BatchProfile, float]], depth: float,
                         cover_soffit: float | None, span: tuple[np.ndarray, np.ndarray] | None) -> np.ndarray:
    """Smallest clear headroom (C,) over one thread ``p`` under the surfaces ``overhead``
    (profile, plan-angle shift), measured on ``span`` (default: the whole thread)."""
    grid = _grid(p, overhead, span)
    left, right = grid[:, :-1], grid[:, 1:]
    mid = 0.5 * (left + right)
    width = right - left
    # On each piece every alignment is one quadratic in x = theta - left: the gap to
    # each surface overhead is d(x) = d0 + d1 x + d2 x^2 / 2, formed once per piece.
    # The thread and the surfaces of its own alignment located in one search.
    own = [i for i, (u, _) in enumerate(overhead) if u is p]
    located = _pieces_many(p, [mid] + [mid + overhead[i][1] for i in own])
    t0, z0, k, q = located[0]
    coefs = dict(zip(own, located[1:]))
    xl = left - t0
    zp, sp = z0 + k * xl + 0.5 * q * xl * xl, k + q * xl
    gaps = []
    for i, (u, shift) in enumerate(overhead):
        tu, zu0, ku, qu = coefs[i] if i in coefs else _pieces(u, mid + shift)
        xu = left + shift - tu
        d0 = zu0 + ku * xu + 0.5 * qu * xu * xu - zp
        d1 = ku + qu * xu - sp
        lo_u, hi_u = u.start[:, None] - 1e-12 - shift, u.end[:, None] + 1e-12 - shift
        gaps.append((d0, d1, qu - q, lo_u, hi_u))

    def nearest_gap(x):
        theta = left + x
        g = np.full(x.shape, np.inf)
        for d0, d1, d2, lo_u, hi_u in gaps:
            d = d0 + x * (d1 + 0.5 * d2 * x)
            # Outside the surface's own alignment nothing lies there; touching
            # counts as overhead (see clearance.headroom).
            g = np.where((theta >= lo_u) & (theta <= hi_u) & (d > -1e-9) & (d < g), d, g)
        clear = g - depth
        if cover_soffit is not None:
            clear = np.minimum(clear, cover_soffit - (zp + x * (sp + 0.5 * q * x)))
        return clear

    # Both ends of every piece (each end with this piece's surfaces: the surface
    # overhead may change at a breakpoint), its middle and the vertex of the gap to
    # the surface nearest there.
    zero = np.zeros_like(width)
    vals = [nearest_gap(zero), nearest_gap(width), nearest_gap(0.5 * width)]
    if any(np.any(u.q != 0) for u, _ in overhead) or np.any(q != 0):
        x_mid = 0.5 * width
        near = np.full(width.shape, np.inf)
        x_star = x_mid.copy()
        for d0, d1, d2, lo_u, hi_u in gaps:
            d = d0 + x_mid * (d1 + 0.5 * d2 * x_mid)
            theta = left + x_mid
            take = (theta >= lo_u) & (theta <= hi_u) & (d > -1e-9) & (d < near)
            near = np.where(take, d, near)
            with np.errstate(invalid="ignore", divide="ignore"):
                xs = -d1 / d2
            ok = take & (d2 > 1e-14) & (xs > 0) & (xs < width)
            x_star = np.where(take, np.where(ok, xs, x_mid), x_star)
        vals.append(nearest_gap(x_star))
        if cover_soffit is not None and np.any(q < 0):
            # The crest of the thread on a piece (a vertical curve from rising to
            # falling): the least gap to the soffit above lies there, inside the piece.
            with np.errstate(invalid="ignore", divide="ignore"):
                xc = -sp / q
            crest = (q < 0) & (xc > 0) & (xc < width)
            vals.append(nearest_gap(np.where(crest, xc, x_mid)))
    val = np.concatenate(vals, axis=1)
    return np.min(np.where(np.isfinite(val), val, np.inf), axis=1)


def batch_min_headroom_reference(profiles: list[BatchProfile], start_bearings: list[float], hand: int,
                       same_annulus: bool, depth: float, cover_soffit: float | None = None,
                       spans: list[tuple[np.ndarray, np.ndarray]] | None = None) -> np.ndarray:
    """The point-by-point form of :func:`batch_min_headroom` (every query located by a
    search of its own), kept as the reference the tests compare the fast form with.

    ``profiles`` holds one :class:`BatchProfile` per thread (same candidates); when
    ``same_annulus`` is false (a concentric pair) each thread only has its own turns
    overhead.  Exact like :func:`helix.clearance.minimum_headroom`: every breakpoint of
    every alignment involved, and the vertex of the gap on every piece between them.
    ``inf`` where nothing is overhead.  ``spans`` (one ``(lo, hi)`` pair of (C,) arrays
    per thread) limits the points measured on each thread to those plan angles.
    """
    c = profiles[0].t.shape[0]
    best = np.full(c, np.inf)
    for i, p in enumerate(profiles):
        overhead, grid = _critical_grid(profiles, i, start_bearings, hand, same_annulus, spans)
        eps = 1e-9

        def nearest_gap(theta):
            z = p.level(theta)
            g = np.full(theta.shape, np.inf)
            for u, shift in overhead:
                d = u.level(theta + shift) - z
                # Touching counts as overhead (see clearance.headroom).
                g = np.where(np.isfinite(d) & (d > -1e-9) & (d < g), d, g)
            clear = g - depth
            if cover_soffit is not None:
                clear = np.where(np.isfinite(z), np.minimum(clear, cover_soffit - z), clear)
            return clear

        queries = [grid, grid[:, 1:-1] - eps, grid[:, 1:-1] + eps]
        if any(np.any(u.q != 0) for u, _ in overhead):
            # Vertex of the (quadratic) gap on each piece, from its ends and midpoint.
            a, b = grid[:, :-1] + eps, grid[:, 1:] - eps
            mid = 0.5 * (grid[:, :-1] + grid[:, 1:])
            w = a.shape[1]
            g3 = nearest_gap(np.concatenate([a, mid, b], axis=1))
            ga, gm, gb = g3[:, :w], g3[:, w:2 * w], g3[:, 2 * w:]
            with np.errstate(invalid="ignore", divide="ignore"):
                denom = ga - 2 * gm + gb
                u_star = 0.5 * (ga - gb) / denom  # in half-widths from the midpoint
            ok = np.isfinite(u_star) & (np.abs(u_star) < 1.0) & (denom > 1e-14) & (b > a)
            queries.append(np.where(ok, mid + u_star * 0.5 * (b - a), mid))
        val = nearest_gap(np.concatenate(queries, axis=1))
        best = np.minimum(best, np.min(np.where(np.isfinite(val), val, np.inf), axis=1))
    return best
