"""Figures for a design report: plan, unrolled section and radial cross-section.

Every figure is drawn for A4 landscape at print size, in the project's units, with a
colour-blind-safe palette (Okabe and Ito, "Color Universal Design", 2008) that also
separates in greyscale by line style.  :func:`render_all` returns file contents in
memory so the caller can write them atomically.
"""
from __future__ import annotations

import io
import math
from typing import Any

import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402
from matplotlib.patches import Circle, FancyArrowPatch, Rectangle, Wedge  # noqa: E402

from .clearance import headroom  # noqa: E402
from .evaluate import Evaluation  # noqa: E402
from .units import FOOT, format_length, format_level  # noqa: E402

__all__ = ["plan_figure", "section_figure", "cross_section_figure", "clearance_figure", "pareto_figure",
           "gradient_figure", "figure_bytes", "FIGURES", "start_render", "PngJob", "render_all",
           "STYLE", "PALETTE"]

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
}
THREAD_COLOURS = ("#0072B2", "#D55E00", "#009E73", "#CC79A7")

STYLE: Any = {  # matplotlib types rc keys as literals; these are checked by matplotlib itself
    "font.family": "DejaVu Sans",
    "font.size": 9,
    "axes.titlesize": 11,
    "axes.labelsize": 9,
    "axes.linewidth": 0.8,
    "xtick.labelsize": 8,
    "ytick.labelsize": 8,
    "legend.fontsize": 8,
    "legend.frameon": False,
    "svg.hashsalt": "helix",
    "svg.fonttype": "path",
    "path.simplify": False,
    # User text (project and level names) is drawn as written: '$' is a dollar sign,
    # never the start of mathtext that could fail to parse.
    "text.parse_math": False,
    "text.usetex": False,
}
A4_LANDSCAPE = (11.69, 8.27)


class _Scale:
    """Drawing units: metres for metric projects, feet for imperial ones."""

    def __init__(self, units: str):
        self.units = units
        self.factor = 1.0 / FOOT if units == "imperial" else 1.0
        self.name = "ft" if units == "imperial" else "m"

    def __call__(self, x):
        return np.asarray(x) * self.factor


def _title(fig, ev: Evaluation, what: str) -> None:
    fig.suptitle(f"{ev.project.name}: {what}", x=0.02, ha="left", fontsize=12, fontweight="bold")
    fig.text(0.02, 0.935, f"{ev.helix.layout} helix, {ev.project.traffic}; rule set "
             f"{ev.project.rules.name}; design aid only: verify against the codes in force",
             fontsize=8, color="#444444")


def _scale_bar(ax, s: _Scale, x0: float, y0: float, span_drawing: float) -> None:
    nice = [1, 2, 5, 10, 20, 25, 50, 100]
    target = span_drawing / 4
    length = max([n for n in nice if n <= target] or [nice[0]])
    steps = 5 if length % 5 == 0 else 4
    seg = length / steps
    for i in range(steps):
        ax.add_patch(Rectangle((x0 + i * seg, y0), seg, 0.012 * span_drawing,
                               facecolor="black" if i % 2 == 0 else "white", edgecolor="black", lw=0.6))
    ax.text(x0, y0 - 0.015 * span_drawing, "0", ha="center", va="top", fontsize=8)
    ax.text(x0 + length, y0 - 0.015 * span_drawing, f"{length:g} {s.name}", ha="center", va="top", fontsize=8)


