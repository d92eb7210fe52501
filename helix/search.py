"""The design search: the best helix of each layout that fits the plot and the rules.

A *family* is one layout with one choice of turns per storey and of lane widths; in a
family the only continuous variable is the centre-line radius ``R``.  Every rule is a
*margin* function of ``R`` (positive where it is met), evaluated for many radii at once
as numpy arrays (:func:`screen`).  Gradient, kerb radii, swept lane width and side
friction improve as ``R`` grows; the footprint gets worse; headroom hardly changes.
So the feasible radii of a family form an interval, found by

1. screening a coarse grid of radii;
2. bracketing each constraint that changes sign next to the first (or last) feasible
   grid point, and solving ``margin(R) = 0`` with Brent's method
   (:func:`helix.roots.brent_root`, checked against ``scipy.optimize.brentq``): the
   reported radius lies on the binding constraint's boundary, not on a grid point;
3. verifying the chosen design with the full checker (:func:`helix.evaluate`), which
   adds the design vehicle's clearances; a failing vehicle check moves the radius to
   that check's own boundary, again by root finding.

Layouts that cannot be made to work are explained: every violated constraint, by how
much, and the smallest single change that would make the layout feasible.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field, replace

import numpy as np

from .batch import BatchProfile, batch_min_headroom, build_profiles
from .evaluate import Evaluation, evaluate
from .roots import brent_root
from .project import Project

__all__ = ["Family", "Screen", "Option", "DesignResult", "families", "screen", "design",
           "family_project", "pareto_mask", "LAYOUT_TITLES"]

TWO_PI = 2.0 * math.pi
LAYOUT_TITLES = {"single-one-way": "single helix, one-way", "single-two-way": "single helix, two-way",
                 "double": "double interleaved helix", "concentric": "concentric pair"}
#: Checks that only the full checker measures (the vehicle rolled along the ramp, the
#: floor approaches); a failing one moves the radius to its own boundary in ``_verify``.
_FULL_CHECK_ONLY = ("underbody_clearance", "roof_clearance", "approach_clear_height",
                    "approach_roof_clearance")
_CHEAP = ("gradient", "target_gradient", "inner_kerb_radius", "outer_kerb_radius", "lane_width",
          "lane_width_swept", "side_friction", "footprint", "cross_fall")


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


def families(project: Project) -> list[Family]:
    """Every combination the project's search space allows, in a fixed order."""
    sp = project.search
    n = project.storeys
    out = []
    for layout in sp.layouts:
        if sp.turns_choices is None:
            turn_sets = [project.design.turns_per_storey]
        else:
            turn_sets = [(t,) * n for t in sp.turns_choices]
        for turns in turn_sets:
            widths = sp.lane_widths
            if widths is not None:
                lanes = 2 if layout == "single-two-way" else 1
                widths = (widths * 2)[:lanes] if len(widths) < lanes else widths[:lanes]
            out.append(Family(layout, tuple(turns), widths))
    return out


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


def _lane_widths(project: Project, family: Family, radius: np.ndarray) -> np.ndarray:
    """(N, lanes) lane widths: fixed, or auto = max(rule minimum, swept requirement)."""
    from .turning import lane_width_needed
    rules = project.rules
    lanes = family.lanes
    if family.lane_widths is not None:
        return np.broadcast_to(np.asarray(family.lane_widths, float), (len(radius), lanes)).copy()
    if lanes == 2 and rules.lane_width_two_way is not None:
        rule_min = 0.5 * rules.lane_width_two_way.value
    elif rules.lane_width_one_way is not None:
        rule_min = rules.lane_width_one_way.value
    else:
        rule_min = 0.0
    c_in, c_out = rules.kerb_clearances()
    central = _central_kerb(project, family)
    v = project.vehicle
    w = np.full((len(radius), lanes), max(rule_min, v.width + c_in + c_out))
    for _ in range(30):  # fixed point: the inner lane's need depends on its own width
        total = w.sum(axis=1) + (central if lanes == 2 else 0.0)
        inner = radius - 0.5 * total
        need = np.empty_like(w)
        edge = inner.copy()
        for j in range(lanes):
            need[:, j] = _swept_need(v, edge, c_in, c_out)
            edge = edge + w[:, j] + central
        new = np.maximum(rule_min, np.ceil(need * 100.0) / 100.0)  # whole centimetres
        if np.array_equal(new, w):
            break
        w = np.maximum(w, new)
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
    f = lambda s: 0.5 * (s * np.hypot(rr, s) + rr * rr * np.arcsinh(s / rr))
    with np.errstate(divide="ignore", invalid="ignore"):
        curved = (f(s1) - f(s0)) / bp.q
    return np.sum(np.where(np.abs(bp.q) > 1e-15, curved, flat), axis=1)


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


