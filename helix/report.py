"""The design report: one PDF made with matplotlib alone, and the same in Markdown.

Pages: summary (with the cautions), inputs (levels, structure, site, vehicle, rule set
and sources), comparison of layouts (after a search), the check table (one column per
rule set when several are compared), the figures, and an excerpt of the setting-out
table.  Every page carries a header (project, revision, caution) and "page n of N";
figures and tables are numbered and captioned.  Units and rounding follow the
project file through the formatters of :mod:`helix.units`, the same ones the terminal
tables use.  Text is embedded as TrueType (searchable, copyable).  No dates are
embedded: the same input gives the same bytes.

A sheet drawn by :mod:`helix.figures` keeps its top ``HEADER_MM`` and bottom
``FOOTER_MM`` free; the report writes its header there, and the figure's caption and
page number in the footer.
"""
from __future__ import annotations

import contextlib
import io
from dataclasses import dataclass, field
from functools import lru_cache
from typing import Any, Callable, Iterator, Sequence

from matplotlib.artist import Artist
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure
from matplotlib.font_manager import FontProperties
from matplotlib.patches import FancyBboxPatch, Rectangle
import matplotlib as mpl

from .checks import in_words
from .evaluate import Evaluation
from .figures import A4_LANDSCAPE, FIGURES, FONT, PALETTE, STYLE
from .results import (CAUTION, comparison_blocks, constraint_words, drive_time, format_check, format_limit,
                      format_shortfall, lane_kerbs_text, searched_text, turns_text)
from .setting_out import stations
from .units import format_angle, format_duration, format_gradient, format_length, format_level

__all__ = ["report_files", "report_makers", "check_rows", "report_pages", "split_rows", "SECTIONS", "HEADER_MM", "FOOTER_MM",
           "MIN_TEXT_MM", "FIGURE_NOTES"]

SECTIONS = ("Summary", "Inputs", "Comparison of layouts", "Checks", "Figures", "Setting-out excerpt")
CAUTION_LONG = (CAUTION + " The rule values bundled with helix are transcribed with their sources; "
                "several are recalled rather than read and are marked 'from memory; verify'. "
                "Local rules govern. Check drainage, surface friction in wet and icy conditions, "
                "signage and height restrictions with the responsible engineer.")
CAUTION_SHORT = "Design aid: verify against the codes in force; local rules and licensed professionals govern."

#: The strips of every page kept for the report's header and footer (page number,
#: figure caption); figures leave them free.
HEADER_MM = 10.0
FOOTER_MM = 10.0
#: The smallest printed text height (the font's em) on any page.
MIN_TEXT_MM = 2.5
_PT = 25.4 / 72  # mm per point
_MARGIN_MM = 12.0  # left and right margin of text pages
_BODY = 8.5  # points: paragraphs
_CELL = 7.5  # points: tables (2.65 mm)
_FURNITURE = 7.5  # points: header and footer
_LINESPACING = 1.25
_PAD_MM = 0.9  # above and below a table row's text
_FAMILY = FONT
_KEEP = 3  # a table split across pages leaves at least this many rows on each side

#: What each figure shows and what to read from it, by figure name (a figure whose name
#: starts with a key takes its words, e.g. ``section_lane1``).
FIGURE_NOTES = {
    "plan": "Kerbs, lane centre lines with the direction of travel, the floor connections and the plot. "
            "Read the kerb radii and the overall diameter against the footprint.",
    "section": "The ramp unrolled along its chainage, level against distance driven. Read the grade of each "
               "run and transition, the landings at the floors and the smallest clear headroom.",
    "cross_section": "A radial cut through the turns. Read the kerb levels, the lane widths and radii and the "
                     "clear height between one turn and the next.",
    "clearance": "The design vehicle where it comes closest to the ramp and the structure. Read its underbody "
                 "clearance at the changes of grade and its roof clearance below the soffit.",
    "gradient": "Gradient against radius across the carriageway of the steepest storey. Read how much steeper "
                "the inner kerb is than the outer, and each rule limit on its reference line.",
    "pareto": "Each point is a searched design. Read the trade-off between a smaller footprint and a "
              "flatter ramp, the design chosen, and which layouts fail.",
    "options": "The best design of each layout in plan at one scale. Read how much of the plot each takes "
               "and which checks each fails.",
}


def _note(name: str) -> str:
    keys = [k for k in FIGURE_NOTES if name == k or name.startswith(k + "_")]
    return FIGURE_NOTES[max(keys, key=len)] if keys else ""


# ----------------------------------------------------------------------------------
# Content, shared by the PDF and the Markdown


@dataclass(frozen=True)
class Table:
    """A numbered table: its title, header, rows and relative column widths."""

    title: str
    header: list[str]
    rows: list[list[str]]
    widths: list[float]
    number: int = 0

    @property
    def caption(self) -> str:
        return f"Table {self.number} \u2014 {self.title}" if self.number else self.title