def plan_figure(ev: Evaluation):
    """Plan: kerbs, lane centre lines, travel direction, level connections, radii,
    footprint and a scale bar."""
    p, h = ev.project, ev.helix
    s = _Scale(p.units)
    cx, cy = h.centre
    with plt.rc_context(STYLE):
        fig, ax = plt.subplots(figsize=A4_LANDSCAPE)
        fig.subplots_adjust(left=0.06, right=0.70, top=0.90, bottom=0.08)
        _title(fig, ev, "plan")
        W, D = p.site.width, p.site.depth
        ax.add_patch(Rectangle((0, 0), s(W), s(D), fill=False, ec=PALETTE["footprint"], lw=1.6,
                               label="footprint"))
        m = p.site.margin
        if m > 0:
            ax.add_patch(Rectangle((s(m), s(m)), s(W - 2 * m), s(D - 2 * m), fill=False,
                                   ec=PALETTE["footprint"], lw=0.8, ls="--", label="footprint less margin"))
        # Structure: outer wall ring and the central core.
        r_wall_in = h.structure_radius - p.structure.wall_thickness
        if p.structure.wall_thickness > 0:
            ax.add_patch(Wedge((s(cx), s(cy)), s(h.structure_radius), 0, 360,
                               width=s(p.structure.wall_thickness), fc="#BDBDBD", ec=PALETTE["structure"],
                               lw=0.6, label="outer wall"))
        else:
            ax.add_patch(Circle((s(cx), s(cy)), s(r_wall_in), fill=False, ec=PALETTE["structure"], lw=1.0))
        if h.core_radius > 0:
            ax.add_patch(Circle((s(cx), s(cy)), s(h.core_radius), fc="#E0E0E0", ec=PALETTE["structure"],
                                lw=0.8, hatch="////", label="central core"))
        phi = np.linspace(0, 2 * math.pi, 721)
        for i, t in enumerate(h.threads):  # running surfaces first, lines over them
            ax.add_patch(Wedge((s(cx), s(cy)), s(t.outer_radius), 0, 360, width=s(t.width),
                               fc=PALETTE["fill"], ec="none", alpha=0.8))
        for i, t in enumerate(h.threads):
            col = THREAD_COLOURS[i % len(THREAD_COLOURS)]
            # Threads sharing an annulus (a double helix) get their travel arrows side by side.
            sharing = [j for j, u in enumerate(h.threads)
                       if abs(u.inner_radius - t.inner_radius) < 1e-9 and abs(u.outer_radius - t.outer_radius) < 1e-9]
            nudge = (sharing.index(i) - (len(sharing) - 1) / 2) * 0.3 * t.width
            for r in (t.inner_radius, t.outer_radius):
                ax.plot(s(cx + r * np.cos(phi)), s(cy + r * np.sin(phi)), color=PALETTE["kerb"], lw=1.3)
            if len(t.lanes) > 1:  # central kerb of a two-way helix
                a, b = t.lanes[0].outer_radius, t.lanes[1].inner_radius
                ax.add_patch(Wedge((s(cx), s(cy)), s(b), 0, 360, width=s(b - a), fc="#BDBDBD",
                                   ec=PALETTE["kerb"], lw=0.8, label="central kerb"))
            for lane in t.lanes:
                rc = lane.centre_radius + nudge
                if nudge == 0.0:
                    ax.plot(s(cx + rc * np.cos(phi)), s(cy + rc * np.sin(phi)), color=col, lw=0.9,
                            ls=(0, (8, 3, 2, 3)), label=f"{t.name}: {lane.name} centre line ({lane.direction})"
                            if len(t.lanes) > 1 else f"{t.name}: centre line ({lane.direction})")
                else:
                    from matplotlib.lines import Line2D
                    ax.add_line(Line2D([], [], color=col, marker=">", ls="none",
                                       label=f"{t.name}: direction of travel ({lane.direction})"))
                # Direction of travel: arrows along the lane, pointing the way traffic drives.
                sense = t.hand * (1 if "up" in lane.direction.split()[0] else -1)
                for k in range(6):
                    b0 = t.start_bearing + (k + 0.5) * math.pi / 3 + i * math.pi / 6
                    b1 = b0 + sense * 0.22
                    ax.add_patch(FancyArrowPatch(
                        (s(cx + rc * math.cos(b0)), s(cy + rc * math.sin(b0))),
                        (s(cx + rc * math.cos(b1)), s(cy + rc * math.sin(b1))),
                        connectionstyle=f"arc3,rad={0.11 * sense}", arrowstyle="-|>",
                        mutation_scale=11, color=col, lw=1.2))
        for t in h.threads:
            if sum(1 for u in h.threads if abs(u.centre_radius - t.centre_radius) < 1e-9) > 1:
                rc = t.centre_radius
                ax.plot(s(cx + rc * np.cos(phi)), s(cy + rc * np.sin(phi)), color="#555555", lw=0.8,
                        ls=(0, (8, 3, 2, 3)), label="centre line")
                break
        # Level connections: radial markers, one label per bearing listing its levels.
        groups: dict[int, list[tuple[float, str]]] = {}
        outer = h.outer_radius
        for i, t in enumerate(h.threads):
            for k, theta in enumerate(t.profile.connections):
                b = float(t.bearing(theta))
                key = int(round(math.degrees(b) % 360.0)) % 360
                lvl = p.levels[t.levels[k]]
                label = f"{lvl.name} {format_level(lvl.level, p.units)}"
                if len(h.threads) > 1:
                    label += f" ({t.name.split()[0]})"
                groups.setdefault(key, []).append((lvl.level, label))
                ax.plot([s(cx + t.inner_radius * math.cos(b)), s(cx + t.outer_radius * math.cos(b))],
                        [s(cy + t.inner_radius * math.sin(b)), s(cy + t.outer_radius * math.sin(b))],
                        color=PALETTE["critical"], lw=2.4, solid_capstyle="butt")
        for key, entries in groups.items():
            labels = [text for _, text in sorted(entries)]
            b = math.radians(key)
            rr = h.structure_radius + 0.06 * outer
            x, y = cx + rr * math.cos(b), cy + rr * math.sin(b)
            ha = "left" if math.cos(b) > 0.3 else ("right" if math.cos(b) < -0.3 else "center")
            va = "bottom" if math.sin(b) > 0.3 else ("top" if math.sin(b) < -0.3 else "center")
            ax.annotate("\n".join(labels), (s(cx + outer * math.cos(b)), s(cy + outer * math.sin(b))),
                        (s(x), s(y)), ha=ha, va=va, fontsize=7.5,
                        arrowprops=dict(arrowstyle="-", color=PALETTE["critical"], lw=0.6),
                        bbox=dict(boxstyle="round,pad=0.25", fc="white", ec=PALETTE["critical"], lw=0.6))
        # Floor approaches and exits: each lane's aisle centre where it meets the helix,
        # and where the least clear height over them lies.
        for k, a in enumerate(ev.approaches):
            xy = a.line.vertices
            ax.plot(s(xy[:, 0]), s(xy[:, 1]), color=PALETTE["structure"], lw=1.1, ls=(0, (1, 1.5)),
                    label="floor approach or exit (aisle centre)" if k == 0 else None)
        covered = [a for a in ev.approaches if math.isfinite(a.clear)]
        if covered:
            a = min(covered, key=lambda a_: a_.clear)
            x, y = a.line.at(a.distance, a.offset)
            ax.plot(s(x), s(y), "X", color=PALETTE["critical"], ms=8, mec="white", mew=0.6,
                    label=f"least clear height over an approach: {format_length(a.clear, p.units)}")
        # Radii, dimensioned along a free direction between connections.
        bearings = sorted(groups)
        free = _free_bearing(bearings)
        t0 = h.threads[0]
        dims = [("Ri", h.inner_radius), ("Ro", h.outer_radius)]
        for lane in t0.lanes:
            dims.append(("Rc" if len(t0.lanes) == 1 else f"Rc {lane.name.split()[0]}", lane.centre_radius))
        for j, (tag, r) in enumerate(sorted(dims, key=lambda d: d[1])):
            b = free + math.radians(14 * (j - (len(dims) - 1) / 2))
            ax.annotate("", (s(cx + r * math.cos(b)), s(cy + r * math.sin(b))), (s(cx), s(cy)),
                        arrowprops=dict(arrowstyle="-|>", color="#333333", lw=0.7, shrinkA=0, shrinkB=0))
            ax.text(s(cx + (r + 0.02 * outer) * math.cos(b)), s(cy + (r + 0.02 * outer) * math.sin(b)),
                    f"{tag} = {format_length(r, p.units)}", fontsize=7.5, rotation=0,
                    ha="left" if math.cos(b) >= 0 else "right", va="center",
                    bbox=dict(boxstyle="square,pad=0.1", fc="white", ec="none", alpha=0.85))
        ax.plot(s(cx), s(cy), "+", color="black", ms=8)
        ax.set_aspect("equal")
        # The view holds the footprint and the whole helix, whichever is larger: a
        # helix far bigger than its site is drawn overflowing it, not cut off.
        R = h.structure_radius
        x0, x1 = min(0.0, cx - R), max(W, cx + R)
        y0, y1 = min(0.0, cy - R), max(D, cy + R)
        pad = 0.05 * max(x1 - x0, y1 - y0)
        ax.set_xlim(s(x0 - pad), s(x1 + pad))
        ax.set_ylim(s(y0 - pad * 2.4), s(y1 + pad))
        ax.set_xlabel(f"x ({s.name})")
        ax.set_ylabel(f"y ({s.name})")
        ax.grid(True, lw=0.3, color="#DDDDDD")
        _scale_bar(ax, s, s(x0), s(y0 - pad * 1.5), s(x1 - x0))
        from matplotlib.lines import Line2D
        handles, _ = ax.get_legend_handles_labels()
        handles += [Line2D([], [], color=PALETTE["kerb"], lw=1.3, label="kerb"),
                    Line2D([], [], color=PALETTE["critical"], lw=2.4, label="level connection")]
        ax.legend(handles=handles, loc="upper left", bbox_to_anchor=(1.02, 1.0), borderaxespad=0)
        lines = [f"Overall diameter with structure: {format_length(h.overall_diameter, p.units)}",
                 f"Footprint: {format_length(W, p.units)} x {format_length(D, p.units)}",
                 f"Ascending {'anticlockwise' if t0.hand > 0 else 'clockwise'}",
                 "Plan bearings anticlockwise from +x", "Arrows: direction of travel"]
        fig.text(0.72, 0.30, "\n".join(lines), fontsize=8, va="top")
    return fig


