"""Figures for a design report: the plan and the unrolled section.

Every figure is drawn for A4 landscape at print size, in the project's units, with a
colour-blind-safe palette (Okabe and Ito, "Color Universal Design", 2008) that also
separates in greyscale by line style.  :func:`render_all` returns file contents in
memory so the caller can write them atomically.
"""
from __future__ import annotations

import io
import math

import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402
from matplotlib.patches import Circle, FancyArrowPatch, Rectangle, Wedge  # noqa: E402

from .clearance import headroom  # noqa: E402
from .evaluate import Evaluation  # noqa: E402
from .units import FOOT, format_length, format_level  # noqa: E402

__all__ = ["plan_figure", "section_figure", "render_all", "STYLE", "PALETTE"]

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

STYLE = {
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
        for i, t in enumerate(h.threads):
            col = THREAD_COLOURS[i % len(THREAD_COLOURS)]
            ax.add_patch(Wedge((s(cx), s(cy)), s(t.outer_radius), 0, 360, width=s(t.width),
                               fc=PALETTE["fill"] if i == 0 else "#F7E1D3", ec="none", alpha=0.8))
            for r in (t.inner_radius, t.outer_radius):
                ax.plot(s(cx + r * np.cos(phi)), s(cy + r * np.sin(phi)), color=PALETTE["kerb"], lw=1.3)
            if len(t.lanes) > 1:  # central kerb of a two-way helix
                a, b = t.lanes[0].outer_radius, t.lanes[1].inner_radius
                ax.add_patch(Wedge((s(cx), s(cy)), s(b), 0, 360, width=s(b - a), fc="#BDBDBD",
                                   ec=PALETTE["kerb"], lw=0.8, label="central kerb"))
            for lane in t.lanes:
                rc = lane.centre_radius
                ax.plot(s(cx + rc * np.cos(phi)), s(cy + rc * np.sin(phi)), color=col, lw=0.9,
                        ls=(0, (8, 3, 2, 3)), label=f"{t.name}: {lane.name} centre line ({lane.direction})"
                        if len(t.lanes) > 1 else f"{t.name}: centre line ({lane.direction})")
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
        # Level connections: radial markers, one label per bearing listing its levels.
        groups: dict[int, list[str]] = {}
        outer = h.outer_radius
        for i, t in enumerate(h.threads):
            for k, theta in enumerate(t.profile.connections):
                b = float(t.bearing(theta))
                key = int(round(math.degrees(b) % 360.0)) % 360
                lvl = p.levels[t.levels[k]]
                label = f"{lvl.name} {format_level(lvl.level, p.units)}"
                if len(h.threads) > 1:
                    label += f" ({t.name.split()[0]})"
                groups.setdefault(key, []).append(label)
                ax.plot([s(cx + t.inner_radius * math.cos(b)), s(cx + t.outer_radius * math.cos(b))],
                        [s(cy + t.inner_radius * math.sin(b)), s(cy + t.outer_radius * math.sin(b))],
                        color=PALETTE["critical"], lw=2.4, solid_capstyle="butt")
        for key, labels in groups.items():
            b = math.radians(key)
            rr = h.structure_radius + 0.06 * outer
            x, y = cx + rr * math.cos(b), cy + rr * math.sin(b)
            ha = "left" if math.cos(b) > 0.3 else ("right" if math.cos(b) < -0.3 else "center")
            va = "bottom" if math.sin(b) > 0.3 else ("top" if math.sin(b) < -0.3 else "center")
            ax.annotate("\n".join(labels), (s(cx + outer * math.cos(b)), s(cy + outer * math.sin(b))),
                        (s(x), s(y)), ha=ha, va=va, fontsize=7.5,
                        arrowprops=dict(arrowstyle="-", color=PALETTE["critical"], lw=0.6),
                        bbox=dict(boxstyle="round,pad=0.25", fc="white", ec=PALETTE["critical"], lw=0.6))
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
        pad = 0.05 * max(W, D)
        ax.set_xlim(s(-pad), s(W + pad))
        ax.set_ylim(s(-pad * 2.4), s(D + pad))
        ax.set_xlabel(f"x ({s.name})")
        ax.set_ylabel(f"y ({s.name})")
        ax.grid(True, lw=0.3, color="#DDDDDD")
        _scale_bar(ax, s, s(0), s(-pad * 1.5), s(W))
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
                            (x, float(s(z0 + 0.5 * c_min))), (8, 0), textcoords="offset points",
                            fontsize=8, color=PALETTE["critical"], va="center",
                            bbox=dict(boxstyle="round,pad=0.2", fc="white", ec=PALETTE["critical"], lw=0.6))
            ax.set_title(f"{t.name}: r = {format_length(t.centre_radius, p.units)}, "
                         f"traffic {t.traffic}", loc="left")
            ax.set_xlabel(f"chainage along the centre line ({s.name})")
            ax.set_ylabel(f"level ({s.name})")
            ax.grid(True, lw=0.3, color="#DDDDDD")
            ax.set_xlim(s(t.chainage(prof.start)), s(t.chainage(prof.end)))
            top = max(lv.level for lv in p.levels) + p.storey_heights[-1] * 0.6
            ax.set_ylim(s(p.levels[0].level - 0.6), s(top))
            if i == 0:
                ax.legend(loc="upper left", ncol=3)
        fig.text(0.08, 0.02, "Vertical scale exaggerated. Shaded bands: landings (grey) and "
                 "transitions (sand). Headroom is measured at every plan position against the "
                 "surface overhead, less slab and hanging depth.", fontsize=7.5, color="#444444")
    return fig


def _save(fig, fmt: str) -> bytes:
    buf = io.BytesIO()
    meta = {"Date": None} if fmt == "svg" else ({"Software": None} if fmt == "png" else {})
    fig.savefig(buf, format=fmt, dpi=300 if fmt == "png" else 72, metadata=meta)
    return buf.getvalue()


def render_all(ev: Evaluation) -> dict[str, bytes]:
    """Every figure as PNG (300 dpi) and SVG, keyed by file name."""
    out: dict[str, bytes] = {}
    for name, make in (("plan", plan_figure), ("section", section_figure)):
        fig = make(ev)
        try:
            with plt.rc_context(STYLE):
                out[f"{name}.png"] = _save(fig, "png")
                out[f"{name}.svg"] = _save(fig, "svg")
        finally:
            plt.close(fig)
    return out
