"""Figures for a design report, each a drawing sheet: plan, unrolled sections, radial
cross-section, vehicle clearances, gradient and the design search.

Every figure is a sheet of a standard size (:mod:`helix.sheet`) at print size, with a
frame and helix's title block; drawings to scale are at a true standard scale (1:n
holds when the sheet is printed at 100 %), in the project's units, with a
colour-blind-safe palette (Okabe and Ito, "Color Universal Design", 2008) that also
separates in greyscale by line style.  No text is smaller than 2.5 mm on paper.
:func:`render_all` returns file contents in memory so the caller can write them
atomically.

Sheet sizes: the plan, sections, cross-section and clearance drawings are on A3
landscape, which takes the demos' plots at 1:200 with the legend and notes beside the
drawing; the gradient and design-search graphs, not drawn to scale, are on A4
landscape, the report's own page size.
"""
from __future__ import annotations

import io
import math
from typing import Any, Callable

import matplotlib
import numpy as np
from matplotlib.axes import Axes
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure
from matplotlib.lines import Line2D
from matplotlib.patches import Circle, FancyArrowPatch, Patch, Polygon, Rectangle, Wedge
from matplotlib.text import Annotation, Text

from .clearance import headroom
from .evaluate import Evaluation
from .formats import DEFAULT_DPI as PNG_DPI  # PNG resolution unless told (the reason is there)
from .sheet import (MIN_FONT_PT, POINT_MM, SCALES, Sheet, axes_mm, choose_scale, fit_text, mm, new_sheet, north_point,
                    set_true_scale, title_block)
from .plot import axis_of, footprint_span, nearest_limit, setback_outline, zone_outline
from .site_grid import grid_bearing, north_angle
from .units import FOOT, format_length, format_level

__all__ = ["close_sheet", "plan_figure", "section_figure", "cross_section_figure", "clearance_figure", "pareto_figure",
           "gradient_figure", "figure_bytes", "FIGURES", "start_render", "RenderJob", "PngJob", "PNG_DPI", "render_all",
           "STYLE", "FONT", "PALETTE", "SHEET_OF", "A4_LANDSCAPE", "drawing_scale", "section_cut_bearing", "drawn_texts",
           "turns_at"]

# Okabe-Ito colours, each with a role that stays the same in every figure.
PALETTE = {
    "kerb": "#000000",
    "lane": "#0072B2",  # blue: lane centre lines, running surfaces
    "thread2": "#D55E00",  # vermillion: second thread
    "structure": "#7F7F7F",
    "soffit": "#E69F00",  # orange: undersides of structure
    "critical": "#CC79A7",  # reddish purple: the governing value
    "footprint": "#009E73",  # bluish green: site limits
    "fill": "#DCE9F5",
    "landing": "#CDE8D8",  # pale green band: landings (never used for structure)
    "transition": "#F6D2E3",  # pale purple band: transitions
    "slab": "#BDBDBD",  # grey: slabs, walls, the ground under a path
}
THREAD_COLOURS = ("#0072B2", "#D55E00", "#009E73", "#CC79A7")
#: Direction of traffic -> colour and line style of its centre line (distinct in both).
DIRECTION_STYLE = {"up": ("#0072B2", (0, (9, 3, 2, 3))), "down": ("#D55E00", (0, (5, 2.5))),
                   "up and down": ("#009E73", (0, (1.5, 2)))}

#: The one typeface of every figure and of the report (matplotlib ships it, so every
#: raster and PDF looks the same everywhere).
FONT = "DejaVu Sans"
#: What an SVG viewer falls back to where DejaVu Sans is not installed: SVG text stays
#: text (``svg.fonttype: none``: smaller files, editable, searchable, and about half the
#: time of text turned into paths), so its family is a CSS list ending in a generic one.
SVG_FALLBACK = [FONT, "Bitstream Vera Sans", "Verdana", "Arial", "Helvetica", "sans-serif"]

STYLE: dict[str, Any] = {
    "font.family": [FONT, "sans-serif"],
    "font.sans-serif": SVG_FALLBACK,
    "font.size": 8,
    "axes.titlesize": 9,
    "axes.labelsize": 8,
    "axes.linewidth": 0.8,
    "xtick.labelsize": 7.5,
    "ytick.labelsize": 7.5,
    "legend.fontsize": 7.5,
    "legend.frameon": False,
    "svg.hashsalt": "helix",
    "svg.fonttype": "none",
    # TrueType embedding: text in the PDF can be searched and copied.
    "pdf.fonttype": 42,
    "ps.fonttype": 42,
    "path.simplify": False,
    # User text (project and level names) is drawn as written: '$' is a dollar sign,
    # never the start of mathtext that could fail to parse.
    "text.parse_math": False,
    "text.usetex": False,
}
A4_LANDSCAPE = (11.69, 8.27)
#: Sheet size of each figure (see the module docstring for why).
SHEET_OF = {"plan": "A3", "section": "A3", "cross_section": "A3", "clearance": "A3", "gradient": "A4",
            "pareto": "A4", "options": "A3"}
_NUMBER = {"plan": 1, "section": 2, "cross_section": 3, "clearance": 4, "gradient": 5, "pareto": 6, "options": 7}
SMALL = 7.5  # pt: notes and labels, 2.6 mm on paper
assert SMALL >= MIN_FONT_PT


def _styled() -> Any:
    """The shared style as a context (matplotlib's stubs type the keys as literals)."""
    return matplotlib.rc_context(STYLE)  # type: ignore[arg-type]


class _Scale:
    """Drawing units: metres for metric projects, feet for imperial ones."""

    def __init__(self, units: str):
        self.units = units
        self.factor = 1.0 / FOOT if units == "imperial" else 1.0
        self.name = "ft" if units == "imperial" else "m"
        self.unit_m = FOOT if units == "imperial" else 1.0

    def __call__(self, x: Any) -> Any:
        return np.asarray(x) * self.factor


def _grade_text(ratio: float) -> str:
    """A grade as the trade writes it on a section: '8.33 % (1:12.0)'."""
    if abs(ratio) < 1e-9:
        return "level"
    return f"{100 * abs(ratio):.2f} % (1:{1 / abs(ratio):.1f})"


def _sheet(project: Any, key: str, title: str, scale_text: str,
           bar: tuple[int, float, str] | None) -> tuple[Figure, Sheet]:
    """A sheet for figure ``key`` with its frame and title block filled in from the
    project's ``drawing:`` section (blank fields are ruled lines to fill by hand)."""
    fig, sheet = new_sheet(SHEET_OF[key])
    d = project.drawing
    fields = {"project": project.name, "title": title,
              "number": f"{d.number}-{_NUMBER[key]:02d}" if d.number else "", "revision": d.revision,
              "date": d.date, "drawn": d.drawn, "checked": d.checked}
    title_block(fig, sheet, fields, scale_text, bar)
    fig._helix_title = f"{project.name}: {title}"  # type: ignore[attr-defined]
    return fig, sheet


def _note(fig: Figure, x: float, y: float, text: str, **kw: Any) -> Text:
    """Text at sheet position (x, y) mm, top-left anchored."""
    kw.setdefault("fontsize", SMALL)
    kw.setdefault("va", "top")
    kw.setdefault("ha", "left")
    return fig.text(x, y, text, transform=mm(fig), **kw)


def _legend(fig: Figure, ax: Axes, handles: list, x: float, y: float, ncol: int = 1, **kw: Any) -> None:
    """A legend with its upper left corner at sheet position (x, y) mm."""
    if handles:
        ax.legend(handles=handles, loc="upper left", bbox_to_anchor=(x, y), bbox_transform=mm(fig),
                  borderaxespad=0.0, ncol=ncol, **kw)


def _optional(artist: Text) -> Text:
    """Mark a label that may be left out where it would overlap another (chainages)."""
    artist.set_gid("optional")
    return artist


def drawn_texts(fig: Figure) -> list[Text]:
    """Every text the renderer draws on ``fig``: visible, not blank, tick labels only
    for the ticks in view (matplotlib keeps spare tick objects outside it)."""
    spare: set[int] = set()
    shown: list[Text] = []
    for ax in fig.axes:
        for axis in (ax.xaxis, ax.yaxis):
            lo, hi = sorted(axis.get_view_interval())
            span = hi - lo
            for tick in axis.get_major_ticks() + axis.get_minor_ticks():
                spare.update((id(tick.label1), id(tick.label2)))
                loc = tick.get_loc()
                if loc is not None and lo - 1e-9 * span <= loc <= hi + 1e-9 * span:
                    shown += [lab for lab in (tick.label1, tick.label2) if lab.get_visible()]
    texts = [t for t in fig.findobj(Text) if id(t) not in spare] + shown
    out, seen = [], set()
    for t in texts:
        if id(t) in seen or not t.get_visible() or not t.get_text().strip():
            continue
        if t.axes is not None and not t.axes.get_visible():
            continue
        seen.add(id(t))
        out.append(t)
    return out


def _declutter(fig: Figure) -> None:
    """Hide optional labels that overlap another label or leave their axes: the
    drawing stays legible at its scale; required labels are placed not to overlap."""
    renderer = fig.canvas.get_renderer()  # type: ignore[attr-defined]
    texts = drawn_texts(fig)
    for t in texts:  # an annotation places its text at draw time: place it now
        if isinstance(t, Annotation):
            t.update_positions(renderer)
    # Text.get_window_extent: the text alone (an annotation's own adds its leader line).
    kept = [Text.get_window_extent(t, renderer) for t in texts if t.get_gid() != "optional"]
    for t in texts:
        if t.get_gid() != "optional":
            continue
        box = Text.get_window_extent(t, renderer)
        ax = t.axes
        inside = ax is None or ax.get_window_extent(renderer).padded(-1).contains(box.x0, box.y0) and \
            ax.get_window_extent(renderer).padded(-1).contains(box.x1, box.y1)
        if not inside or any(box.overlaps(k) for k in kept):
            t.set_visible(False)
        else:
            kept.append(box)


def drawing_scale(extent_m: tuple[float, float], box_mm: tuple[float, float]) -> int:
    """The standard scale (1:n) at which a drawing of ``extent_m`` fits ``box_mm``."""
    return choose_scale(extent_m, box_mm, SCALES)


def section_cut_bearing(ev: Evaluation) -> float:
    """Plan angle (rad, anticlockwise from +x) of the radial section's cut: through the
    smallest clear headroom, else the first connection."""
    h = ev.helix
    if ev.headroom is not None:
        return float(h.threads[ev.headroom.thread].bearing(ev.headroom.theta))
    return h.threads[0].start_bearing


def _wcb(angle: float, ev: Evaluation) -> str:
    """Whole-circle bearing (clockwise from grid north) of plan angle ``angle``, text."""
    b = math.degrees(float(grid_bearing(angle, ev.project.site.grid)))
    return f"{b:05.1f} deg" if round(b, 1) < 360.0 else "000.0 deg"


def _dim(ax: Axes, a: tuple[float, float], b: tuple[float, float], text: str, *, offset_pt: tuple[float, float]
         = (0.0, 4.0), ha: str = "center", va: str = "bottom", colour: str = "#333333", optional: bool = False) -> None:
    """A dimension line between drawing points ``a`` and ``b`` with ``text`` beside it."""
    ax.annotate("", b, a, arrowprops=dict(arrowstyle="<|-|>", color=colour, lw=0.6, shrinkA=0, shrinkB=0,
                                          mutation_scale=7))
    mid = (0.5 * (a[0] + b[0]), 0.5 * (a[1] + b[1]))
    t = ax.annotate(text, mid, offset_pt, textcoords="offset points", ha=ha, va=va, fontsize=SMALL,
                    color=colour, bbox=dict(boxstyle="square,pad=0.1", fc="white", ec="none"))
    if optional:
        _optional(t)