def _free_bearing(bearings_deg: list[int]) -> float:
    """A bearing (rad) midway in the widest gap between connection bearings."""
    if not bearings_deg:
        return math.radians(45.0)
    b = sorted(bearings_deg) + [bearings_deg[0] + 360] if len(bearings_deg) > 1 else \
        [bearings_deg[0], bearings_deg[0] + 360]
    gaps = [(b[i + 1] - b[i], b[i]) for i in range(len(b) - 1)]
    width, start = max(gaps)
    return math.radians(start + width / 2)


def section_figure(ev: Evaluation):
    """Unrolled section along each thread's centre line: levels, soffit, headroom."""
    p, h = ev.project, ev.helix
    s = _Scale(p.units)
    with plt.rc_context(STYLE):
        n = len(h.threads)
        fig, axes = plt.subplots(n, 1, figsize=A4_LANDSCAPE, squeeze=False)
        fig.subplots_adjust(left=0.08, right=0.97, top=0.88, bottom=0.09, hspace=0.45)
        _title(fig, ev, "unrolled section along the centre line")
        for i, t in enumerate(h.threads):
            ax = axes[i, 0]
            col = THREAD_COLOURS[i % len(THREAD_COLOURS)]
            prof = t.profile
            theta = np.unique(np.concatenate([np.linspace(prof.start, prof.end, 3000), prof.t]))
            ch = t.chainage(theta)
            z = t.level(theta)
            clear, gap, _ = headroom(h, p.structure, i, theta, t.centre_radius)
            soffit = np.where(np.isfinite(clear), z + clear, np.nan)
            ax.fill_between(s(ch), s(z), s(soffit), where=np.isfinite(soffit), color=PALETTE["fill"],
                            lw=0, label="clear headroom")
            ax.plot(s(ch), s(z), color=col, lw=1.8, label="running surface (centre line)")
            ax.plot(s(ch), s(soffit), color=PALETTE["soffit"], lw=1.4, ls="--",
                    label="soffit of the structure above")
            # Floor levels and connections.
            for k, c in enumerate(prof.connections):
                lvl = p.levels[t.levels[k]]
                x = float(s(t.chainage(c)))
                ax.axhline(s(lvl.level), color="#BBBBBB", lw=0.6, ls=":", zorder=0)
                ax.plot([x], [s(lvl.level)], "o", color=PALETTE["critical"], ms=4, zorder=5)
                at_end = c > prof.start + 0.85 * (prof.end - prof.start)
                ax.annotate(f"{lvl.name}\n{format_level(lvl.level, p.units)}", (x, float(s(lvl.level))),
                            (-4 if at_end else 4, 6), textcoords="offset points", fontsize=7.5,
                            va="bottom", ha="right" if at_end else "left")
            # Segment boundaries (landing / transition / run).
            for kind, st, a, b in prof.segments():
                if kind != "run":
                    xa, xb = float(s(t.chainage(a))), float(s(t.chainage(b)))
                    ax.axvspan(xa, xb, color="#EEEEEE" if kind == "landing" else "#F6E8C3", lw=0,
                               zorder=0)
            # The smallest clear headroom on this thread, dimensioned.
            if np.any(np.isfinite(clear)):
                head = ev.headroom
                if head is not None and head.thread == i:
                    th_min = head.theta
                    c_min = float(headroom(h, p.structure, i, [th_min], t.centre_radius)[0][0])
                else:
                    k = int(np.nanargmin(np.where(np.isfinite(clear), clear, np.nan)))
                    th_min, c_min = float(theta[k]), float(clear[k])
                x = float(s(t.chainage(th_min)))
                z0 = float(t.level(th_min))
                ax.annotate("", (x, float(s(z0 + c_min))), (x, float(s(z0))),
                            arrowprops=dict(arrowstyle="<|-|>", color=PALETTE["critical"], lw=1.2,
                                            shrinkA=0, shrinkB=0))
                ax.annotate(f"min. clear headroom\n{format_length(c_min, p.units)} (centre line)",
                            (x, float(s(z0 + c_min))), (6, 4), textcoords="offset points",
                            fontsize=8, color=PALETTE["critical"], va="bottom", zorder=9,
                            bbox=dict(boxstyle="round,pad=0.2", fc="white", ec=PALETTE["critical"], lw=0.6))
            ax.set_title(f"{t.name}: r = {format_length(t.centre_radius, p.units)}, "
                         f"traffic {t.traffic}", loc="left")
            ax.set_xlabel(f"chainage along the centre line, in the direction of ascent ({s.name})")
            ax.set_ylabel(f"level ({s.name})")
            ax.grid(True, lw=0.3, color="#DDDDDD")
            ax.set_xlim(s(t.chainage(prof.start)), s(t.chainage(prof.end)))
            top = max(lv.level for lv in p.levels) + p.storey_heights[-1] * 0.6
            ax.set_ylim(s(p.levels[0].level - 0.6), s(top))
            if i == 0:
                from matplotlib.patches import Patch
                handles, _ = ax.get_legend_handles_labels()
                handles += [Patch(fc="#EEEEEE", label="landing"), Patch(fc="#F6E8C3", label="transition")]
                ax.legend(handles=handles, loc="upper left", ncol=5)
        fig.text(0.08, 0.02, "Vertical scale exaggerated. Shaded bands: landings (grey) and "
                 "transitions (sand). Headroom is measured at every plan position against the "
                 "surface overhead, less slab and hanging depth.", fontsize=7.5, color="#444444")
    return fig