def screen(project: Project, family: Family, radius, with_headroom: bool = True) -> Screen:
    """All search margins of ``family`` at every radius in ``radius`` (centre line of
    the first thread), as arrays."""
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
    landing_len = d.landing_length if d.landing_length is not None else (
        rules.landing_length.value if rules.landing_length else 0.0)
    cross = (d.cross_fall if d.cross_fall is not None else
             (rules.cross_fall_min.value if rules.cross_fall_min else 0.0))
    e = cross if d.cross_fall_inward else -cross
    margins: dict[str, np.ndarray] = {}
    steep = {"inner": np.zeros(len(radius)), "centre": np.zeros(len(radius)), "outer": np.zeros(len(radius))}
    profiles = []
    drive = np.zeros(len(radius))
    thread_rc = _thread_radii(project, family, radius, carriageway)
    for g in rules.gradient:
        margins[g.check_id] = np.full(len(radius), np.inf)
    if project.search.target_gradient is not None:
        margins["target_gradient"] = np.full(len(radius), np.inf)
    inner_min = np.full(len(radius), np.inf)
    lane_outer_min = np.full(len(radius), np.inf)
    swept = np.full(len(radius), np.inf)
    friction = np.full(len(radius), -np.inf)
    c_in, c_out = rules.kerb_clearances()
    speed_kmh = 3.6 * (rules.design_speed.value if rules.design_speed else 15 / 3.6)
    for rc in thread_rc:
        ri, ro = rc - 0.5 * carriageway, rc + 0.5 * carriageway
        inner_min = np.minimum(inner_min, ri)
        land = landing_len / rc
        trans = _transitions(project, family, rc, land)
        bp, k = build_profiles(levels, plan, land, trans, d.transition_kind, d.landing_fall * rc)
        profiles.append(bp)
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
        if project.search.target_gradient is not None:
            ref = rules.gradient[0] if rules.gradient else None
            refs = [rc] if ref is None else _reference_lines(ref, rc, ri, lane_lines)
            for r_ref in refs:
                margins["target_gradient"] = np.minimum(
                    margins["target_gradient"],
                    project.search.target_gradient - np.max(kmax / r_ref[:, None], axis=1))
        for a, b in lane_lines:
            lane_outer_min = np.minimum(lane_outer_min, b)
            swept = np.minimum(swept, (b - a) - _swept_need(v, a, c_in, c_out))
            friction = np.maximum(friction, speed_kmh ** 2 / (127.0 * 0.5 * (a + b)) - e)
        conn_end = bp.t[:, 0] + 0.5 * land + plan.sum(axis=1)
        drive = np.maximum(drive, _batch_length(bp, rc, bp.t[:, 0] + 0.5 * land, conn_end) / n)
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
    margins["geometry"] = np.where(radius > carriageway, radius - carriageway, -np.inf)
    if rules.side_friction_max is not None:
        margins["side_friction"] = rules.side_friction_max.value - friction
    if rules.cross_fall_min is not None:
        margins["cross_fall"] = np.full(len(radius), abs(e) - rules.cross_fall_min.value)
    outer = max(thread_rc, key=lambda a: float(np.max(a))) + 0.5 * carriageway
    diameter = 2.0 * (outer + rules.clearance_outside() + st.wall_thickness)
    margins["footprint"] = min(project.site.usable) - diameter
    if with_headroom:
        starts = [d.start_bearing, d.start_bearing + math.pi] if family.layout == "double" else \
            [d.start_bearing] * len(profiles)
        head = batch_min_headroom(profiles, starts, d.hand, family.layout != "concentric", st.depth,
                                  st.cover_soffit)
        if rules.clear_height is not None:
            margins["clear_height"] = np.where(np.isfinite(head), head - rules.clear_height.value, np.inf)
    else:
        head = np.full(len(radius), np.nan)
    # Nothing built where landings and transitions leave no room: infeasible.
    for key in margins:
        margins[key] = np.where(np.isnan(margins[key]), -np.inf, margins[key])
    return Screen(radius, margins, diameter, steep, drive, head, widths.min(axis=1))


