"""The design report: one PDF made with matplotlib alone, and the same in Markdown.

Pages: summary (with the cautions), inputs (levels, structure, site, vehicle, rule set
and sources), comparison of layouts (after a search), the check table (one column per
rule set when several are compared), the figures, and an excerpt of the setting-out
table.  Units follow the project file.  No dates are embedded: the same input gives
the same bytes.
"""
from __future__ import annotations

import io
import textwrap

import matplotlib
import matplotlib.pyplot as plt  # noqa: E402
from matplotlib.backends.backend_pdf import PdfPages  # noqa: E402

from .evaluate import Evaluation  # noqa: E402
from .figures import A4_LANDSCAPE, FIGURES, PALETTE, STYLE  # noqa: E402
from .results import CAUTION, comparison_blocks, drive_time, format_shortfall, searched_text, turns_text  # noqa: E402
from .setting_out import stations  # noqa: E402
from .units import format_gradient, format_length, format_level  # noqa: E402

__all__ = ["report_files", "check_rows", "SECTIONS"]

SECTIONS = ("Summary", "Inputs", "Comparison of layouts", "Checks", "Figures", "Setting-out excerpt")
CAUTION_LONG = (CAUTION + " The rule values bundled with helix are transcribed with their sources; "
                "several are recalled rather than read and are marked 'from memory; verify'. "
                "Local rules govern. Check drainage, surface friction in wet and icy conditions, "
                "signage and height restrictions with the responsible engineer.")


# ----------------------------------------------------------------------------------
# Content, shared by the PDF and the Markdown


def _fmt_check(c, x, units):
    if x is None:
        return "-"
    x = round(x, 9) + 0.0
    if c.quantity == "gradient":
        return format_gradient(x, units)
    if c.quantity == "length":
        return format_length(x, units) if units == "imperial" else f"{x:.3f} m"
    return f"{x:.3f}"


def check_rows(ev: Evaluation) -> list[list[str]]:
    u = ev.project.units
    rows = []
    for c in ev.checks:
        lim = ("<= " if c.sense == "max" else ">= ") + _fmt_check(c, c.limit, u) if c.limit is not None else "-"
        rows.append([c.id, _fmt_check(c, c.value, u), lim, _fmt_check(c, c.margin, u), c.status, c.source])
    return rows


def _summary(ev: Evaluation, option=None, comparisons=None) -> list[tuple[str, object]]:
    p, h, u = ev.project, ev.helix, ev.project.units
    t0 = h.threads[0]
    first = [s for s in ev.storeys if s.thread == t0.name]
    fails = [c.id for c in ev.checks if not c.ok]
    rows = [
        ["Layout", f"{h.layout} helix, {p.traffic}, {len(h.threads)} thread(s)"],
        ["Centre-line radius", format_length(t0.centre_radius, u)],
        ["Inner / outer kerb radius", f"{format_length(h.inner_radius, u)} / {format_length(h.outer_radius, u)}"],
        ["Lane widths", ", ".join(format_length(ln.width, u) for t in h.threads for ln in t.lanes)],
        ["Turns per storey", ", ".join(f"{s.turns:g}" for s in first)],
        ["Overall diameter with structure", format_length(h.overall_diameter, u)],
        ["Steepest gradient: inner kerb / centre line / outer kerb",
         " / ".join(format_gradient(ev.max_gradient(k), u) for k in ("inner kerb", "centre line", "outer kerb"))],
        ["Smallest clear headroom", format_length(ev.headroom.clear, u) if ev.headroom else "nothing overhead"],
        ["Drive per storey (centre line)", format_length(sum(s.length_centre for s in first) / len(first), u)],
        ["Top to bottom at the design speed", f"{drive_time(ev):.0f} s"],
        ["Result", "all checks pass" if not fails else f"FAIL: {', '.join(fails)}"],
    ]
    warns = [c for c in ev.checks if c.warns]
    if warns:
        rows.append(["Warnings (not failures)", "; ".join(f"{c.id}: {c.warning or c.note}" for c in warns)])
    for e in comparisons or []:
        f2 = [c.id for c in e.checks if not c.ok]
        rows.append([f"Also checked against {e.project.rules.name}",
                     "all checks pass" if not f2 else f"FAIL: {', '.join(f2)}"])
    if option is not None:
        rows.append(["Binding constraint", option.binding])
    verdict = "PASS: every check is met" if not fails else f"FAIL: {len(fails)} check(s) not met"
    blocks: list[tuple[str, object]] = [
        ("h1", p.name),
        ("verdict", (verdict, not fails)),
        ("p", p.notes or ""),
        ("p", f"Rule set: {p.rules.title}. Design vehicle: {p.vehicle.title}."),
        ("table", (["item", "value"], rows, [0.4, 0.6])),
        ("caution", CAUTION_LONG),
    ]
    return blocks