def cross_section_figure(ev: Evaluation, bearing: float | None = None):
    """Radial section through the axis: every turn of every thread on both sides,
    kerbs, cross-fall, slab and hanging structure, and the clear height dimensioned.

    ``bearing`` (rad) is the plan direction of the right-hand half; by default the
    bearing of the smallest clear headroom.
    """
    p, h = ev.project, ev.helix
    s = _Scale(p.units)
    st = p.structure
    if bearing is None:
        if ev.headroom is not None:
            t_min = h.threads[ev.headroom.thread]
            bearing = float(t_min.bearing(ev.headroom.theta))
        else:
            bearing = h.threads[0].start_bearing
    kerb_h = 0.15
    with plt.rc_context(STYLE):
        fig, ax = plt.subplots(figsize=A4_LANDSCAPE)
        fig.subplots_adjust(left=0.07, right=0.80, top=0.88, bottom=0.09)
        _title(fig, ev, f"radial cross-section at bearing {math.degrees(bearing) % 360:.0f} deg "
                        f"(right) and {math.degrees(bearing + math.pi) % 360:.0f} deg (left)")
        R = h.structure_radius
        zmin = p.levels[0].level - 1.0
        zmax = p.levels[-1].level + 1.5 + (st.cover_soffit - p.levels[-1].level if st.cover_soffit else 0)
        for side in (1, -1):
            b = bearing if side > 0 else bearing + math.pi
            # Outer wall and central core.
            wall = p.structure.wall_thickness
            if wall > 0:
                ax.add_patch(Rectangle((s(R - wall) if side > 0 else -s(R), s(zmin)), s(wall),
                                       s(zmax - zmin), fc="#BDBDBD", ec=PALETTE["structure"], lw=0.6,
                                       hatch="xx", zorder=1))
            for i, t in enumerate(h.threads):
                col = THREAD_COLOURS[i % len(THREAD_COLOURS)]
                # Every unrolled angle of this thread that lies at plan bearing b.
                base = t.hand * (b - t.start_bearing)
                k0 = math.floor((t.profile.start - base) / (2 * math.pi))
                k1 = math.ceil((t.profile.end - base) / (2 * math.pi))
                for k in range(k0, k1 + 1):
                    th = base + 2 * math.pi * k
                    if not (t.profile.start - 1e-9 <= th <= t.profile.end + 1e-9):
                        continue
                    r = np.linspace(t.inner_radius, t.outer_radius, 20)
                    z = t.level(th, r)
                    x = side * r
                    ax.fill(np.concatenate([s(x), s(x[::-1])]),
                            np.concatenate([s(z), s(z[::-1] - st.slab_depth)]),
                            fc=col, alpha=0.35, ec=col, lw=0.8, zorder=3)
                    if st.hanging_depth > 0:
                        ax.fill(np.concatenate([s(x), s(x[::-1])]),
                                np.concatenate([s(z - st.slab_depth), s(z[::-1] - st.depth)]),
                                fc="none", ec=PALETTE["soffit"], lw=0.6, hatch="....", zorder=3)
                    ax.plot(s(x), s(z), color=col, lw=1.6, zorder=4)
                    for rk in (t.inner_radius, t.outer_radius):  # kerbs, schematic upstands
                        zk = float(t.level(th, rk))
                        ax.plot([s(side * rk)] * 2, [s(zk), s(zk + kerb_h)], color="black", lw=2.0, zorder=5)
                    zc = float(t.level(th))
                    ax.text(s(side * t.centre_radius), s(zc + 0.08), f"{zc:+.3f}" if p.units != "imperial"
                            else format_level(zc, p.units), ha="center", va="bottom", fontsize=7, zorder=6)
            if h.core_radius > 0:
                ax.add_patch(Rectangle((s(-h.core_radius) if side < 0 else 0, s(zmin)), s(h.core_radius),
                                       s(zmax - zmin), fc="#F0F0F0", ec=PALETTE["structure"], lw=0.6,
                                       zorder=1))
        if st.cover_soffit is not None:
            ax.add_patch(Rectangle((-s(R), s(st.cover_soffit)), s(2 * R), s(st.slab_depth), fc="#BDBDBD",
                                   ec=PALETTE["structure"], zorder=2))
        # Clear height at the governing point, if it lies in this section.
        if ev.headroom is not None:
            hp = ev.headroom
            t = h.threads[hp.thread]
            b_min = float(t.bearing(hp.theta))
            side = 1 if abs((b_min - bearing + math.pi) % (2 * math.pi) - math.pi) < 1e-6 else -1
            z0 = float(t.level(hp.theta, hp.radius))
            x = s(side * hp.radius)
            ax.annotate("", (x, s(z0 + hp.clear)), (x, s(z0)),
                        arrowprops=dict(arrowstyle="<|-|>", color=PALETTE["critical"], lw=1.4,
                                        shrinkA=0, shrinkB=0), zorder=7)
            ax.annotate(f"clear {format_length(hp.clear, p.units)}\n(gap {format_length(hp.gap, p.units)}"
                        f" less {format_length(st.depth, p.units)} structure)",
                        (x, s(z0 + 0.5 * hp.clear)), (-10 * side, 0), textcoords="offset points",
                        ha="right" if side > 0 else "left", va="center", fontsize=8, color=PALETTE["critical"],
                        bbox=dict(boxstyle="round,pad=0.2", fc="white", ec=PALETTE["critical"], lw=0.6), zorder=8)
        ax.axvline(0, color="black", lw=0.6, ls=(0, (10, 3, 2, 3)))
        ax.set_xlim(-s(R * 1.05), s(R * 1.05))
        ax.set_ylim(s(zmin), s(zmax))
        ax.set_aspect("equal")
        ax.set_xlabel(f"distance from the helix axis ({s.name})")
        ax.set_ylabel(f"level ({s.name})")
        ax.grid(True, lw=0.3, color="#DDDDDD")
        from matplotlib.lines import Line2D
        from matplotlib.patches import Patch
        handles: list[Any] = [Patch(fc=THREAD_COLOURS[i % 4], alpha=0.35, ec=THREAD_COLOURS[i % 4], label=f"{t.name} slab")
                   for i, t in enumerate(h.threads)]
        handles += [Patch(fc="none", ec=PALETTE["soffit"], hatch="....", label="hanging structure"),
                    Line2D([], [], color="black", lw=2, label="kerb (schematic)"),
                    Patch(fc="#F0F0F0", ec=PALETTE["structure"], label="central core or void"),
                    Patch(fc="#BDBDBD", ec=PALETTE["structure"], hatch="xx", label="outer wall")]
        ax.legend(handles=handles, loc="upper left", bbox_to_anchor=(1.01, 1.0), borderaxespad=0)
        cf = h.threads[0].cross_fall
        lines = [f"Cross-fall {100 * abs(cf):.1f} % "
                 f"{'falling to the centre' if cf > 0 else 'falling outward' if cf < 0 else '(none)'}",
                 f"Slab {format_length(st.slab_depth, p.units)}, hanging "
                 f"{format_length(st.hanging_depth, p.units)}",
                 "Levels at the centre line of each turn", "No vertical exaggeration"]
        fig.text(0.815, 0.50, "\n".join(lines), fontsize=8, va="top")
    return fig


