"""Results as data: the JSON document and the terminal table of an evaluation.

JSON is SI throughout (metres, degrees for plan angles, gradients in percent); the
terminal table follows the project's units.
"""
from __future__ import annotations

import json
import math
from typing import Any

from .evaluate import Evaluation
from .checks import TITLES, check_title, in_words
from .units import format_duration, format_gradient, format_length, format_number, format_speed

__all__ = ["to_dict", "to_json", "check_table", "format_check", "constraint_words", "CAUTION"]

CAUTION = ("helix is a design aid. Results must be verified by a qualified professional "
           "against the codes and standards in force where the car park is built; local rules "
           "govern. Vehicle data are typical, not a guarantee for any particular vehicle.")


def _r(x: float | None, nd: int = 4) -> float | None:
    if x is None or not math.isfinite(x):
        return None
    return round(float(x), nd) + 0.0  # + 0.0 turns -0.0 into 0.0


def _bearing(deg: float, nd: int) -> float | None:
    """A plan bearing in [0, 360): rounded, then wrapped (359.9999 would round to 360)."""
    value = _r(deg % 360.0, nd)
    return None if value is None else value % 360.0


def _check_value(c, x):
    if x is None:
        return None
    return _r(100 * x, 3) if c.quantity == "gradient" else _r(x, 4)


def check_dict(c) -> dict[str, Any]:
    return {
        "id": c.id,
        "title": c.title,
        "value": _check_value(c, c.value),
        "limit": _check_value(c, c.limit),
        "margin": _check_value(c, c.margin),
        "unit": "%" if c.quantity == "gradient" else ("m" if c.quantity == "length" else ""),
        "sense": c.sense,
        "ok": c.ok,
        "status": c.status,
        "where": c.where,
        "note": c.note,
        "source": c.source,
    }


def approach_dict(ev: Evaluation, a) -> dict[str, Any]:
    """One floor approach or exit line: where it runs and the least clear height over it."""
    ln = ev.helix.threads[a.line.thread]
    return {"thread": ln.name, "lane": a.line.lane, "level": ev.project.levels[a.line.level].name,
            "side": a.line.side, "angle_deg": _r(math.degrees(a.line.angle), 3),
            "length_m": _r(a.line.length, 3), "grade_pct": _r(100 * a.line.grade, 3),
            "helix_grade_pct": _r(100 * a.line.helix_grade, 3),
            "vertices_m": [[_r(x, 4), _r(y, 4)] for x, y in a.line.vertices],
            "clear_height_min_m": _r(a.clear), "at_distance_m": _r(a.distance, 3),
            "at_offset_m": _r(a.offset, 3), "under": a.above}