def _inputs(ev: Evaluation) -> list[tuple[str, object]]:
    p, u = ev.project, ev.project.units
    levels = [[lv.name, format_level(lv.level, u),
               format_length(lv.level - p.levels[i - 1].level, u) if i else "-"] for i, lv in enumerate(p.levels)]
    st, site = p.structure, p.site
    structure = [["slab depth", format_length(st.slab_depth, u)], ["hanging depth", format_length(st.hanging_depth, u)],
                 ["outer wall", format_length(st.wall_thickness, u)],
                 ["cover soffit", format_level(st.cover_soffit, u) if st.cover_soffit is not None else "none"],
                 ["footprint", f"{format_length(site.width, u)} x {format_length(site.depth, u)}, margin "
                               f"{format_length(site.margin, u)}"]]
    v = p.vehicle
    vehicle = [[k.replace("_", " "), format_length(x, u), v.sources.get(k, "")] for k, x in v.dimensions().items()]
    rules = [[key.replace("_", " "), value, source] for key, value, source in p.rules.summary(u)]
    return [("h1", "Inputs"),
            ("h2", "Levels"), ("table", (["level", "finished floor level", "storey height"], levels, [0.3, 0.35, 0.35])),
            ("h2", "Structure and site"), ("table", (["item", "value"], structure, [0.3, 0.7])),
            ("h2", f"Design vehicle: {v.title}"), ("table", (["dimension", "value", "source"], vehicle, [0.22, 0.13, 0.65])),
            ("h2", f"Rule set: {p.rules.title}"), ("table", (["rule", "value", "source"], rules, [0.22, 0.18, 0.60]))]


def _comparison(result) -> list[tuple[str, object]]:
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
                     "pass" if o.feasible else "FAIL", o.binding])
    blocks: list[tuple[str, object]] = [
        ("h1", "Comparison of layouts"),
        ("p", f"Objective: {result.project.search.objective}. Ranked; the radius of each design lies on "
              "the boundary of its binding constraint; a failing layout shows its least-failing design "
              "(every rule met but the one named). Searched: "
              + "; ".join(f"{LAYOUT_TITLES[o.layout]}: {searched_text(o)}" for o in result.options) + "."),
        ("table", (["#", "layout", "turns", "centre radius", "diameter", "grade inner", "headroom", "status",
                    "binding"], rows, [0.03, 0.19, 0.09, 0.1, 0.09, 0.11, 0.08, 0.06, 0.25]))]
    blocks += comparison_blocks(result)  # traffic, quantities, sensitivity, margins (helix.comparison)
    for o in result.options:
        if not o.feasible:
            items = [[e["constraint"], format_shortfall(e, u),
                      e.get("change", "") + (f" ({e['verified_result']})" if e.get("verified_result") else "")]
                     for e in o.explanation]
            blocks += [("h2", f"Why the {LAYOUT_TITLES[o.layout]} does not work"),
                       ("table", (["constraint", "shortfall", "smallest single change"], items, [0.2, 0.1, 0.7]))]
    return blocks