def _vehicle_outline(v, path, s_a, facing):
    """Side-view outline of the vehicle (wheel contacts, underbody, overhang ends,
    roof) placed with its lower contact at ``s_a``, in path coordinates."""
    from .vehicle_clearance import place
    s_a, za, s_b, zb, us, uz = place(v, path, [s_a], facing)
    s_a, za, s_b, zb, us, uz = (float(x[0]) for x in (s_a, za, s_b, zb, us, uz))
    nx, nz = -uz, us
    if facing == "up":
        (l_lo, h_lo), (l_hi, h_hi) = (v.rear_overhang, v.rear_overhang_clearance), \
            (v.front_overhang, v.front_overhang_clearance)
    else:
        (l_lo, h_lo), (l_hi, h_hi) = (v.front_overhang, v.front_overhang_clearance), \
            (v.rear_overhang, v.rear_overhang_clearance)
    h = v.ground_clearance or 0.1
    h_lo = h_lo if h_lo is not None else h
    h_hi = h_hi if h_hi is not None else h

    def pt(base_s, base_z, along, up):
        return (base_s + along * us + up * nx, base_z + along * uz + up * nz)

    outline = [pt(s_a, za, -l_lo, h_lo), pt(s_a, za, 0.0, h), pt(s_b, zb, 0.0, h),
               pt(s_b, zb, l_hi, h_hi), pt(s_b, zb, l_hi, 0.75 * v.height), pt(s_b, zb, 0.2 * v.wheelbase, v.height),
               pt(s_a, za, 0.1 * v.wheelbase, v.height), pt(s_a, za, -l_lo, 0.8 * v.height)]
    wheels = [(s_a, za), (s_b, zb)]
    return outline, wheels, (us, uz)


def clearance_figure(ev: Evaluation):
    """Elevation along the governing wheel path (underbody or overhang) and body side
    (roof), with the vehicle drawn at its critical position and both clearances
    dimensioned.  True scale, no exaggeration."""
    from matplotlib.patches import Polygon
    from .vehicle_clearance import PathProfile
    p, h, v = ev.project, ev.helix, ev.project.vehicle
    s = _Scale(p.units)
    cases = [("ground", ev.ground, "underbody and overhang clearance"), ("roof", ev.roof, "roof clearance")]
    cases = [c for c in cases if c[1] is not None]
    with plt.rc_context(STYLE):
        fig, axes = plt.subplots(max(len(cases), 1), 1, figsize=A4_LANDSCAPE, squeeze=False)
        fig.subplots_adjust(left=0.08, right=0.97, top=0.86, bottom=0.08, hspace=0.45)
        _title(fig, ev, f"clearances of the design vehicle {v.name}")
        for ax, (kind, vc, label) in zip(axes[:, 0], cases):
            assert vc is not None  # cases without a contact were left out above
            t = h.threads[vc.thread]
            path = PathProfile(t.profile, vc.radius)
            c = vc.contact
            span = v.length + 6.0
            xs = np.linspace(c.s_point - span, c.s_point + span, 1200)
            xs = np.unique(np.concatenate([xs, path.breaks[(path.breaks > xs[0]) & (path.breaks < xs[-1])]]))
            zg = path.z(xs)
            ax.fill_between(s(xs), s(zg - 0.35), s(zg), color="#D9D9D9", lw=0)
            ax.plot(s(xs), s(zg), color="black", lw=1.4, label=f"running surface on the {vc.line}")
            for kind_, st, a, b in t.profile.segments():
                if kind_ != "run":
                    xa, xb = vc.radius * (a - t.profile.start), vc.radius * (b - t.profile.start)
                    if xb > xs[0] and xa < xs[-1]:
                        ax.axvspan(s(max(xa, xs[0])), s(min(xb, xs[-1])), color="#EEEEEE" if kind_ == "landing"
                                   else "#F6E8C3", lw=0, zorder=0)
            theta = path.theta(xs)
            clear, _, _ = headroom(h, p.structure, vc.thread, theta, vc.radius)
            soffit = t.profile.level(theta) + clear
            if np.any(np.isfinite(soffit)):
                ax.plot(s(xs), s(np.where(np.isfinite(soffit), soffit, np.nan)), color=PALETTE["soffit"],
                        lw=1.4, ls="--", label="soffit of the structure above")
                top = np.where(np.isfinite(soffit), soffit + p.structure.depth, np.nan)
                ax.fill_between(s(xs), s(soffit), s(top), where=np.isfinite(soffit), color=PALETTE["soffit"],
                                alpha=0.25, lw=0)
            outline, wheels, (us, uz) = _vehicle_outline(v, path, c.s_rear, c.facing)
            ax.add_patch(Polygon([(float(s(a)), float(s(b))) for a, b in outline], closed=True,
                                 fc=PALETTE["fill"], ec=PALETTE["lane"], lw=1.2, zorder=4,
                                 label=f"{v.name} facing {c.facing} the ramp"))
            wr = 0.32
            for ws, wz in wheels:
                ax.add_patch(Circle((float(s(ws - wr * uz)), float(s(wz + wr * us))), float(s(wr)), fc="#333333",
                                    ec="black", zorder=5))
            # Dimension the governing clearance at its point.
            zp = float(path.z(c.s_point))
            if kind == "ground":
                z0, z1 = zp, zp + c.clearance / max(us, 1e-9)
            else:
                soff = float(t.profile.level(path.theta(c.s_point)) +
                             headroom(h, p.structure, vc.thread, [float(path.theta(c.s_point))], vc.radius)[0][0])
                z0, z1 = soff - c.clearance / max(us, 1e-9), soff
            x = float(s(c.s_point))
            ax.annotate("", (x, float(s(z1))), (x, float(s(z0))),
                        arrowprops=dict(arrowstyle="<|-|>", color=PALETTE["critical"], lw=1.3, shrinkA=0, shrinkB=0),
                        zorder=7)
            chk = ev.check("underbody_clearance" if kind == "ground" else "roof_clearance")
            ax.annotate(f"{c.part}: {format_length(c.clearance, p.units)}\n"
                        f"limit {format_length(chk.limit or 0.0, p.units)}, {chk.status}",
                        (x, float(s(z1))), (10, 14), textcoords="offset points", fontsize=8,
                        color=PALETTE["critical"], zorder=8,
                        arrowprops=dict(arrowstyle="-", color=PALETTE["critical"], lw=0.6),
                        bbox=dict(boxstyle="round,pad=0.2", fc="white", ec=PALETTE["critical"], lw=0.6))
            ax.set_aspect("equal")
            ax.set_xlim(s(xs[0]), s(xs[-1]))
            zlo = float(np.min(zg)) - 0.4
            zhi = max(float(np.nanmax(zg)) + v.height + 0.6,
                      float(np.nanmax(np.where(np.isfinite(soffit), soffit, -np.inf))) + 0.2
                      if np.any(np.isfinite(soffit)) else -np.inf)
            ax.set_ylim(s(zlo), s(min(zhi, zlo + 0.45 * (xs[-1] - xs[0]))))
            ax.set_title(f"{label}: {t.name}, {vc.lane}, {vc.line} at r = {format_length(vc.radius, p.units)}",
                         loc="left")
            ax.set_xlabel(f"distance along the {vc.line} path ({s.name})")
            ax.set_ylabel(f"level ({s.name})")
            ax.grid(True, lw=0.3, color="#DDDDDD")
            ax.legend(loc="best", ncol=3, fontsize=7.5)
        fig.text(0.08, 0.02, "True scale. Wheels drawn for orientation; the check treats tyre contacts as points. "
                 "Shaded bands: landings (grey), transitions (sand).", fontsize=7.5, color="#444444")
    return fig


