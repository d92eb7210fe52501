"""Drawing sheets: ISO sheet sizes, a frame, helix's own title block, true scales,
scale bars and a north point.

Every figure is drawn on a sheet of a standard size at print size (millimetres on
paper are millimetres in the figure), so a scale written as 1:n holds when the sheet
is printed at 100 %.  The top 10 mm and the bottom 10 mm of every sheet stay outside
the frame, for the report's page header and page number.

Sheets are made with :class:`matplotlib.figure.Figure` on an Agg canvas, never
through pyplot, so drawing one changes no global state.

References
----------
ISO 216:2007, Writing paper and certain classes of printed matter, trimmed sizes
(A3 420 x 297 mm, A4 297 x 210 mm).  ISO 5455:1979, Technical drawings, scales
(recommended reduction scales 1:2, 1:5, 1:10 and their multiples by 10; 1:250 is the
architects' customary addition) -- from memory; verify.  ISO 5457:1999, sizes and
layout of drawing sheets (frame 20 mm from the filing edge, 10 mm from the others) --
from memory; verify.
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

from matplotlib.axes import Axes
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure
from matplotlib.patches import Polygon, Rectangle
from matplotlib.transforms import Affine2D, Transform

__all__ = ["Sheet", "SHEETS", "SCALES", "MIN_FONT_PT", "STATUS", "new_sheet", "mm", "axes_mm",
           "choose_scale", "set_true_scale", "title_block", "scale_bar", "north_point", "fit_text"]

#: Landscape sheet sizes, mm (ISO 216).
SHEETS = {"A3": (420.0, 297.0), "A4": (297.0, 210.0)}
#: Scales a drawing may take, in order of preference (largest first).
SCALES = (50, 100, 200, 250, 500, 1000, 2000, 5000, 10000)
#: Smallest text on any sheet: 2.5 mm printed height (ISO 3098 smallest lettering) in points.
MIN_FONT_PT = 2.5 / 25.4 * 72.0
STATUS = "design aid - verify"
POINT_MM = 25.4 / 72.0

FRAME_LEFT, FRAME_RIGHT, FRAME_TOP, FRAME_BOTTOM = 20.0, 10.0, 10.0, 10.0
BLOCK_W, BLOCK_H = 180.0, 40.0


@dataclass(frozen=True)
class Sheet:
    """A sheet of ``size`` (``"A3"`` or ``"A4"``, landscape); all lengths in mm from
    the sheet's lower-left corner."""

    size: str

    @property
    def width(self) -> float:
        return SHEETS[self.size][0]

    @property
    def height(self) -> float:
        return SHEETS[self.size][1]

    @property
    def frame(self) -> tuple[float, float, float, float]:
        """x0, y0, x1, y1 of the frame."""
        return (FRAME_LEFT, FRAME_BOTTOM, self.width - FRAME_RIGHT, self.height - FRAME_TOP)

    @property
    def block(self) -> tuple[float, float, float, float]:
        """x0, y0, x1, y1 of the title block (lower right, inside the frame)."""
        x1, y0 = self.frame[2], self.frame[1]
        return (x1 - BLOCK_W, y0, x1, y0 + BLOCK_H)


def new_sheet(size: str) -> tuple[Figure, Sheet]:
    """A blank figure of sheet ``size`` at print size with its frame drawn."""
    sheet = Sheet(size)
    fig = Figure(figsize=(sheet.width / 25.4, sheet.height / 25.4))
    FigureCanvasAgg(fig)
    x0, y0, x1, y1 = sheet.frame
    fig.add_artist(Rectangle((x0, y0), x1 - x0, y1 - y0, transform=mm(fig), fill=False, ec="black", lw=1.0))
    return fig, sheet


def mm(fig: Figure) -> Transform:
    """Transform from sheet millimetres (origin lower left) to display units."""
    return Affine2D().scale(1.0 / 25.4) + fig.dpi_scale_trans