def _checks(ev: Evaluation, comparisons: list[Evaluation]) -> list[tuple[str, object]]:
    blocks: list[tuple[str, object]] = [("h1", "Checks")]
    if not comparisons:
        blocks.append(("table", (["check", "value", "limit", "margin", "status", "source"], check_rows(ev),
                                 [0.15, 0.1, 0.12, 0.1, 0.07, 0.46])))
        wheres = [[c.id, c.where + (f"; {c.note}" if c.note else "")] for c in ev.checks]
        blocks += [("h2", "Where each check governs"), ("table", (["check", "where"], wheres, [0.2, 0.8]))]
        return blocks
    sets = [ev] + comparisons
    header = ["check"] + [e.project.rules.name for e in sets]
    ids: list[str] = []
    for e in sets:  # every check any rule set makes, in first-seen order
        ids += [c.id for c in e.checks if c.id not in ids]
    rows = []
    u = ev.project.units
    for cid in ids:
        row = [cid]
        for e in sets:
            cc = next((x for x in e.checks if x.id == cid), None)
            if cc is None:
                row.append("-")
            elif cc.limit is None:
                row.append(f"{_fmt_check(cc, cc.value, u)}, no limit")
            else:
                row.append(f"{_fmt_check(cc, cc.value, u)} {'<=' if cc.sense == 'max' else '>='} "
                           f"{_fmt_check(cc, cc.limit, u)} {cc.status}")
        rows.append(row)
    width = 0.8 / len(sets)
    blocks.append(("p", "One column per rule set: the value as that rule set measures it (its own "
                        "reference lines and widths), its limit, and whether the design meets it."))
    blocks.append(("table", (header, rows, [0.2] + [width] * len(sets))))
    for e in sets:
        blocks += [("h2", f"Sources: {e.project.rules.title}"),
                   ("table", (["check", "source"], [[c.id, c.source] for c in e.checks], [0.2, 0.8]))]
    return blocks


def _setting_out(ev: Evaluation, spacing: float, rows_max: int = 34) -> list[tuple[str, object]]:
    u = ev.project.units
    data = stations(ev, spacing)
    rows = []
    for r in data[:rows_max]:
        rows.append([r["thread"], f"{r['station']}", format_length(r["chainage_m"], u),
                     f"{r['bearing_deg']:.2f}", format_length(r["x_m"], u), format_length(r["y_m"], u),
                     format_level(r["level_inner_kerb_m"], u), format_level(r["level_centre_m"], u),
                     format_level(r["level_outer_kerb_m"], u), f"{r['grade_centre_pct']:.2f} %", r["segment"]])
    return [("h1", "Setting-out excerpt"),
            ("p", f"The first {min(rows_max, len(data))} of {len(data)} stations; the full table is in "
                  "setting_out.csv. Bearings anticlockwise from +x; levels at the kerbs include the cross-fall."),
            ("table", (["thread", "stn", "chainage", "bearing", "x", "y", "inner kerb", "centre", "outer kerb",
                        "grade", "segment"], rows,
                       [0.12, 0.04, 0.09, 0.07, 0.09, 0.09, 0.1, 0.1, 0.1, 0.08, 0.12]))]


def _document(ev, option, result, comparisons, spacing):
    doc = _summary(ev, option, comparisons) + [("page", None)] + _inputs(ev) + [("page", None)]
    if result is not None:
        doc += _comparison(result) + [("page", None)]
    doc += _checks(ev, comparisons) + [("page", None)]
    for name, _, caption in FIGURES:
        doc.append(("figure", (name, caption)))
    if result is not None:
        doc.append(("figure", ("pareto", "Design search: footprint against steepest gradient")))
        doc.append(("figure", ("options", "The options side by side in plan at one scale")))
    doc += _setting_out(ev, spacing)
    return doc


# ----------------------------------------------------------------------------------
# PDF