def gradient_figure(ev: Evaluation):
    """Gradient against radius across the carriageway for the steepest storey of each
    thread, with the rule set's limits on their reference lines and the wheel paths."""
    from .checks import reference_radii, storey_max_slope
    from .evaluate import wheel_paths
    p, h = ev.project, ev.helix
    s = _Scale(p.units)
    with plt.rc_context(STYLE):
        fig, ax = plt.subplots(figsize=A4_LANDSCAPE)
        fig.subplots_adjust(left=0.08, right=0.74, top=0.88, bottom=0.09)
        _title(fig, ev, "gradient across the carriageway")
        rises = p.storey_heights
        top = 0.0
        for i, t in enumerate(h.threads):
            col = THREAD_COLOURS[i % 4]
            slopes = [storey_max_slope(t, k) for k in range(len(rises))]
            k = int(np.argmax(slopes))
            r = np.linspace(t.inner_radius, t.outer_radius, 200)
            g = 100 * slopes[k] / r
            top = max(top, float(g.max()))
            ax.plot(s(r), g, color=col, lw=2.0, label=f"{t.name}: {p.levels[t.levels[k]].name} to "
                                                       f"{p.levels[t.levels[k + 1]].name} (steepest storey)")
            for name, rw in wheel_paths(p, t).items():
                ax.plot([s(rw)], [100 * slopes[k] / rw], "o", color=col, ms=5)
                ax.annotate(name, (float(s(rw)), 100 * slopes[k] / rw), (4, 4), textcoords="offset points",
                            fontsize=7, color=col)
            for lim in p.rules.gradient:
                gl = 100 * lim.max_for_rise(rises[k])
                for name, rr in reference_radii(t, lim):
                    ax.plot([s(rr)], [gl], marker="v", color=PALETTE["critical"], ms=9, ls="none")
                    ax.axvline(float(s(rr)), color=PALETTE["critical"], lw=0.7, ls=":")
                    ax.annotate(f"limit {gl:.2f} % on the {name}", (float(s(rr)), gl), (5, 5),
                                textcoords="offset points", fontsize=7.5, color=PALETTE["critical"])
                top = max(top, gl)
            ax.axvspan(float(s(t.inner_radius)), float(s(t.outer_radius)), color=PALETTE["fill"], alpha=0.35, lw=0)
        ax.set_ylim(0, top * 1.2)
        ax.set_xlabel(f"radius from the helix axis ({s.name})")
        ax.set_ylabel("gradient along the circle (%)")
        ax.grid(True, lw=0.3, color="#DDDDDD")
        from matplotlib.lines import Line2D
        handles, _ = ax.get_legend_handles_labels()
        handles += [Line2D([], [], marker="o", color="#444444", ls="none", label="wheel paths of the design vehicle"),
                    Line2D([], [], marker="v", color=PALETTE["critical"], ls="none",
                           label="rule limit on its reference line")]
        ax.legend(handles=handles, loc="upper left", bbox_to_anchor=(1.01, 1.0), borderaxespad=0)
        fig.text(0.755, 0.45, "On a helicoid every radial line is level,\nso the gradient at radius r is "
                 "z'(theta) / r:\nsteeper at the inner kerb, flatter outside.", fontsize=8, va="top")
    return fig


def _savefig(fig, fmt: str) -> bytes:
    buf = io.BytesIO()
    meta = {"Date": None} if fmt == "svg" else ({"Software": None} if fmt == "png" else
                                                 {"CreationDate": None, "ModDate": None})
    extra = {"pil_kwargs": {"compress_level": 1}} if fmt == "png" else {}
    fig.savefig(buf, format=fmt, dpi=300 if fmt == "png" else 72, metadata=meta, **extra)
    return buf.getvalue()