# ----------------------------------------------------------------------------------
# Plan


def _plot_polygon(ax: Axes, p: Any, s: Any, lw: float) -> list[Any]:
    """The plot as a polygon, its setback line and its no-build zones; their legend handles."""
    colour = PALETTE["footprint"]
    site = p.site
    ax.add_patch(Polygon([(float(s(x)), float(s(y))) for x, y in site.boundary or ()], closed=True, fill=False,
                         ec=colour, lw=lw))
    handles: list[Any] = [Line2D([], [], color=colour, lw=lw, label="plot boundary")]
    if site.margin > 0:
        for ring in setback_outline(site):
            ax.add_patch(Polygon([(float(s(x)), float(s(y))) for x, y in ring], closed=True, fill=False,
                                 ec=colour, lw=0.5 * lw, ls="--"))
        handles.append(Line2D([], [], color=colour, lw=0.5 * lw, ls="--", label="setback line"))
    for z in site.no_build:
        ax.add_patch(Polygon([(float(s(x)), float(s(y))) for x, y in zone_outline(z)], closed=True,
                             fc="#D9D9D9", ec="black", lw=0.6, hatch="xxxx"))
    if site.no_build:
        handles.append(Patch(fc="#D9D9D9", ec="black", hatch="xxxx", lw=0.6,
                             label="no-build zone (" + ", ".join(z.name for z in site.no_build[:4])
                             + (", ..." if len(site.no_build) > 4 else "") + ")"))
    return handles