class _Pages:
    """A tiny layout engine: text and tables flowing down A4 landscape pages."""

    def __init__(self, pdf: PdfPages, title: str):
        self.pdf, self.title = pdf, title
        self.fig = None
        self.y = 0.0
        self.page = 0

    def new(self):
        self.close()
        self.fig = plt.figure(figsize=A4_LANDSCAPE)
        self.page += 1
        self.fig.text(0.04, 0.965, self.title, fontsize=8, color="#555555")
        self.fig.text(0.96, 0.965, f"page {self.page}", fontsize=8, color="#555555", ha="right")
        self.fig.text(0.04, 0.025, "helix design aid: verify against the codes in force; a qualified "
                      "professional signs off.", fontsize=7, color="#777777")
        self.y = 0.93

    def close(self):
        if self.fig is not None:
            self.pdf.savefig(self.fig)
            plt.close(self.fig)
            self.fig = None

    def need(self, h):
        if self.fig is None or self.y - h < 0.06:
            self.new()

    def text(self, s, size=9, weight="normal", colour="black", width=170, gap=0.006):
        lines = textwrap.wrap(s, width) or [""]
        h = 0.0195 * len(lines) * size / 9
        self.need(h)
        self.fig.text(0.04, self.y, "\n".join(lines), fontsize=size, weight=weight, color=colour, va="top",
                      linespacing=1.35)
        self.y -= h + gap

    def caution(self, s):
        lines = textwrap.wrap(s, 150)
        h = 0.02 * len(lines) + 0.02
        self.need(h)
        self.fig.patches.append(matplotlib.patches.FancyBboxPatch(
            (0.04, self.y - h), 0.92, h, boxstyle="round,pad=0.004", transform=self.fig.transFigure,
            fc="#FFF4E0", ec=PALETTE["soffit"], lw=1.0))
        self.fig.text(0.05, self.y - 0.01, "CAUTION\n" + "\n".join(lines), fontsize=8.5, va="top",
                      linespacing=1.35)
        self.y -= h + 0.01

    def table(self, header, rows, widths, size=7.5):
        """Rows flow down the page; each column of each page is one text object (rows
        padded to a common number of lines), which keeps the PDF light and quick."""
        chars = [max(int(w * 175 * 7.5 / size), 4) for w in widths]
        x = [0.04 + 0.92 * sum(widths[:i]) for i in range(len(widths))]
        line_h = 0.0165 * size / 7.5
        wrap = lambda cells: [textwrap.wrap(str(c), n) or [""] for c, n in zip(cells, chars)]
        head = wrap(header)
        self.need(0.05)
        block: list[tuple[list[list[str]], bool]] = []

        def flush():
            if not block:
                return
            y = self.y
            for k, (cells, bold) in enumerate(block):  # header and every other row shaded
                n = max(len(c) for c in cells)
                if k % 2 == 1 or bold:
                    self.fig.patches.append(matplotlib.patches.Rectangle(
                        (0.04, y - n * line_h - 0.002), 0.92, n * line_h + 0.002,
                        transform=self.fig.transFigure, fc="#EEF3F8", ec="none"))
                y -= n * line_h
            for part, weight in ((block[:1], "bold"), (block[1:], "normal")):
                if not part:
                    continue
                top = self.y if weight == "bold" else self.y - max(len(c) for c in block[0][0]) * line_h
                columns = [[] for _ in widths]
                for cells, _ in part:
                    n = max(len(c) for c in cells)
                    for col, c in zip(columns, cells):
                        col.extend(c + [""] * (n - len(c)))
                for xi, col in zip(x, columns):
                    self.fig.text(xi + 0.002, top, "\n".join(col), fontsize=size, va="top", weight=weight,
                                  linespacing=1.25)
            self.y = y
            block.clear()

        block.append((head, True))
        used = max(len(c) for c in head) * line_h
        for r in rows:
            cells = wrap(r)
            h = max(len(c) for c in cells) * line_h
            if self.y - used - h < 0.07:
                flush()
                self.new()
                block.append((head, True))
                used = max(len(c) for c in head) * line_h
            block.append((cells, False))
            used += h
        flush()
        self.y -= 0.012