@dataclass(frozen=True)
class FigureRef:
    name: str
    title: str
    number: int = 0

    @property
    def caption(self) -> str:
        text = f"Figure {self.number} \u2014 {self.title}."
        note = _note(self.name)
        return f"{text} {note}" if note else text


Block = tuple[str, Any]


def check_rows(ev: Evaluation) -> list[list[str]]:
    u = ev.project.units
    return [[c.title, format_check(c, c.value, u), format_limit(c, u), format_check(c, c.margin, u), c.status,
             c.source] for c in ev.checks]


def _revision(project) -> str | None:
    drawing = getattr(project, "drawing", None)
    rev = getattr(drawing, "revision", None) if drawing is not None else None
    return str(rev) if rev not in (None, "") else None


def _kerb_rows(ev: Evaluation) -> list[list[str]]:
    """Kerb radii: of the carriageway, and of each lane where they differ, so a lane's
    outer kerb (checked on its own) is never mistaken for the carriageway's."""
    h, u = ev.helix, ev.project.units
    rows = [["Inner / outer kerb radius of the carriageway",
             f"{format_length(h.inner_radius, u)} / {format_length(h.outer_radius, u)}"]]
    lanes = lane_kerbs_text(ev)
    if lanes:
        rows.append(["Kerb radii of each lane (inner kerb to outer kerb)", lanes])
    return rows


def _summary(ev: Evaluation, option=None, comparisons=None) -> list[Block]:
    p, h, u = ev.project, ev.helix, ev.project.units
    t0 = h.threads[0]
    first = [s for s in ev.storeys if s.thread == t0.name]
    fails = [c.title for c in ev.checks if not c.ok]
    rows = [
        ["Layout", f"{h.layout} helix, {p.traffic}, {len(h.threads)} thread(s)"],
        ["Centre-line radius", format_length(t0.centre_radius, u)],
        *_kerb_rows(ev),
        ["Lane widths", ", ".join(format_length(ln.width, u) for t in h.threads for ln in t.lanes)],
        ["Turns per storey", ", ".join(f"{s.turns:g}" for s in first)],
        ["Overall diameter with structure", format_length(h.overall_diameter, u)],
        ["Steepest gradient: inner kerb / centre line / outer kerb",
         " / ".join(format_gradient(ev.max_gradient(k), u) for k in ("inner kerb", "centre line", "outer kerb"))],
        ["Smallest clear headroom", format_length(ev.headroom.clear, u) if ev.headroom else "nothing overhead"],
        ["Drive per storey (centre line)", format_length(sum(s.length_centre for s in first) / len(first), u)],
        ["Top to bottom at the design speed", format_duration(drive_time(ev))],
        ["Result", "all checks pass" if not fails else f"FAIL: {'; '.join(fails)}"],
    ]
    warns = [c for c in ev.checks if c.warns]
    if warns:
        rows.append(["Warnings (not failures)", "; ".join(f"{c.title}: {c.warning or c.note}" for c in warns)])
    for e in comparisons or []:
        f2 = [c.title for c in e.checks if not c.ok]
        rows.append([f"Also checked against {e.project.rules.name}",
                     "all checks pass" if not f2 else f"FAIL: {'; '.join(f2)}"])
    if option is not None:
        rows.append(["Binding constraint", in_words(option.binding)])
    verdict = "PASS: every check is met" if not fails else f"FAIL: {len(fails)} check(s) not met"
    return [
        ("h1", p.name),
        ("verdict", (verdict, not fails)),
        ("p", p.notes or ""),
        ("p", f"Rule set: {p.rules.title}. Design vehicle: {p.vehicle.title}."),
        ("table", Table("Summary of the design", ["item", "value"], rows, [0.4, 0.6])),
        ("caution", CAUTION_LONG),
    ]


def _inputs(ev: Evaluation) -> list[Block]:
    p, u = ev.project, ev.project.units
    levels = [[lv.name, format_level(lv.level, u),
               format_length(lv.level - p.levels[i - 1].level, u) if i else "-"] for i, lv in enumerate(p.levels)]
    st, site = p.structure, p.site
    structure = [["slab depth", format_length(st.slab_depth, u)], ["hanging depth", format_length(st.hanging_depth, u)],
                 ["outer wall", format_length(st.wall_thickness, u)],
                 ["cover soffit", format_level(st.cover_soffit, u) if st.cover_soffit is not None else "none"],
                 ["footprint", f"{format_length(site.width, u)} x {format_length(site.depth, u)}, margin "
                               f"{format_length(site.margin, u)}" if site.is_rectangle else
                  (f"polygon of {len(site.boundary)} vertices within " if site.boundary else "rectangle ")
                  + f"{format_length(site.width, u)} x "
                  f"{format_length(site.depth, u)}, setback {format_length(site.margin, u)}, "
                  f"{len(site.no_build)} no-build zone(s)"]]
    v = p.vehicle
    vehicle = [[k.replace("_", " "), format_length(x, u), v.sources.get(k, "")] for k, x in v.dimensions().items()]
    rules = [[key.replace("_", " "), value, source] for key, value, source in p.rules.summary(u)]
    return [("h1", "Inputs"),
            ("table", Table("Levels", ["level", "finished floor level", "storey height"], levels, [0.3, 0.35, 0.35])),
            ("table", Table("Structure and site", ["item", "value"], structure, [0.3, 0.7])),
            ("table", Table(f"Design vehicle: {v.title}", ["dimension", "value", "source"], vehicle,
                            [0.22, 0.13, 0.65])),
            ("table", Table(f"Rule set: {p.rules.title}", ["rule", "value", "source"], rules, [0.22, 0.18, 0.60]))]