def plan_figure(ev: Evaluation) -> Figure:
    """Plan on A3 at a true standard scale: plot, structure, kerbs, lanes, up and down
    centre lines, direction of travel, chainage ticks, level connections with entry and
    exit arrows, landings and transitions, the section cut, dimensions (overall
    diameter, radii, lane widths, setbacks to the plot), north point and site grid."""
    p, h = ev.project, ev.helix
    s = _Scale(p.units)
    cx, cy = h.centre
    W, D = p.site.width, p.site.depth
    R = h.structure_radius
    x0, x1 = min(0.0, cx - R), max(W, cx + R)
    y0, y1 = min(0.0, cy - R), max(D, cy + R)
    box = (34.0, 30.0, 224.0, 283.0)
    n = drawing_scale((x1 - x0, y1 - y0), (box[2] - box[0] - 36.0, box[3] - box[1] - 36.0))
    with _styled():
        fig, sheet = _sheet(p, "plan", f"Plan - {h.layout} helix, {p.traffic}",
                            f"1:{n} at {SHEET_OF['plan']}", (n, s.unit_m, s.name))
        ax = axes_mm(fig, sheet, box)
        set_true_scale(ax, n, (float(s(0.5 * (x0 + x1))), float(s(0.5 * (y0 + y1)))), s.unit_m)
        handles: list[Any] = []
        if p.site.is_rectangle:
            ax.add_patch(Rectangle((0, 0), s(W), s(D), fill=False, ec=PALETTE["footprint"], lw=1.6))
            handles.append(Line2D([], [], color=PALETTE["footprint"], lw=1.6, label="plot (footprint)"))
            m = p.site.margin
            if m > 0:
                ax.add_patch(Rectangle((s(m), s(m)), s(W - 2 * m), s(D - 2 * m), fill=False,
                                       ec=PALETTE["footprint"], lw=0.8, ls="--"))
                handles.append(Line2D([], [], color=PALETTE["footprint"], lw=0.8, ls="--", label="plot less margin"))
        else:
            handles += _plot_polygon(ax, p, s, 1.6)
        C = (float(s(cx)), float(s(cy)))
        wall = p.structure.wall_thickness
        r_wall_in = R - wall
        # Structure clearances: the rule set's clear zones between the kerbs and the structure.
        ax.add_patch(Wedge(C, s(r_wall_in), 0, 360, width=s(r_wall_in - h.outer_radius), fc="#F2F2F2",
                           ec="none", hatch="\\\\\\\\", lw=0))
        if h.core_radius < h.inner_radius - 1e-9:
            ax.add_patch(Wedge(C, s(h.inner_radius), 0, 360, width=s(h.inner_radius - h.core_radius),
                               fc="#F2F2F2", ec="none", hatch="\\\\\\\\", lw=0))
        handles.append(Patch(fc="#F2F2F2", ec="#999999", hatch="\\\\\\\\", lw=0.4,
                             label="clearance to structure (rule set)"))
        if wall > 0:
            ax.add_patch(Wedge(C, s(R), 0, 360, width=s(wall), fc=PALETTE["slab"], ec=PALETTE["structure"], lw=0.6))
            handles.append(Patch(fc=PALETTE["slab"], ec=PALETTE["structure"], label="outer wall"))
        else:
            ax.add_patch(Circle(C, s(r_wall_in), fill=False, ec=PALETTE["structure"], lw=1.0))
        if h.core_radius > 0:
            ax.add_patch(Circle(C, s(h.core_radius), fc="#E8E8E8", ec=PALETTE["structure"], lw=0.8, hatch="////"))
            handles.append(Patch(fc="#E8E8E8", ec=PALETTE["structure"], hatch="////", label="central core or void"))
        phi = np.linspace(0, 2 * math.pi, 721)
        for t in h.threads:
            ax.add_patch(Wedge(C, s(t.outer_radius), 0, 360, width=s(t.width), fc=PALETTE["fill"], ec="none"))
        # Landings and transitions, in plan: where the surface is not at the storey's run grade.
        kinds_drawn = set()
        for i, t in enumerate(h.threads):
            for kind, _st, a, b in t.profile.segments():
                if kind == "run":
                    continue
                ba, bb = float(t.bearing(a)), float(t.bearing(b))
                lo, hi = sorted((math.degrees(ba), math.degrees(bb)))
                ax.add_patch(Wedge(C, s(t.outer_radius), lo, hi, width=s(t.width),
                                   fc=PALETTE["landing" if kind == "landing" else "transition"], ec="none",
                                   alpha=0.9))
                kinds_drawn.add(kind)
        for kind in ("landing", "transition"):
            if kind in kinds_drawn:
                handles.append(Patch(fc=PALETTE[kind], label=f"{kind} (in plan)"))
        for t in h.threads:
            for r in (t.inner_radius, t.outer_radius):
                ax.plot(C[0] + s(r * np.cos(phi)), C[1] + s(r * np.sin(phi)), color=PALETTE["kerb"], lw=1.2)
        handles.append(Line2D([], [], color=PALETTE["kerb"], lw=1.2, label="kerb"))
        central = False
        for t in h.threads:
            if len(t.lanes) > 1:  # central kerb of a two-way helix
                a_, b_ = t.lanes[0].outer_radius, t.lanes[1].inner_radius
                ax.add_patch(Wedge(C, s(b_), 0, 360, width=s(b_ - a_), fc=PALETTE["slab"], ec=PALETTE["kerb"], lw=0.8))
                central = True
        if central:
            handles.append(Patch(fc=PALETTE["slab"], ec=PALETTE["kerb"], label="central kerb"))
        # Centre lines by direction of traffic (colour and line style), arrows of travel.
        styles_drawn: dict[str, str] = {}
        for i, t in enumerate(h.threads):
            sharing = [j for j, u in enumerate(h.threads)
                       if abs(u.inner_radius - t.inner_radius) < 1e-9 and abs(u.outer_radius - t.outer_radius) < 1e-9]
            nudge = (sharing.index(i) - (len(sharing) - 1) / 2) * 0.22 * t.width
            for lane in t.lanes:
                col, ls = DIRECTION_STYLE.get(lane.direction, DIRECTION_STYLE["up and down"])
                rc = lane.centre_radius + nudge
                ax.plot(C[0] + s(rc * np.cos(phi)), C[1] + s(rc * np.sin(phi)), color=col, lw=1.0, ls=ls)
                name = (f"{t.name}: " if len(h.threads) > 1 else "") + (f"{lane.name} " if len(t.lanes) > 1 else "")
                styles_drawn[f"{name}centre line, traffic {lane.direction}"] = lane.direction
                sense = t.hand * (-1 if lane.direction == "down" else 1)
                for k in range(6):
                    b0 = t.start_bearing + (k + 0.5) * math.pi / 3 + i * math.pi / 6
                    b1 = b0 + sense * 2.5 / max(rc, 1e-3) * (1.0 if s.units == "metric" else 1.0)
                    ax.add_patch(FancyArrowPatch(
                        (C[0] + s(rc * math.cos(b0)), C[1] + s(rc * math.sin(b0))),
                        (C[0] + s(rc * math.cos(b1)), C[1] + s(rc * math.sin(b1))),
                        connectionstyle=f"arc3,rad={0.1 * sense}", arrowstyle="-|>",
                        mutation_scale=9, color=col, lw=1.1))
        for label, direction in styles_drawn.items():
            col, ls = DIRECTION_STYLE.get(direction, DIRECTION_STYLE["up and down"])
            handles.append(Line2D([], [], color=col, lw=1.0, ls=ls, marker=">", markersize=4, label=label))
        # Chainage ticks along each thread's centre line: every 5 m (10 ft), labelled every 25 m (50 ft).
        step, label_every = (10 * FOOT, 50 * FOOT) if p.units == "imperial" else (5.0, 25.0)
        for i, t in enumerate(h.threads):
            col = THREAD_COLOURS[i % len(THREAD_COLOURS)]
            length = float(t.chainage(t.profile.end))
            rc = t.centre_radius
            for k in range(int(length / step + 1e-9) + 1):
                c_ = k * step
                b = float(t.bearing(t.profile.start + c_ / rc))
                major = abs(c_ / label_every - round(c_ / label_every)) < 1e-6
                half = 0.16 * t.width if major else 0.08 * t.width
                ax.plot([C[0] + s((rc - half) * math.cos(b)), C[0] + s((rc + half) * math.cos(b))],
                        [C[1] + s((rc - half) * math.sin(b)), C[1] + s((rc + half) * math.sin(b))],
                        color=col, lw=0.9 if major else 0.5)
                if major and k > 0:
                    rl = t.inner_radius + (0.18 if i % 2 == 0 else 0.82) * t.width
                    _optional(ax.text(C[0] + s(rl * math.cos(b)), C[1] + s(rl * math.sin(b)),
                                      f"{s(c_):.0f}", fontsize=SMALL, color=col, ha="center", va="center"))
        handles.append(Line2D([], [], color="#333333", lw=0.8, marker="|", ls="none", markersize=6,
                              label=f"chainage ticks every {format_length(step, p.units, precision=0)}, "
                                    f"labelled every {format_length(label_every, p.units, precision=0)}"))
        # Level connections: a tag in the core at each connection bearing, listed beside the drawing.
        groups: dict[int, list[tuple[float, str, float]]] = {}
        for i, t in enumerate(h.threads):
            for k, theta in enumerate(t.profile.connections):
                b = float(t.bearing(theta))
                key = int(round(math.degrees(b) % 360.0 * 10)) % 3600
                lvl = p.levels[t.levels[k]]
                text = f"{lvl.name} {format_level(lvl.level, p.units)}"
                if len(h.threads) > 1:
                    text += f" ({t.name})"
                groups.setdefault(key, []).append((lvl.level, text, b))
                ax.plot([C[0] + s(t.inner_radius * math.cos(b)), C[0] + s(t.outer_radius * math.cos(b))],
                        [C[1] + s(t.inner_radius * math.sin(b)), C[1] + s(t.outer_radius * math.sin(b))],
                        color=PALETTE["critical"], lw=2.4, solid_capstyle="butt")
        handles.append(Line2D([], [], color=PALETTE["critical"], lw=2.4, label="level connection (tag: list)"))
        tag_lines = []
        paper = n / 1000.0 / s.unit_m  # drawing units per mm of paper
        for j, key in enumerate(sorted(groups)):
            entries = sorted(groups[key])
            b = entries[0][2]
            tag = f"C{j + 1}"
            rt = max(h.inner_radius * s.factor - 4.5 * paper, 0.0)
            ax.text(C[0] + rt * math.cos(b), C[1] + rt * math.sin(b), tag, ha="center", va="center",
                    fontsize=8, fontweight="bold", color=PALETTE["critical"],
                    bbox=dict(boxstyle="circle,pad=0.15", fc="white", ec=PALETTE["critical"], lw=0.6))
            tag_lines.append(f"{tag}  bearing {_wcb(b, ev)}: " + ", ".join(e[1] for e in entries))
        # Floor approaches and exits: each lane's aisle centre, with an arrow of travel.
        # A deck's aisle is an entry to the helix (traffic drives in to climb, or to descend)
        # and an exit from it: the lowest floor of an up lane only an entry, the top only an
        # exit, the floors between both (down lanes the other way round).
        roles: dict[tuple, tuple[np.ndarray, set[str]]] = {}
        for a in ev.approaches:
            xy = a.line.vertices
            aisle_lane = next((ln for ln in h.threads[a.line.thread].lanes if ln.name == a.line.lane), None)
            t = h.threads[a.line.thread]
            is_up = aisle_lane is None or aisle_lane.direction != "down"
            if a.line.level == t.levels[0]:
                got = {"entry" if is_up else "exit"}
            elif a.line.level == t.levels[-1]:
                got = {"exit" if is_up else "entry"}
            else:
                got = {"entry", "exit"}
            key2 = tuple(np.round(xy.ravel(), 2))
            roles.setdefault(key2, (xy, set()))[1].update(got)
        for xy, got in roles.values():
            ax.plot(s(xy[:, 0]), s(xy[:, 1]), color=PALETTE["structure"], lw=1.0, ls=(0, (1, 1.5)))
            far, near = xy[-1], xy[0]
            d = far - near
            length = float(np.hypot(*d)) or 1.0
            normal = np.array([-d[1], d[0]]) / length * 1.4 * paper / s.factor
            for role in sorted(got):
                off = normal * (1 if role == "entry" else -1) if len(got) > 1 else 0.0 * normal
                mid = near + 0.55 * d + off
                start, end = ((far + off, mid) if role == "entry" else (mid, far + off))
                col = PALETTE["lane"] if role == "entry" else PALETTE["thread2"]
                ax.add_patch(FancyArrowPatch(tuple(s(start)), tuple(s(end)), arrowstyle="-|>", mutation_scale=11,
                                             color=col, lw=1.4))
        if ev.approaches:
            handles.append(Line2D([], [], color=PALETTE["structure"], lw=1.0, ls=(0, (1, 1.5)),
                                  label="floor aisle (approach or exit, centre)"))
            handles.append(Line2D([], [], color=PALETTE["lane"], lw=1.4, marker=">", ms=5,
                                  label="entry to the helix from a deck"))
            handles.append(Line2D([], [], color=PALETTE["thread2"], lw=1.4, marker=">", ms=5,
                                  label="exit from the helix to a deck"))
        covered = [a for a in ev.approaches if math.isfinite(a.clear)]
        if covered:
            a = min(covered, key=lambda a_: a_.clear)
            x, y = a.line.at(a.distance, a.offset)
            ax.plot(s(x), s(y), "X", color=PALETTE["critical"], ms=8, mec="white", mew=0.6)
            handles.append(Line2D([], [], marker="X", color=PALETTE["critical"], ls="none", ms=7,
                                  label=f"least clear height over an aisle: {format_length(a.clear, p.units)}"))
        # Section cut of the radial cross-section: A-A through the axis, arrows looking on.
        cut = section_cut_bearing(ev)
        rr = R + 3.0 * paper / s.factor
        for sgn in (1, -1):
            bx, by = cx + sgn * rr * math.cos(cut), cy + sgn * rr * math.sin(cut)
            ax.plot([s(cx), s(bx)], [s(cy), s(by)], color="black", lw=0.9, ls=(0, (12, 3, 2, 3)))
            nx_, ny_ = -math.sin(cut), math.cos(cut)  # looking along the normal
            ax.annotate("", (s(bx + 2.5 * paper / s.factor * nx_), s(by + 2.5 * paper / s.factor * ny_)),
                        (s(bx), s(by)), arrowprops=dict(arrowstyle="-|>", color="black", lw=1.0, shrinkA=0, shrinkB=0))
            ax.text(s(bx + 1.8 * paper / s.factor * math.cos(cut) * sgn), s(by + 1.8 * paper / s.factor *
                    math.sin(cut) * sgn), "A", ha="center", va="center", fontsize=9, fontweight="bold")
        handles.append(Line2D([], [], color="black", lw=0.9, ls=(0, (12, 3, 2, 3)),
                              label="section cut A-A (cross-section sheet)"))
        # Dimensions: radii and lane widths along free directions, overall diameter, setbacks.
        free = _free_bearing([k / 10 for k in sorted(groups)] + [math.degrees(cut) % 360,
                                                                 (math.degrees(cut) + 180) % 360])
        t0 = h.threads[0]
        dims = [("Ri", h.inner_radius), ("Ro", h.outer_radius)]
        for lane in t0.lanes:
            dims.append(("Rc" if len(t0.lanes) == 1 else f"Rc {lane.name.split()[0]}", lane.centre_radius))
        dims.sort(key=lambda d: d[1])
        # All radii on one ray, each labelled at its tip, alternately either side of the ray.
        ux, uy = math.cos(free), math.sin(free)
        nx_, ny_ = -uy, ux
        for j, (tag, r) in enumerate(reversed(dims)):
            tip = (C[0] + s(r * ux), C[1] + s(r * uy))
            ax.annotate("", tip, C, arrowprops=dict(arrowstyle="-|>", color="#333333", lw=0.6, shrinkA=0, shrinkB=0,
                                                    mutation_scale=7))
            side_ = 1 if j % 2 == 0 else -1
            beside = (side_ * 2.0 * nx_ - 1.0 * ux, side_ * 2.0 * ny_ - 1.0 * uy)  # mm, beside the tip
            ha = "left" if beside[0] > 0.3 else ("right" if beside[0] < -0.3 else "center")
            va = "bottom" if beside[1] > 0.3 else ("top" if beside[1] < -0.3 else "center")
            ax.annotate(f"{tag} {format_length(r, p.units)}", tip, (beside[0] / POINT_MM, beside[1] / POINT_MM),
                        textcoords="offset points", fontsize=SMALL, ha=ha, va=va,
                        bbox=dict(boxstyle="square,pad=0.1", fc="white", ec="none"))
        wb = free + math.pi
        for t in h.threads[:1]:
            for lane in t.lanes:
                pa = (C[0] + s(lane.inner_radius * math.cos(wb)), C[1] + s(lane.inner_radius * math.sin(wb)))
                pb = (C[0] + s(lane.outer_radius * math.cos(wb)), C[1] + s(lane.outer_radius * math.sin(wb)))
                ax.annotate("", pb, pa, arrowprops=dict(arrowstyle="<|-|>", color="#333333", lw=0.6, shrinkA=0,
                                                        shrinkB=0, mutation_scale=7))
                rl = lane.centre_radius * s.factor
                shift = 4.5 * paper
                nx_, ny_ = -math.sin(wb), math.cos(wb)
                ax.text(C[0] + rl * math.cos(wb) + shift * nx_, C[1] + rl * math.sin(wb) + shift * ny_,
                        f"lane {format_length(lane.width, p.units)}", fontsize=SMALL, ha="center", va="center",
                        rotation=0, bbox=dict(boxstyle="square,pad=0.1", fc="white", ec="none"))
        # Overall diameter, above the helix; setbacks to the plot edges through the axis.
        yd = cy + R + 2.5 * paper / s.factor
        for xe in (cx - R, cx + R):
            ax.plot([s(xe)] * 2, [s(cy), s(yd + 1.0 * paper / s.factor)], color="#888888", lw=0.4)
        ax.annotate("", (s(cx + R), s(yd)), (s(cx - R), s(yd)),
                    arrowprops=dict(arrowstyle="<|-|>", color="#333333", lw=0.6, shrinkA=0, shrinkB=0,
                                    mutation_scale=7))
        ax.annotate(f"overall diameter {format_length(h.overall_diameter, p.units)}", (s(cx - 0.45 * R), s(yd)),
                    (0, 2), textcoords="offset points", ha="center", va="bottom", fontsize=SMALL,
                    bbox=dict(boxstyle="square,pad=0.1", fc="white", ec="none"))
        setbacks = [("left", (0.0, cy), (cx - R, cy)), ("right", (cx + R, cy), (W, cy)),
                    ("bottom", (cx, 0.0), (cx, cy - R)), ("top", (cx, cy + R), (cx, D))]
        setback_lines = []
        spare_line = ""
        if not p.site.is_rectangle or p.site.axis is not None:
            setbacks = []  # the edges of a polygon are not the four sides: one dimension, to the nearest limit
            ax_ = axis_of(p.site)
            qx, qy = nearest_limit(p.site, cx, cy)
            dist = math.hypot(qx - cx, qy - cy)
            spare = ax_.reach - R
            if dist > 0 and spare > 0:
                ux, uy = (qx - cx) / dist, (qy - cy) / dist
                ax.annotate("", (float(s(qx)), float(s(qy))), (float(s(cx + R * ux)), float(s(cy + R * uy))),
                            arrowprops=dict(arrowstyle="<|-|>", color=PALETTE["footprint"], lw=0.8, shrinkA=0,
                                            shrinkB=0, mutation_scale=6))
                ax.annotate(f"spare {format_length(spare, p.units)}", (float(s(qx)), float(s(qy))), (3, 3),
                            textcoords="offset points", fontsize=SMALL, color="black",
                            bbox=dict(boxstyle="square,pad=0.1", fc="white", ec="none"))
            spare_line = (f"Spare distance, structure to the nearest limit ({ax_.nearest}): "
                          f"{format_length(spare, p.units)}; axis "
                          + ("pinned" if ax_.pinned else "at the centre of the largest circle in the allowed region")
                          + ".")
        for where, q0, q1 in setbacks:
            d_ = math.hypot(q1[0] - q0[0], q1[1] - q0[1]) * (1 if (q1[0] - q0[0]) + (q1[1] - q0[1]) >= 0 else -1)
            setback_lines.append(f"{where} {format_length(d_, p.units)}")
            if d_ <= 0:
                continue
            ax.annotate("", tuple(s(q1)), tuple(s(q0)), arrowprops=dict(arrowstyle="<|-|>", color=PALETTE["footprint"],
                                                                        lw=0.6, shrinkA=0, shrinkB=0, mutation_scale=6))
        ax.plot(C[0], C[1], "+", color="black", ms=8)
        ax.set_xlabel(f"x ({s.name}), plot coordinates")
        ax.set_ylabel(f"y ({s.name}), plot coordinates")
        ax.grid(True, lw=0.3, color="#E4E4E4")
        # Beside the drawing: north point, legend, connections, notes.
        bx0 = box[2] + 10.0
        grid = p.site.grid
        north_point(fig, sheet.frame[2] - 14.0, sheet.frame[3] - 14.0, north_angle(grid))
        _note(fig, bx0, sheet.frame[3] - 4.0, "Legend", fontsize=8.5, fontweight="bold")
        _legend(fig, ax, handles, bx0, sheet.frame[3] - 9.0, handlelength=2.8)
        lines = ["Level connections (bearings clockwise from grid north, from the helix axis):"]
        lines += tag_lines
        lines += ["", f"Ascending {'anticlockwise' if t0.hand > 0 else 'clockwise'} seen from above; "
                      "arrows: direction of travel.",
                  f"Section A-A on bearing {_wcb(cut, ev)} (right half) and {_wcb(cut + math.pi, ev)}.",
                  f"Helix axis at x {format_length(cx, p.units)}, y {format_length(cy, p.units)} "
                  "(plot coordinates).",
                  ("Setbacks, structure to plot edge: " + ", ".join(setback_lines) + ".") if setback_lines
                  else spare_line,
                  "Site grid: " + ("easting = x, northing = y (no rotation, origin 0, 0)." if grid.is_default
                                   else f"plot origin at E {format_length(grid.origin[0], p.units)}, "
                                        f"N {format_length(grid.origin[1], p.units)}; plot +y on bearing "
                                        f"{math.degrees(grid.rotation) % 360:.2f} deg."),
                  "Setting-out: setting_out.csv, in the site grid."]
        _note(fig, bx0, sheet.block[3] + 52.0, _wrap_lines(lines, 170.0, SMALL), linespacing=1.25)
        _declutter(fig)
    return fig