def to_dict(ev: Evaluation) -> dict[str, Any]:
    p, h = ev.project, ev.helix
    first = h.threads[0]
    lanes = [lane for t in h.threads for lane in t.lanes]

    def grad_max(line: str) -> float | None:
        return _r(100 * ev.max_gradient(line), 3)

    storeys = []
    for s in ev.storeys:
        storeys.append({
            "thread": s.thread, "from": s.from_level, "to": s.to_level,
            "rise_m": _r(s.rise), "plan_angle_deg": _r(math.degrees(s.plan_angle), 3),
            "turns": _r(s.turns, 4), "pitch_m": _r(s.pitch),
            "gradient_pct": {
                "inner": _r(100 * s.gradient["inner kerb"], 3),
                "centre": _r(100 * s.gradient["centre line"], 3),
                "outer": _r(100 * s.gradient["outer kerb"], 3),
                **{k.replace(" ", "_"): _r(100 * v, 3) for k, v in s.gradient.items()
                   if k not in ("inner kerb", "centre line", "outer kerb")},
            },
            "length_centre_m": _r(s.length_centre, 3),
        })
    threads = [{
        "name": t.name, "traffic": t.traffic,
        "inner_radius_m": _r(t.inner_radius), "centre_radius_m": _r(t.centre_radius),
        "outer_radius_m": _r(t.outer_radius),
        "start_bearing_deg": _bearing(math.degrees(t.start_bearing), 3),
        "hand": "anticlockwise" if t.hand > 0 else "clockwise",
        "cross_fall_pct": _r(100 * t.cross_fall, 3),
        "lanes": [{"name": ln.name, "direction": ln.direction, "inner_radius_m": _r(ln.inner_radius),
                   "outer_radius_m": _r(ln.outer_radius), "width_m": _r(ln.width)} for ln in t.lanes],
    } for t in h.threads]
    first_storeys = [s for s in ev.storeys if s.thread == first.name]
    segments = [{
        "thread": g.thread, "kind": g.kind, "storey": g.storey,
        "chainage_start_m": _r(g.chainage_start, 3), "chainage_end_m": _r(g.chainage_end, 3),
        "gradient_pct": {k.replace(" ", "_").replace(":", ""): _r(100 * v, 3) for k, v in g.gradient.items()},
    } for g in ev.segments]
    # The steepest segment; on a tie a run is named before the transition that reaches its grade.
    steepest = max(ev.segments, key=lambda g: (round(abs(g.gradient["inner kerb"]), 9), g.kind == "run"),
                   default=None)
    at = ev.headroom_at
    return {
        "project": p.name,
        "file": p.file,
        "ok": ev.ok,
        "rules": {"name": p.rules.name, "title": p.rules.title},
        "checks": [check_dict(c) for c in ev.checks],
        "geometry": {
            "layout": h.layout,
            "traffic": h.traffic,
            "threads": len(h.threads),
            "centre_radius_m": _r(first.centre_radius),
            "inner_radius_m": _r(h.inner_radius),
            "outer_radius_m": _r(h.outer_radius),
            "lane_width_m": _r(min(ln.width for ln in lanes)),
            "carriageway_width_m": _r(first.width),
            "overall_diameter_m": _r(h.overall_diameter),
            "turns_per_storey": [_r(s.turns, 4) for s in first_storeys],
            "pitch_m": [_r(s.pitch) for s in first_storeys],
            "gradient_pct": {"inner": grad_max("inner kerb"), "centre": grad_max("centre line"),
                             "outer": grad_max("outer kerb")},
            "thread_details": threads,
        },
        "storeys": storeys,
        "segments": segments,
        "steepest": None if steepest is None else {
            "thread": steepest.thread, "storey": steepest.storey, "kind": steepest.kind,
            "chainage_start_m": _r(steepest.chainage_start, 3),
            "gradient_inner_pct": _r(100 * steepest.gradient["inner kerb"], 3)},
        "warnings": [c.id for c in ev.checks if c.warns],
        "approaches": [approach_dict(ev, a) for a in ev.approaches],
        "headroom_min_m": _r(ev.headroom.clear) if ev.headroom else None,
        "headroom_min_at": None if at is None else {
            "thread": at.thread, "level": at.level, "storey": at.storey,
            "chainage_m": _r(at.chainage, 3), "radius_m": _r(at.radius), "bearing_deg": _bearing(at.bearing_deg, 2),
            "under": ev.headroom.above if ev.headroom else None,
        },
        "vehicle": {"name": p.vehicle.name, "title": p.vehicle.title,
                    **{f"{k}_m": _r(v) for k, v in p.vehicle.dimensions().items()}},
        "units": p.units,
        "caution": CAUTION,
    }


def to_json(data: dict) -> str:
    return json.dumps(data, indent=2, sort_keys=False, allow_nan=False) + "\n"


def format_check(c, x: float | None, units: str) -> str:
    """A check's value, limit or margin in the project's units, by the one formatter of
    its quantity (every table of the terminal, the PDF and the Markdown uses this)."""
    if x is None:
        return "-"
    if c.quantity == "gradient":
        return format_gradient(x, units)
    if c.quantity == "length":
        return format_length(x, units)
    return format_number(x)


def format_limit(c, units: str) -> str:
    """``'<= 12.00 %'``, ``'>= 2.100 m'`` or ``'-'`` where the rule set sets none."""
    if c.limit is None:
        return "-"
    return ("<= " if c.sense == "max" else ">= ") + format_check(c, c.limit, units)