def _save(fig, fmt: str) -> bytes:
    """``fig`` as ``fmt`` bytes; a figure the renderer cannot draw (a glyph or path
    beyond its raster at the scale of the site, say) becomes a page that says so."""
    try:
        return _savefig(fig, fmt)
    except (RuntimeError, ValueError, OverflowError) as exc:
        title = fig._suptitle.get_text() if getattr(fig, "_suptitle", None) is not None else "figure"
        with plt.rc_context(STYLE):  # the title holds user text: no mathtext here either
            note = plt.figure(figsize=A4_LANDSCAPE)
            try:
                note.suptitle(title, x=0.02, ha="left", fontsize=12, fontweight="bold")
                note.text(0.5, 0.5, "This figure cannot be drawn at the scale of this site and helix\n"
                          f"(the renderer stopped: {type(exc).__name__}). The checks and tables are unaffected.",
                          ha="center", va="center", fontsize=11)
                return _savefig(note, fmt)
            finally:
                plt.close(note)


def figure_bytes(name: str, fig) -> dict[str, bytes]:
    """``fig`` as ``name.png`` (300 dpi) and ``name.svg``; the figure is closed."""
    try:
        with plt.rc_context(STYLE):
            return {f"{name}.png": _save(fig, "png"), f"{name}.svg": _save(fig, "svg")}
    finally:
        plt.close(fig)


#: Figures of one design, in report order: file stem, maker, caption.
FIGURES = (
    ("plan", plan_figure, "Plan"),
    ("section", section_figure, "Unrolled section along the centre line"),
    ("cross_section", cross_section_figure, "Radial cross-section"),
    ("clearance", clearance_figure, "Design vehicle clearances"),
    ("gradient", gradient_figure, "Gradient across the carriageway"),
)


def render_all(ev: Evaluation, keep: dict | None = None) -> dict[str, bytes]:
    """Every figure of one design as PNG (300 dpi) and SVG, keyed by file name.

    With ``keep`` (a dict), the figures stay open in it by name, for the PDF report to
    use without drawing them again; the caller closes them."""
    if keep is None:
        out: dict[str, bytes] = {}
        for name, make, _ in FIGURES:
            out.update(figure_bytes(name, make(ev)))
        return out
    out, job = start_render(ev, keep)
    out.update(job.result())
    return out


def start_render(ev: Evaluation, keep: dict) -> tuple[dict[str, bytes], "PngJob"]:
    """Draw every figure into ``keep``, return their SVGs and a running :class:`PngJob`
    for the PNGs: the caller works on (the PDF, say) and then collects them."""
    svg: dict[str, bytes] = {}
    for name, make, _ in FIGURES:
        keep[name] = make(ev)
    job = PngJob(keep)
    with plt.rc_context(STYLE):
        for name in keep:
            svg[f"{name}.svg"] = _save(keep[name], "svg")
    return svg, job


class PngJob:
    """Rasterise figures to 300-dpi PNG in a forked child process while the parent goes
    on (SVG, PDF): the rasterising is the slowest part of a report, and a second core
    halves the wall time.  Where fork is not available, or the child fails, the PNGs
    are made here instead.  Call :meth:`result` once."""

    def __init__(self, figs: dict):
        import os
        self.figs = dict(figs)
        self.pid = None
        self.read_fd = None
        if not hasattr(os, "fork"):
            return
        try:
            r, w = os.pipe()
            pid = os.fork()
        except OSError:
            return
        if pid == 0:  # child: render, send, exit without running the parent's cleanup
            code = 1
            try:
                import pickle
                os.close(r)
                with plt.rc_context(STYLE):
                    data = pickle.dumps({f"{n}.png": _save(f, "png") for n, f in self.figs.items()})
                view = memoryview(data)
                while view:
                    view = view[os.write(w, view):]
                code = 0
            finally:
                os._exit(code)
        os.close(w)
        self.pid, self.read_fd = pid, r

    def result(self) -> dict[str, bytes]:
        import os
        import pickle
        if self.pid is not None:
            assert self.read_fd is not None
            chunks = []
            while True:
                chunk = os.read(self.read_fd, 1 << 20)
                if not chunk:
                    break
                chunks.append(chunk)
            os.close(self.read_fd)
            _, status = os.waitpid(self.pid, 0)
            self.pid = None
            if os.WIFEXITED(status) and os.WEXITSTATUS(status) == 0:
                try:
                    return pickle.loads(b"".join(chunks))
                except Exception:  # a broken stream: make them here instead
                    pass
        with plt.rc_context(STYLE):
            return {f"{n}.png": _save(f, "png") for n, f in self.figs.items()}


def pareto_figure(result):
    """Footprint against steepest gradient for every screened feasible design, by
    layout; the Pareto set (with drive length) and each layout's choice marked."""
    from .search import LAYOUT_TITLES
    p = result.project
    s = _Scale(p.units)
    with plt.rc_context(STYLE):
        fig, ax = plt.subplots(figsize=A4_LANDSCAPE)
        fig.subplots_adjust(left=0.08, right=0.75, top=0.88, bottom=0.09)
        fig.suptitle(f"{p.name}: design search", x=0.02, ha="left", fontsize=12, fontweight="bold")
        fig.text(0.02, 0.935, f"objective {p.search.objective}; every feasible screened design; design aid "
                 "only: verify against the codes in force", fontsize=8, color="#444444")
        layouts = sorted({c["layout"] for c in result.cloud})
        markers = {"single-one-way": "o", "single-two-way": "s", "double": "D", "concentric": "^"}
        for i, lay in enumerate(layouts):
            pts = [c for c in result.cloud if c["layout"] == lay]
            ax.scatter(s([c["diameter_m"] for c in pts]), [c["steepest_inner_pct"] for c in pts], s=14,
                       marker=markers.get(lay, "o"), color=THREAD_COLOURS[i % 4], alpha=0.45,
                       label=LAYOUT_TITLES[lay])
        if result.pareto:
            par = sorted(result.pareto, key=lambda c: c["diameter_m"])
            ax.scatter(s([c["diameter_m"] for c in par]), [c["steepest_inner_pct"] for c in par], s=42,
                       facecolors="none", edgecolors="black", lw=0.9, label="Pareto set (with drive length)")
        for o in result.options:
            if o.feasible and o.evaluation is not None:
                ev = o.evaluation
                x, y = float(s(ev.helix.overall_diameter)), 100 * ev.max_gradient("inner kerb")
                star = result.options.index(o) == result.best
                ax.plot([x], [y], marker="*" if star else "P", ms=16 if star else 11, color=PALETTE["critical"],
                        mec="black", ls="none")
                ax.annotate(f"{LAYOUT_TITLES[o.layout]}\n{'best' if star else 'best of layout'}", (x, y),
                            (8, 8), textcoords="offset points", fontsize=8)
        usable = min(p.site.usable)
        ax.axvline(float(s(usable)), color=PALETTE["footprint"], lw=1.4, ls="--", label="usable footprint")
        failed = [LAYOUT_TITLES[o.layout] for o in result.options if not o.feasible]
        if failed:
            fig.text(0.76, 0.40, "No feasible design:\n" + "\n".join(failed) +
                     "\n(see the explanation in the table)", fontsize=8, va="top")
        ax.set_xlabel(f"overall diameter with structure ({s.name})")
        ax.set_ylabel("steepest gradient at the inner kerb (%)")
        ax.grid(True, lw=0.3, color="#DDDDDD")
        ax.legend(loc="upper left", bbox_to_anchor=(1.01, 1.0), borderaxespad=0)
    return fig