def _scale(key: str) -> float:
    """A shortfall that counts as 'one unit' when comparing unlike constraints."""
    if key.startswith("gradient") or key in ("target_gradient", "cross_fall"):
        return 0.01  # one percentage point
    if key == "side_friction":
        return 0.01
    return 0.1  # a length: 100 mm


def badness(sc: Screen) -> np.ndarray:
    """How far each screened radius is from feasible: the number of violated
    constraints, then their shortfalls in comparable units (for the least-bad
    design of an infeasible layout)."""
    count = np.zeros(len(sc.radius))
    total = np.zeros(len(sc.radius))
    for key, m in sc.margins.items():
        short = np.where(m < -1e-9, -m, 0.0)
        count += short > 0
        total += np.minimum(short / _scale(key), 1e6)
    return count * 1e7 + total


# ----------------------------------------------------------------------------------
# Boundaries


def _margin_fn(project: Project, family: Family, key: str):
    heavy = key == "clear_height"
    return lambda r: float(screen(project, family, [r], with_headroom=heavy).margins[key][0])


def _root(project: Project, family: Family, key: str, a: float, b: float) -> float:
    """Radius where constraint ``key`` changes sign between ``a`` and ``b`` (Brent)."""
    f = _margin_fn(project, family, key)
    fa, fb = f(a), f(b)
    if not (np.isfinite(fa) and np.isfinite(fb)) or fa * fb > 0:
        # An infeasible-to-feasible jump (e.g. landings that stop fitting): bisect.
        lo, hi = a, b
        for _ in range(60):
            mid = 0.5 * (lo + hi)
            if (f(mid) >= 0) == (fb >= 0):
                hi = mid
            else:
                lo = mid
        return hi if fb >= 0 else lo
    return float(brent_root(f, a, b, xtol=1e-7, rtol=1e-12))


@dataclass(frozen=True)
class Candidate:
    family: Family
    radius: float
    binding: str  # the constraint whose boundary fixes the radius, or "search range"
    objective_value: float


def _objective(screen_: Screen, objective: str) -> np.ndarray:
    if objective == "footprint":
        return screen_.diameter
    if objective == "gradient":
        return screen_.steepest["inner"]
    if objective == "drive":
        return screen_.drive
    return -screen_.headroom  # headroom: largest is best


def _best_in_family(project: Project, family: Family, grid: np.ndarray, objective: str,
                    sc: Screen) -> Candidate | None:
    """The family's best radius for ``objective``, on a constraint boundary found by
    root finding between the grid points that bracket it (``sc``: the grid's screen)."""
    ok = sc.feasible()
    if not np.any(ok):
        return None
    idx = np.flatnonzero(ok)
    if objective in ("footprint", "drive"):
        i = int(idx[0])  # both grow with the radius: the smallest feasible radius
        if i == 0:
            r, binding = float(grid[0]), "search range (minimum radius)"
        else:
            roots = {key: _root(project, family, key, float(grid[i - 1]), float(grid[i]))
                     for key, m in sc.margins.items() if m[i - 1] < -1e-9}
            binding = max(roots, key=roots.get)
            r = roots[binding]
    elif objective == "gradient":
        i = int(idx[-1])  # gradient falls with the radius: the largest feasible radius
        if i == len(grid) - 1:
            r, binding = float(grid[-1]), "search range (maximum radius)"
        else:
            roots = {key: _root(project, family, key, float(grid[i]), float(grid[i + 1]))
                     for key, m in sc.margins.items() if m[i + 1] < -1e-9}
            binding = min(roots, key=roots.get)
            r = roots[binding]
    else:
        values = np.where(ok, sc.headroom, -np.inf)
        i = int(np.argmax(values))
        r, binding = float(grid[i]), "clear_height (largest headroom)"
    value = float(_objective(screen(project, family, [r]), objective)[0])
    return Candidate(family, r, binding, value)