#: Words for the search's constraints that are not checks of their own.
_CONSTRAINTS = {"target_gradient": "Target gradient of the design", "centre_radius": "Centre radius range",
                "turns_per_storey": "Turns per storey", "layout": "Layout", "several": "Several constraints"}


def constraint_words(key: str) -> str:
    """A search constraint (a check id or one of the search's own keys) in words."""
    return TITLES.get(key) or _CONSTRAINTS.get(key) or check_title(key)


def _table(rows: list[list[str]], header: list[str]) -> str:
    widths = [max(len(r[i]) for r in [header] + rows) for i in range(len(header))]
    line = lambda r: "  ".join(cell.ljust(w) for cell, w in zip(r, widths)).rstrip()
    return "\n".join([line(header), line(["-" * w for w in widths])] + [line(r) for r in rows])


def lane_kerbs_text(ev: Evaluation) -> str:
    """Each lane's inner and outer kerb radius where lanes differ (a two-way helix), so a
    lane's outer kerb is never mistaken for the carriageway's; ``''`` where they do not."""
    h, u = ev.helix, ev.project.units
    lanes = [(t, ln) for t in h.threads for ln in t.lanes]
    if len({(round(ln.inner_radius, 6), round(ln.outer_radius, 6)) for _, ln in lanes}) < 2:
        return ""
    return "; ".join(f"{(t.name + ' ') if len(h.threads) > 1 else ''}{ln.name}: "
                     f"{format_length(ln.inner_radius, u)} to {format_length(ln.outer_radius, u)}" for t, ln in lanes)


def check_table(ev: Evaluation) -> str:
    """The readable report for the terminal: geometry, storeys, checks, cautions."""
    p, h, u = ev.project, ev.helix, ev.project.units
    out = [f"{p.name}", f"rule set: {p.rules.title}", f"vehicle: {p.vehicle.title}", ""]
    geo = []
    for t in h.threads:
        geo.append([t.name, t.traffic, format_length(t.inner_radius, u), format_length(t.centre_radius, u),
                    format_length(t.outer_radius, u),
                    ", ".join(format_length(ln.width, u) for ln in t.lanes)])
    out.append(_table(geo, ["thread", "traffic", "inner kerb", "centre line", "outer kerb", "lane widths"]))
    lanes = lane_kerbs_text(ev)
    if lanes:
        out.append(f"kerb radii of each lane (inner kerb to outer kerb): {lanes}")
    out.append(f"overall diameter with structure: {format_length(h.overall_diameter, u)}")
    out.append("")
    rows = []
    for s in ev.storeys:
        rows.append([s.thread, f"{s.from_level} -> {s.to_level}", format_length(s.rise, u),
                     f"{s.turns:.3g}", format_gradient(s.gradient["inner kerb"], u),
                     format_gradient(s.gradient["centre line"], u),
                     format_gradient(s.gradient["outer kerb"], u), format_length(s.length_centre, u)])
    out.append(_table(rows, ["thread", "storey", "rise", "turns", "grade inner", "grade centre",
                             "grade outer", "drive (centre)"]))
    out.append("")
    rows = []
    for c in ev.checks:
        rows.append([c.status, c.title, format_check(c, c.value, u), format_limit(c, u),
                     format_check(c, c.margin, u), c.where])
    out.append(_table(rows, ["status", "check", "value", "limit", "margin", "where"]))
    out.append("")
    out.append("Sources of the limits:")
    for c in ev.checks:
        out.append(f"  {c.title}: {c.source}")
    out.append("")
    fails = [c.title for c in ev.checks if not c.ok]
    out.append("RESULT: all checks pass" if not fails else f"RESULT: {len(fails)} check(s) fail: {', '.join(fails)}")
    for c in ev.checks:
        if c.warns:
            out.append(f"WARNING: {c.title}: {c.warning or c.note}"
                       + (f" ({format_check(c, c.value, u)}, practice value {format_check(c, c.limit, u)})"
                          if c.advisory else ""))
    out.append("CAUTION: " + CAUTION)
    return "\n".join(out) + "\n"


# ----------------------------------------------------------------------------------
# The design search