def axes_mm(fig: Figure, sheet: Sheet, box: tuple[float, float, float, float], **kw: Any) -> Axes:
    """Axes filling ``box`` (x0, y0, x1, y1 in mm)."""
    x0, y0, x1, y1 = box
    return fig.add_axes((x0 / sheet.width, y0 / sheet.height, (x1 - x0) / sheet.width,
                         (y1 - y0) / sheet.height), **kw)


def choose_scale(extent: tuple[float, float], box_mm: tuple[float, float],
                 scales: tuple[int, ...] = SCALES) -> int:
    """The largest standard scale (smallest n) at which ``extent`` (width, height in
    metres) fits ``box_mm`` (width, height on paper); the smallest scale if none does."""
    for n in scales:
        if extent[0] * 1000.0 / n <= box_mm[0] and extent[1] * 1000.0 / n <= box_mm[1]:
            return n
    return scales[-1]


def set_true_scale(ax: Axes, n_x: int, centre: tuple[float, float], unit_m: float,
                   n_y: int | None = None) -> None:
    """Limits of ``ax`` such that one drawing unit (``unit_m`` metres) is
    ``1000 unit_m / n`` mm on paper, horizontally at 1:``n_x`` and vertically at
    1:``n_y`` (default the same), the view centred on ``centre`` (drawing units)."""
    n_y = n_x if n_y is None else n_y
    pos = ax.get_position()
    fig = ax.get_figure(root=True)
    assert fig is not None
    w_mm = pos.width * fig.get_figwidth() * 25.4
    h_mm = pos.height * fig.get_figheight() * 25.4
    half_x = 0.5 * w_mm * n_x / (1000.0 * unit_m)
    half_y = 0.5 * h_mm * n_y / (1000.0 * unit_m)
    ax.set_aspect("auto")
    ax.set_xlim(centre[0] - half_x, centre[0] + half_x)
    ax.set_ylim(centre[1] - half_y, centre[1] + half_y)


def fit_text(text: str, width_mm: float, size: float) -> str:
    """``text`` cut (with an ellipsis) to about ``width_mm`` at font ``size`` (pt), by
    the mean advance of DejaVu Sans (about 0.6 em), so a long name stays in its cell."""
    room = int(width_mm / (0.62 * size * POINT_MM))
    return text if len(text) <= room else text[:max(room - 1, 1)].rstrip() + "\u2026"


def _nice_length(limit: float) -> float:
    """The largest 1, 2, 2.5 or 5 times a power of ten not above ``limit``."""
    if not limit > 0:
        return 0.0
    e = math.floor(math.log10(limit))
    best = 10.0 ** e
    for m in (1.0, 2.0, 2.5, 5.0, 10.0):
        if m * 10.0 ** e <= limit:
            best = m * 10.0 ** e
    return best


def scale_bar(fig: Figure, x: float, y: float, n: int, unit_m: float, unit_name: str,
              max_mm: float, size: float = 7.5) -> float:
    """A scale bar at sheet position (x, y) mm for 1:``n`` in drawing units of
    ``unit_m`` metres, at most ``max_mm`` long; returns its length on paper (mm)."""
    per_unit = 1000.0 * unit_m / n  # mm on paper per drawing unit
    length = _nice_length(max_mm / per_unit)
    if length <= 0:
        return 0.0
    total = length * per_unit
    steps = 5 if (length / 10 ** math.floor(math.log10(length))) in (1.0, 5.0) else 4
    tr = mm(fig)
    for i in range(steps):
        fig.add_artist(Rectangle((x + i * total / steps, y), total / steps, 1.2, transform=tr,
                                 fc="black" if i % 2 == 0 else "white", ec="black", lw=0.5))
    fig.text(x, y + 1.8, "0", transform=tr, ha="center", va="bottom", fontsize=size)
    fig.text(x + total, y + 1.8, f"{length:g} {unit_name}", transform=tr, ha="left", va="bottom",
             fontsize=size)
    return total