def _wrap_lines(lines: list[str], width_mm: float, size: float) -> str:
    """``lines`` wrapped to ``width_mm`` at font ``size`` (pt), as one string."""
    import textwrap
    room = int(width_mm / (0.6 * size * 25.4 / 72.0))
    out: list[str] = []
    for line in lines:
        out += textwrap.wrap(line, room, subsequent_indent="    ") or [""]
    return "\n".join(out)


def _wrapped(handles: list, width_mm: float) -> list:
    """Legend handles with their labels wrapped to ``width_mm`` (beside the handle)."""
    for hd in handles:
        hd.set_label(_wrap_lines([hd.get_label()], width_mm - 12.0, SMALL))
    return handles


def _free_bearing(bearings_deg: list[float]) -> float:
    """A plan angle (rad) midway in the widest gap between ``bearings_deg``."""
    if not bearings_deg:
        return math.radians(45.0)
    b = sorted(x % 360.0 for x in bearings_deg)
    b = b + [b[0] + 360.0]
    gaps = [(b[i + 1] - b[i], b[i]) for i in range(len(b) - 1)]
    width, start = max(gaps)
    return math.radians(start + width / 2)


# ----------------------------------------------------------------------------------
# Unrolled sections


def _driving_lines(ev: Evaluation) -> list[tuple[int, str, float]]:
    """(thread index, name, radius) of every lane's driving line (its centre): on a
    two-way helix each lane, never the central kerb between them."""
    out = []
    for i, t in enumerate(ev.helix.threads):
        for lane in t.lanes:
            name = t.name + (f", {lane.name} (traffic {lane.direction})" if len(t.lanes) > 1
                             else f" (traffic {lane.direction})")
            out.append((i, name, lane.centre_radius))
    return out


def _headroom_statement(ev: Evaluation) -> str:
    """One statement of the smallest clear headroom, as the checks table and the JSON
    give it: the storey (``headroom_at.storey``), the surface the car is on and the
    surface overhead."""
    hp, at = ev.headroom, ev.headroom_at
    if hp is None or at is None:
        return ""
    u = ev.project.units
    t = ev.helix.threads[hp.thread]
    z = float(t.level(hp.theta, hp.radius))
    return (f"smallest clear headroom {format_length(hp.clear, u)}: {at.thread}, {at.storey}, on the surface "
            f"at {format_level(z, u)}, chainage {format_length(at.chainage, u)}, r = {format_length(hp.radius, u)}, "
            f"under {hp.above} (its soffit less slab and hanging depth)")


def section_figure(ev: Evaluation) -> Figure:
    """Unrolled sections on A3, one per lane's driving line: running surface, floor
    levels, landings and transitions, the grade of every run and transition (% and
    1:n), chainage ticks at the breakpoints, the structure overhead as a band (slab and
    hanging depth) and the smallest clear headroom marked where the checks name it."""
    p, h = ev.project, ev.helix
    s = _Scale(p.units)
    st = p.structure
    lines = _driving_lines(ev)
    npan = len(lines)
    length = max(float(h.threads[i].chainage(h.threads[i].profile.end, r)) for i, _, r in lines)
    z_lo = p.levels[0].level - 1.0
    z_hi = p.levels[-1].level + max(p.storey_heights[-1], 2.5) + 0.5
    if st.cover_soffit is not None:
        z_hi = max(z_hi, st.cover_soffit + st.slab_depth + 0.5)
    box_w = 390.0 - 30.0
    gap = 14.0
    panel_h = (283.0 - 58.0 - gap * (npan - 1) - 6.0) / npan
    n_h = choose_scale((length, 0.0), (box_w - 6.0, 1e9))
    n_v = choose_scale((0.0, z_hi - z_lo), (1e9, panel_h - 4.0), tuple(x for x in SCALES if x <= n_h))
    exaggeration = n_h / n_v
    ratio = f"vertical scale 1:{n_v}, horizontal 1:{n_h}: {exaggeration:g}x vertical exaggeration" \
        if n_v != n_h else f"1:{n_h}, no vertical exaggeration"
    with _styled():
        fig, sheet = _sheet(p, "section", "Unrolled sections along each lane's driving line",
                            f"H 1:{n_h}, V 1:{n_v} at A3", (n_h, s.unit_m, s.name))
        kinds_drawn: set[str] = set()
        first_ax = None
        hp = ev.headroom
        for j, (i, name, r) in enumerate(lines):
            t = h.threads[i]
            col = DIRECTION_STYLE.get(t.lanes[0].direction if len(t.lanes) == 1 else
                                      next(ln.direction for ln in t.lanes if ln.centre_radius == r),
                                      DIRECTION_STYLE["up and down"])[0]
            top = 283.0 - j * (panel_h + gap)
            ax = axes_mm(fig, sheet, (40.0, top - panel_h, 40.0 + box_w - 10.0, top - 5.0))
            first_ax = first_ax or ax
            prof = t.profile
            ch_end = float(t.chainage(prof.end, r))
            set_true_scale(ax, n_h, (float(s(0.5 * ch_end)), float(s(0.5 * (z_lo + z_hi)))), s.unit_m, n_v)
            xl = ax.get_xlim()  # chainage 0 near the left edge, the true scale kept
            shift = xl[0] + float(s(0.02 * ch_end))
            ax.set_xlim(xl[0] - shift, xl[1] - shift)
            theta = np.unique(np.concatenate([np.linspace(prof.start, prof.end, 3000), prof.t]))
            ch = t.chainage(theta, r)
            z = t.level(theta, r)
            clear, _gap, _ = headroom(h, st, i, theta, r)
            soffit = np.where(np.isfinite(clear), z + clear, np.nan)
            for kind, _st, a, b in prof.segments():
                if kind != "run":
                    ax.axvspan(float(s(t.chainage(a, r))), float(s(t.chainage(b, r))), color=PALETTE[kind], lw=0,
                               zorder=0)
                    kinds_drawn.add(kind)
            ax.fill_between(s(ch), s(soffit), s(soffit + st.depth), where=np.isfinite(soffit), color=PALETTE["slab"],
                            lw=0, zorder=1)
            if st.hanging_depth > 0:
                ax.fill_between(s(ch), s(soffit), s(soffit + st.hanging_depth), where=np.isfinite(soffit),
                                fc="none", ec=PALETTE["soffit"], hatch="....", lw=0, zorder=1)
            ax.plot(s(ch), s(soffit), color=PALETTE["soffit"], lw=1.0, zorder=2)
            ax.plot(s(ch), s(z), color=col, lw=1.6, zorder=3)
            # Floor levels at the connections.
            for k, c in enumerate(prof.connections):
                lvl = p.levels[t.levels[k]]
                x = float(s(t.chainage(c, r)))
                ax.plot([x], [s(lvl.level)], "o", color=PALETTE["critical"], ms=3.5, zorder=5)
                at_end = c > prof.start + 0.85 * (prof.end - prof.start)
                ax.annotate(f"{lvl.name} {format_level(lvl.level, p.units)}\nch {float(s(t.chainage(c, r))):.2f}",
                            (x, float(s(lvl.level))),
                            (-3 if at_end else 3, -4), textcoords="offset points", fontsize=SMALL, va="top",
                            ha="right" if at_end else "left", zorder=6,
                            bbox=dict(boxstyle="square,pad=0.1", fc="white", ec="none", alpha=0.8))
            # Grade of every run and transition, at its middle; breakpoints ticked.
            for kind, _st, a, b in prof.segments():
                xa, xb = float(t.chainage(a, r)), float(t.chainage(b, r))
                ax.plot([s(xa)] * 2, [s(float(t.level(a, r))) - 0.012 * s(z_hi - z_lo),
                                      s(float(t.level(a, r))) + 0.012 * s(z_hi - z_lo)], color="black", lw=0.6)
                if kind == "landing":
                    continue
                mid = 0.5 * (a + b)
                g = float(t.gradient(mid, r))
                zm = float(t.level(mid, r))
                lab = ax.annotate(_grade_text(g), (float(s(0.5 * (xa + xb))), float(s(zm))),
                                  (0, -6 if kind == "run" else 6), textcoords="offset points", fontsize=SMALL,
                                  ha="center", va="top" if kind == "run" else "bottom", color="#333333", zorder=6)
                if kind != "run":
                    _optional(lab)
            # The smallest clear headroom: at the point the checks name, on that thread.
            if hp is not None and hp.thread == i:
                th = hp.theta
                c_min = float(headroom(h, st, i, [th], r)[0][0])
                x = float(s(t.chainage(th, r)))
                z0 = float(t.level(th, r))
                if math.isfinite(c_min):
                    ax.annotate("", (x, float(s(z0 + c_min))), (x, float(s(z0))),
                                arrowprops=dict(arrowstyle="<|-|>", color=PALETTE["critical"], lw=1.2, shrinkA=0,
                                                shrinkB=0, mutation_scale=8), zorder=7)
                    storey = ev.headroom_at.storey if ev.headroom_at is not None else ""
                    xl_ = ax.get_xlim()  # the label in the free space at the top of the panel
                    frac = (x - xl_[0]) / (xl_[1] - xl_[0])
                    ax.annotate(f"least clear headroom: {storey}, under {hp.above}\n"
                                f"{format_length(c_min, p.units)} on this line (surface {format_level(z0, p.units)}); "
                                f"least {format_length(hp.clear, p.units)} at r = {format_length(hp.radius, p.units)}",
                                (x, float(s(z0 + c_min))), (max(frac, 0.01), 0.97), textcoords="axes fraction",
                                fontsize=SMALL, color=PALETTE["critical"], va="top", ha="left", zorder=9,
                                arrowprops=dict(arrowstyle="-", color=PALETTE["critical"], lw=0.6),
                                bbox=dict(boxstyle="round,pad=0.2", fc="white", ec=PALETTE["critical"], lw=0.6))
            ax.set_title(f"{name}: driving line at r = {format_length(r, p.units)}", loc="left", fontsize=8.5)
            ax.set_xlabel(f"chainage along this line, in the direction of ascent ({s.name})", labelpad=1)
            ax.set_ylabel(f"level ({s.name})")
            ax.grid(True, lw=0.3, color="#E4E4E4")
        assert first_ax is not None
        handles: list[Any] = [Line2D([], [], color=PALETTE["lane"], lw=1.6, label="running surface on the driving line"),
                              Patch(fc=PALETTE["slab"], label="structure overhead: slab"),
                              Patch(fc="none", ec=PALETTE["soffit"], hatch="....", label="hanging depth (beams, services)"),
                              Line2D([], [], color=PALETTE["soffit"], lw=1.0, label="soffit (underside of structure)"),
                              Line2D([], [], marker="o", color=PALETTE["critical"], ls="none", ms=4,
                                     label="floor level at its connection")]
        handles += [Patch(fc=PALETTE[k], label=k) for k in ("landing", "transition") if k in kinds_drawn]
        _legend(fig, first_ax, handles, 24.0, 55.0, ncol=2)
        notes = [ratio[0].upper() + ratio[1:] + ".",
                 "Grades on the driving line: % and 1:n; ticks at every breakpoint of the alignment.",
                 _headroom_statement(ev)[0:1].upper() + _headroom_statement(ev)[1:] + "." if ev.headroom else "",
                 "Headroom is measured at every plan position against the surface overhead."]
        _note(fig, 24.0 + 0.0, 37.0, _wrap_lines([x for x in notes if x], 200.0, SMALL), linespacing=1.2)
        _declutter(fig)
    return fig