def option_dict(option, comparison=None) -> dict[str, Any]:
    """One option of a search; ``comparison`` (:class:`helix.comparison.OptionComparison`)
    adds its traffic, quantities, sensitivity and tightest checks."""
    from .search import LAYOUT_TITLES
    data: dict[str, Any] = to_dict(option.evaluation) if option.evaluation is not None else {"ok": False}
    d = option.evaluation.helix.overall_diameter if option.evaluation is not None else None
    data.update({
        "layout": option.layout,
        "layout_title": LAYOUT_TITLES[option.layout],
        "feasible": option.feasible,
        "footprint_m": [_r(d), _r(d)] if d is not None else None,
        "binding": option.binding,
        "turns_per_storey": list(option.family.turns) if option.family is not None else None,
        "centre_radius_m": _r(option.evaluation.helix.threads[0].centre_radius) if option.evaluation else None,
        "feasible_radii_m": [[_r(a), _r(b)] for a, b in option.region],
        "searched": option.searched,
        "notes": list(option.notes),
        "explanation": list(option.explanation),
        "drive_time_top_to_bottom_s": _r(drive_time(option.evaluation), 1) if option.evaluation else None,
        "comparison": comparison_dict(comparison),
    })
    data["ok"] = bool(option.feasible and data.get("ok", False))
    return data


def turns_text(turns) -> str:
    """Turns per storey from the bottom, runs of one value written once with a count:
    ``1.5, 1 x3``."""
    runs: list[list] = []
    for t in turns:
        t = round(float(t), 6)
        if runs and runs[-1][0] == t:
            runs[-1][1] += 1
        else:
            runs.append([t, 1])
    return ", ".join(f"{t:g}" + (f" x{k}" if k > 1 else "") for t, k in runs)


def searched_text(option) -> str:
    """What the search looked at for one layout, in a line."""
    sr = option.searched or {}
    choices = sr.get("turns_choices") or []
    distinct = sorted({t for c in choices for t in c})
    text = (f"turns per storey from {', '.join(f'{t:g}' for t in distinct)} storey by storey "
            f"({sr.get('combinations', 0)} combinations)" if choices else "turns as fixed")
    if "nodes" in sr:
        text += f"; {sr['nodes']} partial designs and {sr.get('headroom_windows', 0)} storey headroom regions examined"
    return text


def format_shortfall(item: dict, units: str) -> str:
    """A constraint's shortfall in its own units: percentage points, a length, a number."""
    short = item.get("shortfall")
    if not isinstance(short, (int, float)):
        return ""
    key = item.get("constraint", "")
    if key.startswith("gradient") or key in ("target_gradient", "cross_fall"):
        return f"{format_number(100 * short, 2)} percentage points"
    if key == "side_friction":
        return format_number(short)
    return format_length(short, units)


def drive_time(ev: Evaluation) -> float:
    """Time to drive from the top level to the bottom on the centre line at the rule
    set's design speed (15 km/h where it sets none)."""
    rules = ev.project.rules
    speed = rules.design_speed.value if rules.design_speed else 15 / 3.6
    per_thread: dict[str, float] = {}
    for s in ev.storeys:
        per_thread[s.thread] = per_thread.get(s.thread, 0.0) + s.length_centre
    return max(per_thread.values()) / speed


def design_dict(result) -> dict[str, Any]:
    from .comparison import compare_options
    return {
        "project": result.project.name,
        "objective": result.project.search.objective,
        "options": [option_dict(o, c) for o, c in zip(result.options, compare_options(result))],
        "best": result.best,
        "pareto": [{k: (_r(v) if isinstance(v, float) else v) for k, v in p.items()} for p in result.pareto],
        "caution": CAUTION,
    }