# ----------------------------------------------------------------------------------
# Whole designs


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
    """The best design of one layout, or why that layout cannot be made to work."""

    layout: str
    family: Family | None
    evaluation: Evaluation | None
    binding: str
    feasible: bool
    explanation: tuple[dict, ...] = ()
    objective_value: float = math.inf


@dataclass(frozen=True)
class DesignResult:
    project: Project
    options: tuple[Option, ...]  # ranked, feasible first
    best: int | None
    pareto: tuple[dict, ...]  # non-dominated (family, radius) points
    cloud: tuple[dict, ...] = field(default=(), repr=False)  # every screened feasible point


def pareto_mask(points: np.ndarray) -> np.ndarray:
    """True for the rows of ``points`` (all to be minimised) no other row dominates."""
    pts = np.asarray(points, float)
    le = np.all(pts[:, None, :] <= pts[None, :, :] + 1e-12, axis=2)
    lt = np.any(pts[:, None, :] < pts[None, :, :] - 1e-12, axis=2)
    dominates = le & lt  # [i, j]: i dominates j
    return ~np.any(dominates, axis=0)


def _grid(project: Project, points: int = 64) -> np.ndarray:
    sp = project.search
    if sp.radius_max <= sp.radius_min:
        return np.array([sp.radius_min])
    return np.linspace(sp.radius_min, sp.radius_max, points)


def _verify(project: Project, cand: Candidate, grid: np.ndarray) -> tuple[Evaluation | None, Candidate]:
    """Full check of a screened candidate; a failing check that only the full checker
    measures (vehicle, approaches) moves the radius to its boundary (Brent's method on
    the full check, within the screened-feasible radii above the candidate), or rejects
    the candidate."""
    ev = evaluate(family_project(project, cand.family, cand.radius))
    if ev.ok:
        return ev, cand
    failing = [c for c in ev.checks if not c.ok]
    if any(c.id not in _FULL_CHECK_ONLY for c in failing):
        return None, cand
    key = failing[0].id
    # Rolling the vehicle is slow: only when a vehicle check is what fails.
    vehicle = any(c.id in ("underbody_clearance", "roof_clearance") for c in failing)
    ids = {c.id for c in failing} | {"approach_clear_height", "approach_roof_clearance"}

    def margin(r: float) -> float:
        e = evaluate(family_project(project, cand.family, r), vehicle=vehicle)
        return min((c.margin for c in e.checks if c.id in ids and c.margin is not None), default=math.inf)

    # The far end of the run of screened-feasible grid radii above the candidate.
    ok = screen(project, cand.family, grid, with_headroom=True).feasible()
    hi = cand.radius
    for j in np.flatnonzero(grid > cand.radius):
        if not ok[j]:
            break
        hi = float(grid[j])
    if hi <= cand.radius or margin(hi) < 0:
        return None, cand
    r = float(brent_root(margin, cand.radius, hi, xtol=1e-6))
    ev = evaluate(family_project(project, cand.family, r))
    if not ev.ok:
        return None, cand
    value = float(_objective(screen(project, cand.family, [r]), project.search.objective)[0])
    return ev, Candidate(cand.family, r, key, value)