# ----------------------------------------------------------------------------------
# Radial cross-section


def turns_at(thread: Any, bearing: float) -> list[float]:
    """Every unrolled plan angle of ``thread`` at plan ``bearing`` (rad), start and end
    included (a tolerance of a micro-radian: the headroom point may lie a hair before a
    connection)."""
    base = thread.hand * (bearing - thread.start_bearing)
    k0 = math.floor((thread.profile.start - base) / (2 * math.pi)) - 1
    k1 = math.ceil((thread.profile.end - base) / (2 * math.pi)) + 1
    out = []
    for k in range(k0, k1 + 1):
        th = base + 2 * math.pi * k
        if thread.profile.start - 1e-6 <= th <= thread.profile.end + 1e-6:
            out.append(min(max(th, thread.profile.start), thread.profile.end))
    return out


def cross_section_figure(ev: Evaluation, bearing: float | None = None) -> Figure:
    """Radial section A-A through the axis on A3 at a true scale: every turn of every
    thread on both sides, lanes and central kerb, kerb levels, slab and hanging
    structure, lane width and radius dimensions and the clear height.

    ``bearing`` (rad, plan angle) is the direction of the right-hand half; by default
    the cut of the plan (:func:`section_cut_bearing`)."""
    p, h = ev.project, ev.helix
    s = _Scale(p.units)
    st = p.structure
    bearing = section_cut_bearing(ev) if bearing is None else bearing
    kerb_h = 0.15
    R = h.structure_radius
    zmin = p.levels[0].level - 1.0
    zmax = p.levels[-1].level + 1.5 + (st.cover_soffit - p.levels[-1].level if st.cover_soffit else 0)
    box = (34.0, 72.0, 405.0, 283.0)
    # Dimension rows under the lowest turn, 5 mm apart on paper: one per kerb radius or lane.
    n_dims = max(len({round(v, 6) for t in h.threads for v in (t.inner_radius, t.outer_radius)}),
                 sum(len(t.lanes) for t in h.threads))
    n = drawing_scale((2.05 * R, zmax - zmin), (box[2] - box[0] - 8.0, box[3] - box[1] - 8.0 - 5.0 * n_dims))
    with _styled():
        fig, sheet = _sheet(p, "cross_section", f"Section A-A, radial, bearings {_wcb(bearing, ev)} (right) "
                            f"and {_wcb(bearing + math.pi, ev)} (left)", f"1:{n} at A3", (n, s.unit_m, s.name))
        ax = axes_mm(fig, sheet, box)
        paper = n / 1000.0 / s.unit_m  # drawing units per mm of paper
        set_true_scale(ax, n, (0.0, 0.5 * (float(s(zmin)) - (4.0 + 5.0 * n_dims) * paper + float(s(zmax)))), s.unit_m)
        wall = st.wall_thickness
        for side in (1, -1):
            b = bearing if side > 0 else bearing + math.pi
            if wall > 0:
                ax.add_patch(Rectangle((s(R - wall) if side > 0 else -s(R), s(zmin)), s(wall), s(zmax - zmin),
                                       fc=PALETTE["slab"], ec=PALETTE["structure"], lw=0.6, hatch="xx", zorder=1))
            if h.core_radius > 0:
                ax.add_patch(Rectangle((s(-h.core_radius) if side < 0 else 0, s(zmin)), s(h.core_radius),
                                       s(zmax - zmin), fc="#F0F0F0", ec=PALETTE["structure"], lw=0.6, zorder=1))
            for i, t in enumerate(h.threads):
                col = THREAD_COLOURS[i % len(THREAD_COLOURS)]
                for k, th in enumerate(turns_at(t, b)):
                    r = np.linspace(t.inner_radius, t.outer_radius, 20)
                    z = t.level(th, r)
                    x = side * r
                    slab = ax.fill(np.concatenate([s(x), s(x[::-1])]),
                                   np.concatenate([s(z), s(z[::-1] - st.slab_depth)]),
                                   fc=col, alpha=0.35, ec=col, lw=0.8, zorder=3)[0]
                    slab.set_gid(f"slab:{i}:{side}:{k}")
                    if st.hanging_depth > 0:
                        ax.fill(np.concatenate([s(x), s(x[::-1])]),
                                np.concatenate([s(z - st.slab_depth), s(z[::-1] - st.depth)]),
                                fc="none", ec=PALETTE["soffit"], lw=0.6, hatch="....", zorder=3)
                    ax.plot(s(x), s(z), color=col, lw=1.4, zorder=4)
                    kerbs = [t.inner_radius, t.outer_radius]
                    if len(t.lanes) > 1:  # the raised central kerb between the lanes
                        a_, b_ = t.lanes[0].outer_radius, t.lanes[1].inner_radius
                        za, zb = float(t.level(th, a_)), float(t.level(th, b_))
                        ax.fill([s(side * a_), s(side * b_), s(side * b_), s(side * a_)],
                                [s(za), s(zb), s(zb + kerb_h), s(za + kerb_h)], fc="#555555", ec="black", lw=0.5,
                                zorder=5)
                    for rk in kerbs:  # kerbs, schematic upstands
                        zk = float(t.level(th, rk))
                        ax.plot([s(side * rk)] * 2, [s(zk), s(zk + kerb_h)], color="black", lw=2.0, zorder=5)
                    # Kerb levels at each end of the slab, inside it.
                    for rk, at_inner in ((t.inner_radius, True), (t.outer_radius, False)):
                        zk = float(t.level(th, rk))
                        inward = (side > 0) == at_inner  # text runs from the kerb into the slab
                        # Where two turns lie closer than a line of text, the first drawn keeps its label.
                        # Inner kerb level above the slab, outer kerb level below its structure.
                        zt = zk if at_inner else zk - st.depth
                        _optional(ax.annotate(format_level(zk, p.units), (float(s(side * rk)), float(s(zt))),
                                              (3 if inward else -3, 3 if at_inner else -2), textcoords="offset points",
                                              fontsize=SMALL, ha="left" if inward else "right",
                                              va="bottom" if at_inner else "top", zorder=6))
        if st.cover_soffit is not None:
            ax.add_patch(Rectangle((-s(R), s(st.cover_soffit)), s(2 * R), s(st.slab_depth), fc=PALETTE["slab"],
                                   ec=PALETTE["structure"], zorder=2))
        # Clear height at the governing point, where it lies in this section.
        hp = ev.headroom
        if hp is not None:
            t = h.threads[hp.thread]
            b_min = float(t.bearing(hp.theta))
            d = (b_min - bearing + math.pi) % (2 * math.pi) - math.pi
            side = 1 if abs(d) < 1e-6 else (-1 if abs(abs(d) - math.pi) < 1e-6 else 0)
            if side:
                z0 = float(t.level(hp.theta, hp.radius))
                xh = float(s(side * hp.radius))
                ax.annotate("", (xh, float(s(z0 + hp.clear))), (xh, float(s(z0))),
                            arrowprops=dict(arrowstyle="<|-|>", color=PALETTE["critical"], lw=1.3, shrinkA=0, shrinkB=0,
                                            mutation_scale=8), zorder=7)
                ax.annotate(f"clear {format_length(hp.clear, p.units)}\n(gap {format_length(hp.gap, p.units)} less "
                            f"{format_length(st.depth, p.units)} structure)",
                            (xh, float(s(z0 + 0.5 * hp.clear))), (-6 * side, 0), textcoords="offset points",
                            ha="right" if side > 0 else "left", va="center", fontsize=SMALL, color=PALETTE["critical"],
                            bbox=dict(boxstyle="round,pad=0.2", fc="white", ec=PALETTE["critical"], lw=0.6), zorder=8)
        # Dimensions below the lowest turn: radii from the axis and lane widths.
        kerb_radii = sorted({round(v, 6) for t in h.threads for v in (t.inner_radius, t.outer_radius)})
        for j, rk in enumerate(kerb_radii):
            y = float(s(zmin)) - (3.0 + 5.0 * j) * paper
            ax.annotate("", (float(s(rk)), y), (0.0, y), arrowprops=dict(arrowstyle="-|>", color="#333333", lw=0.6,
                                                                         shrinkA=0, shrinkB=0, mutation_scale=7))
            ax.text(float(s(rk)) + 1.0 * paper, y, f"r {format_length(rk, p.units)}", fontsize=SMALL, va="center",
                    ha="left", bbox=dict(boxstyle="square,pad=0.1", fc="white", ec="none"))
        for j, lane in enumerate(ln for t in h.threads for ln in t.lanes):
            y = float(s(zmin)) - (3.0 + 5.0 * j) * paper
            _dim(ax, (-float(s(lane.inner_radius)), y), (-float(s(lane.outer_radius)), y),
                 f"{lane.name} {format_length(lane.width, p.units)}", offset_pt=(0, 2))
        ax.axvline(0, color="black", lw=0.6, ls=(0, (10, 3, 2, 3)))
        ax.set_xlabel(f"distance from the helix axis ({s.name}); right: bearing {_wcb(bearing, ev)}")
        ax.set_ylabel(f"level ({s.name})")
        ax.grid(True, lw=0.3, color="#E4E4E4")
        handles: list[Any] = [Patch(fc=THREAD_COLOURS[i % 4], alpha=0.35, ec=THREAD_COLOURS[i % 4],
                                    label=f"{t.name} slab, one per turn") for i, t in enumerate(h.threads)]
        if st.hanging_depth > 0:
            handles.append(Patch(fc="none", ec=PALETTE["soffit"], hatch="....", label="hanging structure"))
        handles.append(Line2D([], [], color="black", lw=2, label="kerb (schematic upstand)"))
        if any(len(t.lanes) > 1 for t in h.threads):
            handles.append(Patch(fc="#555555", ec="black", label="central kerb"))
        if h.core_radius > 0:
            handles.append(Patch(fc="#F0F0F0", ec=PALETTE["structure"], label="central core or void"))
        if wall > 0:
            handles.append(Patch(fc=PALETTE["slab"], ec=PALETTE["structure"], hatch="xx", label="outer wall"))
        bx0 = 24.0
        _legend(fig, ax, handles, bx0, 57.0, ncol=2)
        cf = h.threads[0].cross_fall
        lines = [f"Section A-A: the cut marked on the plan (sheet {_NUMBER['plan']:02d}).",
                 f"Cross-fall {100 * abs(cf):.1f} % "
                 f"{'falling to the centre' if cf > 0 else 'falling outward' if cf < 0 else '(none)'}.",
                 f"Slab {format_length(st.slab_depth, p.units)}, hanging {format_length(st.hanging_depth, p.units)}.",
                 "Levels: inner kerb above each slab, outer kerb below it.", "True scale, no vertical exaggeration."]
        _note(fig, 150.0, 57.0, _wrap_lines(lines, 70.0, SMALL), linespacing=1.25)
        _declutter(fig)
    return fig


# ----------------------------------------------------------------------------------
# Vehicle clearances