def design_table(result) -> str:
    """Ranked comparison of the layouts, with explanations of the infeasible ones."""
    from .search import LAYOUT_TITLES
    p = result.project
    u = p.units
    out = [p.name, f"rule set: {p.rules.title}", f"vehicle: {p.vehicle.title}",
           f"objective: {p.search.objective}; layouts {', '.join(p.search.layouts)}; radius "
           f"{format_length(p.search.radius_min, u)} to {format_length(p.search.radius_max, u)}; "
           f"lane width {'auto (rule minimum or swept path, exact)' if p.search.lane_widths is None else 'fixed'}"]
    for o in result.options:
        out.append(f"  {LAYOUT_TITLES[o.layout]}: {searched_text(o)}")
        out += [f"    note: {n}" for n in o.notes]
    out.append("")
    geo, grades, binding = [], [], []
    for rank, o in enumerate(result.options, 1):
        ev = o.evaluation
        name = LAYOUT_TITLES[o.layout]
        if ev is None:
            geo.append([str(rank), name, "-", "-", "-", "-", "-", "-", "FAIL"])
            grades.append([str(rank), name, "-", "-", "-", "-", "-"])
            binding.append([str(rank), name, "no radius fits"])
            continue
        h = ev.helix
        first = [s for s in ev.storeys if s.thread == h.threads[0].name]
        head = ev.headroom.clear if ev.headroom else None
        fails = [c.title.lower() for c in ev.checks if not c.ok]
        geo.append([str(rank), name, str(len(h.threads)), turns_text(s.turns for s in first),
                    format_length(h.threads[0].centre_radius, u),
                    format_length(min(ln.width for t in h.threads for ln in t.lanes), u),
                    format_length(h.overall_diameter, u), format_length(head, u) if head is not None else "-",
                    "pass" if o.feasible and ev.ok else "FAIL"])
        grades.append([str(rank), name, format_gradient(ev.max_gradient("inner kerb"), u),
                       format_gradient(ev.max_gradient("centre line"), u),
                       format_gradient(ev.max_gradient("outer kerb"), u),
                       format_length(sum(s.length_centre for s in first) / len(first), u), format_duration(drive_time(ev))])
        binding.append([str(rank), name, in_words(o.binding) if o.feasible else
                        ("fails " + ", ".join(fails) if fails else "infeasible")])
    out.append(_table(geo, ["#", "layout", "threads", "turns", "centre radius", "lane", "diameter", "headroom",
                            "status"]))
    out.append("")
    out.append(_table(grades, ["#", "layout", "grade inner", "grade centre", "grade outer", "drive/storey",
                               "top-bottom"]))
    speed = p.rules.design_speed.value if p.rules.design_speed else 15 / 3.6
    out += ["  " + line for line in _wrap(
        f"turns: per storey from the bottom; lane: the narrowest; diameter: outside face of the structure; "
        f"drive/storey: 3-D length of a storey on the first thread's carriageway centre line; top-bottom: "
        f"that line driven from the top level to the bottom at {format_speed(speed, u)} (each lane's own "
        "line: see 'Drive and capacity per lane')", 96)]
    out.append("")
    wrapped = []
    for r in binding:
        lines = _wrap(r[2], 68)
        wrapped.append([r[0], r[1], lines[0]])
        wrapped += [["", "", more] for more in lines[1:]]
    out.append(_table(wrapped, ["#", "layout", "binding constraint (feasible) or what fails"]))
    out.append("")
    out.append(comparison_text(result))
    for o in result.options:
        if o.feasible:
            continue
        out.append(f"{LAYOUT_TITLES[o.layout]} does not work:")
        for item in o.explanation:
            short = format_shortfall(item, u)
            by = f" short by {short}" if short else ""
            out.append(f"  - {constraint_words(item['constraint'])}{by}: {in_words(item.get('change', ''))}")
            if item.get("verified_result"):
                out.append(f"      {in_words(item['verified_result'])}")
        out.append("")
    if result.best is None:
        out.append("RESULT: no layout passes every check; see the changes above")
    else:
        best = result.options[result.best]
        out.append(f"RESULT: best is {LAYOUT_TITLES[best.layout]} "
                   f"(centre radius {format_length(best.evaluation.helix.threads[0].centre_radius, u)}, "
                   f"binding: {in_words(best.binding)})")
    out.append(f"Pareto set (diameter, steepest inner gradient, drive per storey): {len(result.pareto)} designs")
    out.append("CAUTION: " + CAUTION)
    return "\n".join(out) + "\n"