def _explain(project: Project, layout: str, fams: list[Family], grid: np.ndarray,
             feasible_layouts: set[str], screens: dict) -> tuple[dict, ...]:
    """Each violated constraint of the layout, by how much, and the smallest single
    change that would make the layout feasible.

    For a constraint ``c`` the change is read where every other constraint is met and
    ``c`` comes closest (its shortfall there is what must give); for the footprint, at
    the smallest radius that meets every other rule.
    """
    from .units import format_length
    u = project.units
    ext = np.linspace(grid[0], max(grid[-1] * 3, grid[-1] + 30), 160)
    # Explain the family that comes closest: the best worst-margin over its radii.
    fam, sc = min(((f, screens[f]) for f in fams), key=lambda fs: float(np.min(badness(fs[1]))))
    sce = screen(project, fam, ext)
    keys = list(sc.margins)
    worst_i = int(np.argmin(badness(sc)))
    found: dict[str, dict] = {}
    for key in keys:
        if key == "geometry" or np.all(sc.margins[key] >= -1e-9):
            continue
        grid_m = sce if key == "footprint" else sc
        rad = grid_m.radius
        others = [k for k in keys if k != key]
        ok = np.all(np.vstack([grid_m.margins[k] >= -1e-9 for k in others] or
                              [np.ones(len(rad), bool)]), axis=0)
        item: dict = {"constraint": key, "turns_per_storey": fam.turns[0]}
        if not np.any(ok):
            # Relaxing this one alone would not do; say so only if it fails where the
            # layout comes closest.
            if sc.margins[key][worst_i] < -1e-9:
                item["change"] = "not enough on its own: other constraints also fail"
                found[key] = item
            continue
        # Where the others hold, the radius most favourable to this constraint, on the
        # others' exact boundary: the smallest radius for the footprint, the largest
        # for constraints that improve with the radius.
        m = grid_m.margins[key]
        improves = m[-1] > m[0]
        idx = np.flatnonzero(ok)
        j = int(idx[-1] if improves else idx[0])
        r = float(rad[j])
        nb = j + 1 if improves else j - 1
        if 0 <= nb < len(rad):
            roots = [_root(project, fam, k, *sorted((float(rad[j]), float(rad[nb]))))
                     for k in others if grid_m.margins[k][nb] < -1e-9]
            if roots:
                r = min(roots) if improves else max(roots)
        at = screen(project, fam, [r])
        short = -float(at.margins[key][0])
        item.update(shortfall=round(short, 4), at_radius_m=round(r, 4))
        if key == "footprint":
            need = float(at.diameter[0]) + 2 * project.site.margin
            item.update(value=round(need, 3),
                        change=f"a footprint of at least {format_length(need, u)} x {format_length(need, u)} "
                               f"(now {format_length(project.site.width, u)} x "
                               f"{format_length(project.site.depth, u)})")
        elif key.startswith("gradient") or key == "target_gradient":
            item.update(value=round(100 * short, 3),
                        change=f"allow a gradient {100 * short:.2f} percentage points steeper "
                               f"({key.replace('_', ' ')}), or more turns per storey")
        elif key == "clear_height":
            item.update(value=round(project.structure.depth - short, 4),
                        change=f"a structural depth {format_length(short, u)} thinner (now "
                               f"{format_length(project.structure.depth, u)}), or fewer turns per storey")
        elif key in ("inner_kerb_radius", "outer_kerb_radius", "lane_width_swept", "side_friction"):
            amount = f"{short:.3f}" if key == "side_friction" else format_length(short, u)
            item.update(change=f"a larger radius, which needs a larger footprint, or a rule set that "
                               f"accepts {amount} less")
        else:
            item.update(change=f"relax {key.replace('_', ' ')} by {short:.3f}")
        found[key] = item
    out = list(found.values())
    if layout.startswith("single") and "double" in feasible_layouts:
        out.append({"constraint": "layout", "change": "a second thread: a double helix of the same plot works"})
    from .project import _turns_fit
    for t in (0.5, 0.75, 1.0, 1.25, 1.5, 2.0):  # turns per storey outside the choices
        if any(abs(t - f.turns[0]) < 1e-9 for f in fams) or not _turns_fit(t, project.design.connections):
            continue
        trial = Family(layout, (t,) * project.storeys, fams[0].lane_widths)
        if np.any(screen(project, trial, grid).feasible()):
            out.append({"constraint": "turns_per_storey", "value": t,
                        "change": f"{t:g} turns per storey instead of {', '.join(f'{f.turns[0]:g}' for f in fams)}"})
            break
    return tuple(out)