def north_point(fig: Figure, x: float, y: float, angle: float, radius: float = 7.0,
                size: float = 9.0) -> None:
    """A north point centred at (x, y) mm: an arrow pointing along plan ``angle`` (rad,
    anticlockwise from the sheet's +x) with "N" beyond its tip."""
    tr = mm(fig)
    c, s = math.cos(angle), math.sin(angle)

    def p(a: float, r: float) -> tuple[float, float]:
        return (x + r * (c * math.cos(a) - s * math.sin(a)), y + r * (s * math.cos(a) + c * math.sin(a)))

    tip, left, right, tail = p(0.0, radius), p(2.5, 0.55 * radius), p(-2.5, 0.55 * radius), p(math.pi, 0.25 * radius)
    fig.add_artist(Polygon([tip, left, tail], closed=True, transform=tr, fc="black", ec="black", lw=0.6))
    fig.add_artist(Polygon([tip, right, tail], closed=True, transform=tr, fc="white", ec="black", lw=0.6))
    lx, ly = p(0.0, radius + 3.0)
    fig.text(lx, ly, "N", transform=tr, ha="center", va="center", fontsize=size, fontweight="bold")


def title_block(fig: Figure, sheet: Sheet, fields: dict[str, str], scale_text: str,
                bar: tuple[int, float, str] | None) -> None:
    """helix's title block in the lower right of the frame.

    ``fields``: ``project``, ``title``, ``number``, ``revision``, ``date``, ``drawn``,
    ``checked`` (an empty value leaves a ruled blank line to fill in by hand);
    ``scale_text`` such as "1:200 at A3"; ``bar``: (n, metres per drawing unit, unit
    name) for a scale bar, or None for a sheet not drawn to scale."""
    tr = mm(fig)
    x0, y0, x1, y1 = sheet.block
    fig.add_artist(Rectangle((x0, y0), x1 - x0, y1 - y0, transform=tr, fill=False, ec="black", lw=1.0))
    row = (y1 - y0) / 4

    def cell(cx: float, cy: float, w: float, label: str, value: str, size: float = 9.0,
             bold: bool = False, rule: bool = True) -> None:
        fig.add_artist(Rectangle((cx, cy), w, row, transform=tr, fill=False, ec="black", lw=0.5))
        fig.text(cx + 1.2, cy + row - 0.8, label, transform=tr, ha="left", va="top", fontsize=7.2,
                 color="#555555")
        if value:
            fig.text(cx + 1.2, cy + 1.2, fit_text(value, w - 2.4, size), transform=tr, ha="left",
                     va="bottom", fontsize=size, fontweight="bold" if bold else "normal")
        elif rule:  # a ruled line to write on
            fig.add_artist(Rectangle((cx + 1.2, cy + 1.4), w - 2.4, 0.0, transform=tr, ec="#999999", lw=0.4))

    cell(x0, y0 + 3 * row, x1 - x0, "project", fields.get("project", ""), bold=True)
    cell(x0, y0 + 2 * row, x1 - x0, "drawing title", fields.get("title", ""))
    widths = (48.0, 22.0, 36.0, 37.0, 37.0)
    keys = (("drawing number", "number"), ("revision", "revision"), ("date", "date"), ("drawn by", "drawn"),
            ("checked by", "checked"))
    cx = x0
    for w, (label, key) in zip(widths, keys):
        cell(cx, y0 + row, w, label, fields.get(key, ""))
        cx += w
    cell(x0, y0, 56.0, "scale", scale_text, size=8.5)
    cell(x0 + 56.0, y0, 64.0, "scale bar", "" if bar is not None else "none (not to scale)", size=8.0,
         rule=False)
    if bar is not None:
        scale_bar(fig, x0 + 58.0, y0 + 1.5, bar[0], bar[1], bar[2], max_mm=44.0)
    cell(x0 + 120.0, y0, x1 - x0 - 120.0, "status", STATUS, size=9.0, bold=True)