def _comparison(result) -> list[Block]:
    from .search import LAYOUT_TITLES
    u = result.project.units
    rows = []
    for rank, o in enumerate(result.options, 1):
        ev = o.evaluation
        if ev is None:
            rows.append([str(rank), LAYOUT_TITLES[o.layout], "-", "-", "-", "-", "-", "FAIL", "no radius fits"])
            continue
        turns = turns_text(s.turns for s in ev.storeys if s.thread == ev.helix.threads[0].name)
        rows.append([str(rank), LAYOUT_TITLES[o.layout], turns, format_length(ev.helix.threads[0].centre_radius, u),
                     format_length(ev.helix.overall_diameter, u), format_gradient(ev.max_gradient("inner kerb"), u),
                     format_length(ev.headroom.clear, u) if ev.headroom else "-",
                     "pass" if o.feasible else "FAIL", in_words(o.binding)])
    blocks: list[Block] = [
        ("h1", "Comparison of layouts"),
        ("p", f"Objective: {result.project.search.objective}. Ranked; the radius of each design lies on "
              "the boundary of its binding constraint; a failing layout shows its least-failing design "
              "(every rule met but the one named). Searched: "
              + "; ".join(f"{LAYOUT_TITLES[o.layout]}: {searched_text(o)}" for o in result.options) + "."),
        ("table", Table("Layouts ranked by the objective",
                        ["#", "layout", "turns", "centre radius", "diameter", "grade inner", "headroom", "status",
                         "binding"], rows, [0.03, 0.15, 0.08, 0.1, 0.09, 0.12, 0.09, 0.06, 0.28]))]
    blocks += comparison_blocks(result)  # traffic, quantities, sensitivity, margins (helix.comparison)
    for o in result.options:
        if not o.feasible:
            items = [[constraint_words(e["constraint"]), format_shortfall(e, u),
                      in_words(e.get("change", "") + (f" ({e['verified_result']})" if e.get("verified_result")
                                                      else ""))]
                     for e in o.explanation]
            blocks += [("h2", f"Why the {LAYOUT_TITLES[o.layout]} does not work"),
                       ("table", Table(f"Changes that would make the {LAYOUT_TITLES[o.layout]} work",
                                       ["constraint", "shortfall", "smallest single change"], items,
                                       [0.22, 0.12, 0.66]))]
    return blocks


def _checks(ev: Evaluation, comparisons: list[Evaluation]) -> list[Block]:
    blocks: list[Block] = [("h1", "Checks")]
    if not comparisons:
        blocks.append(("table", Table("Checks of the design against the rule set",
                                      ["check", "value", "limit", "margin", "status", "source"], check_rows(ev),
                                      [0.19, 0.11, 0.12, 0.11, 0.07, 0.40])))
        wheres = [[c.title, c.where + (f"; {c.note}" if c.note else "")] for c in ev.checks]
        blocks += [("table", Table("Where each check governs", ["check", "where"], wheres, [0.24, 0.76]))]
        return blocks
    sets = [ev] + comparisons
    header = ["check"] + [e.project.rules.name for e in sets]
    ids: list[str] = []
    titles: dict[str, str] = {}
    for e in sets:  # every check any rule set makes, in first-seen order
        for c in e.checks:
            if c.id not in ids:
                ids.append(c.id)
                titles[c.id] = c.title
    rows = []
    u = ev.project.units
    for cid in ids:
        row = [titles[cid]]
        for e in sets:
            cc = next((x for x in e.checks if x.id == cid), None)
            if cc is None:
                row.append("-")
            elif cc.limit is None:
                row.append(f"{format_check(cc, cc.value, u)}, no limit")
            else:
                row.append(f"{format_check(cc, cc.value, u)} {format_limit(cc, u)} {cc.status}")
        rows.append(row)
    width = 0.76 / len(sets)
    blocks.append(("p", "One column per rule set: the value as that rule set measures it (its own "
                        "reference lines and widths), its limit, and whether the design meets it."))
    blocks.append(("table", Table("Checks under each rule set", header, rows, [0.24] + [width] * len(sets))))
    for e in sets:
        blocks += [("table", Table(f"Sources of the limits: {e.project.rules.title}", ["check", "source"],
                                   [[c.title, c.source] for c in e.checks], [0.24, 0.76]))]
    return blocks