def _vehicle_body(v: Any, path: Any, s_a: float, facing: str) -> tuple[list, list, tuple[float, float], Callable]:
    """Side view of the vehicle as the check models it, placed with its lower contact
    at ``s_a``: the underbody at the ground clearance above the chord between the wheel
    contacts, the overhang ends at their clearances, and the roof a line at the vehicle's
    height above the chord from end to end.  Returns the outline, the wheel contacts, the
    chord direction and ``roof(s)``, the roof line's level at path position ``s``."""
    from .vehicle_clearance import place
    s_a, za, s_b, zb, us, uz = (float(x[0]) for x in place(v, path, [s_a], facing))
    nx, nz = -uz, us
    if facing == "up":
        (l_lo, h_lo), (l_hi, h_hi) = (v.rear_overhang, v.rear_overhang_clearance), \
            (v.front_overhang, v.front_overhang_clearance)
    else:
        (l_lo, h_lo), (l_hi, h_hi) = (v.front_overhang, v.front_overhang_clearance), \
            (v.rear_overhang, v.rear_overhang_clearance)
    hh = v.ground_clearance or 0.1
    h_lo = h_lo if h_lo is not None else hh
    h_hi = h_hi if h_hi is not None else hh

    def pt(base_s: float, base_z: float, along: float, up: float) -> tuple[float, float]:
        return (base_s + along * us + up * nx, base_z + along * uz + up * nz)

    outline = [pt(s_a, za, -l_lo, h_lo), pt(s_a, za, 0.0, hh), pt(s_b, zb, 0.0, hh), pt(s_b, zb, l_hi, h_hi),
               pt(s_b, zb, l_hi, v.height), pt(s_a, za, -l_lo, v.height)]
    slope = uz / us

    def roof(s_: float) -> float:
        # The roof line through the point H above the lower contact, along the chord.
        r0s, r0z = pt(s_a, za, 0.0, v.height)
        return r0z + slope * (s_ - r0s)

    return outline, [(s_a, za), (s_b, zb)], (us, uz), roof


def clearance_figure(ev: Evaluation) -> Figure:
    """Elevation along the governing wheel path (underbody or overhang) and body side
    (roof) on A3 at a true scale, with the vehicle at its critical position, its
    direction of travel, and each clearance dimensioned at the point it is measured."""
    from .vehicle_clearance import PathProfile
    p, h, v = ev.project, ev.helix, ev.project.vehicle
    s = _Scale(p.units)
    cases = [(kind, vc, label) for kind, vc, label in
             (("ground", ev.ground, "Underbody and overhang clearance"), ("roof", ev.roof, "Roof clearance"))
             if vc is not None]
    span = v.length + 1.5
    npan = max(len(cases), 1)
    panel_h = (283.0 - 64.0 - 16.0 * (npan - 1)) / npan
    heights = []
    for kind, vc, _ in cases:
        t = h.threads[vc.thread]
        path = PathProfile(t.profile, vc.radius)
        xs = np.linspace(vc.contact.s_point - span, vc.contact.s_point + span, 50)
        zg = path.z(xs)
        heights.append(float(np.max(zg) - np.min(zg)) + v.height + (1.6 if kind == "roof" else 0.9))
    n = choose_scale((2 * span, max(heights or [1.0])), (345.0, panel_h - 8.0))
    with _styled():
        fig, sheet = _sheet(p, "clearance", f"Clearances of the design vehicle {v.name}", f"1:{n} at A3",
                            (n, s.unit_m, s.name))
        if not cases:
            _note(fig, 40.0, 200.0, "No vehicle clearances were computed for this design.", fontsize=9)
        kinds_drawn: set[str] = set()
        soffit_drawn = False
        for j, (kind, vc, label) in enumerate(cases):
            top = 283.0 - j * (panel_h + 16.0)
            ax = axes_mm(fig, sheet, (40.0, top - panel_h, 400.0, top - 6.0))
            t = h.threads[vc.thread]
            path = PathProfile(t.profile, vc.radius)
            c = vc.contact
            xs = np.linspace(c.s_point - span, c.s_point + span, 1200)
            xs = np.unique(np.concatenate([xs, path.breaks[(path.breaks > xs[0]) & (path.breaks < xs[-1])]]))
            zg = path.z(xs)
            zc = float(path.z(c.s_point))
            up = 1.0 if kind == "ground" else 1.6
            set_true_scale(ax, n, (float(s(c.s_point)), float(s(zc + 0.5 * v.height + 0.2 * up))), s.unit_m)
            ylo = ax.get_ylim()[0]
            xl = ax.get_xlim()  # the path across the whole view, its breakpoints included
            xs = np.linspace(xl[0] / s.factor, xl[1] / s.factor, 1600)
            xs = np.unique(np.concatenate([xs, path.breaks[(path.breaks > xs[0]) & (path.breaks < xs[-1])]]))
            zg = path.z(xs)
            ax.fill_between(s(xs), ylo, s(zg), color=PALETTE["slab"], lw=0, zorder=1)
            ax.plot(s(xs), s(zg), color="black", lw=1.3, zorder=2)
            for kind_, _st, a, b in t.profile.segments():
                if kind_ != "run":
                    xa, xb = vc.radius * (a - t.profile.start), vc.radius * (b - t.profile.start)
                    if xb > xs[0] and xa < xs[-1]:
                        ax.axvspan(float(s(max(xa, xs[0]))), float(s(min(xb, xs[-1]))), color=PALETTE[kind_],
                                   lw=0, zorder=0)
                        kinds_drawn.add(kind_)
            theta = path.theta(xs)
            clear, _, _ = headroom(h, p.structure, vc.thread, theta, vc.radius)
            soffit = t.profile.level(theta) + clear
            if np.any(np.isfinite(soffit)):
                ax.plot(s(xs), s(np.where(np.isfinite(soffit), soffit, np.nan)), color=PALETTE["soffit"], lw=1.3,
                        zorder=2)
                top_ = np.where(np.isfinite(soffit), soffit + p.structure.depth, np.nan)
                ax.fill_between(s(xs), s(soffit), s(top_), where=np.isfinite(soffit), color=PALETTE["soffit"],
                                alpha=0.3, lw=0, zorder=1)
                soffit_drawn = True
            outline, wheels, (us, uz), roof = _vehicle_body(v, path, c.s_rear, c.facing)
            ax.add_patch(Polygon([(float(s(a)), float(s(b))) for a, b in outline], closed=True,
                                 fc="#FFFFFF", ec=PALETTE["lane"], lw=1.2, zorder=4))
            wr = min(0.32, 0.8 * (v.ground_clearance or 0.15))
            for ws, wz in wheels:
                ax.add_patch(Circle((float(s(ws - wr * uz)), float(s(wz + wr * us))), float(s(wr)), fc="#333333",
                                    ec="black", zorder=5))
            # The front of the body, and the direction of travel: up or down the ramp.
            front = outline[3] if c.facing == "up" else outline[0]
            back = outline[0] if c.facing == "up" else outline[3]
            fx, fz = front
            sgn = 1.0 if fx > back[0] else -1.0
            ax.add_patch(Polygon([(float(s(fx - sgn * 0.35)), float(s(fz + 0.12))),
                                  (float(s(fx - sgn * 0.35)), float(s(fz + 0.58))), (float(s(fx)), float(s(fz + 0.35)))],
                                 closed=True,
                                 fc=PALETTE["lane"], ec="none", zorder=5))
            mid_s = 0.5 * (outline[1][0] + outline[2][0])
            ztop = roof(mid_s)
            ax.annotate("", (float(s(mid_s + sgn * 1.2)), float(s(ztop - 0.45 * v.height))),
                        (float(s(mid_s - sgn * 1.2)), float(s(ztop - 0.45 * v.height))),
                        arrowprops=dict(arrowstyle="-|>", color=PALETTE["lane"], lw=1.6, mutation_scale=12), zorder=6)
            ax.text(float(s(mid_s)), float(s(ztop - 0.45 * v.height - 0.12)),
                    f"front {'up' if c.facing == 'up' else 'down'} the ramp", fontsize=SMALL, ha="center", va="top",
                    color=PALETTE["lane"], zorder=6)
            # The governing clearance, dimensioned where it is measured.
            chk = ev.check("underbody_clearance" if kind == "ground" else "roof_clearance")
            sp = c.s_point
            if kind == "ground":
                z0 = float(path.z(sp))
                z1 = z0 + c.clearance / max(us, 1e-9)
            else:
                z0 = roof(sp)
                z1 = z0 + c.clearance / max(us, 1e-9)
            x = float(s(sp))
            ax.annotate("", (x, float(s(z1))), (x, float(s(z0))),
                        arrowprops=dict(arrowstyle="<|-|>", color=PALETTE["critical"], lw=1.2, shrinkA=0, shrinkB=0,
                                        mutation_scale=7), zorder=7)
            ax.plot([x], [float(s(z0))], "o", color=PALETTE["critical"], ms=3, zorder=8)
            ax.annotate(f"{c.part}: {format_length(c.clearance, p.units)}\n"
                        f"limit {format_length(chk.limit or 0.0, p.units)}, {chk.status}",
                        (x, float(s(z0 if kind == "ground" else 0.5 * (z0 + z1)))),
                        (0, -22) if kind == "ground" else (14, 0), textcoords="offset points",
                        fontsize=SMALL, ha="center" if kind == "ground" else "left", va="top" if kind == "ground"
                        else "center", color=PALETTE["critical"],
                        zorder=8, arrowprops=dict(arrowstyle="-", color=PALETTE["critical"], lw=0.6),
                        bbox=dict(boxstyle="round,pad=0.2", fc="white", ec=PALETTE["critical"], lw=0.6))
            ax.set_title(f"{label}: {t.name}, {vc.lane}, {vc.line} at r = {format_length(vc.radius, p.units)}",
                         loc="left", fontsize=8.5)
            ax.set_xlabel(f"distance along the path ({s.name})", labelpad=1)
            ax.set_ylabel(f"level ({s.name})")
            ax.grid(True, lw=0.3, color="#E4E4E4")
            if j == 0:
                first = ax
        if cases:
            handles: list[Any] = [Line2D([], [], color="black", lw=1.3, label="running surface on the path"),
                                  Patch(fc=PALETTE["slab"], label="ground under the path"),
                                  Patch(fc="white", ec=PALETTE["lane"], label=f"{v.name} as checked (roof a line "
                                                                              "at its height)"),
                                  Patch(fc=PALETTE["lane"], label="front of the vehicle; arrow: direction of travel"),
                                  Line2D([], [], color=PALETTE["critical"], marker="o", lw=1.2,
                                         label="clearance, at the point it is measured")]
            if soffit_drawn:
                handles.insert(2, Patch(fc=PALETTE["soffit"], alpha=0.3, ec=PALETTE["soffit"],
                                        label="structure overhead (soffit line)"))
            handles += [Patch(fc=PALETTE[k], label=k) for k in ("landing", "transition") if k in kinds_drawn]
            _legend(fig, first, handles, 24.0, 58.0, ncol=2)
        _note(fig, 24.0, 30.0, _wrap_lines(
            ["True scale, no exaggeration. Wheels are drawn for orientation; the check treats tyre contacts as "
             "points. Underbody: normal to the chord between the wheels; overhangs: normal to the surface under "
             "them; roof: the vertical gap to the soffit times the cosine of the body's pitch."], 200.0, SMALL),
            color="#333333")
        _declutter(fig)
    return fig


# ----------------------------------------------------------------------------------
# Gradient across the carriageway (a graph, not to scale)


