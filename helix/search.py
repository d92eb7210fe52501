"""The design search: the best helix of each layout that fits the plot and the rules.

A *family* is one layout with one choice of turns for every storey and of lane widths;
in a family the only continuous variable is the centre-line radius ``R``.  Every rule
is a *margin* function of ``R`` (positive where it is met), evaluated for many radii
at once as numpy arrays (:func:`screen`).  The search never decides feasibility from a
fixed set of sample radii; it finds, exactly, the set of radii where each rule holds:

1. the range is clipped to radii that leave room for the carriageway (said in a note);
2. rules that depend on the radius alone (kerb radii, lane widths and the design
   vehicle's swept path, side friction, cross-fall, footprint) are monotone in ``R``:
   each bounds an interval at one root, found by Brent's method (:mod:`helix.roots`);
3. each storey's gradient rules depend on that storey's turns and ``R`` only; they are
   monotone between the radii where the storey's alignment changes form (transitions
   switching on at the rule's grade-change threshold, landings and transitions ceasing
   to fit), which are closed forms, so each piece again has one root;
4. the headroom of a storey depends on the turns of the storeys that can be overhead of
   it (a turn of plan angle); it is not monotone, so its region is found by
   :func:`helix.intervals.certified_region` with a bound on how fast the smallest
   headroom can change with ``R`` (:func:`_headroom_change_bound`);
5. turns per storey are chosen storey by storey by best-first branch and bound
   (:func:`search_layout`): a partial choice carries the radii that still meet every
   rule decided so far, and its bound on the objective never beats its completions;
6. the chosen design is fully checked (:func:`helix.evaluate`), which adds the design
   vehicle rolled along the ramp; a failing vehicle clearance moves the radius along the
   family's feasible radii to its own root.

A layout that cannot work is explained: each constraint that alone blocks it, by how
much, at the design that meets every other rule, and the change that fixes it, each
change verified by searching and checking the changed project.
"""
from __future__ import annotations

import math
from contextvars import ContextVar
from dataclasses import dataclass, field, replace

import numpy as np

from .batch import BatchProfile, batch_min_headroom, build_profiles, run_slopes
from .evaluate import Evaluation, evaluate
from .intervals import TOL, Interval, IntervalSet, RegionError, certified_region
from .layout import landing_length
from .plot import axis_of, footprint_span
from .roots import brent_root
from .project import Project, SearchSpace

__all__ = ["Family", "Screen", "Option", "DesignResult", "LayoutSearch", "screen", "design",
           "search_layout", "storey_choices", "family_project", "pareto_mask", "LAYOUT_TITLES"]

TWO_PI = 2.0 * math.pi
LAYOUT_TITLES = {"single-one-way": "single helix, one-way", "single-two-way": "single helix, two-way",
                 "double": "double interleaved helix", "concentric": "concentric pair"}

@dataclass(frozen=True)
class Family:
    layout: str  # one of helix.project.SEARCH_LAYOUTS
    turns: tuple[float, ...]  # per storey
    lane_widths: tuple[float, ...] | None  # None: auto

    @property
    def threads(self) -> int:
        return 2 if self.layout in ("double", "concentric") else 1

    @property
    def lanes(self) -> int:
        return 2 if self.layout == "single-two-way" else 1

    def label(self) -> str:
        turns = "/".join(f"{x:g}" for x in dict.fromkeys(self.turns))  # each value once, in order
        return f"{LAYOUT_TITLES[self.layout]}, {turns} turns per storey"


# ----------------------------------------------------------------------------------
# Screening: every cheap margin, and headroom, for many radii of one family


@dataclass(frozen=True, eq=False)
class Screen:
    radius: np.ndarray
    margins: dict  # constraint id -> margin array (>= 0 where met), SI units
    diameter: np.ndarray
    steepest: dict  # "inner", "centre", "outer" -> steepest gradient arrays
    drive: np.ndarray  # 3-D drive length per storey on the centre line (mean over storeys)
    headroom: np.ndarray
    lane_width: np.ndarray

    def feasible(self) -> np.ndarray:
        ok = np.ones(self.radius.shape, bool)
        for m in self.margins.values():
            ok &= m >= -1e-9
        return ok


def _width_terms(project: Project, family: Family) -> tuple[float, float, float, float]:
    """The rule minimum of one lane's width, the kerb clearances inside and outside the
    swept band, and the central kerb between two lanes."""
    rules = project.rules
    if family.lanes == 2 and rules.lane_width_two_way is not None:
        rule_min = 0.5 * rules.lane_width_two_way.value
    elif rules.lane_width_one_way is not None:
        rule_min = rules.lane_width_one_way.value
    else:
        rule_min = 0.0
    c_in, c_out = rules.kerb_clearances()
    return rule_min, c_in, c_out, _central_kerb(project, family)


def _lane_widths(project: Project, family: Family, radius: np.ndarray) -> np.ndarray:
    """(N, lanes) lane widths: fixed, or auto = max(rule minimum, swept requirement).

    Auto widths are exact (no rounding): the fixed point of :func:`_lane_widths_reference`.
    One lane in closed form: with the inner kerb at ``e = R - w/2`` the width is the
    largest of three maps of ``w``, each nondecreasing with a slope below 1 (the rule
    minimum; the vehicle's rear axle on its tightest circle, ``K - e``; hugging the inner
    kerb, ``hypot(e + c_in + W, L) + c_out - e``), so their one common fixed point is the
    largest of their own: ``m``, ``2 (K - R)`` and ``2 (R - e_u)`` with ``e_u`` the root
    of ``2R - c_out - e = hypot(e + c_in + W, L)``, which squared is linear in ``e``.
    Each row's result is checked against the map once (residual 1e-12 m); a row that
    fails, and every two-lane family, takes the reference iteration."""
    if family.lane_widths is not None or family.lanes != 1 or not len(radius):
        return _lane_widths_reference(project, family, radius)
    from .turning import min_rear_axle_radius
    v = project.vehicle
    rule_min, c_in, c_out, _ = _width_terms(project, family)
    radius = np.asarray(radius, float)
    reach = v.wheelbase + v.front_overhang
    p, q = 2.0 * radius - c_out, c_in + v.width
    with np.errstate(divide="ignore", invalid="ignore"):
        e_u = (p * p - q * q - reach * reach) / (2.0 * (p + q))
    k = math.hypot(min_rear_axle_radius(v) + 0.5 * v.width, reach) + c_out
    w = np.maximum(np.maximum(rule_min, 2.0 * (radius - e_u)), 2.0 * (k - radius))
    # One more step of the map: its fixed point leaves the width where it is.
    again = np.maximum(rule_min, _swept_need(v, radius - 0.5 * w, c_in, c_out))
    bad = ~(np.abs(again - w) <= 1e-12 * np.maximum(1.0, w)) | ~(p + q > 0)
    if np.any(bad):
        w[bad] = _lane_widths_reference(project, family, radius[bad])[:, 0]
    return w[:, None]


def _lane_widths_reference(project: Project, family: Family, radius: np.ndarray) -> np.ndarray:
    """(N, lanes) lane widths: fixed, or auto = max(rule minimum, swept requirement).

    Auto widths are exact (no rounding): the inner lane's need depends on where its
    inner kerb lies, which depends on the widths, so they are the fixed point of that
    map, reached by iteration (a contraction: the need changes by less than the kerb
    moves, and the kerb moves by half the width change).  The reference the closed form
    of :func:`_lane_widths` is tested against, and the two-lane form."""
    lanes = family.lanes
    if family.lane_widths is not None:
        return np.broadcast_to(np.asarray(family.lane_widths, float), (len(radius), lanes)).copy()
    rule_min, c_in, c_out, central = _width_terms(project, family)
    v = project.vehicle
    w = np.full((len(radius), lanes), max(rule_min, v.width + c_in + c_out))
    for _ in range(200):
        total = w.sum(axis=1) + (central if lanes == 2 else 0.0)
        edge = radius - 0.5 * total
        new = np.empty_like(w)
        for j in range(lanes):
            new[:, j] = np.maximum(rule_min, _swept_need(v, edge, c_in, c_out))
            edge = edge + new[:, j] + central
        done = np.max(np.abs(new - w)) <= 1e-12 if len(w) else True
        w = new
        if done:
            break
    return w


def _swept_need(v, lane_inner: np.ndarray, inner_clearance: float, outer_clearance: float) -> np.ndarray:
    """Vectorised :func:`helix.turning.lane_width_needed`: clearance to the inner kerb
    places the band, clearance to the outer kerb comes on top of its outer corner."""
    from .turning import min_rear_axle_radius
    rr = np.maximum(lane_inner + inner_clearance + 0.5 * v.width, min_rear_axle_radius(v))
    return np.hypot(rr + 0.5 * v.width, v.wheelbase + v.front_overhang) + outer_clearance - lane_inner


def _central_kerb(project: Project, family: Family) -> float:
    if family.lanes < 2:
        return 0.0
    d = project.design
    if d.central_kerb > 0:
        return d.central_kerb
    rule = project.rules.central_kerb_width
    return rule.value if rule else 0.0


def _thread_radii(project: Project, family: Family, radius: np.ndarray, carriageway: np.ndarray) -> list[np.ndarray]:
    if family.layout == "concentric":
        return [radius, radius + carriageway + project.design.divider]
    if family.layout == "double":
        return [radius, radius]
    return [radius]