def _setting_out(ev: Evaluation, spacing: float, rows_max: int = 30) -> list[Block]:
    u = ev.project.units
    data = stations(ev, spacing)
    grid = bool(data) and "easting_m" in data[0]  # setting-out in the site grid, bearings from grid north
    xk, yk = ("easting_m", "northing_m") if grid else ("x_m", "y_m")
    rows = []
    for r in data[:rows_max]:
        rows.append([r["thread"], f"{r['station']}", format_length(r["chainage_m"], u),
                     format_angle(r["bearing_deg"]), format_length(r[xk], u), format_length(r[yk], u),
                     format_level(r["level_inner_kerb_m"], u), format_level(r["level_centre_m"], u),
                     format_level(r["level_outer_kerb_m"], u), format_gradient(r["grade_centre_pct"] / 100, u),
                     r["segment"]])
    frame = ("Bearings clockwise from grid north, coordinates in the site grid" if grid
             else "Bearings anticlockwise from +x")
    return [("h1", "Setting-out excerpt"),
            ("p", f"The first {min(rows_max, len(data))} of {len(data)} stations; the full table is in "
                  f"setting_out.csv. {frame}; levels at the kerbs include the cross-fall."),
            ("table", Table("Setting-out stations (excerpt)",
                            ["thread", "stn", "chainage", "bearing", "easting" if grid else "x",
                             "northing" if grid else "y", "inner kerb", "centre", "outer kerb", "grade", "segment"],
                            rows, [0.1, 0.04, 0.09, 0.09, 0.08, 0.08, 0.09, 0.09, 0.09, 0.13, 0.12]))]


def _number(doc: list[Block]) -> list[Block]:
    """Number the tables and figures in reading order.  A table given as a plain
    ``(header, rows, widths)`` takes the heading above it as its title (and its cells'
    check ids become words); a figure given as ``(name, caption)`` becomes a
    :class:`FigureRef`."""
    out: list[Block] = []
    n_table = n_fig = 0
    heading = ""
    for kind, content in doc:
        if kind in ("h1", "h2"):
            heading = str(content)
        elif kind == "table":
            n_table += 1
            if not isinstance(content, Table):  # made elsewhere: any check id in it in words too
                header, rows, widths = content
                content = Table(heading, list(header), [[in_words(str(c)) for c in r] for r in rows], list(widths))
            content = Table(content.title, content.header, content.rows, content.widths, n_table)
        elif kind == "figure":
            n_fig += 1
            if not isinstance(content, FigureRef):
                content = FigureRef(*content)
            content = FigureRef(content.name, content.title, n_fig)
        out.append((kind, content))
    return out


def _document(ev, option, result, comparisons, spacing) -> list[Block]:
    doc = _summary(ev, option, comparisons) + [("page", None)] + _inputs(ev) + [("page", None)]
    if result is not None:
        doc += _comparison(result) + [("page", None)]
    doc += _checks(ev, comparisons) + [("page", None)]
    for name, _, caption in FIGURES:
        doc.append(("figure", FigureRef(name, caption)))
    if result is not None:
        doc.append(("figure", FigureRef("pareto", "Design search: footprint against steepest gradient")))
        doc.append(("figure", FigureRef("options", "The options side by side in plan at one scale")))
    doc += _setting_out(ev, spacing)
    return _number(doc)


# ----------------------------------------------------------------------------------
# PDF: measured text, tables with rows that grow with their text


_MEASURE_DPI = 720  # fine enough that hinting does not round glyph advances up to whole pixels


@lru_cache(maxsize=4)
def _font(size: float, bold: bool) -> Any:
    from matplotlib.font_manager import findfont, get_font
    font = get_font(findfont(FontProperties(family=_FAMILY, size=size, weight="bold" if bold else "normal")))
    font.set_size(size, 72)  # at 72 dpi one pixel is one point
    return font


@lru_cache(maxsize=2048)
def _glyph(char: str, size: float, bold: bool) -> tuple[int, float]:
    """Glyph index and unhinted advance (pt) of ``char`` in the report's font."""
    from matplotlib.ft2font import LoadFlags
    font = _font(size, bold)
    font.set_size(size, 72)
    glyph = font.load_char(ord(char), flags=LoadFlags.NO_HINTING)
    return font.get_char_index(ord(char)), glyph.linearHoriAdvance / 65536


@lru_cache(maxsize=8192)
def _kern(left: int, right: int, size: float, bold: bool) -> float:
    from matplotlib.ft2font import Kerning
    font = _font(size, bold)
    font.set_size(size, 72)
    return font.get_kerning(left, right, Kerning.UNFITTED) / 64


@lru_cache(maxsize=20000)
def _width_pt(text: str, size: float, bold: bool) -> float:
    """Width of ``text`` in points: the glyphs' unhinted advances and kerning, the way a
    PDF viewer sets them (within 1.5 % of the hinted raster width, inside the wrap's 3 %
    spare).  Summed from cached glyphs: laying the text out whole, as the renderer does,
    took a third of the report's time in measuring trial lines for the word wrap."""
    width, prev = 0.0, -1
    for char in text:
        index, advance = _glyph(char, size, bold)
        if prev >= 0:
            width += _kern(prev, index, size, bold)
        width += advance
        prev = index
    return width