# ----------------------------------------------------------------------------------
# The consultant's comparison: traffic, quantities, sensitivity, margins

SQ_FOOT = 0.3048 ** 2
CU_YARD = 0.9144 ** 3


def format_area(m2: float, units: str) -> str:
    """``'1234 m²'`` or ``'13283 ft²'``."""
    return f"{m2 / SQ_FOOT:,.0f} ft²" if units == "imperial" else f"{m2:,.0f} m²"


def format_volume(m3: float, units: str) -> str:
    """``'308 m³'`` or ``'403 yd³'`` (concrete is ordered by the cubic yard)."""
    return f"{m3 / CU_YARD:,.0f} yd³" if units == "imperial" else f"{m3:,.1f} m³"


def _plus_minus(x: float, units: str) -> str:
    """The change per step up and down: ``'±0.32 m'`` (rises with the step), ``'∓0.92 m'``
    (falls), ``'0'`` (none to the millimetre), ``'-'`` (not defined)."""
    if not math.isfinite(x):
        return "-"
    if abs(x) < 5e-4:
        return "0"
    return ("±" if x > 0 else "∓") + format_length(abs(x), units, precision=2)


#: Parameters of the sensitivity table, in a word.
SHORT_PARAMETERS = {"storey_height": "storey", "slab_depth": "slab", "hanging_depth": "hanging",
                    "gradient": "gradient"}

#: Layout names short enough for the narrow comparison tables.
SHORT_TITLES = {"single-one-way": "single one-way", "single-two-way": "single two-way", "double": "double",
                "concentric": "concentric"}


def comparison_dict(c) -> dict[str, Any] | None:
    """The comparison of one option in SI (m, m², m³, s, vehicles per hour)."""
    if c is None:
        return None
    t, q, s, b = c.traffic, c.quantities, c.sensitivity, c.basis
    return {
        "basis": {"design_speed_m_s": _r(t.speed), "headway_s": _r(t.headway), "headway_source": b.headway_source,
                  "bays_to_empty": b.bays_to_empty, "bays_source": b.bays_source,
                  "bay_width_m": _r(b.bay_width), "bay_length_m": _r(b.bay_length), "bay_source": b.bay_source,
                  "aisle_width_m": _r(b.aisle_width), "aisle_source": b.aisle_source,
                  "area_per_bay_m2": _r(b.area_per_bay), "parapet_height_m": _r(b.parapet_height),
                  "parapet_source": b.parapet_source},
        "lanes": [{"thread": ln.thread, "lane": ln.lane, "direction": ln.direction, "line_radius_m": _r(ln.radius),
                   "drive_per_storey_m": [_r(x, 3) for x in ln.per_storey], "drive_total_m": _r(ln.total, 3),
                   "time_s": _r(ln.time(t.speed), 1), "capacity_veh_h": _r(ln.capacity, 1)} for ln in t.lanes],
        "capacity_inbound_veh_h": _r(t.inbound, 1), "capacity_outbound_veh_h": _r(t.outbound, 1),
        "time_to_empty_s": _r(t.empty_time, 1) if t.empty_time is not None else None,
        "quantities": {"deck_area_m2": _r(q.deck_area, 2), "deck_plan_area_m2": _r(q.plan_area, 2),
                       "slab_volume_m3": _r(q.slab_volume, 3), "wall_height_m": _r(q.wall_height, 3),
                       "outer_wall_area_m2": _r(q.outer_wall_area, 2), "core_wall_area_m2": _r(q.core_wall_area, 2),
                       "kerb_length_m": _r(q.kerb_length, 3),
                       "kerb_lines": [{"line": n, "length_m": _r(x, 3)} for n, x in q.kerb_lines],
                       "plot": "square circumscribing the outside face of the structure",
                       "plot_side_m": _r(q.plot_side), "plot_area_m2": _r(q.plot_area, 2),
                       "bays_per_level": q.bays_per_level, "bays_all_levels": q.bays_all_levels},
        "sensitivity": None if s is None else {
            "binding": s.binding, "margin": s.key, "movable": s.movable, "note": s.note,
            "rows": [{"parameter": r.parameter, "step": _r(r.step, 4), "radius_change_m_per_step": _r(r.d_radius, 5),
                      "diameter_change_m_per_step": _r(r.d_diameter, 5),
                      "binding_switches_within_plus_step": r.switch_plus or None,
                      "binding_switches_within_minus_step": r.switch_minus or None} for r in s.rows]},
        "tightest_checks": [{"id": k.id, "margin": _check_value(k, k.margin), "limit": _check_value(k, k.limit),
                             "unit": "%" if k.quantity == "gradient" else ("m" if k.quantity == "length" else "")}
                            for k in c.tightest],
    }