def options_figure(result):
    """The options of a design search side by side in plan at one scale: each helix's
    kerbs, lane centre lines, structure, core and the plot square it takes, inside the
    site, with its key figures (radius, diameter, grades, capacity, drive time, deck,
    bays taken, status) below."""
    import textwrap

    from .comparison import compare_options
    from .results import SHORT_TITLES, format_area, format_duration
    from .search import LAYOUT_TITLES
    p = result.project
    u = p.units
    s = _Scale(u)
    shown = [(i, o, c) for i, (o, c) in enumerate(zip(result.options, compare_options(result)), 1)
             if o.evaluation is not None and c is not None]
    with plt.rc_context(STYLE):
        fig = plt.figure(figsize=A4_LANDSCAPE)
        fig.suptitle(f"{p.name}: the options in plan at one scale", x=0.02, ha="left", fontsize=12,
                     fontweight="bold")
        fig.text(0.02, 0.935, f"objective {p.search.objective}; every option drawn to the same scale inside the "
                 "site (solid) and its usable footprint (dashed); design aid only: verify against the codes in force",
                 fontsize=8, color="#444444")
        if not shown:
            fig.text(0.5, 0.5, "No layout has a design to draw.", ha="center", fontsize=11)
            return fig
        half = 0.5 * max([p.site.width, p.site.depth] + [o.evaluation.helix.overall_diameter for _, o, _ in shown])
        half *= 1.04
        n = len(shown)
        gap = 0.02
        w = min((0.96 - gap * (n - 1)) / n, 0.5)
        x0 = 0.5 - 0.5 * (n * w + gap * (n - 1))
        ax_h = min(w * A4_LANDSCAPE[0] / A4_LANDSCAPE[1], 0.5)
        for k, (rank, o, c) in enumerate(shown):
            ev = o.evaluation
            h = ev.helix
            cx, cy = h.centre
            ax = fig.add_axes((x0 + k * (w + gap), 0.89 - ax_h, w, ax_h))
            ax.set_aspect("equal")
            ax.set_xlim(float(s(cx - half)), float(s(cx + half)))
            ax.set_ylim(float(s(cy - half)), float(s(cy + half)))
            ax.set_xticks([])
            ax.set_yticks([])
            ax.add_patch(Rectangle((0, 0), float(s(p.site.width)), float(s(p.site.depth)), fill=False,
                                   ec=PALETTE["footprint"], lw=1.2))
            m = p.site.margin
            ax.add_patch(Rectangle((float(s(m)), float(s(m))), float(s(p.site.width - 2 * m)),
                                   float(s(p.site.depth - 2 * m)), fill=False, ec=PALETTE["footprint"], lw=0.8,
                                   ls="--"))
            side = c.quantities.plot_side
            ax.add_patch(Rectangle((float(s(cx - 0.5 * side)), float(s(cy - 0.5 * side))), float(s(side)),
                                   float(s(side)), fill=False, ec=PALETTE["structure"], lw=0.7, ls=":"))
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
            best = " (best)" if result.best is not None and rank == result.best + 1 else ""
            ax.set_title(f"{rank}. {LAYOUT_TITLES[o.layout]}{best}", fontsize=10, fontweight="bold",
                         color="black" if ok else PALETTE["thread2"])
            t = c.traffic
            down = t.down_time()
            status = "PASS" if ok else "FAIL: " + ", ".join(x.id for x in ev.checks if not x.ok)
            lines = [
                "\n".join(textwrap.wrap(status, max(int(w * 120), 16))),
                f"centre radius {format_length(h.threads[0].centre_radius, u)}",
                f"diameter {format_length(h.overall_diameter, u)}",
                f"grade inner / centre {100 * ev.max_gradient('inner kerb'):.1f} / "
                f"{100 * ev.max_gradient('centre line'):.1f} %",
                f"in / out {t.inbound:,.0f} / {t.outbound:,.0f} veh/h",
                f"down {format_duration(down)}" if down is not None else "no way down",
                f"empty {t.bays} bays {format_duration(t.empty_time)}" if t.empty_time is not None else "",
                f"deck {format_area(c.quantities.deck_area, u)}",
                f"takes {c.quantities.bays_per_level} bays a level",
            ]
            fig.text(x0 + k * (w + gap) + 0.005, 0.86 - ax_h, "\n".join(x for x in lines if x), fontsize=9,
                     va="top", linespacing=1.4)
        # One scale bar for all: the axes share one scale.
        bar_ax = fig.axes[0]
        _scale_bar(bar_ax, s, float(s(h.centre[0] - half)) + 0.04 * float(s(2 * half)),
                   float(s(h.centre[1] - half)) + 0.04 * float(s(2 * half)), float(s(2 * half)))
        fig.text(0.02, 0.03, "Kerbs and running surface shaded per thread (blue, vermillion); dashed: lane centre "
                 "lines; thick grey: outside face of the structure; dotted: the plot square it takes (used for the "
                 "bays figure); grey disc: the core. " + ", ".join(f"{r}: {SHORT_TITLES[o.layout]}"
                                                                  for r, o, _ in shown) + ".",
                 fontsize=7.5, color="#444444", wrap=True)
    return fig