_UNITS = frozenset({"%", "%,", "%)", "%;", "m", "m,", "m)", "m;", "mm", "s", "mph", "km/h", "deg", "deg,"})


def _wrap(text: str, width_mm: float, size: float, bold: bool = False) -> list[str]:
    """Greedy word wrap by the measured width of the text in the report's font."""
    limit = 0.97 * width_mm / _PT  # a little spare: screen renderers hint glyphs a little wider
    lines: list[str] = []
    for para in str(text).split("\n"):
        line = ""
        words: list[str] = []
        for word in para.split():  # a number and its unit stay on one line
            if words and (word in _UNITS or word.startswith("(1:")):
                words[-1] += " " + word
            else:
                words.append(word)
        for word in words:
            while _width_pt(word, size, bold) > limit and len(word) > 1:  # a word wider than the column
                k = len(word)
                while k > 1 and _width_pt(word[:k], size, bold) > limit:
                    k -= 1
                if line:
                    lines.append(line)
                    line = ""
                lines.append(word[:k])
                word = word[k:]
            trial = f"{line} {word}" if line else word
            if line and _width_pt(trial, size, bold) > limit:
                lines.append(line)
                line = word
            else:
                line = trial
        lines.append(line)
    return lines or [""]


@lru_cache(maxsize=64)
def _block_mm(size: float, lines: int) -> float:
    """Height of a block of ``lines`` lines as matplotlib lays it out (measured)."""
    fig = Figure(figsize=(1, 1), dpi=_MEASURE_DPI)
    canvas = FigureCanvasAgg(fig)
    t = fig.text(0, 0.5, "\n".join(["Hg"] * lines), fontsize=size, linespacing=_LINESPACING,
                 family=_FAMILY)
    return float(t.get_window_extent(canvas.get_renderer()).height) * 72 / _MEASURE_DPI * _PT


def split_rows(heights: Sequence[float], first: float, rest: float, keep: int = _KEEP) -> list[list[int]]:
    """Rows of a table, page by page: as many as fit (``first`` mm of room left on the
    current page, ``rest`` on each new one), and no page with fewer than ``keep`` rows
    of a table that has more (rows move over to the last page, or the whole table
    starts on a new page).  An empty first chunk means: start on a new page.

    >>> split_rows([1.0] * 10, 4.5, 100)
    [[0, 1, 2, 3], [4, 5, 6, 7, 8, 9]]
    >>> split_rows([1.0] * 10, 2.5, 100)
    [[], [0, 1, 2, 3, 4, 5, 6, 7, 8, 9]]
    >>> split_rows([1.0] * 9, 5.5, 5.5)
    [[0, 1, 2, 3, 4], [5, 6, 7, 8]]
    >>> split_rows([1.0] * 11, 5.5, 5.5)
    [[0, 1, 2, 3, 4], [5, 6, 7], [8, 9, 10]]
    >>> split_rows([1.0] * 5, 4.5, 100)
    [[], [0, 1, 2, 3, 4]]
    """
    n = len(heights)
    least = min(keep, n)

    def greedy(room: float) -> list[list[int]]:
        chunks: list[list[int]] = [[]]
        for i, h in enumerate(heights):
            if chunks[-1] and h > room:
                chunks.append([])
                room = rest
            chunks[-1].append(i)
            room -= h
        while len(chunks) > 1 and len(chunks[-1]) < least and len(chunks[-2]) > keep:
            chunks[-1].insert(0, chunks[-2].pop())  # no orphan on the last page
        return chunks

    chunks = greedy(first)
    fresh = first >= rest  # already at the top of a page: starting anew gains nothing
    if not fresh and n and (heights[0] > first or
                            (len(chunks) > 1 and min(len(c) for c in chunks) < least)):
        chunks = [[]] + greedy(rest)
    return chunks


@dataclass
class Page:
    """One page of the PDF: its figure, whether the report made it (and closes it), the
    figure caption of a figure page, and the table rows it holds as
    ``(table number, rows here, rows of the table)``."""

    fig: Figure
    own: bool
    caption: str = ""
    tables: list[tuple[int, int, int]] = field(default_factory=list)
    furniture: list[Artist] = field(default_factory=list)  # header and footer, while furnished