def _pdf(doc, figures: dict, title: str) -> bytes:
    buf = io.BytesIO()
    with plt.rc_context(STYLE):
        with PdfPages(buf, metadata={"Title": title, "Creator": "helix", "Producer": "helix",
                                     "CreationDate": None, "ModDate": None}) as pdf:
            pages = _Pages(pdf, title)
            for kind, content in doc:
                if kind == "page":
                    pages.close()
                elif kind == "h1":
                    pages.need(0.1)
                    pages.text(str(content), size=15, weight="bold", gap=0.012)
                elif kind == "h2":
                    pages.need(0.08)
                    pages.text(str(content), size=11, weight="bold", gap=0.004)
                elif kind == "p":
                    if content:
                        pages.text(str(content))
                elif kind == "caution":
                    pages.caution(str(content))
                elif kind == "verdict":
                    text, ok = content  # type: ignore[misc]
                    pages.text(text, size=13, weight="bold", colour="#0072B2" if ok else "#D55E00", gap=0.01)
                elif kind == "table":
                    header, rows, widths = content  # type: ignore[misc]
                    pages.table(header, rows, widths)
                elif kind == "figure":
                    name, _caption = content  # type: ignore[misc]
                    pages.close()
                    if name in figures:
                        pdf.savefig(figures[name])
                        pages.page += 1
            pages.close()
    return buf.getvalue()


# ----------------------------------------------------------------------------------
# Markdown


def _md_table(header, rows) -> str:
    esc = lambda s: str(s).replace("|", "\\|").replace("\n", " ")
    out = ["| " + " | ".join(esc(h) for h in header) + " |", "|" + "---|" * len(header)]
    out += ["| " + " | ".join(esc(c) for c in r) + " |" for r in rows]
    return "\n".join(out)


def _markdown(doc) -> str:
    out: list[str] = []
    for kind, content in doc:
        if kind == "h1":
            out.append(f"## {content}" if out else f"# {content}")
        elif kind == "h2":
            out.append(f"### {content}")
        elif kind == "p" and content:
            out.append(str(content))
        elif kind == "caution":
            out.append(f"> **Caution.** {content}")
        elif kind == "verdict":
            out.append(f"**{content[0]}**")  # type: ignore[index]
        elif kind == "table":
            header, rows, _ = content  # type: ignore[misc]
            out.append(_md_table(header, rows))
        elif kind == "figure":
            name, caption = content  # type: ignore[misc]
            out.append(f"![{caption}]({name}.png)\n\n*{caption}* ([SVG]({name}.svg))")
    return "\n\n".join(out) + "\n"


def report_files(ev: Evaluation, *, option=None, result=None, comparisons: list[Evaluation] | None = None,
                 spacing: float = 5.0, figures: dict | None = None) -> dict[str, bytes]:
    """``report.pdf`` and ``report.md`` for design ``ev`` (the chosen ``option`` of a
    search ``result``, if any), its checks under further rule sets in ``comparisons``.

    ``figures`` maps figure names to open matplotlib figures already drawn (see
    :func:`helix.figures.render_all`); missing ones are drawn here and closed."""
    from . import figures as F
    comparisons = comparisons or []
    doc = _document(ev, option, result, comparisons, spacing)
    given = dict(figures or {})
    made = {}
    for name, make, _ in FIGURES:
        if name not in given:
            made[name] = make(ev)
    if result is not None and "pareto" not in given:
        made["pareto"] = F.pareto_figure(result)
    if result is not None and "options" not in given:
        made["options"] = F.options_figure(result)
    try:
        title = f"{ev.project.name}: helix design report"
        return {"report.pdf": _pdf(doc, {**given, **made}, title), "report.md": _markdown(doc).encode("utf-8")}
    finally:
        for fig in made.values():
            plt.close(fig)