def gradient_figure(ev: Evaluation) -> Figure:
    """Longitudinal gradient (along the direction of travel) against the radius across
    the carriageway, for the steepest storey of each thread, with the wheel paths and
    the rule set's limits on their reference lines.  A4, not to scale."""
    from .checks import reference_radii, storey_max_slope
    from .evaluate import wheel_paths
    p, h = ev.project, ev.helix
    s = _Scale(p.units)
    styles = ("-", (0, (6, 3)), (0, (2, 2)), (0, (8, 2, 2, 2)))
    markers = ("o", "s", "D", "^")
    with _styled():
        fig, sheet = _sheet(p, "gradient", "Gradient along the direction of travel, across the ramp's width",
                            "not to scale (graph)", None)
        ax = axes_mm(fig, sheet, (38.0, 64.0, 186.0, 190.0))
        rises = p.storey_heights
        top = 0.0
        handles: list[Any] = []
        for i, t in enumerate(h.threads):
            col = THREAD_COLOURS[i % 4]
            slopes = [storey_max_slope(t, k) for k in range(len(rises))]
            k = int(np.argmax(slopes))
            radii = np.linspace(t.inner_radius, t.outer_radius, 200)
            g = 100 * slopes[k] / radii
            top = max(top, float(g.max()))
            # Threads with the same curve stay visible: each its own line style and markers
            # placed at its own offset along the curve, the first drawn widest underneath.
            ax.plot(s(radii), g, color=col, lw=2.6 - 0.8 * i, ls=styles[i % 4], marker=markers[i % 4], ms=4,
                    markevery=(8 + 12 * i, 40), zorder=3 + i)
            handles.append(Line2D([], [], color=col, lw=2.6 - 0.8 * i, ls=styles[i % 4], marker=markers[i % 4], ms=4,
                                  label=f"{t.name}: {p.levels[t.levels[k]].name} to {p.levels[t.levels[k + 1]].name} "
                                        "(steepest storey)"))
            for name, rw in wheel_paths(p, t).items():
                ax.plot([s(rw)], [100 * slopes[k] / rw], "o", color="#444444", mfc="white", ms=5, zorder=8)
            for lim in p.rules.gradient:
                gl = 100 * lim.max_for_rise(rises[k])
                for name, rr in reference_radii(t, lim):
                    ax.plot([s(rr)], [gl], marker="v", color=PALETTE["critical"], ms=8, ls="none", zorder=9)
                    ax.axvline(float(s(rr)), color=PALETTE["critical"], lw=0.7, ls=":")
                top = max(top, gl)
            ax.axvspan(float(s(t.inner_radius)), float(s(t.outer_radius)), color=PALETTE["fill"], alpha=0.35, lw=0)
        ax.set_ylim(0, top * 1.15)
        ax.set_xlabel(f"radius from the helix axis ({s.name})")
        ax.set_ylabel("gradient along the direction of travel (%)")
        ax.grid(True, lw=0.3, color="#E4E4E4")
        handles += [Line2D([], [], marker="o", color="#444444", mfc="white", ls="none",
                           label="wheel paths of the design vehicle"),
                    Line2D([], [], marker="v", color=PALETTE["critical"], ls="none", label="rule limit on its reference line"),
                    Patch(fc=PALETTE["fill"], alpha=0.35, label="carriageway (kerb to kerb)")]
        _note(fig, 194.0, 196.0, "Legend", fontsize=8.5, fontweight="bold")
        _legend(fig, ax, _wrapped(handles, 78.0), 194.0, 191.0)
        limits = []
        for lim in p.rules.gradient:
            for name, rr in reference_radii(h.threads[0], lim):
                k = int(np.argmax([storey_max_slope(h.threads[0], q) for q in range(len(rises))]))
                limits.append(f"limit {_grade_text(lim.max_for_rise(rises[k]))} on the {name} "
                              f"(r = {format_length(rr, p.units)})")
        lines = ["This is the grade along each circle (the direction of travel), not the cross-fall.",
                 "On a helicoid every radial line is level, so the gradient at radius r is z'(theta) / r: "
                 "steeper at the inner kerb, flatter outside."] + limits
        _note(fig, 194.0, 110.0, _wrap_lines(lines, 90.0, SMALL), linespacing=1.25)
        _declutter(fig)
    return fig
def _savefig(fig, fmt: str, dpi: int = PNG_DPI) -> bytes:
    buf = io.BytesIO()
    meta = {"Date": None} if fmt == "svg" else ({"Software": None} if fmt == "png" else
                                                 {"CreationDate": None, "ModDate": None})
    extra = {"pil_kwargs": {"compress_level": 1}} if fmt == "png" else {}
    fig.savefig(buf, format=fmt, dpi=dpi if fmt == "png" else 72, metadata=meta, **extra)
    if fmt == "svg":
        # SVG text collapses runs of spaces unless told not to: a note's indented second
        # line keeps its indent, as on the PNG and the PDF.
        return buf.getvalue().replace(b"<svg ", b'<svg xml:space="preserve" ', 1)
    return buf.getvalue()


def _save(fig, fmt: str, dpi: int = PNG_DPI) -> bytes:
    """``fig`` as ``fmt`` bytes (PNG at ``dpi``); a figure the renderer cannot draw (a
    glyph or path beyond its raster at the scale of the site, say) becomes a page that
    says so."""
    try:
        return _savefig(fig, fmt, dpi)
    except (RuntimeError, ValueError, OverflowError) as exc:
        title = getattr(fig, "_helix_title", "figure")
        with _styled():  # the title holds user text: no mathtext here either
            note = Figure(figsize=fig.get_size_inches())
            FigureCanvasAgg(note)
            note.suptitle(title, x=0.05, ha="left", fontsize=12, fontweight="bold")
            note.text(0.5, 0.5, "This figure cannot be drawn at the scale of this site and helix\n"
                      f"(the renderer stopped: {type(exc).__name__}). The checks and tables are unaffected.",
                      ha="center", va="center", fontsize=11)
            return _savefig(note, fmt, dpi)


def figure_bytes(name: str, fig, formats: tuple[str, ...] = ("png", "svg"), dpi: int = PNG_DPI) -> dict[str, bytes]:
    """``fig`` as ``name.png`` (at ``dpi``) and ``name.svg`` (those of ``formats``); the
    figure is closed."""
    try:
        with _styled():
            return {f"{name}.{fmt}": _save(fig, fmt, dpi) for fmt in ("png", "svg") if fmt in formats}
    finally:
        close_sheet(fig)


#: Figures of one design, in report order: file stem, maker, caption.
FIGURES = (
    ("plan", plan_figure, "Plan"),
    ("section", section_figure, "Unrolled sections along each lane's driving line"),
    ("cross_section", cross_section_figure, "Radial cross-section"),
    ("clearance", clearance_figure, "Design vehicle clearances"),
    ("gradient", gradient_figure, "Gradient across the carriageway"),
)


def render_all(ev: Evaluation, keep: dict | None = None, formats: tuple[str, ...] = ("png", "svg"),
               dpi: int = PNG_DPI) -> dict[str, bytes]:
    """Every figure of one design as PNG (at ``dpi``) and SVG (those of ``formats``),
    keyed by file name.

    With ``keep`` (a dict), the figures stay open in it by name, for the PDF report to
    use without drawing them again; the caller closes them."""
    figs: dict = {} if keep is None else keep
    try:
        out, job = start_render(ev, figs, formats, dpi)
        out.update(job.result())
        return out
    finally:
        if keep is None:
            for fig in figs.values():
                close_sheet(fig)


def start_render(ev: Evaluation, keep: dict, formats: tuple[str, ...] = ("png", "svg"),
                 dpi: int = PNG_DPI, also: dict[str, Callable[[], bytes]] | None = None
                 ) -> tuple[dict[str, bytes], "RenderJob"]:
    """Draw every figure of ``ev`` into ``keep`` (figures already in it, say the
    search's, are kept and saved too) and start a :class:`RenderJob` for their files in
    ``formats`` (``png``, ``svg``) and for the files of ``also`` (file name -> a function
    making its bytes from those figures: the PDF report): each figure is drawn once and
    saved as often as needed.  Returns the files made here (none, when the job has
    processes of its own) and the job; the caller works on (the exports, say) and then
    collects it."""
    for name, make, _ in FIGURES:
        if name not in keep:
            keep[name] = make(ev)
    job = RenderJob(keep, tuple(f for f in ("png", "svg") if f in formats), dpi, also)
    return {}, job


def _cores() -> int:
    import os
    return len(os.sched_getaffinity(0)) if hasattr(os, "sched_getaffinity") else (os.cpu_count() or 1)


def _workers(tasks: int) -> int:
    """Processes to save the figures in: every core but one (the PDF's, or the caller's
    for the exports)."""
    return max(0, min(tasks, _cores() - 1, 8))


class RenderJob:
    """Save figures as PNG and SVG, and make the files of ``also`` (the PDF report, laid
    out from the same figures), in forked child processes while the parent goes on (the
    exports): the PDF is the longest single task, so it gets a process of its own, started
    first, and the figure files are dealt to the other workers by their expected cost,
    largest first; each child sends its files back through a pipe.  Where fork is not
    available, on one core, or when a child fails, the files are made in this process
    instead: the bytes are the same either way.  Call :meth:`result` once."""

    def __init__(self, figs: dict, formats: tuple[str, ...] = ("png", "svg"), dpi: int = PNG_DPI,
                 also: dict[str, Callable[[], bytes]] | None = None):
        import os
        self.figs = dict(figs)
        self.dpi = dpi
        self.also = dict(also or {})
        self.tasks = [(n, f) for n in self.figs for f in formats]
        self.children: list[tuple[int, int, list[str]]] = []
        workers = _workers(len(self.tasks)) if hasattr(os, "fork") else 0
        if workers == 0 and (not self.also or _workers(len(self.also)) == 0 or not hasattr(os, "fork")):
            return
        # A PNG costs about five SVGs at 150 dpi and more above; A3 about twice A4.
        cost = lambda t: (5.0 * (dpi / 150.0) ** 2 if t[1] == "png" else 1.0) * (2.0 if SHEET_OF.get(t[0]) == "A3" else 1.0)
        shares: list[list[str]] = [[name] for name in self.also] + [[] for _ in range(workers)]
        loads = [0.0] * workers
        for task in sorted(self.tasks, key=cost, reverse=True):
            k = loads.index(min(loads))
            shares[len(self.also) + k].append(f"{task[0]}.{task[1]}")
            loads[k] += cost(task)
        for share in shares:
            if not share:
                continue
            try:
                r, w = os.pipe()
                pid = os.fork()
            except OSError:
                break
            if pid == 0:  # child: render, send, exit without running the parent's cleanup
                code = 1
                try:
                    import pickle
                    os.close(r)
                    data = pickle.dumps(self._render(share))
                    view = memoryview(data)
                    while view:
                        view = view[os.write(w, view):]
                    code = 0
                finally:
                    os._exit(code)
            os.close(w)
            self.children.append((pid, r, share))

    def _names(self) -> list[str]:
        return list(self.also) + [f"{n}.{f}" for n, f in self.tasks]

    def _render(self, names: list[str]) -> dict[str, bytes]:
        out = {}
        for name in names:
            if name in self.also:
                out[name] = self.also[name]()
            else:
                stem, fmt = name.rsplit(".", 1)
                with _styled():
                    out[name] = _save(self.figs[stem], fmt, self.dpi)
        return out

    def result(self) -> dict[str, bytes]:
        import os
        import pickle
        out: dict[str, bytes] = {}
        for pid, fd, share in self.children:
            chunks = []
            while True:
                chunk = os.read(fd, 1 << 20)
                if not chunk:
                    break
                chunks.append(chunk)
            os.close(fd)
            _, status = os.waitpid(pid, 0)
            if os.WIFEXITED(status) and os.WEXITSTATUS(status) == 0:
                try:
                    out.update(pickle.loads(b"".join(chunks)))
                except Exception:  # a broken stream: make them here instead
                    pass
        self.children = []
        names = self._names()
        out.update(self._render([n for n in names if n not in out]))
        return {n: out[n] for n in names}


#: The earlier name of :class:`RenderJob` (PNG files only).
PngJob = RenderJob


def close_sheet(fig: Figure) -> None:
    """Release a sheet's artists (sheets are not registered with pyplot)."""
    fig.clear()