class _Layout:
    """Text and tables flowing down pages in millimetres from the top-left corner."""

    def __init__(self, size: tuple[float, float] = A4_LANDSCAPE):
        self.size = size
        self.w, self.h = size[0] * 25.4, size[1] * 25.4
        self.top, self.bottom = HEADER_MM + 4.0, self.h - FOOTER_MM - 3.0
        self.left, self.width = _MARGIN_MM, self.w - 2 * _MARGIN_MM
        self.pages: list[Page] = []
        self.page: Page | None = None
        self.y = self.top

    # -- pages
    def new(self) -> Page:
        fig = Figure(figsize=self.size)
        FigureCanvasAgg(fig)
        self.page = Page(fig, True)
        self.pages.append(self.page)
        self.y = self.top
        return self.page

    def close(self) -> None:
        self.page = None

    def room(self) -> float:
        return self.bottom - self.y if self.page is not None else 0.0

    def need(self, h: float) -> Page:
        if self.page is None or self.room() < h:
            return self.new()
        return self.page

    def add_figure(self, fig, caption: str) -> None:
        self.close()
        self.pages.append(Page(fig, False, caption))

    # -- drawing
    def _text(self, x: float, y: float, s: str, **kw) -> None:
        assert self.page is not None
        self.page.fig.text(x / self.w, 1 - y / self.h, s, linespacing=_LINESPACING, **kw)

    def paragraph(self, s: str, size: float = _BODY, bold: bool = False, colour: str = "black",
                  gap: float = 1.6) -> None:
        lines = _wrap(s, self.width, size, bold)
        h = _block_mm(size, len(lines))
        self.need(h)
        self._text(self.left, self.y, "\n".join(lines), fontsize=size, weight="bold" if bold else "normal",
                   color=colour, va="top")
        self.y += h + gap

    def caution(self, s: str) -> None:
        pad = 3.0
        lines = ["CAUTION"] + _wrap(s, self.width - 2 * pad, _BODY)
        h = _block_mm(_BODY, len(lines)) + 2 * pad
        page = self.need(h)
        page.fig.patches.append(FancyBboxPatch(
            (self.left / self.w, 1 - (self.y + h) / self.h), self.width / self.w, h / self.h,
            boxstyle="round,pad=0.002", transform=page.fig.transFigure, fc="#FFF4E0", ec=PALETTE["soffit"],
            lw=1.0))
        self._text(self.left + pad, self.y + pad, "\n".join(lines), fontsize=_BODY, va="top")
        self.y += h + 3.0

    def _stripe(self, y: float, h: float, colour: str) -> None:
        assert self.page is not None
        fig = self.page.fig
        fig.patches.append(Rectangle((self.left / self.w, 1 - (y + h) / self.h), self.width / self.w, h / self.h,
                                     transform=fig.transFigure, fc=colour, ec="none"))

    def _row(self, xs: list[float], cells: list[list[str]], h: float, bold: bool) -> None:
        mid = self.y + h / 2  # every cell centred on its row's stripe
        for x, lines in zip(xs, cells):
            if any(line.strip() for line in lines):
                self._text(x, mid, "\n".join(lines), fontsize=_CELL, va="center",
                           weight="bold" if bold else "normal")
        self.y += h

    def table(self, t: Table) -> None:
        pad_x = 1.2
        col = [w * self.width / sum(t.widths) for w in t.widths]
        xs = [self.left + sum(col[:i]) + pad_x for i in range(len(col))]
        wrap = lambda cells, bold: [_wrap(str(c), w - 2 * pad_x, _CELL, bold) for c, w in zip(cells, col)]
        height = lambda cells: _block_mm(_CELL, max(len(c) for c in cells)) + 2 * _PAD_MM
        head = wrap(t.header, True)
        rows = [wrap(r, False) for r in t.rows]
        head_h = height(head)
        heights = [height(r) for r in rows]
        caption = lambda more: _wrap(t.caption + more, self.width, _BODY, True)
        cap_h = _block_mm(_BODY, len(caption(" (continued)"))) + 1.2
        full = self.bottom - self.top - cap_h - head_h
        first = self.room() - cap_h - head_h if self.page is not None else full
        for k, chunk in enumerate(split_rows(heights, first, full)):
            if k > 0 or self.page is None:
                self.new()
            if not chunk:
                continue
            assert self.page is not None
            more = " (continued)" if chunk[0] > 0 else ""
            self._text(self.left, self.y, "\n".join(caption(more)), fontsize=_BODY, weight="bold", va="top")
            self.y += cap_h
            self._stripe(self.y, head_h, "#D9E3EE")
            self._row(xs, head, head_h, True)
            for j, i in enumerate(chunk):
                if j % 2 == 1:
                    self._stripe(self.y, heights[i], "#EEF3F8")
                self._row(xs, rows[i], heights[i], False)
            self.page.tables.append((t.number, len(chunk), len(rows)))
        self.y += 3.0


def _layout(doc: list[Block], figures: dict) -> list[Page]:
    lay = _Layout()
    for i, (kind, content) in enumerate(doc):
        # A heading stays with the start of the table under it (its caption, header and
        # the first rows that orphan control keeps together), never alone at a page foot.
        with_table = 45.0 if i + 1 < len(doc) and doc[i + 1][0] == "table" else 0.0
        if kind == "page":
            lay.close()
        elif kind == "h1":
            lay.need(25.0 + with_table)
            lay.paragraph(str(content), size=15, bold=True, gap=3.0)
        elif kind == "h2":
            lay.need(20.0 + with_table)
            lay.paragraph(str(content), size=11, bold=True, gap=1.5)
        elif kind == "p":
            if content:
                lay.paragraph(str(content))
        elif kind == "caution":
            lay.caution(str(content))
        elif kind == "verdict":
            text, ok = content
            lay.paragraph(text, size=13, bold=True, colour="#0072B2" if ok else "#D55E00", gap=2.5)
        elif kind == "table":
            lay.table(content)
        elif kind == "figure":
            if content.name in figures:
                lay.add_figure(figures[content.name], content.caption)
            else:
                lay.close()
    return lay.pages