def default_space(project: Project):
    """The space ``helix design`` searches when the design section fixes everything:
    every layout, radii from 3 m to what the footprint could hold, the usual turns per
    storey allowed by the connections, lane widths from the rules and the vehicle."""
    from .project import SEARCH_LAYOUTS
    sp = project.search
    choices = {"same_side": (1.0, 2.0), "alternate": (0.5, 1.5)}.get(
        project.design.connections, (0.5, 0.75, 1.0, 1.25, 1.5))
    r_max = max(0.5 * min(project.site.usable), 3.5)
    return replace(sp, layouts=SEARCH_LAYOUTS, radius_min=3.0, radius_max=r_max, turns_choices=choices,
                   lane_widths=None, fixed=False)


def design(project: Project, grid_points: int = 64) -> DesignResult:
    """Search every layout of the project's search space; rank and explain them.

    A project whose design section is fully fixed is searched over
    :func:`default_space`."""
    if project.search.fixed:
        project = replace(project, search=default_space(project))
    sp = project.search
    objective = sp.objective
    grid = _grid(project, grid_points)
    fams = families(project)
    by_layout: dict[str, list[Family]] = {}
    for f in fams:
        by_layout.setdefault(f.layout, []).append(f)
    options: list[Option] = []
    cloud: list[dict] = []
    screens: dict[Family, Screen] = {}  # each family's grid screen, computed once
    for layout, group in by_layout.items():
        cands = []
        for fam in group:
            sc = screens[fam] = screen(project, fam, grid)
            c = _best_in_family(project, fam, grid, objective, sc)
            if c is None:
                continue
            cands.append(c)
            # The family's feasible radii, between its exact boundaries, for the Pareto set.
            lo = c.radius if objective in ("footprint", "drive") else \
                _best_in_family(project, fam, grid, "footprint", sc).radius
            hi = c.radius if objective == "gradient" else _best_in_family(project, fam, grid, "gradient", sc).radius
            radii = np.linspace(lo, hi, 25) if hi > lo else np.array([lo])
            sp = screen(project, fam, radii)
            for j in np.flatnonzero(sp.feasible() | (np.arange(len(radii)) == 0) | (np.arange(len(radii)) == len(radii) - 1)):
                cloud.append({"layout": layout, "turns": fam.turns[0], "radius_m": float(radii[j]),
                              "diameter_m": float(sp.diameter[j]),
                              "steepest_inner_pct": 100 * float(sp.steepest["inner"][j]),
                              "drive_m": float(sp.drive[j])})
        chosen = None
        for cand in sorted(cands, key=lambda c: c.objective_value):
            ev, cand2 = _verify(project, cand, grid)
            if ev is not None:
                chosen = (ev, cand2)
                break
        if chosen is not None:
            ev, cand = chosen
            options.append(Option(layout, cand.family, ev, cand.binding, True, (), cand.objective_value))
        else:
            options.append(Option(layout, group[0], None, "", False))
    feasible_layouts = {o.layout for o in options if o.feasible}
    final = []
    for o in options:
        if o.feasible:
            final.append(o)
            continue
        group = by_layout[o.layout]
        expl = _explain(project, o.layout, group, grid, feasible_layouts, screens)
        # The least-bad radius, fully evaluated so the option carries every key.
        sc_best = None
        for fam in group:
            sc = screens[fam]
            # Only a radius whose carriageway leaves an inner kerb is a helix to show.
            bad = np.where(sc.margins["geometry"] > 0, badness(sc), np.inf)
            i = int(np.argmin(bad))
            if sc_best is None or bad[i] < sc_best[0]:
                sc_best = (bad[i], fam, float(grid[i]))
        worst, fam, r = sc_best  # type: ignore[misc]
        try:  # already failing: the slow vehicle-rolling checks add nothing
            ev = evaluate(family_project(project, fam, r), vehicle=False) if np.isfinite(worst) else None
        except ValueError:
            ev = None
        final.append(Option(o.layout, fam, ev, "infeasible", False, expl))
    ranked = sorted(final, key=lambda o: (not o.feasible, o.objective_value))
    best = 0 if ranked and ranked[0].feasible else None
    pareto: tuple[dict, ...] = ()
    if cloud:
        pts = np.array([[c["diameter_m"], c["steepest_inner_pct"], c["drive_m"]] for c in cloud])
        mask = pareto_mask(pts)
        pareto = tuple(c for c, m in zip(cloud, mask) if m)
    return DesignResult(project, tuple(ranked), best, pareto, tuple(cloud))