def pareto_figure(result: Any) -> Figure:
    """Footprint against steepest gradient for every screened feasible design, by
    layout; the Pareto set (with drive length), each layout's choice, and each layout
    with no feasible design at its least-failing design.  A4, not to scale."""
    from .search import LAYOUT_TITLES
    p = result.project
    s = _Scale(p.units)
    markers = {"single-one-way": "o", "single-two-way": "s", "double": "D", "concentric": "^"}
    with _styled():
        fig, sheet = _sheet(p, "pareto", f"Design search: footprint against steepest gradient (objective "
                            f"{p.search.objective})", "not to scale (graph)", None)
        ax = axes_mm(fig, sheet, (38.0, 64.0, 186.0, 190.0))
        handles: list[Any] = []
        xs: list[float] = []
        layouts = sorted({c["layout"] for c in result.cloud})
        for i, lay in enumerate(layouts):
            pts = [c for c in result.cloud if c["layout"] == lay]
            dia = [float(v) for v in s([c["diameter_m"] for c in pts])]
            xs += dia
            ax.scatter(dia, [c["steepest_inner_pct"] for c in pts], s=14, marker=markers.get(lay, "o"),
                       color=THREAD_COLOURS[i % 4], alpha=0.45)
            handles.append(Line2D([], [], marker=markers.get(lay, "o"), color=THREAD_COLOURS[i % 4], alpha=0.6,
                                  ls="none", label=f"{LAYOUT_TITLES[lay]}: feasible screened designs"))
        if result.pareto:
            par = sorted(result.pareto, key=lambda c: c["diameter_m"])
            ax.scatter(s([c["diameter_m"] for c in par]), [c["steepest_inner_pct"] for c in par], s=42,
                       facecolors="none", edgecolors="black", lw=0.9)
            handles.append(Line2D([], [], marker="o", mfc="none", mec="black", ls="none", ms=7,
                                  label="Pareto set (with drive length)"))
        kinds = set()
        labels: list[tuple[float, float, str]] = []
        for o in result.options:
            if o.evaluation is None:
                continue
            ev = o.evaluation
            px, py = float(s(ev.helix.overall_diameter)), 100 * ev.max_gradient("inner kerb")
            xs.append(px)
            if o.feasible:
                star = result.options.index(o) == result.best
                kinds.add("best" if star else "layout")
                ax.plot([px], [py], marker="*" if star else "P", ms=15 if star else 10, color=PALETTE["critical"],
                        mec="black", ls="none", zorder=5)
                text = f"{LAYOUT_TITLES[o.layout]}:\n{'chosen' if star else 'best of layout'}"
            else:
                kinds.add("failed")
                ax.plot([px], [py], marker="X", ms=10, color=PALETTE["thread2"], mec="black", ls="none", zorder=5)
                n_fail = sum(1 for c in ev.checks if not c.ok)
                text = f"{LAYOUT_TITLES[o.layout]}:\nfails {n_fail} check{'s' if n_fail != 1 else ''}"
            labels.append((px, py, text))
        lo_x = min(xs) if xs else 0.0
        hi_x = max(xs) if xs else 1.0
        for px, py, text in labels:  # each label on the side of its point towards the middle
            right = px > 0.5 * (lo_x + hi_x)
            ax.annotate(text, (px, py), (-7 if right else 7, 5), textcoords="offset points", fontsize=SMALL,
                        ha="right" if right else "left", va="bottom",
                        bbox=dict(boxstyle="square,pad=0.1", fc="white", ec="none", alpha=0.85))
        if "best" in kinds:
            handles.append(Line2D([], [], marker="*", ms=11, color=PALETTE["critical"], mec="black", ls="none",
                                  label="chosen design"))
        if "layout" in kinds:
            handles.append(Line2D([], [], marker="P", ms=9, color=PALETTE["critical"], mec="black", ls="none",
                                  label="best design of a layout"))
        if "failed" in kinds:
            handles.append(Line2D([], [], marker="X", ms=9, color=PALETTE["thread2"], mec="black", ls="none",
                                  label="layout with no feasible design: its least-failing design"))
        usable = footprint_span(p.site)  # min(usable) for the rectangle
        ax.axvline(float(s(usable)), color=PALETTE["footprint"], lw=1.4, ls="--")
        xs.append(float(s(usable)))
        handles.append(Line2D([], [], color=PALETTE["footprint"], lw=1.4, ls="--", label="usable footprint"))
        if xs:
            lo, hi = min(xs), max(xs)
            pad = 0.08 * max(hi - lo, 1.0)
            ax.set_xlim(lo - pad, hi + pad)
        ax.margins(y=0.14)
        ax.set_xlabel(f"overall diameter with structure ({s.name})")
        ax.set_ylabel("steepest gradient at the inner kerb (%)")
        ax.grid(True, lw=0.3, color="#E4E4E4")
        _note(fig, 194.0, 196.0, "Legend", fontsize=8.5, fontweight="bold")
        _legend(fig, ax, _wrapped(handles, 78.0), 194.0, 191.0)
        failed = [LAYOUT_TITLES[o.layout] for o in result.options if not o.feasible]
        if failed:
            _note(fig, 194.0, 110.0, _wrap_lines(["No feasible design: " + ", ".join(failed) +
                                                  " (see the explanation in the report's table)."], 90.0, SMALL))
        _declutter(fig)
    return fig


def options_figure(result: Any) -> Figure:
    """The options of a design search side by side in plan on A3 at one true scale:
    each helix's kerbs, lane centre lines, structure, core and the plot square it
    takes, inside the site, with its key figures (status, radius, diameter, grades,
    capacity, drive time, deck, bays taken) below."""
    from .checks import check_title
    from .comparison import compare_options
    from .results import SHORT_TITLES, format_area
    from .units import format_duration
    from .search import LAYOUT_TITLES
    p = result.project
    u = p.units
    s = _Scale(u)
    shown = [(i, o, c) for i, (o, c) in enumerate(zip(result.options, compare_options(result)), 1)
             if o.evaluation is not None and c is not None]
    def extent(h: Any) -> tuple[float, float, float, float]:  # the site and the helix's outside face
        (cx, cy), r = h.centre, h.structure_radius
        return (min(0.0, cx - r), min(0.0, cy - r), max(p.site.width, cx + r), max(p.site.depth, cy + r))

    boxes = [extent(o.evaluation.helix) for _, o, _ in shown]
    span_x = max([b[2] - b[0] for b in boxes] + [p.site.width]) + 0.5
    span_y = max([b[3] - b[1] for b in boxes] + [p.site.depth]) + 0.5
    left, right, top, gap = 26.0, 406.0, 278.0, 6.0
    k_n = max(len(shown), 1)
    side = min((right - left - gap * (k_n - 1)) / k_n, 150.0)
    n = drawing_scale((span_x, span_y), (side, 150.0))
    panel_h = min(span_y * 1000.0 / n + 6.0, 150.0)
    with _styled():
        fig, sheet = _sheet(p, "options", f"Options in plan at one scale (objective {p.search.objective})",
                            f"1:{n} at {SHEET_OF['options']}", (n, s.unit_m, s.name))
        if not shown:
            _note(fig, 40.0, 200.0, "No layout has a design to draw.", fontsize=9)
            return fig
        x_start = left + 0.5 * ((right - left) - (k_n * side + gap * (k_n - 1)))
        for k, (rank, o, c) in enumerate(shown):
            ev = o.evaluation
            h = ev.helix
            cx, cy = h.centre
            bx = x_start + k * (side + gap)
            ax = axes_mm(fig, sheet, (bx, top - panel_h, bx + side, top))
            b = extent(h)
            set_true_scale(ax, n, (float(s(0.5 * (b[0] + b[2]))), float(s(0.5 * (b[1] + b[3])))), s.unit_m)
            ax.set_xticks([])
            ax.set_yticks([])
            if not p.site.is_rectangle:
                _plot_polygon(ax, p, s, 1.2)
            else:
                ax.add_patch(Rectangle((0, 0), float(s(p.site.width)), float(s(p.site.depth)), fill=False,
                                       ec=PALETTE["footprint"], lw=1.2))
            m = p.site.margin
            if m > 0 and p.site.is_rectangle:
                ax.add_patch(Rectangle((float(s(m)), float(s(m))), float(s(p.site.width - 2 * m)),
                                       float(s(p.site.depth - 2 * m)), fill=False, ec=PALETTE["footprint"],
                                       lw=0.8, ls="--"))
            sq = c.quantities.plot_side
            ax.add_patch(Rectangle((float(s(cx - 0.5 * sq)), float(s(cy - 0.5 * sq))), float(s(sq)),
                                   float(s(sq)), fill=False, ec=PALETTE["structure"], lw=0.7, ls=":"))
            ax.add_patch(Circle((float(s(cx)), float(s(cy))), float(s(h.structure_radius)), fill=False,
                                ec=PALETTE["structure"], lw=2.0))
            if h.core_radius > 0:
                ax.add_patch(Circle((float(s(cx)), float(s(cy))), float(s(h.core_radius)), fc="#EEEEEE",
                                    ec=PALETTE["structure"], lw=1.0))
            for j, t in enumerate(h.threads):
                colour = THREAD_COLOURS[j % 4]
                ax.add_patch(Wedge((float(s(cx)), float(s(cy))), float(s(t.outer_radius)), 0, 360,
                                   width=float(s(t.width)), fc=PALETTE["fill"], ec=colour, lw=1.0, alpha=0.9))
                for ln in t.lanes:
                    ax.add_patch(Circle((float(s(cx)), float(s(cy))), float(s(ln.centre_radius)), fill=False,
                                        ec=colour, lw=0.8, ls=(0, (4, 3))))
            ok = o.feasible and ev.ok
            best = " (chosen)" if result.best is not None and rank == result.best + 1 else ""
            _note(fig, bx, top + 6.0, fit_text(f"{rank}. {LAYOUT_TITLES[o.layout]}{best}", side, 9.0),
                  fontsize=9.0, fontweight="bold", color="black" if ok else PALETTE["thread2"])
            t = c.traffic
            down = t.down_time()
            status = "passes every check" if ok else \
                "fails: " + ", ".join(check_title(x.id).lower() for x in ev.checks if not x.ok)
            lines = [
                status,
                f"centre radius {format_length(h.threads[0].centre_radius, u)}, "
                f"diameter {format_length(h.overall_diameter, u)}",
                f"steepest grade: inner kerb {100 * ev.max_gradient('inner kerb'):.1f} %, "
                f"centre line {100 * ev.max_gradient('centre line'):.1f} %",
                f"in / out {t.inbound:,.0f} / {t.outbound:,.0f} vehicles an hour",
                f"drive down {format_duration(down)}" if down is not None else "no way down",
                f"empty {t.bays} bays in {format_duration(t.empty_time)}" if t.empty_time is not None else "",
                f"deck {format_area(c.quantities.deck_area, u)}; takes {c.quantities.bays_per_level} bays a level",
            ]
            _note(fig, bx, top - panel_h - 4.0, _wrap_lines([x for x in lines if x], side, SMALL), linespacing=1.3)
        legend = ("Drawn per option, all at one scale: the plot (solid green) and its usable footprint (dashed), "
                  "each thread's running surface shaded between its kerbs (blue, vermilion), lane centre lines "
                  "dashed, the outside face of the structure (thick grey), the core (grey disc), and the plot "
                  "square the helix takes (dotted; used for the bays it displaces). "
                  + "; ".join(f"{r}: {SHORT_TITLES[o.layout]}" for r, o, _ in shown) + ".")
        _note(fig, left, sheet.block[3] - 2.0, _wrap_lines([legend], sheet.block[0] - left - 8.0, SMALL),
              linespacing=1.3, color="#333333")
        _declutter(fig)
    return fig