def _fit(text: str, width_mm: float, size: float) -> str:
    """``text`` cut (with an ellipsis) to one line of ``width_mm``."""
    if _width_pt(text, size, False) * _PT <= width_mm:
        return text
    while text and _width_pt(text + "\u2026", size, False) * _PT > width_mm:
        text = text[:-1]
    return text.rstrip() + "\u2026"


def _furnish(page: Page, number: int, count: int, header: str) -> list[Artist]:
    """Header (project, revision, caution), figure caption and "page n of N" on a page."""
    fig = page.fig
    w, h = fig.get_size_inches() * 25.4
    fx = lambda x: x / w
    fy = lambda y: 1 - y / h
    kw: dict[str, Any] = dict(fontsize=_FURNITURE, color="#444444", linespacing=_LINESPACING, family=_FAMILY)
    right = _width_pt(CAUTION_SHORT, _FURNITURE, False) * _PT
    arts: list[Artist] = [fig.text(fx(w - _MARGIN_MM), fy(HEADER_MM / 2), CAUTION_SHORT, ha="right", va="center", **kw),
            fig.text(fx(_MARGIN_MM), fy(HEADER_MM / 2), _fit(header, w - 2 * _MARGIN_MM - right - 8, _FURNITURE),
                     ha="left", va="center", **kw)]
    pages = f"page {number} of {count}"
    arts.append(fig.text(fx(w - _MARGIN_MM), fy(h - 2.5), pages, ha="right", va="bottom", **kw))
    if page.caption:
        room = w - 2 * _MARGIN_MM - _width_pt(pages, _FURNITURE, False) * _PT - 8
        lines = _wrap(page.caption, room, _FURNITURE)
        arts.append(fig.text(fx(_MARGIN_MM), fy(h - 2.5), "\n".join(lines[:2]), ha="left", va="bottom",
                             **{**kw, "color": "black"}))
    return arts


def _header(project) -> str:
    rev = _revision(project)
    return f"{project.name} \u2014 helix design report" + (f" \u2014 revision {rev}" if rev else "")


def _pages(ev: Evaluation, doc: list[Block], figures: dict) -> Iterator[Page]:
    """Every page, furnished with its header and footer while the caller holds it; a
    figure drawn elsewhere gets its furniture taken off again afterwards."""
    pages = _layout(doc, figures)
    header = _header(ev.project)
    for n, page in enumerate(pages, 1):
        page.furniture = _furnish(page, n, len(pages), header)
        try:
            yield page
        finally:
            for a in page.furniture:
                a.remove()
            page.furniture = []
            if page.own:
                page.fig.clear()


#: The report's own rc settings: the figures' style with TrueType text (Type 42), so
#: the PDF's text can be searched and copied.
PDF_STYLE: Any = {**STYLE, "pdf.fonttype": 42, "ps.fonttype": 42}


@contextlib.contextmanager
def _fonts_without_layout_tables():
    """Font subsets embedded without their glyph substitution and positioning tables.

    A PDF places every glyph itself, so a viewer never reads an embedded font's GSUB,
    GPOS, GDEF or kern table; subsetting them is a tenth of the time of the whole report
    (the pages render pixel for pixel the same).  fontTools' default list of tables to
    drop is extended for the duration; where a fontTools has no such list, nothing
    changes."""
    from fontTools import subset  # type: ignore[import-untyped]
    default = getattr(subset.Options, "_drop_tables_default", None)
    if not isinstance(default, list):
        yield
        return
    subset.Options._drop_tables_default = default + ["GSUB", "GPOS", "GDEF", "kern"]
    try:
        yield
    finally:
        subset.Options._drop_tables_default = default


def _pdf(ev: Evaluation, doc: list[Block], figures: dict, title: str) -> bytes:
    # Imported here: matplotlib's PDF backend brings fontTools (0.4 s), and a run that
    # writes the PDF does so in a process of its own (figures.RenderJob).
    from matplotlib.backends.backend_pdf import PdfPages
    buf = io.BytesIO()
    with mpl.rc_context(PDF_STYLE), _fonts_without_layout_tables():
        with PdfPages(buf, metadata={"Title": title, "Creator": "helix", "Producer": "helix",
                                     "CreationDate": None, "ModDate": None}) as pdf:
            for page in _pages(ev, doc, figures):
                pdf.savefig(page.fig)
    return buf.getvalue()


# ----------------------------------------------------------------------------------
# Markdown