def _transitions(project: Project, family: Family, rc: np.ndarray, landing: np.ndarray) -> np.ndarray:
    """Transition plan angles (N, n), by the same rule as :func:`helix.layout.transition_length`."""
    d = project.design
    n = project.storeys
    if d.transition_length is not None:
        return np.tile((d.transition_length / rc)[:, None], (1, n))
    rule = project.rules.transition
    if rule is None:
        return np.zeros((len(rc), n))
    plan = TWO_PI * np.asarray(family.turns)[None, :]
    rises = np.diff([lv.level for lv in project.levels])
    kl = d.landing_fall * rc
    k0 = (rises[None, :] - kl[:, None] * landing[:, None]) / (plan - landing[:, None])
    change = np.abs(k0 / rc[:, None] - d.landing_fall)
    return np.where(change >= rule.when_grade_change_over, (rule.length / rc)[:, None], 0.0)


def _batch_length(bp: BatchProfile, r: np.ndarray, a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """3-D length at radius ``r`` (N,) between plan angles ``a`` and ``b`` (N,)."""
    lo = np.clip(bp.t[:, :-1], a[:, None], b[:, None])
    hi = np.clip(bp.t[:, 1:], a[:, None], b[:, None])
    s0 = bp.k + bp.q * (lo - bp.t[:, :-1])
    s1 = bp.k + bp.q * (hi - bp.t[:, :-1])
    rr = r[:, None]
    flat = (hi - lo) * np.hypot(rr, s0)
    curving = np.abs(bp.q) > 1e-15
    if not np.any(curving):  # straight grades only (segment transitions): no curved part
        return np.sum(flat, axis=1)
    f = lambda s: 0.5 * (s * np.hypot(rr, s) + rr * rr * np.arcsinh(s / rr))
    with np.errstate(divide="ignore", invalid="ignore"):
        curved = (f(s1) - f(s0)) / bp.q
    return np.sum(np.where(curving, curved, flat), axis=1)


def _reference_lines(g, rc: np.ndarray, ri: np.ndarray, lane_lines: list) -> list[np.ndarray]:
    """Radii of gradient limit ``g``, as :func:`helix.checks.reference_radii`: on a
    two-way thread each lane's own centre line or inner kerb."""
    two = len(lane_lines) > 1
    if g.measured_at == "lane_centre" or (g.measured_at == "centre_line" and two):
        return [0.5 * (a + b) for a, b in lane_lines]
    if g.measured_at == "centre_line":
        return [rc]
    offset = g.offset if g.measured_at == "inner_kerb_offset" else 0.0
    return [a + offset for a, _ in lane_lines] if two else [ri + offset]


def screen(project: Project, family: Family, radius, with_headroom: bool = True,
           lower_span: tuple[bool, bool] | None = None, headroom_only: bool = False) -> Screen:
    """All search margins of ``family`` at every radius in ``radius`` (centre line of
    the first thread), as arrays.

    ``lower_span`` restricts the headroom to the points of the first storey (with the
    half landing below it, and above it, when the flags say that storey is the
    building's first or last): the search measures headroom storey by storey on
    sub-projects of a few storeys.  ``headroom_only`` leaves out every other margin (the
    search's headroom regions need no more; the headroom is the same)."""
    radius = np.atleast_1d(np.asarray(radius, float))
    rules, d, st = project.rules, project.design, project.structure
    v = project.vehicle
    widths = _lane_widths(project, family, radius)
    central = _central_kerb(project, family)
    carriageway = widths.sum(axis=1) + (central if family.lanes == 2 else 0.0)
    levels = np.array([lv.level for lv in project.levels])
    rises = np.diff(levels)
    n = len(rises)
    plan = np.tile(TWO_PI * np.asarray(family.turns, float)[None, :], (len(radius), 1))
    landing_len = landing_length(project, d)
    cross = (d.cross_fall if d.cross_fall is not None else
             (rules.cross_fall_min.value if rules.cross_fall_min else 0.0))
    e = cross if d.cross_fall_inward else -cross
    margins: dict[str, np.ndarray] = {}
    steep = {"inner": np.zeros(len(radius)), "centre": np.zeros(len(radius)), "outer": np.zeros(len(radius))}
    profiles: list[BatchProfile] = []
    drive = np.zeros(len(radius))
    thread_rc = _thread_radii(project, family, radius, carriageway)
    for g in rules.gradient:
        margins[g.check_id] = np.full(len(radius), np.inf)
    if _space(project).target_gradient is not None:
        margins["target_gradient"] = np.full(len(radius), np.inf)
    inner_min = np.full(len(radius), np.inf)
    lane_outer_min = np.full(len(radius), np.inf)
    swept = np.full(len(radius), np.inf)
    friction = np.full(len(radius), -np.inf)
    c_in, c_out = rules.kerb_clearances()
    speed_kmh = 3.6 * (rules.design_speed.value if rules.design_speed else 15 / 3.6)
    for i, rc in enumerate(thread_rc):
        if i and rc is thread_rc[0]:
            # The double helix's second thread: the same radius, so the same alignment
            # and margins (every sum below is a minimum or maximum: nothing changes).
            profiles.append(profiles[0])
            continue
        ri, ro = rc - 0.5 * carriageway, rc + 0.5 * carriageway
        inner_min = np.minimum(inner_min, ri)
        land = landing_len / rc
        trans = _transitions(project, family, rc, land)
        bp, k = build_profiles(levels, plan, land, trans, d.transition_kind, d.landing_fall * rc)
        profiles.append(bp)
        if headroom_only:
            continue
        # Steepest slope by magnitude per storey: its run, its transitions (between the
        # run's and the landing's grade) and the landings at its ends, as the full check
        # measures every segment (a landing is held to the stricter of its storeys).
        # A transition rises at the mean of the landing's and the run's slopes (segment)
        # or between them (vertical curve); the landing's own slope counts only where
        # there are landings (a fall without landings is no segment).
        kl = d.landing_fall * rc[:, None]
        k_trans = np.abs(kl) if d.transition_kind == "curve" else np.abs(0.5 * (kl + k))
        kmax = np.maximum(np.abs(k), np.where(trans > 1e-9, k_trans, 0.0))
        if landing_len > 0:
            kmax = np.maximum(kmax, np.abs(kl))
        kmax = np.where(np.isfinite(kmax), kmax, np.inf)
        for key, r_line in (("inner", ri), ("centre", rc), ("outer", ro)):
            steep[key] = np.maximum(steep[key], np.max(kmax / r_line[:, None], axis=1))
        # Gradient limits on their reference lines.
        edge = ri.copy()
        lane_lines = []
        for j in range(family.lanes):
            lane_lines.append((edge, edge + widths[:, j]))
            edge = edge + widths[:, j] + central
        for g in rules.gradient:
            lim = np.array([g.max_for_rise(h) for h in rises])[None, :]
            for r_ref in _reference_lines(g, rc, ri, lane_lines):
                margins[g.check_id] = np.minimum(margins[g.check_id],
                                                 np.min(lim - kmax / r_ref[:, None], axis=1))
        if _space(project).target_gradient is not None:
            ref = rules.gradient[0] if rules.gradient else None
            refs = [rc] if ref is None else _reference_lines(ref, rc, ri, lane_lines)
            for r_ref in refs:
                margins["target_gradient"] = np.minimum(
                    margins["target_gradient"],
                    _space(project).target_gradient - np.max(kmax / r_ref[:, None], axis=1))
        for a, b in lane_lines:
            lane_outer_min = np.minimum(lane_outer_min, b)
            swept = np.minimum(swept, (b - a) - _swept_need(v, a, c_in, c_out))
            friction = np.maximum(friction, speed_kmh ** 2 / (127.0 * 0.5 * (a + b)) - e)
        conn_end = bp.t[:, 0] + 0.5 * land + plan.sum(axis=1)
        drive = np.maximum(drive, _batch_length(bp, rc, bp.t[:, 0] + 0.5 * land, conn_end) / n)
    if headroom_only:
        margins = {}
        diameter = np.full(len(radius), np.nan)
    else:
        if rules.inner_kerb_radius is not None:
            margins["inner_kerb_radius"] = inner_min - rules.inner_kerb_radius.value
        if rules.outer_kerb_radius is not None:
            margins["outer_kerb_radius"] = lane_outer_min - rules.outer_kerb_radius.value
        if family.lanes == 2 and rules.lane_width_two_way is not None:
            margins["lane_width"] = widths.sum(axis=1) - rules.lane_width_two_way.value
        elif rules.lane_width_one_way is not None:
            margins["lane_width"] = widths.min(axis=1) - rules.lane_width_one_way.value
        margins["lane_width_swept"] = swept
        # The same rule as the project loader: the centre-line radius must exceed the
        # carriageway width (so the inner kerb lies at least half a carriageway out).
        margins["geometry"] = radius - carriageway
        if rules.side_friction_max is not None:
            margins["side_friction"] = rules.side_friction_max.value - friction
        if rules.cross_fall_min is not None:
            margins["cross_fall"] = np.full(len(radius), abs(e) - rules.cross_fall_min.value)
        outer = max(thread_rc, key=lambda a: float(np.max(a))) + 0.5 * carriageway
        diameter = 2.0 * (outer + rules.clearance_outside() + st.wall_thickness)
        margins["footprint"] = footprint_span(project.site) - diameter  # helix.plot: exact at the axis
    if with_headroom:
        starts = [d.start_bearing, d.start_bearing + math.pi] if family.layout == "double" else \
            [d.start_bearing] * len(profiles)
        spans = None
        if lower_span is not None:
            first, last = lower_span
            spans = [(bp.t[:, 0] if first else bp.t[:, 0] + 0.5 * landing_len / rc,
                      bp.t[:, -1] if (last and n == 1) else bp.t[:, 0] + 0.5 * landing_len / rc + plan[:, 0])
                     for bp, rc in zip(profiles, thread_rc)]
        head = batch_min_headroom(profiles, starts, d.hand, family.layout != "concentric", st.depth,
                                  st.cover_soffit, spans)
        if rules.clear_height is not None:
            margins["clear_height"] = np.where(np.isfinite(head), head - rules.clear_height.value, np.inf)
    else:
        head = np.full(len(radius), np.nan)
    # Nothing built where landings and transitions leave no room: infeasible.
    for key in margins:
        margins[key] = np.where(np.isnan(margins[key]), -np.inf, margins[key])
    return Screen(radius, margins, diameter, steep, drive, head, widths.min(axis=1))


# ----------------------------------------------------------------------------------
# Exact feasible radii: what can be built, radius-only rules, each storey's gradient,
# each storey's headroom


#: Margins that depend on the radius and the lane widths only, never on the turns.
RADIUS_KEYS = ("inner_kerb_radius", "outer_kerb_radius", "lane_width", "lane_width_swept",
               "side_friction", "cross_fall", "footprint")
#: The design vehicle's checks that only the full check can run (rolled along the ramp).
VEHICLE_KEYS = ("underbody_clearance", "roof_clearance")
#: Checks only the full checker measures (the vehicle rolled along the ramp, the floor
#: approaches); a failing one moves the radius to its own boundary in ``_verified``.
FULL_CHECK_ONLY = VEHICLE_KEYS + ("approach_clear_height", "approach_roof_clearance")
#: Turns per storey tried for each layout when the project gives none (the double
#: helix's thread rises one storey in half a turn; single and concentric helices most
#: often take a whole turn, less for low storeys, more for tall ones).
NATURAL_TURNS = {"single-one-way": (0.5, 0.75, 1.0, 1.25, 1.5, 2.0),
                 "single-two-way": (0.5, 0.75, 1.0, 1.25, 1.5, 2.0),
                 "concentric": (0.5, 0.75, 1.0, 1.25, 1.5, 2.0),
                 "double": (0.5, 0.75, 1.0, 1.5)}
_EDGE = 1e-9  # relative step off a switch radius, to the side it does not belong to
MARGIN_TOL = 1e-9  # a margin this close to zero is met (as in Screen.feasible)


def _space(project: Project) -> SearchSpace:
    """The project's search space (``load_project`` always gives one)."""
    if project.search is None:
        raise ValueError("the project has no search space; load it with helix.load_project")
    return project.search


def _widths_for(project: Project, layout: str) -> tuple[float, ...] | None:
    widths = _space(project).lane_widths
    if widths is None:
        return None
    lanes = 2 if layout == "single-two-way" else 1
    return (widths * 2)[:lanes] if len(widths) < lanes else widths[:lanes]


def storey_choices(project: Project, layout: str) -> tuple[tuple[float, ...], ...]:
    """The turns each storey may take: the project's choices, the layout's usual turns
    when it gives none, or the fixed turns; all filtered by the connections."""
    from .project import _turns_fit
    sp = _space(project)
    n = project.storeys
    conn = project.design.connections
    if sp.turns_choices is not None:
        base = tuple(sp.turns_choices)
    elif sp.turns_free:
        base = tuple(t for t in NATURAL_TURNS[layout] if _turns_fit(t, conn))
        if not base:  # pragma: no cover - every connection admits one of the usual turns
            base = (1.0,)
    else:
        return tuple((t,) for t in project.design.turns_per_storey)
    return (base,) * n


def _sub(project: Project, s0: int, s1: int) -> Project:
    """The storeys ``s0`` to ``s1 - 1`` as a project of their own (levels s0..s1)."""
    design = replace(project.design, turns_per_storey=project.design.turns_per_storey[s0:s1])
    return replace(project, levels=project.levels[s0:s1 + 1], design=design)


def _batch_margins(project: Project, family: Family, radii: np.ndarray, keys) -> dict:
    sc = screen(project, family, radii, with_headroom=False)
    return {k: sc.margins[k] for k in keys if k in sc.margins}


def _regions_of(margins_fn, keys, a: float, b: float, a_by: str = "", b_by: str = "",
                probes: int = 17, memo: dict | None = None) -> IntervalSet:
    """Radii of ``[a, b]`` where every margin in ``keys`` is met, each margin monotone
    on ``[a, b]`` (checked at the probes): one Brent root per margin that changes sign.

    ``memo`` keeps the probes' margins and each margin's own part of ``[a, b]`` (it
    depends on that margin alone), for calls on the same piece with other ``keys``;
    ``margins_fn`` must then give every margin any of those calls asks for."""
    if b < a:
        return IntervalSet()
    piece = (a, b, a_by, b_by)
    xs = np.linspace(a, b, probes) if b > a else np.array([a])
    if memo is not None and piece in memo:
        vals = memo[piece]
    else:
        vals = margins_fn(xs)
        if memo is not None:
            memo[piece] = vals
    region = IntervalSet.of(a, b, a_by, b_by)
    for key in keys:
        if key not in vals:
            continue
        if memo is not None and (piece, key) in memo:
            part = memo[(piece, key)]
        else:
            part = _region_of(margins_fn, key, vals[key], xs, piece)
            if memo is not None:
                memo[(piece, key)] = part
        if part is None:  # met on all of it
            continue
        if not part:
            return IntervalSet()
        region = region & part
        if not region:
            return region
    return region


def _region_of(margins_fn, key: str, vals: np.ndarray, xs: np.ndarray, piece: tuple) -> IntervalSet | None:
    """The part of the piece ``(a, b, a_by, b_by)`` where the margin ``key`` (``vals`` at
    the probes ``xs``) is met: ``None`` for all of it, else an interval set (empty when
    no probe meets it)."""
    a, b, a_by, b_by = piece
    ok = vals + MARGIN_TOL >= 0
    if np.all(ok):
        return None
    if not np.any(ok):
        return IntervalSet()
    flips = np.flatnonzero(ok[1:] != ok[:-1])
    if len(flips) > 1:
        raise RegionError(f"{key}: not monotone on [{a:.6g}, {b:.6g}] m")
    i = int(flips[0])
    f = lambda r: float(margins_fn(np.array([r]))[key][0]) + MARGIN_TOL
    lo, hi = _boundary(f, float(xs[i]), float(xs[i + 1]))
    return IntervalSet.of(a, lo, a_by, key) if ok[0] else IntervalSet.of(hi, b, key, b_by)


def _boundary(f, a: float, b: float) -> tuple[float, float]:
    """Where ``f`` changes sign between ``a`` and ``b``: the last radius with the sign of
    ``f(a)`` and the first with the sign of ``f(b)``, both evaluated, about 0.1 um apart."""
    fa = f(a) >= 0
    if not (np.isfinite(f(a)) and np.isfinite(f(b))):  # a jump (e.g. to 'cannot be built'): bisect
        lo, hi = a, b
        while hi - lo > 0.05 * TOL:
            mid = 0.5 * (lo + hi)
            if (f(mid) >= 0) == fa:
                lo = mid
            else:
                hi = mid
        return lo, hi
    r = brent_root(f, a, b, xtol=0.02 * TOL, rtol=1e-14)
    lo = hi = r
    step = 0.02 * TOL
    while (f(lo) >= 0) != fa and lo > a:
        lo = max(a, lo - step)
        step *= 2
    step = 0.02 * TOL
    while (f(hi) >= 0) == fa and hi < b:
        hi = min(b, hi + step)
        step *= 2
    return lo, hi


def _carriageway(project: Project, family: Family, radius: np.ndarray) -> np.ndarray:
    widths = _lane_widths(project, family, radius)
    return widths.sum(axis=1) + (_central_kerb(project, family) if family.lanes == 2 else 0.0)


def _buildable(project: Project, family: Family, a: float, b: float) -> tuple[float, float] | None:
    """The part of ``[a, b]`` whose centre-line radius exceeds the carriageway width
    (the same rule as the loader: an inner kerb at least half a carriageway out)."""
    fn = lambda r: {"geometry": np.asarray(r, float) - _carriageway(project, family, np.atleast_1d(r))}
    region = _regions_of(fn, ["geometry"], a, b)
    if not region:
        return None
    lo = region.lo
    if float(fn(np.array([lo]))["geometry"][0]) <= 0:  # strictly larger
        lo = np.nextafter(lo, np.inf)
    return (lo, region.hi) if lo <= region.hi else None


def _thread_centres(project: Project, family: Family, radius: float) -> list[float]:
    r = np.array([radius])
    return [float(x[0]) for x in _thread_radii(project, family, r, _carriageway(project, family, r))]


def _switch_radii(project: Project, family: Family, rise: float, turns: float, a: float, b: float) -> list[tuple[float, str]]:
    """Radii of ``[a, b]`` where a storey's alignment changes form: transitions switch on
    (the grade change reaches the rule's threshold) or landings and transitions stop
    fitting.  Between them every margin of the storey is continuous in the radius."""
    d, rules = project.design, project.rules
    plan = TWO_PI * turns
    land = landing_length(project, d)
    f = d.landing_fall
    thread_r: list[tuple[float, str]] = []  # switch radii on a thread's own centre line
    if d.transition_length is not None:
        t_len = d.transition_length
    else:
        t_len = rules.transition.length if rules.transition else 0.0
        if rules.transition is not None:
            thr = rules.transition.when_grade_change_over
            for g in (f + thr, f - thr):
                # (H - f L) / (plan R - L) = g on the centre line
                if abs(g) > 1e-15:
                    r = ((rise - f * land) / g + land) / plan
                    if r > 0:
                        thread_r.append((r, f"transitions needed (grade change reaches "
                                            f"{100 * thr:.2f} % on a {turns:g}-turn storey)"))
    for length in sorted({land, land + t_len, land + 2 * t_len}):
        if length > 0:
            thread_r.append((length / plan, "landings and transitions fill the storey"))
    out: list[tuple[float, str]] = []
    for i, _ in enumerate(_thread_centres(project, family, a)):
        for rt, label in thread_r:
            if i == 0:
                r = rt
            else:  # the outer helix of a concentric pair: its centre is a function of R
                def gap(x: float, i: int = i, rt: float = rt) -> float:
                    return float(_thread_centres(project, family, x)[i] - rt)
                ga, gb = gap(a), gap(b)
                if ga * gb > 0:
                    continue
                r = brent_root(gap, a, b, xtol=0.01 * TOL, rtol=1e-14)
            if a < r < b:
                out.append((r, label))
    return sorted(out)


def _kinks(project: Project, family: Family, a: float, b: float) -> list[tuple[float, str]]:
    """Radii where auto lane widths change regime: a lane's width leaves the rule
    minimum for the swept path, or the vehicle reaches its tightest circle (below it
    the lane widens as fast as the radius shrinks, so the footprint of a concentric
    pair grows again).  Margins are monotone between these radii."""
    if family.lane_widths is not None or b <= a:
        return []
    from .turning import min_rear_axle_radius
    rules, v = project.rules, project.vehicle
    c_in, c_out = rules.kerb_clearances()
    if family.lanes == 2 and rules.lane_width_two_way is not None:
        rule_min = 0.5 * rules.lane_width_two_way.value
    else:
        rule_min = rules.lane_width_one_way.value if rules.lane_width_one_way is not None else 0.0
    central = _central_kerb(project, family)
    rr_min = min_rear_axle_radius(v)

    def terms(r: np.ndarray) -> dict:
        w = _lane_widths(project, family, r)
        edge = r - 0.5 * (w.sum(axis=1) + (central if family.lanes == 2 else 0.0))
        out = {}
        for j in range(family.lanes):
            name = "lane" if family.lanes == 1 else ("inner lane", "outer lane")[j]
            out[f"lane_width_swept ({name} at the rule minimum; the swept path widens it below)"] = \
                _swept_need(v, edge, c_in, c_out) - rule_min
            if rr_min > 0:
                out[f"lane_width_swept ({name}: the vehicle on its tightest circle below)"] = \
                    edge + c_in + 0.5 * v.width - rr_min
            edge = edge + w[:, j] + central
        return out

    xs = np.linspace(a, b, 257)
    vals = terms(xs)
    found = []
    for label, m in vals.items():
        for i in np.flatnonzero((m[1:] >= 0) != (m[:-1] >= 0)):
            f = lambda r, label=label: float(terms(np.array([r]))[label][0])
            found.append((float(brent_root(f, float(xs[i]), float(xs[i + 1]), xtol=0.01 * TOL, rtol=1e-14)), label))
    return sorted(found)


def _pieces(a: float, b: float, cuts: list[tuple[float, str]], a_by: str = "",
            b_by: str = "") -> list[tuple[float, float, str, str]]:
    """``[a, b]`` cut at the switch radii, each piece stepped a hair off the cut, with
    what bounds each end (``a_by`` and ``b_by`` at the ends of ``[a, b]``)."""
    pts = [(a, a_by, False)] + [(r, label, True) for r, label in cuts if a < r < b] + [(b, b_by, False)]
    out = []
    for (p, pl, p_cut), (q, ql, q_cut) in zip(pts, pts[1:]):
        lo = p + _EDGE * max(1.0, p) if p_cut else p
        hi = q - _EDGE * max(1.0, q) if q_cut else q
        if hi >= lo:
            out.append((lo, hi, pl, ql))
    return out


@dataclass
class _Regions:
    """Each storey's gradient regions and headroom regions (with their bounded cells and
    the headroom evaluations each took) of one layout space.  They depend only on what
    :func:`_regions_key` names, so spaces that agree on it share one (see
    :class:`_Shared`)."""

    gradient: dict = field(default_factory=dict)
    headroom: dict = field(default_factory=dict)
    cells: dict = field(default_factory=dict)
    evaluations: dict = field(default_factory=dict)  # headroom key -> evaluations it took
    switches: dict = field(default_factory=dict)  # (rise, turns, a, b) -> switch radii


@dataclass
class _Shared:
    """What one :func:`design` run computes once and reuses: full checks by project
    (the search space aside: :func:`helix.evaluate` never reads it), layout spaces by
    (project, layout, relaxed constraints), each layout's buildable range, kinks and
    radius-only margins piece by piece by (project, layout), and regions by
    :func:`_regions_key`.  The explanations search the same layouts again with one rule
    relaxed, and the verified changes and wider turns meet the same designs again; each
    is a pure function of its key, so the results are those of computing afresh."""

    evaluations: dict = field(default_factory=dict)
    spaces: dict = field(default_factory=dict)
    regions: dict = field(default_factory=dict)
    frames: dict = field(default_factory=dict)  # (project, layout) -> range, kinks, radius-only parts


#: The memo of the current :func:`design` run (none outside one: direct calls of
#: :func:`search_layout` compute afresh).
_SHARED: ContextVar[_Shared | None] = ContextVar("helix_search_shared", default=None)
#: Off: :func:`design` shares nothing (the reference the tests compare the memo with).
SHARING = True


def _regions_key(project: Project, layout: str, widths, base: IntervalSet, kinks: list, relax) -> tuple:
    """What a layout space's gradient and headroom regions depend on: the project but
    its search space (of which only the target gradient enters a margin), the layout and
    lane widths, the radii they are found on (the base, with what bounds them, and the
    kinks that cut it) and the relaxed rules other than the radius-only ones (those act
    through the base alone)."""
    return (replace(project, search=None), _space(project).target_gradient, layout, widths, base,
            tuple(kinks), frozenset(relax) - frozenset(RADIUS_KEYS))


def _evaluate(project: Project, vehicle: bool = True) -> Evaluation:
    """:func:`helix.evaluate`, once per design in a :func:`design` run; a full check also
    answers a request without the vehicle (that leaves out the vehicle's two checks
    only, every other check is the same)."""
    shared = _SHARED.get()
    if shared is None:
        return evaluate(project, vehicle=vehicle)
    key = replace(project, search=None)
    ev = shared.evaluations.get((key, True))
    if ev is None and not vehicle:
        ev = shared.evaluations.get((key, False))
    if ev is None:
        ev = evaluate(project, vehicle=vehicle)
        shared.evaluations[(key, vehicle)] = ev
    return ev if ev.project == project else replace(ev, project=project)


@dataclass
class LayoutSpace:
    """One layout's search: its fixed parts and the memo of each storey's regions."""

    project: Project
    layout: str
    widths: tuple[float, ...] | None
    choices: tuple[tuple[float, ...], ...]
    relax: frozenset
    base: IntervalSet  # buildable radii of the range that meet every radius-only rule
    notes: list[str]
    kinks: list = field(default_factory=list)  # radii where auto lane widths change regime
    regions: "_Regions" = field(default_factory=lambda: _Regions())
    value_memo: dict = field(default_factory=dict)

    @property
    def gradient_memo(self) -> dict:
        return self.regions.gradient

    @property
    def headroom_memo(self) -> dict:
        return self.regions.headroom

    @property
    def headroom_cells(self) -> dict:
        return self.regions.cells

    def family(self, turns) -> Family:
        return Family(self.layout, tuple(float(t) for t in turns), self.widths)

    def points(self, region: IntervalSet) -> list[float]:
        """The ends of the parts of ``region`` and the kinks inside them."""
        pts = []
        for part in region.parts:
            pts += [part.lo, part.hi] + [k for k, _ in self.kinks if part.lo < k < part.hi]
        return pts

    def diameter(self, r: float) -> float:
        if r not in self.value_memo:
            sub = _sub(self.project, 0, 1)
            fam = Family(self.layout, (max(self.choices[0]),), self.widths)
            self.value_memo[r] = float(screen(sub, fam, [r], with_headroom=False).diameter[0])
        return self.value_memo[r]

    def storey_value(self, s: int, t: float, r: float, what: str) -> float:
        """Drive length (m) or steepest inner gradient of storey ``s`` at radius ``r``."""
        p = self.project
        key = (round(p.levels[s + 1].level - p.levels[s].level, 9), t, r, what)
        if key not in self.value_memo:
            sc = screen(_sub(p, s, s + 1), Family(self.layout, (t,), self.widths), [r], with_headroom=False)
            self.value_memo[key] = float(sc.drive[0] if what == "drive" else sc.steepest["inner"][0])
        return self.value_memo[key]

    def switch_radii(self, rise: float, turns: float, a: float, b: float) -> list[tuple[float, str]]:
        """:func:`_switch_radii` of a storey of this layout, once for each argument."""
        key = (rise, turns, a, b)
        if key not in self.regions.switches:
            fam = Family(self.layout, (turns,), self.widths)
            self.regions.switches[key] = _switch_radii(self.project, fam, rise, turns, a, b)
        return list(self.regions.switches[key])

    # --- each storey's gradient rules ------------------------------------------------
    def gradient_region(self, s: int, turns: float) -> IntervalSet:
        p = self.project
        rise = p.levels[s + 1].level - p.levels[s].level
        key = (round(rise, 9), turns)
        if key not in self.gradient_memo:
            sub = _sub(p, s, s + 1)
            fam = Family(self.layout, (turns,), self.widths)
            keys = [g.check_id for g in p.rules.gradient] + ["target_gradient"]
            keys = [k for k in keys if k not in self.relax]
            keys.append("buildable")  # landings and transitions fit

            def fn(r):
                sc = screen(sub, fam, r, with_headroom=False)
                m = {k: sc.margins[k] for k in keys if k in sc.margins}
                m["buildable"] = np.where(np.isfinite(sc.steepest["inner"]), 1.0, -1.0)
                return m

            parts: list = []
            for seg in self.base.parts:
                cuts = sorted(self.switch_radii(rise, turns, seg.lo, seg.hi) + self.kinks)
                for lo, hi, lb, hb in _pieces(seg.lo, seg.hi, cuts, seg.lo_by, seg.hi_by):
                    parts.extend(_regions_of(fn, keys, lo, hi, lb, hb).parts)
            self.gradient_memo[key] = IntervalSet.union_of(parts)
        return self.gradient_memo[key]

    # --- each storey's headroom ------------------------------------------------------
    def headroom_key(self, s: int, j: int, turns: tuple[float, ...]) -> tuple:
        p = self.project
        levels = [lv.level for lv in p.levels[s:j + 2]]
        return (tuple(round(h, 9) for h in np.diff(levels)), tuple(turns), s == 0, j == p.storeys - 1,
                None if p.structure.cover_soffit is None else round(p.structure.cover_soffit - levels[0], 9))

    def headroom_region(self, s: int, j: int, turns: tuple[float, ...]) -> IntervalSet | None:
        """Radii where the points of storey ``s`` clear what is overhead, with storeys
        ``s..j`` (all that can be overhead of storey ``s``) at ``turns``; computed where
        those storeys' own rules hold.  ``None`` when no headroom rule applies."""
        p = self.project
        rule = p.rules.clear_height
        if rule is None or "clear_height" in self.relax:
            return None
        key = self.headroom_key(s, j, turns)
        if key in self.headroom_memo:
            return self.headroom_memo[key]
        over = self.base
        for i, t in enumerate(turns):
            over = over & self.gradient_region(s + i, t)
        levels = [lv.level for lv in p.levels[s:j + 2]]
        sub = _sub(p, s, j + 1)
        fam = Family(self.layout, tuple(turns), self.widths)
        span = (s == 0, j == p.storeys - 1)

        used = [0]

        def fn(r):
            used[0] += len(r)
            return screen(sub, fam, r, lower_span=span, headroom_only=True).margins["clear_height"] + MARGIN_TOL

        def bound(lo, hi):
            return _headroom_change_bound(sub, fam, lo, hi)

        parts, cells = [], []
        for seg in over.parts:
            cuts = list(self.kinks)
            for k, t in enumerate(turns):
                cuts += self.switch_radii(levels[k + 1] - levels[k], t, seg.lo, seg.hi)
            for lo, hi, lb, hb in _pieces(seg.lo, seg.hi, sorted(cuts), seg.lo_by, seg.hi_by):
                region, c = certified_region(fn, bound, lo, hi, "clear_height")
                cells += c
                parts += [Interval(q.lo, q.hi, q.lo_by or lb, q.hi_by or hb) for q in region.parts]
        out = IntervalSet.union_of(parts)
        self.headroom_memo[key] = out
        self.headroom_cells[key] = cells
        self.regions.evaluations[key] = used[0]
        return out


    def headroom_upper(self, s: int, j: int, turns: tuple[float, ...], region: IntervalSet) -> float:
        """An upper bound of the headroom of storey ``s`` over ``region`` (from the
        bounded cells of its region)."""
        cells = self.headroom_cells.get(self.headroom_key(s, j, turns), [])
        ups = [c.upper for c in cells if any(c.lo <= q.hi and q.lo <= c.hi for q in region.parts)]
        limit = self.project.rules.clear_height.value if self.project.rules.clear_height else 0.0
        return (max(ups) if ups else math.inf) + limit


def _profile_parameters(project: Project, family: Family, radius: np.ndarray) -> list[dict]:
    """Per thread, the quantities that fix its alignment at each radius: landing and
    transition plan angles, run slopes and landing slope (m/rad), storey plan angles."""
    d = project.design
    widths = _lane_widths(project, family, radius)
    central = _central_kerb(project, family)
    carriageway = widths.sum(axis=1) + (central if family.lanes == 2 else 0.0)
    levels = np.array([lv.level for lv in project.levels])
    plan = np.tile(TWO_PI * np.asarray(family.turns, float)[None, :], (len(radius), 1))
    landing_len = landing_length(project, d)
    out = []
    for rc in _thread_radii(project, family, radius, carriageway):
        land = landing_len / rc
        trans = _transitions(project, family, rc, land)
        k = run_slopes(np.diff(levels), plan, land, trans, d.landing_fall * rc)
        out.append({"land": land, "trans": trans, "k": k, "kl": d.landing_fall * rc, "plan": plan})
    return out


def _headroom_change_bound(project: Project, family: Family, lo: np.ndarray, hi: np.ndarray) -> np.ndarray:
    """A bound on how much the smallest headroom can change for radii in ``[lo, hi]``.

    On a piece without switches every alignment quantity is monotone in the radius, so
    its range over the cell is spanned by its values at the ends.  Each storey's level
    is fixed at its floor connection; away from it the level differs between two radii
    by at most the integral of the slope difference: the plan angle times the change
    of the run and landing slopes, plus, where landings and transitions of the two
    radii do not overlap, their plan-angle difference times the largest slope gap.  A
    gap changes by at most twice that (the surface and the one above); the ends of the
    alignment move by half a landing.  A factor of 1.5 covers rounding.

    References
    ----------
    R. E. Moore, R. B. Kearfott and M. J. Cloud, *Introduction to Interval Analysis*,
    SIAM, 2009, chapter 8 (bounding a function over a box).
    """
    a = _profile_parameters(project, family, lo)
    b = _profile_parameters(project, family, hi)
    total = np.zeros(len(lo))
    for pa, pb in zip(a, b):
        dk = np.abs(pa["k"] - pb["k"])
        dkl = np.abs(pa["kl"] - pb["kl"])[:, None]
        dland = np.abs(pa["land"] - pb["land"])[:, None]
        dtau = np.abs(pa["trans"] - pb["trans"])
        slope = np.maximum(np.abs(pa["k"]), np.abs(pb["k"])) + np.maximum(np.abs(pa["kl"]), np.abs(pb["kl"]))[:, None]
        per_storey = pa["plan"] * (dk + dkl) + (dland + 2 * dtau) * 2 * slope
        ends = np.max(slope, axis=1) * dland[:, 0]
        total = np.maximum(total, 2 * np.max(per_storey, axis=1) + 2 * ends)
    return 1.5 * np.where(np.isfinite(total), total, np.inf)


# ----------------------------------------------------------------------------------
# Turns per storey: best-first branch and bound over the storeys


@dataclass(frozen=True)
class LayoutSearch:
    """The best design of one layout under the objective, from the exact regions."""

    layout: str
    family: Family | None
    radius: float | None
    region: IntervalSet  # every feasible radius of that family (search-level constraints)
    binding: str
    objective_value: float
    searched: dict  # what was searched: choices per storey, combinations, nodes, windows
    notes: tuple[str, ...] = ()

    @property
    def feasible(self) -> bool:
        return self.family is not None


def _layout_space(project: Project, layout: str, relax=frozenset()) -> LayoutSpace:
    shared = _SHARED.get()
    if shared is None:
        return _new_layout_space(project, layout, relax)
    key = (project, layout, frozenset(relax))
    if key not in shared.spaces:
        space = _new_layout_space(project, layout, relax)
        space.regions = shared.regions.setdefault(
            _regions_key(project, layout, space.widths, space.base, space.kinks, relax), space.regions)
        shared.spaces[key] = space
    return shared.spaces[key]


def _new_layout_space(project: Project, layout: str, relax=frozenset()) -> LayoutSpace:
    sp = _space(project)
    widths = _widths_for(project, layout)
    choices = storey_choices(project, layout)
    fam0 = Family(layout, tuple(c[0] for c in choices), widths)
    notes = []
    from .units import format_length
    u = project.units
    # What every relaxation of this layout shares: the buildable range, the kinks and
    # each radius-only margin's part of every piece (in a design run's memo).
    shared = _SHARED.get()
    frame = None if shared is None else shared.frames.setdefault((project, layout), {})
    if frame is not None and "built" in frame:
        built = frame["built"]
    else:
        built = _buildable(project, fam0, sp.radius_min, sp.radius_max)
        if frame is not None:
            frame["built"] = built
    if built is None:
        return LayoutSpace(project, layout, widths, choices, frozenset(relax), IntervalSet(),
                           [f"no radius of {format_length(sp.radius_min, u)} to {format_length(sp.radius_max, u)} "
                            "leaves room for the carriageway"])
    if built[0] > sp.radius_min + TOL:
        notes.append(f"radius range clipped to {format_length(built[0], u, precision=3)} and up: a smaller "
                     "centre radius leaves no room for the carriageway")
    sub = _sub(project, 0, 1)
    fam1 = Family(layout, (max(choices[0]),), widths)
    keys = [k for k in RADIUS_KEYS if k not in relax]
    if frame is not None and "kinks" in frame:
        kinks = frame["kinks"]
    else:
        kinks = _kinks(project, fam1, built[0], built[1])
        if frame is not None:
            frame["kinks"] = kinks
    parts: list = []
    low_by = "search range (minimum radius)" if built[0] <= sp.radius_min + TOL else "geometry"
    wanted = keys if frame is None else list(RADIUS_KEYS)
    margins = lambda r: _batch_margins(sub, fam1, r, wanted)
    memo = None if frame is None else frame.setdefault("pieces", {})
    for lo, hi, lb, hb in _pieces(built[0], built[1], kinks, low_by, "search range (maximum radius)"):
        parts.extend(_regions_of(margins, keys, lo, hi, lb, hb, memo=memo).parts)
    return LayoutSpace(project, layout, widths, choices, frozenset(relax), IntervalSet.union_of(parts),
                       notes, kinks)


def _pinned(project: Project) -> dict[int, float]:
    return {i: lv.bearing for i, lv in enumerate(project.levels) if lv.bearing is not None and i > 0}


def _pin_ok(project: Project, level: int, cum_turns: float, pins: dict[int, float]) -> bool:
    if level not in pins:
        return True
    d = project.design
    bearing = d.start_bearing + d.hand * TWO_PI * cum_turns
    diff = (pins[level] - bearing + math.pi) % TWO_PI - math.pi
    return abs(diff) <= math.radians(0.5)


def search_layout(project: Project, layout: str, objective: str | None = None, relax=frozenset(),
                  max_nodes: int = 20000, exclude=frozenset()) -> LayoutSearch:
    """The best family and radius of ``layout`` under ``objective``, exactly.

    Storey by storey (best-first branch and bound): each node fixes the turns of the
    storeys below and carries the set of radii that still meet every rule decided so
    far (radius-only rules, each fixed storey's gradient rules, and the headroom of every
    storey whose overhead turns are all fixed).  A node's bound never beats what its
    completions can reach, so the first complete node taken is the optimum.  ``relax``
    names constraints to leave out (for explanations); ``exclude`` turns per storey not
    to choose (found wanting by the full check).
    """
    objective = objective or _space(project).objective
    space = _layout_space(project, layout, relax)
    notes = list(space.notes)  # this search's own (a shared space keeps its own)
    windows: set = set()  # the headroom regions this search asked for
    n = project.storeys
    choices = space.choices
    combos = 1
    for c in choices:
        combos *= len(c)
    pins = _pinned(project)
    searched = {"turns_choices": [list(c) for c in choices], "combinations": combos}
    if not space.base:
        searched.update(nodes=0, headroom_windows=0)
        return LayoutSearch(layout, None, None, IntervalSet(), "", math.inf, searched, tuple(notes))
    min_turns_after = [sum(min(c) for c in choices[s:]) for s in range(n + 1)]

    def value_at(r: float, turns: tuple) -> float:
        """The objective at ``r`` with the storeys beyond ``turns`` at their least turns
        (a lower bound over their completions)."""
        s = len(turns)
        if objective in ("footprint", "fewest_turns"):
            return space.diameter(r)
        if objective == "drive":
            total = sum(space.storey_value(i, t, r, "drive") for i, t in enumerate(turns))
            total += sum(space.storey_value(i, min(choices[i]), r, "drive") for i in range(s, n))
            return total / n
        return max((space.storey_value(i, t, r, "gradient") for i, t in enumerate(turns)), default=0.0)

    def best_point(region: IntervalSet, turns: tuple) -> tuple[float, float]:
        """The best radius of ``region`` and its value: objectives are monotone between
        the ends of its parts and the kinks, so one of those is best; of equal values
        the larger radius (flatter)."""
        pts = [(value_at(r, turns), -r) for r in space.points(region)]
        v, neg_r = min(pts)
        ties = [-q for val, q in pts if val <= v + 1e-9]
        return v, max(ties)

    def bound(region: IntervalSet, turns: tuple, head_ub: float) -> tuple:
        lb_turns = sum(turns) + min_turns_after[len(turns)]
        if objective == "headroom":
            return (-head_ub, lb_turns)  # an upper bound of the largest headroom
        if objective == "fewest_turns":  # the largest pitches first (explaining headroom)
            return (lb_turns, best_point(region, turns)[0])
        return (best_point(region, turns)[0], lb_turns)

    import heapq
    heap: list = []
    counter = 0
    heapq.heappush(heap, (bound(space.base, (), math.inf), counter, (), space.base, 0, math.inf))
    nodes = 0
    completed, max_complete = 0, 200  # the headroom objective evaluates complete choices
    best = None
    while heap:
        key, _, turns, region, pending, head_ub = heapq.heappop(heap)
        if best is not None and key >= best[0]:
            break
        s = len(turns)
        if s == n and turns in exclude:
            continue
        if s == n:
            if objective == "headroom":
                value, r = _best_headroom(space, turns, region)
                if best is None or (value,) + key[1:] < best[0]:
                    best = ((value,) + key[1:], turns, region, r)
                completed += 1
                if completed >= max_complete:
                    notes.append(f"largest headroom taken over the first {max_complete} complete choices "
                                       "of turns, in order of their bound; it may not be the largest")
                    break
                continue
            best = (key, turns, region, best_point(region, turns)[1])
            break
        nodes += 1
        if nodes > max_nodes:
            notes.append(f"search stopped after {max_nodes} partial designs; the result may not be the optimum")
            break
        cum = sum(turns)
        for t in choices[s]:
            if not _pin_ok(project, s + 1, cum + t, pins):
                continue
            new_turns = turns + (t,)
            reg = region & space.gradient_region(s, t)
            # Headroom of every lower storey whose overhead turns are now all fixed.
            cums = np.concatenate([[0.0], np.cumsum(new_turns)])
            low = pending
            ub = head_ub
            while reg and low <= s and (cums[s + 1] - cums[low + 1] >= 1.0 - 1e-9 or s == n - 1):
                window = space.headroom_region(low, s, new_turns[low:s + 1])
                if window is not None:
                    windows.add(space.headroom_key(low, s, new_turns[low:s + 1]))
                    reg = reg & window
                    if objective == "headroom" and reg:
                        ub = min(ub, space.headroom_upper(low, s, new_turns[low:s + 1], reg))
                low += 1
            if not reg:
                continue
            counter += 1
            heapq.heappush(heap, (bound(reg, new_turns, ub), counter, new_turns, reg, low, ub))
    searched.update(nodes=nodes, headroom_windows=len(windows),
                    headroom_evaluations=sum(space.regions.evaluations[k] for k in windows))
    if best is None:
        return LayoutSearch(layout, None, None, IntervalSet(), "", math.inf, searched, tuple(notes))
    key, turns, region, r = best
    fam = space.family(turns)
    binding = region.label_at(r) or next((label for k, label in space.kinks if abs(k - r) <= TOL), "") or (
        "clear_height (largest headroom)" if objective == "headroom" else "")
    value = float(_objective(screen(project, fam, [r]), objective)[0])
    return LayoutSearch(layout, fam, float(r), region, binding, value, searched, tuple(notes))


def _best_headroom(space: LayoutSpace, turns: tuple, region: IntervalSet) -> tuple[float, float]:
    """The largest smallest-headroom over ``region`` (negated, to be minimised) and
    where: sampled on every part, then refined by Brent's method around the best."""
    from .roots import brent_minimum
    fam = space.family(turns)
    best = (math.inf, region.lo)
    for part in region.parts:
        xs = np.linspace(part.lo, part.hi, 65) if part.hi > part.lo else np.array([part.lo])
        h = screen(space.project, fam, xs).headroom
        i = int(np.argmax(h))
        r = float(xs[i])
        if part.hi > part.lo:
            lo, hi = float(xs[max(i - 1, 0)]), float(xs[min(i + 1, len(xs) - 1)])
            f = lambda x: -float(screen(space.project, fam, [x]).headroom[0])
            x = brent_minimum(f, lo, hi, xtol=TOL)[0] if hi > lo else r
            if -f(x) > h[i]:
                r = x
        v = -float(screen(space.project, fam, [r]).headroom[0])
        if v < best[0]:
            best = (v, r)
    return best


def _objective(screen_: Screen, objective: str) -> np.ndarray:
    if objective in ("footprint", "fewest_turns"):
        return screen_.diameter
    if objective == "gradient":
        return screen_.steepest["inner"]
    if objective == "drive":
        return screen_.drive
    return -screen_.headroom  # headroom: largest is best


# ----------------------------------------------------------------------------------
# Whole designs: the full check of each layout's choice, explanations, ranking


def family_project(project: Project, family: Family, radius: float) -> Project:
    """The project with ``family`` at ``radius`` as its fixed design."""
    widths = tuple(float(w) for w in _lane_widths(project, family, np.array([radius]))[0])
    layout = {"single-one-way": "single", "single-two-way": "single"}.get(family.layout, family.layout)
    traffic = "two-way" if family.layout == "single-two-way" else "one-way"
    design = replace(project.design, layout=layout, centre_radius=float(radius), lane_widths=widths,
                     turns_per_storey=family.turns, central_kerb=_central_kerb(project, family))
    return replace(project, design=design, traffic=traffic)


@dataclass(frozen=True)
class Option:
    """The best design of one layout, or its least-failing design and why it fails.

    ``evaluation`` is the full check (vehicle included) of the design in the row: the
    layout's best under the objective, or, when nothing works, the design that meets
    every rule but the one its first explanation relaxes."""

    layout: str
    family: Family | None
    evaluation: Evaluation | None
    binding: str
    feasible: bool
    explanation: tuple[dict, ...] = ()
    objective_value: float = math.inf
    searched: dict = field(default_factory=dict)
    notes: tuple[str, ...] = ()
    region: tuple[tuple[float, float], ...] = ()  # the family's feasible radii (m)


@dataclass(frozen=True)
class DesignResult:
    """The outcome of :func:`design`: one :class:`Option` per layout, ranked (feasible
    first, then by the objective), the index of the best (``None`` when no layout
    passes), and the Pareto set of the feasible designs.

    >>> import helix
    >>> result = helix.design(helix.load_project(helix.demo_file("demo-search")))
    >>> result
    <DesignResult of ...: best single-two-way, radius 8.010 m, 3 layouts searched>
    >>> [(o.layout, o.feasible) for o in result.options]
    [('single-two-way', True), ('concentric', False), ('double', False)]
    """

    project: Project
    options: tuple[Option, ...]  # ranked, feasible first
    best: int | None
    pareto: tuple[dict, ...]  # non-dominated (family, radius) points
    cloud: tuple[dict, ...] = field(default=(), repr=False)  # sampled feasible designs

    def __repr__(self) -> str:
        from .notebook import design_repr
        return design_repr(self)

    def _repr_html_(self) -> str:
        from .notebook import design_html
        return design_html(self)


def pareto_mask(points: np.ndarray) -> np.ndarray:
    """True for the rows of ``points`` (all to be minimised) no other row dominates."""
    pts = np.asarray(points, float)
    le = np.all(pts[:, None, :] <= pts[None, :, :] + 1e-12, axis=2)
    lt = np.any(pts[:, None, :] < pts[None, :, :] - 1e-12, axis=2)
    dominates = le & lt  # [i, j]: i dominates j
    return ~np.any(dominates, axis=0)


def _full_check_margin(project: Project, family: Family, r: float, ids: set[str]) -> float:
    """The smallest margin of the checks ``ids`` at ``r`` (rolling the vehicle only
    when one of them needs it: it is the slow part)."""
    ev = _evaluate(family_project(project, family, r), vehicle=bool(ids & set(VEHICLE_KEYS)))
    margins = [c.margin for c in ev.checks if c.id in ids and c.margin is not None]
    return min(margins) if margins else math.inf


def _verified(project: Project, layout: str, objective: str | None = None,
              relax=frozenset()) -> tuple[LayoutSearch, Evaluation | None]:
    """The layout's search result confirmed by the full check.  Where checks the search
    cannot screen fail (the design vehicle rolled along the ramp, the floor approaches),
    the radius moves along the family's feasible radii to where they pass (they grow
    with the radius as the grade changes soften and the threads spread; checked at the
    ends of each part, the boundary by root finding)."""
    tried: list[tuple] = []
    first = None
    for _ in range(4):  # the best turns, then up to three next best, if full checks fail
        ls = search_layout(project, layout, objective, relax, exclude=frozenset(tried))
        if not ls.feasible:
            break
        ls, ev, ok = _verify_family(project, ls, objective, relax)
        if ok:
            if tried:
                ls = replace(ls, notes=ls.notes + (f"turns {', '.join('/'.join(f'{t:g}' for t in x) for x in tried)} "
                                                   "fail the full check on every feasible radius; the next best kept",))
            return ls, ev
        first = first or (ls, ev)
        if not any(k in FULL_CHECK_ONLY for k in (c.id for c in ev.checks if not c.ok)):
            break
        assert ls.family is not None
        tried.append(ls.family.turns)
    if first is None:
        return ls, None
    return first


def _verify_family(project: Project, ls: LayoutSearch, objective, relax) -> tuple[LayoutSearch, Evaluation, bool]:
    assert ls.family is not None and ls.radius is not None  # a feasible search names both
    ev = _evaluate(family_project(project, ls.family, ls.radius))
    failing = [c.id for c in ev.checks if not c.ok and c.id not in relax]
    if not failing:
        return ls, ev, True
    if any(k not in FULL_CHECK_ONLY for k in failing):
        note = (f"the full check of the chosen design fails {', '.join(failing)} although the search's "
                "margins pass; reported as failing")
        return replace(ls, notes=ls.notes + (note,)), ev, False
    fam = ls.family
    assert fam is not None
    ids = set(failing)
    f = lambda r: _full_check_margin(project, fam, r, ids)
    low = (objective or _space(project).objective) in ("footprint", "drive")
    parts = ls.region.parts if low else tuple(reversed(ls.region.parts))
    for part in parts:
        a, b = part.lo, part.hi
        fa, fb = f(a), f(b)
        if fa < 0 and fb < 0:
            continue
        if fa >= 0 and fb >= 0:
            r = a if low else b
        else:
            lo, hi = _boundary(f, a, b)
            r = hi if fb >= 0 else lo
            if (fb >= 0) != low:  # the margin shrinks with the radius there
                r = a if fa >= 0 else b
        ev2 = _evaluate(family_project(project, fam, r))
        if ev2.ok:
            value = float(_objective(screen(project, fam, [r]), objective or _space(project).objective)[0])
            return replace(ls, radius=float(r), binding=failing[0], objective_value=value), ev2, True
    note = f"{', '.join(failing)} fails on every feasible radius of {fam.label()}"
    return replace(ls, notes=ls.notes + (note,)), ev, False


def _full_check_hint(key: str) -> str:
    if key.startswith("approach"):
        return ("a floor approach that keeps clear of the turn overhead: longer landings, or the aisle "
                "given as design.approach (side, length, angle or line)")
    if key in VEHICLE_KEYS:
        return "transitions sized for the vehicle (transition: {length: vehicle}) or a flatter ramp"
    return "see the checks of the row"


def _relaxed_objective(key: str) -> str:
    if key == "footprint":
        return "footprint"
    if key == "clear_height":
        return "fewest_turns"  # the largest pitches leave the most headroom
    return "gradient"  # everything else improves with the radius: the largest one


def _candidate_keys(project: Project) -> list[str]:
    keys = ["footprint"] + [g.check_id for g in project.rules.gradient]
    if _space(project).target_gradient is not None:
        keys.append("target_gradient")
    keys.append("clear_height")
    keys += [k for k in RADIUS_KEYS if k != "footprint"]
    return keys


def _changed_project(project: Project, key: str, shortfall: float, diameter: float) -> Project | None:
    """The project changed just enough (plus a hair) to meet ``key`` by ``shortfall``."""
    from .rules import Limit
    rules, st, site = project.rules, project.structure, project.site
    eps = 1e-4
    if key == "footprint" and (site.axis is not None or not site.is_rectangle):
        return None  # a polygon has no one way to grow: the change names the circle it must hold
    if key == "footprint":
        need = diameter + 2 * site.margin + 1e-3
        bigger = replace(project, site=replace(site, width=max(site.width, need), depth=max(site.depth, need)))
        if _space(project).range_from_plot:
            bigger = replace(bigger, search=replace(_space(project), radius_max=max(_space(project).radius_max,
                                                                                    0.5 * need)))
        return bigger
    if key.startswith("gradient"):
        limits = tuple(replace(g, by_rise=tuple((h, v + shortfall + eps) for h, v in g.by_rise))
                       if g.check_id == key else g for g in rules.gradient)
        return replace(project, rules=replace(rules, gradient=limits))
    if key == "target_gradient":
        target = _space(project).target_gradient
        assert target is not None  # a candidate only when set
        return replace(project, search=replace(_space(project), target_gradient=target + shortfall + eps))
    if key == "clear_height":
        cut = shortfall + 1e-3
        hanging = max(0.0, st.hanging_depth - cut)
        slab = st.slab_depth - max(0.0, cut - st.hanging_depth)
        if slab <= 0:
            return None
        return replace(project, structure=replace(st, hanging_depth=hanging, slab_depth=slab))
    if key in ("inner_kerb_radius", "outer_kerb_radius", "side_friction"):
        attr = {"side_friction": "side_friction_max"}.get(key, key)
        lim = getattr(rules, attr)
        assert lim is not None
        new = lim.value + shortfall + eps if key == "side_friction" else lim.value - shortfall - eps
        return replace(project, rules=replace(rules, **{attr: Limit(new, lim.source)}))  # type: ignore[arg-type]
    if key == "cross_fall" and rules.cross_fall_min is not None:
        return replace(project, design=replace(project.design, cross_fall=rules.cross_fall_min.value))
    lane_widths = _space(project).lane_widths
    if key in ("lane_width", "lane_width_swept") and lane_widths is not None:
        widths = tuple(w + shortfall + eps for w in lane_widths)
        return replace(project, search=replace(_space(project), lane_widths=widths))
    return None


def _change_text(project: Project, key: str, shortfall: float, diameter: float) -> str:
    from .units import format_length
    u = project.units
    site = project.site
    if key == "footprint" and (site.axis is not None or not site.is_rectangle):
        ax = axis_of(site)
        where = (f"at the pinned axis ({format_length(ax.x, u)}, {format_length(ax.y, u)})" if ax.pinned else
                 "anywhere in the allowed region")
        return (f"an allowed region (plot less setback and no-build zones) that holds a circle of diameter "
                f"{format_length(diameter, u)} {where}; the largest now is {format_length(2 * max(ax.reach, 0), u)}, "
                f"limited by {ax.nearest}")
    if key == "footprint":
        need = diameter + 2 * site.margin
        return (f"a footprint of at least {format_length(need, u)} x {format_length(need, u)} "
                f"(now {format_length(site.width, u)} x {format_length(site.depth, u)})")
    if key.startswith("gradient") or key == "target_gradient":
        return f"allow a gradient {100 * shortfall:.2f} percentage points steeper ({key.replace('_', ' ')})"
    if key == "clear_height":
        if shortfall >= project.structure.depth:
            return (f"{format_length(shortfall, u, precision=3)} more clear height, more than the whole structure "
                    f"({format_length(project.structure.depth, u)}): fewer turns per storey or another layout")
        return (f"a structural depth {format_length(shortfall, u, precision=3)} thinner "
                f"(now {format_length(project.structure.depth, u)})")
    if key == "side_friction":
        return f"a rule set that accepts a side friction {shortfall:.3f} higher"
    if key in ("inner_kerb_radius", "outer_kerb_radius"):
        return f"a rule set that accepts a {key.replace('_', ' ')} {format_length(shortfall, u, precision=3)} smaller"
    if key == "cross_fall":
        return "the rule set's minimum cross-fall"
    return f"lanes {format_length(shortfall, u, precision=3)} wider"


def _explain(project: Project, layout: str, feasible_layouts: set[str],
             relaxations: bool = True) -> tuple[tuple[dict, ...], tuple | None]:
    """Each constraint that alone keeps the layout from working, by how much, and the
    smallest change that fixes it, each change verified by searching and fully
    checking the changed project.  Returns the items and the least-failing design
    ``(family, radius, key)``: that of the first constraint whose relaxation works."""
    from .units import format_length
    items: list[dict] = []
    least = None
    blocked: list[str] = []
    for key in (_candidate_keys(project) if relaxations else ()):
        base = project
        if key == "footprint" and _space(project).range_from_plot:
            # A range taken from the plot grows with it.
            base = replace(project, search=replace(_space(project), radius_max=max(_space(project).radius_max, 200.0)))
        try:
            ls = search_layout(base, layout, _relaxed_objective(key), relax=frozenset({key}))
        except RegionError:
            continue
        if not ls.feasible:
            continue
        fam, r = ls.family, ls.radius
        assert fam is not None and r is not None  # a feasible relaxed search names both
        if key == "clear_height":
            # The least headroom shortfall of that family: its largest headroom over the
            # radii where every other rule holds (sampled, then Brent's method).
            space = _layout_space(project, layout, frozenset({key}))
            r = _best_headroom(space, fam.turns, ls.region)[1]
        at = screen(project, fam, [r])
        m = at.margins.get(key)
        if m is None or m[0] >= -1e-9:
            continue  # met anyway: this constraint is not what blocks
        shortfall = float(-m[0])
        item = {"constraint": key, "shortfall": round(shortfall, 6), "at_radius_m": round(r, 6),
                "turns_per_storey": list(fam.turns),
                "change": _change_text(project, key, shortfall, float(at.diameter[0]))}
        if key == "footprint":
            item["value"] = round(float(at.diameter[0]) + (2 * project.site.margin if project.site.is_rectangle
                                                            and project.site.axis is None else 0.0), 4)
        elif key.startswith("gradient") or key == "target_gradient":
            item["value"] = round(100 * shortfall, 4)
        elif key == "clear_height":
            item["value"] = round(project.structure.depth - shortfall, 4)
        changed = _changed_project(project, key, shortfall, float(at.diameter[0]))
        if changed is None:
            item["verified"] = False
            item["verified_result"] = ("not verified: a polygonal plot or a pinned axis has no one way to grow"
                                       if key == "footprint" else
                                       "not verified: no such change can be made to the project")
        else:
            vls, vev = _verified(changed, layout)
            ok = vls.feasible and vev is not None and vev.ok
            item["verified"] = bool(ok)
            if ok:
                assert vls.family is not None and vls.radius is not None
                item["verified_result"] = (f"verified: with this change the layout passes every check at centre "
                                           f"radius {format_length(vls.radius, project.units, precision=3)}, "
                                           f"turns {'/'.join(f'{t:g}' for t in dict.fromkeys(vls.family.turns))}")
            else:
                fails = [c.id for c in vev.checks if not c.ok] if vev is not None else ["no feasible radius"]
                item["verified_result"] = "with this change alone the layout still fails " + ", ".join(fails)
        items.append(item)
        if least is None:
            least = (fam, r, key)
    if not items and relaxations:
        # No single change suffices: name what fails at the least-bad radius.
        blocked = [k for k in _candidate_keys(project)]
        items.append({"constraint": "several", "change": "no single change is enough: relax two or more of "
                      + ", ".join(blocked[:4]) + "; see the checks of the row"})
    sp = _space(project)
    if sp.turns_choices is not None or not sp.turns_free:
        wider = replace(project, search=replace(sp, turns_choices=None, turns_free=True))
        vls, vev = _verified(wider, layout)
        if vls.feasible and vev is not None and vev.ok:
            assert vls.family is not None and vls.radius is not None
            turns = "/".join(f"{t:g}" for t in vls.family.turns)
            items.append({"constraint": "turns_per_storey", "value": list(vls.family.turns),
                          "change": f"turns per storey {turns} (outside the choices given)",
                          "verified": True,
                          "verified_result": f"verified: passes every check at centre radius "
                                             f"{format_length(vls.radius, project.units, precision=3)}"})
    if layout.startswith("single") and "double" in feasible_layouts:
        items.append({"constraint": "layout", "change": "a second thread: a double helix of the same plot works",
                      "verified": True, "verified_result": "verified: the double helix passes every check"})
    return tuple(items), least


def default_space(project: Project):
    """The space ``helix design`` searches when the design section fixes everything:
    every layout, radii from 3 m to what the footprint could hold, each layout's usual
    turns per storey (storey by storey, as the connections allow), lane widths from the
    rules and the vehicle."""
    from .project import SEARCH_LAYOUTS
    sp = _space(project)
    r_max = max(0.5 * footprint_span(project.site), 3.5)
    return replace(sp, layouts=SEARCH_LAYOUTS, radius_min=3.0, radius_max=r_max, turns_choices=None,
                   turns_free=True, lane_widths=None, fixed=False, range_from_plot=True)


def _cloud(project: Project, option: Option) -> list[dict]:
    out = []
    fam = option.family
    assert fam is not None
    for lo, hi in option.region:
        radii = np.linspace(lo, hi, 25) if hi > lo else np.array([lo])
        sc = screen(project, fam, radii, with_headroom=False)
        for j in range(len(radii)):
            out.append({"layout": option.layout, "turns": list(fam.turns), "radius_m": float(radii[j]),
                        "diameter_m": float(sc.diameter[j]),
                        "steepest_inner_pct": 100 * float(sc.steepest["inner"][j]),
                        "drive_m": float(sc.drive[j])})
    return out


def design(project: Project) -> DesignResult:
    """Search every layout of the project's search space; rank and explain them.

    A project whose design section is fully fixed is searched over
    :func:`default_space`.  The search is described in the module docstring and the
    README; :class:`DesignResult` shows a whole run.

    >>> import dataclasses, helix
    >>> p = helix.load_project(helix.demo_file("demo-search"))
    >>> one = dataclasses.replace(p, search=dataclasses.replace(p.search, layouts=("single-two-way",)))
    >>> best = helix.design(one).options[0]
    >>> best.feasible, round(best.evaluation.project.design.centre_radius, 2)
    (True, 8.01)
    """
    if project.search is None or project.search.fixed:
        project = replace(project, search=default_space(project))
    token = _SHARED.set(_Shared() if SHARING and _hashable(project) else None)
    try:
        return _design(project)
    finally:
        _SHARED.reset(token)


def _hashable(project: Project) -> bool:
    """Whether the project can key the memo (one built in code may hold a list)."""
    try:
        hash(project)
    except TypeError:
        return False
    return True


def _design(project: Project) -> DesignResult:
    objective = _space(project).objective
    results = {}
    for layout in _space(project).layouts:
        try:
            results[layout] = _verified(project, layout)
        except RegionError as exc:  # a margin broke its finder's assumption: say so, do not guess
            results[layout] = (LayoutSearch(layout, None, None, IntervalSet(), "", math.inf, {},
                                            (f"the search could not resolve this layout ({exc})",)), None)
    feasible_layouts = {k for k, (ls, ev) in results.items() if ls.feasible and ev is not None and ev.ok}
    options: list[Option] = []
    cloud: list[dict] = []
    for layout, (ls, ev) in results.items():
        if layout in feasible_layouts:
            opt = Option(layout, ls.family, ev, ls.binding, True, (), ls.objective_value, ls.searched,
                         ls.notes, tuple(ls.region.as_list()))
            cloud += _cloud(project, opt)
            options.append(opt)
            continue
        expl, least = _explain(project, layout, feasible_layouts, relaxations=not ls.feasible)
        fam: Family | None
        r: float | None
        row_ev: Evaluation | None
        if ls.feasible and ev is not None:
            assert ls.family is not None and ls.radius is not None
            # The search's design meets every screened rule; what fails is measured only
            # by the full check (vehicle, approaches), on every feasible radius tried.
            full = tuple({"constraint": c.id, "shortfall": round(-c.margin, 6), "at_radius_m": round(ls.radius, 6),
                          "turns_per_storey": list(ls.family.turns),
                          "change": _full_check_hint(c.id), "verified": False,
                          "verified_result": "fails at every feasible radius of the best turns per storey"}
                         for c in ev.checks if not c.ok and c.margin is not None)
            expl = full + tuple(e for e in expl if e.get("constraint") != "several")
            fam, r, binding, row_ev = ls.family, ls.radius, "least-failing: fails only full checks", ev
        else:
            if not ls.searched.get("nodes") and any("leaves room for the carriageway" in n for n in ls.notes):
                expl = ({"constraint": "centre_radius", "change": "a radius range reaching above the carriageway "
                         "width (see the note); every radius of this one leaves no room for the lanes"},) + \
                    tuple(e for e in expl if e.get("constraint") != "several")
            fam, r = (least[0], least[1]) if least else (ls.family, ls.radius)
            binding = f"least-failing: meets every rule but {least[2]}" if least else "infeasible"
            row_ev = _evaluate(family_project(project, fam, r)) if fam is not None and r is not None else None
        value = float(_objective(screen(project, fam, [r]), objective)[0]) if fam is not None and r is not None \
            else math.inf
        options.append(Option(layout, fam, row_ev, binding, False, expl, value, ls.searched, ls.notes))
    ranked = sorted(options, key=lambda o: (not o.feasible, o.objective_value))
    best = 0 if ranked and ranked[0].feasible else None
    pareto: tuple[dict, ...] = ()
    if cloud:
        pts = np.array([[c["diameter_m"], c["steepest_inner_pct"], c["drive_m"]] for c in cloud])
        mask = pareto_mask(pts)
        pareto = tuple(c for c, m in zip(cloud, mask) if m)
    return DesignResult(project, tuple(ranked), best, pareto, tuple(cloud))