def _margin_text(k, units: str) -> str:
    if k.quantity == "gradient":
        return f"{round(100 * k.margin, 2) + 0.0:.2f} pts"
    if k.quantity == "length":
        return format_length(round(k.margin, 3) + 0.0, units, precision=3)
    return f"{round(k.margin, 3) + 0.0:.3f}"


def comparison_tables(result) -> list[tuple[str, list[str], list[list[str]], str]]:
    """The comparison of the options as small tables: ``(title, header, rows, note)``
    for traffic per lane, capacity of the helix, quantities, sensitivity and margins;
    in the project's units.  Shared by the terminal, the Markdown and the PDF."""
    from .comparison import compare_options
    p = result.project
    u = p.units
    comps = compare_options(result)
    basis = p.comparison
    lanes: list[list[str]] = []
    cap: list[list[str]] = []
    qty: list[list[str]] = []
    sens: list[list[str]] = []
    marg: list[list[str]] = []
    speed = None
    for rank, (o, c) in enumerate(zip(result.options, comps), 1):
        name = f"{rank} {SHORT_TITLES[o.layout]}"
        if c is None:
            for rows in (lanes, cap, qty, sens, marg):
                rows.append([name, "no design"])
            continue
        t, q, s = c.traffic, c.quantities, c.sensitivity
        speed = t.speed
        for i, ln in enumerate(t.lanes):
            label = ln.lane if ln.lane != "lane" else ln.thread
            lanes.append([name if i == 0 else "", label, ln.direction, format_length(ln.radius, u),
                          format_length(ln.total / len(ln.per_storey), u), format_length(ln.total, u),
                          format_duration(ln.time(t.speed)), f"{ln.capacity:,.0f}"])
        cap.append([name, f"{t.inbound:,.0f}" if t.inbound else "0 (no up lane)",
                    f"{t.outbound:,.0f}" if t.outbound else "0 (no down lane)",
                    format_duration(t.empty_time) if t.empty_time is not None else "- (no way down)"])
        qty.append([name, format_area(q.deck_area, u), format_volume(q.slab_volume, u),
                    format_area(q.outer_wall_area, u), format_area(q.core_wall_area, u) if q.core_wall_area else "-",
                    format_length(q.kerb_length, u, precision=1), format_length(q.plot_side, u),
                    f"{q.bays_per_level} ({q.bays_all_levels})"])
        if s is not None:
            # The option's name, then what binds it, down the first column (narrow tables).
            side = [name, "bound by", *_wrap(in_words(s.key), 24)] if s.key else [name]
            for i, r in enumerate(s.rows):
                step = "1 %" if r.parameter == "gradient" else (
                    f"{r.step * 1000:.0f} mm" if u == "metric" else f"{format_length(r.step, u)} ({r.step * 1000:.0f} mm)")
                switch = in_words("; ".join(x for x in (f"+: {r.switch_plus}" if r.switch_plus else "",
                                                         f"-: {r.switch_minus}" if r.switch_minus else "") if x))
                sens.append([side[i] if i < len(side) else "", f"{SHORT_PARAMETERS[r.parameter]} ±{step}",
                             _plus_minus(r.d_radius, u), _plus_minus(r.d_diameter, u),
                             switch or ("fixed" if not s.movable else "")])
            sens += [[more, "", "", "", ""] for more in side[len(s.rows):]]
        for i, k in enumerate(c.tightest):
            marg.append([name if i == 0 else "", check_title(k.id), _margin_text(k, u), k.status])
    speed_text = format_speed(speed if speed is not None else 15 / 3.6, u)
    b = basis
    return [
        ("Drive and capacity per lane", ["option", "lane", "way", "line radius", "drive/storey", "top-bottom",
                                         "time", "veh/h"], lanes,
         f"line radius: the lane's own centre line (its driving line); drive/storey: mean 3-D length of one "
         f"storey on it, connection to connection; top-bottom: all storeys; time: at the design speed "
         f"{speed_text}; veh/h: one lane at a headway of {b.headway:.2f} s (3600/headway; {b.headway_source})."),
        ("Capacity of the helix", ["option", "inbound veh/h", "outbound veh/h", f"empty {b.bays_to_empty} bays"], cap,
         "inbound: every up lane together (the morning peak); outbound: every down lane (the evening peak); "
         f"a one-way single helix carries one way only. empty: the last of {b.bays_to_empty} cars leaves the bottom "
         f"(bays - 1) outbound headways after the first enters the top, plus the drive down "
         f"({b.bays_source})."),
        ("Quantities", ["option", "deck", "slab", "outer wall", "core wall", "kerbs", "plot", "bays"], qty,
         "deck: true sloped area of every running surface kerb to kerb, landings and transitions included; "
         f"slab: deck x slab depth ({format_length(p.structure.slab_depth, u)}; no downstands or upstands); walls: "
         f"inside face of the outer wall and outside face of the core, from the bottom level to the top plus a "
         f"{format_length(b.parapet_height, u)} parapet ({b.parapet_source}); kerbs: 3-D length of every kerb line; "
         "plot: side of the square circumscribing the outside face of the structure (clearances and wall "
         f"included); bays: standard bays that square would hold on one level (all levels), at "
         f"{format_length(b.bay_width, u)} x {format_length(b.bay_length, u)} plus half a "
         f"{format_length(b.aisle_width, u)} aisle per bay, rounded down ({b.bay_source}; {b.aisle_source})."),
        ("Sensitivity of the chosen radius", ["option", "step", "radius", "diameter", "switch"], sens,
         "bound by: the constraint on whose boundary the radius lies (of a failing option: of its "
         "least-failing design); radius, diameter: change of the centre-line radius and overall diameter per step up (down: the "
         "opposite), from the exact boundary of the binding constraint by implicit differentiation "
         "(dr/dp = -(dm/dp)/(dm/dr) of its margin m), not by searching again; 0: the binding constraint does not "
         "depend on that parameter. storey height: every storey; allowed gradient: every limit of the rule set "
         "(and any target). switch: another screened rule fails within that step up (+) or down (-), "
         "so the linear value holds only up to it; fixed: the radius is set by the search range or the geometry."),
        ("Tightest margins", ["option", "check", "margin", "status"], marg,
         "The three checks of each design nearest their limits (by margin relative to the limit): the binding "
         "rule and the next to bind."),
    ]


def comparison_text(result) -> str:
    """:func:`comparison_tables` for the terminal."""
    out = []
    for title, header, rows, note in comparison_tables(result):
        width = len(header)
        rows = [r + [""] * (width - len(r)) for r in rows]
        out += [title, _table(rows, header)]
        out += ["  " + line for line in _wrap(note, 96)]
        out.append("")
    return "\n".join(out)


def _wrap(text: str, width: int) -> list[str]:
    import textwrap
    return textwrap.wrap(text, width) or [""]


def comparison_blocks(result) -> list[tuple[str, object]]:
    """:func:`comparison_tables` as report blocks (a heading, the table, its note) for
    the PDF and the Markdown; column widths follow the longest text of each column."""
    blocks: list[tuple[str, object]] = []
    for title, header, rows, note in comparison_tables(result):
        rows = [r + [""] * (len(header) - len(r)) for r in rows]
        longest = [max([len(h)] + [len(r[i]) for r in rows]) + 2 for i, h in enumerate(header)]
        total = float(sum(longest))
        blocks += [("h2", title), ("table", (header, rows, [n / total for n in longest])), ("p", note)]
    return blocks