def _md_table(t: Table) -> str:
    esc = lambda s: str(s).replace("|", "\\|").replace("\n", " ")
    out = [f"**{t.caption}**", "", "| " + " | ".join(esc(h) for h in t.header) + " |", "|" + "---|" * len(t.header)]
    out += ["| " + " | ".join(esc(c) for c in r) + " |" for r in t.rows]
    return "\n".join(out)


def _markdown(ev: Evaluation, doc: list[Block], formats: tuple[str, ...] = ("png", "svg")) -> str:
    """The report in Markdown; each figure shows the PNG and links the SVG of those in
    ``formats`` that are written beside it (else it names the PDF's page)."""
    out = [f"*{_header(ev.project)}. {CAUTION_SHORT}*"]
    for kind, content in doc:
        if kind == "h1":
            out.append(f"## {content}" if len(out) > 1 else f"# {content}")
        elif kind == "h2":
            out.append(f"### {content}")
        elif kind == "p" and content:
            out.append(str(content))
        elif kind == "caution":
            out.append(f"> **Caution.** {content}")
        elif kind == "verdict":
            out.append(f"**{content[0]}**")
        elif kind == "table":
            out.append(_md_table(content))
        elif kind == "figure":
            f: FigureRef = content
            image = next((fmt for fmt in ("png", "svg") if fmt in formats), None)
            head = (f"![Figure {f.number} \u2014 {f.title}]({f.name}.{image})" if image else
                    f"**Figure {f.number} \u2014 {f.title}**" + (" (a page of report.pdf)" if "pdf" in formats else ""))
            link = f" ([SVG]({f.name}.svg))" if image == "png" and "svg" in formats else ""
            out.append(f"{head}\n\n*{f.caption}*{link}")
    return "\n\n".join(out) + "\n"


def _figures(ev: Evaluation, result, given: dict | None) -> tuple[dict, dict]:
    from . import figures as F
    given = dict(given or {})
    made = {}
    for name, make, _ in FIGURES:
        if name not in given:
            made[name] = make(ev)
    if result is not None and "pareto" not in given:
        made["pareto"] = F.pareto_figure(result)
    if result is not None and "options" not in given:
        made["options"] = F.options_figure(result)
    return given, made


def _close(figs: dict) -> None:
    from .figures import close_sheet
    for fig in figs.values():
        close_sheet(fig)


def report_pages(ev: Evaluation, *, option=None, result=None, comparisons: list[Evaluation] | None = None,
                 spacing: float = 5.0, figures: dict | None = None) -> Iterator[Page]:
    """The PDF's pages one at a time, furnished, as :func:`report_files` saves them (for
    tests that measure what is on a page)."""
    doc = _document(ev, option, result, comparisons or [], spacing)
    given, made = _figures(ev, result, figures)
    try:
        with mpl.rc_context(PDF_STYLE):
            yield from _pages(ev, doc, {**given, **made})
    finally:
        _close(made)


def report_makers(ev: Evaluation, *, option=None, result=None, comparisons: list[Evaluation] | None = None,
                  spacing: float = 5.0, figures: dict | None = None, formats: tuple[str, ...] = ("pdf", "md")
                  ) -> dict[str, Callable[[], bytes]]:
    """A function for each of ``report.pdf`` and ``report.md`` (those named in
    ``formats``) that makes its bytes, for :func:`report_files` to call here or the
    command line in a process of its own (:class:`helix.figures.RenderJob`).  The
    figures are taken from ``figures`` when the function is called, so it may be filled
    after this returns."""
    doc = _document(ev, option, result, comparisons or [], spacing)
    makers: dict[str, Callable[[], bytes]] = {}
    if "pdf" in formats:
        def pdf() -> bytes:
            given, made = _figures(ev, result, figures)
            try:
                return _pdf(ev, doc, {**given, **made}, f"{ev.project.name}: helix design report")
            finally:
                _close(made)
        makers["report.pdf"] = pdf
    if "md" in formats:
        makers["report.md"] = lambda: _markdown(ev, doc, formats).encode("utf-8")
    return makers


def report_files(ev: Evaluation, *, option=None, result=None, comparisons: list[Evaluation] | None = None,
                 spacing: float = 5.0, figures: dict | None = None,
                 formats: tuple[str, ...] = ("pdf", "md", "png", "svg")) -> dict[str, bytes]:
    """``report.pdf`` and ``report.md`` (those named in ``formats``; the Markdown shows
    the PNG and links the SVG of each figure where ``formats`` names them) for design
    ``ev`` (the chosen ``option`` of a search ``result``, if any), its checks under
    further rule sets in ``comparisons``.

    ``figures`` maps figure names to open matplotlib figures already drawn (see
    :func:`helix.figures.render_all`); missing ones are drawn here (for the PDF only)
    and closed."""
    makers = report_makers(ev, option=option, result=result, comparisons=comparisons, spacing=spacing,
                           figures=figures, formats=formats)
    return {name: make() for name, make in makers.items()}
