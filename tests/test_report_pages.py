"""The report as a reader gets it: one rounding rule per quantity, tables that keep
their rows together, TrueType text, and every page legible at print size."""
from __future__ import annotations

import io
import re
import shutil
import subprocess
import zlib

import pytest

import helix
from helix import report
from helix.figures import drawn_texts
from helix.results import check_table
from helix.units import fixed, format_gradient, format_length

DEMOS = ("configs/demo-metric.yaml", "configs/demo-imperial.yaml", "configs/demo-double.yaml",
         "configs/demo-search.yaml")
MM_PER_INCH = 25.4


def _evaluation(path: str):
    """The design of a demo and, for the search demo, the search around it."""
    project = helix.load_project(path)
    if project.search is not None and path.endswith("demo-search.yaml"):
        from helix.search import design
        result = design(project)
        best = result.options[result.best]
        return best.evaluation, {"option": best, "result": result}
    return helix.evaluate(project), {}


def _texts(fig):
    """(text, printed em height in mm, artist, window extent in mm as x0, y0, x1, y1) of
    every text drawn on a figure, axes texts and tick labels included."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    canvas = fig.canvas if isinstance(fig.canvas, FigureCanvasAgg) else FigureCanvasAgg(fig)
    renderer = canvas.get_renderer()
    fig.draw_without_rendering()
    scale = MM_PER_INCH / fig.dpi
    out = []
    for t in drawn_texts(fig):
        bb = t.get_window_extent(renderer)
        out.append((t.get_text(), t.get_fontsize() * MM_PER_INCH / 72, t,
                    (bb.x0 * scale, bb.y0 * scale, bb.x1 * scale, bb.y1 * scale)))
    return out


def _overlap(a, b, tol=0.05) -> bool:
    return a[0] < b[2] - tol and b[0] < a[2] - tol and a[1] < b[3] - tol and b[1] < a[3] - tol


def _measure(page) -> dict:
    """A furnished page's texts (with whether each is the report's header or footer)
    and its row stripes, in mm from the bottom-left corner."""
    fig = page.fig
    w, h = (x * MM_PER_INCH for x in fig.get_size_inches())
    stripes = []
    for p in fig.patches:
        if type(p).__name__ == "Rectangle":
            x0, y0 = p.get_x() * w, p.get_y() * h
            stripes.append((x0, y0, x0 + p.get_width() * w, y0 + p.get_height() * h))
    return {"own": page.own, "size": (w, h), "tables": list(page.tables), "caption": page.caption,
            "texts": [(s, mm, bb, t in page.furniture) for s, mm, t, bb in _texts(fig)], "stripes": stripes}


def _stripe_faults(page: dict) -> list[str]:
    """Text of a striped row outside its stripe or off its centre."""
    faults = []
    for s, mm, bb, _ in page["texts"]:
        cy = (bb[1] + bb[3]) / 2
        for r in [r for r in page["stripes"] if r[1] <= cy <= r[3] and r[0] <= bb[0] <= r[2]]:
            if not (r[1] - 0.01 <= bb[1] and bb[3] <= r[3] + 0.01) or abs(cy - (r[1] + r[3]) / 2) > 0.35:
                faults.append(s)
    return faults


def _collect(path: str) -> dict:
    """Everything the tests read from one demo's report, measured page by page while
    each page is furnished."""
    ev, extra = _evaluation(path)
    pages = [_measure(page) for page in report.report_pages(ev, **extra)]
    files = report.report_files(ev, **extra)
    return {"ev": ev, "pages": pages, "pdf": files["report.pdf"], "md": files["report.md"].decode(),
            "terminal": check_table(ev)}


@pytest.fixture(scope="module")
def demos():
    return {path: _collect(path) for path in DEMOS}


# -- one rounding rule -------------------------------------------------------------

def test_one_rounding_rule_half_up():
    # From memory: ISO 80000-1:2009, annex B (rule B: a discarded 5 rounds the last kept
    # digit up), the rule of engineering tables; verify.
    assert fixed(5.305, 2) == "5.31"              # binary 5.305 is 5.30499999...; '%.2f' gives 5.30
    assert f"{5.305:.2f}" == "5.30"               # the fault this rule removes
    assert fixed(5.30499999999, 2) == fixed(5.30500000001, 2) == "5.31"
    assert fixed(0.0125, 3) == "0.013" and fixed(-0.0004, 3) == "0.000"
    assert format_gradient(0.05305) == "5.31 %"
    # Worked by hand: 1 in = 0.0254 m, so 0.01905 m = 0.75 in, rounded to the half inch
    # upward: 0'-1"; 3.2004 m = 126 in = 10'-6".
    assert format_length(0.01905, "imperial") == "0'-1\""
    assert format_length(3.2004, "imperial") == "10'-6\""


def _renderings(text: str, pct: float) -> set[str]:
    """Every '<number> %' in ``text`` within half a display step of ``pct``."""
    found = set()
    for m in re.finditer(r"(?<![\d.])(\d+\.\d{2}) %", text):
        if abs(float(m.group(1)) - pct) < 0.006:
            found.add(m.group(0))
    return found


def _pdf_text(data: dict) -> str:
    return "\n".join(s for p in data["pages"] for s, *_ in p["texts"])


@pytest.mark.parametrize("path", DEMOS[:2])
def test_a_value_prints_alike_in_the_terminal_markdown_and_pdf(demos, path):
    data = demos[path]
    ev = data["ev"]
    g = next(c for c in ev.checks if c.id == "gradient_centre_line").value
    # Common practice, no single source: a constant-pitch helix rises p / (2 pi r); the
    # metric demo rises 3.000 m per turn at r = 9.000 m: 3 / (2 pi 9) = 5.305 %.
    if path.endswith("metric.yaml"):
        assert g == pytest.approx(3.0 / (2 * 3.141592653589793 * 9.0), abs=1e-6)
    want = format_gradient(g, ev.project.units).split(" (")[0]
    for where, text in (("terminal", data["terminal"]), ("markdown", data["md"]), ("pdf", _pdf_text(data))):
        assert _renderings(text, 100 * g) == {want}, where
    # the imperial 1:n form too
    if ev.project.units == "imperial":
        full = format_gradient(g, "imperial")
        assert full in data["terminal"] and full in data["md"] and full in _pdf_text(data)


# -- check names in words ----------------------------------------------------------

@pytest.mark.parametrize("path", DEMOS)
def test_readers_see_check_names_in_words(demos, path):
    data = demos[path]
    ids = {c.id for c in data["ev"].checks if "_" in c.id}  # "footprint" is also a word
    for where, text in (("terminal", data["terminal"]), ("markdown", data["md"]), ("pdf", _pdf_text(data))):
        shown = {i for i in ids if re.search(rf"\b{i}\b", text)}
        assert not shown, (where, shown)
    for c in data["ev"].checks:
        assert c.title in data["terminal"] and c.title in data["md"]


def test_json_keeps_ids_with_titles_beside_them():
    from helix.results import to_dict
    ev = helix.evaluate(helix.load_project(DEMOS[0]))
    checks = to_dict(ev)["checks"]
    assert {c["id"]: c["title"] for c in checks}["gradient_centre_line"] == "Gradient on the centre line"


# -- units ---------------------------------------------------------------------

def test_imperial_report_has_no_metric_units(demos):
    data = demos["configs/demo-imperial.yaml"]
    metric = re.compile(r"\d\s*(?:m|mm|cm|km/h|m/s)\b(?!\s*\))")
    for where, text in (("terminal", data["terminal"]), ("markdown", data["md"]), ("pdf", _pdf_text(data))):
        # A quoted published value may give its metric equivalent in brackets
        # ("7 ft (2134 mm)"); the formula's own units are named as such.
        text = re.sub(r"\(\d+ mm\)|\(V in km/h, R in m\)", "", text)
        assert not metric.findall(text), (where, metric.findall(text)[:5])
    assert "mph" in data["terminal"]


def test_the_two_outer_kerb_radii_are_named(demos):
    data = demos["configs/demo-imperial.yaml"]
    md = data["md"]
    # The demo: centre line 36'-0", two 12'-0" lanes either side of an 18" central kerb,
    # so the inner lane's outer kerb lies at 36'-0" - 9" = 35'-3" and the carriageway's
    # outer kerb at 36'-0" + 9" + 12'-0" = 48'-9" (worked by hand).
    assert "inner lane: 23'-3\" to 35'-3\"" in md and "outer lane: 36'-9\" to 48'-9\"" in md
    assert "the outer kerb of the inner lane" in md and "lies at 48'-9\"" in md
    assert "inner lane: 23'-3\" to 35'-3\"; outer lane: 36'-9\" to 48'-9\"" in data["terminal"]
    assert "the outer kerb of the inner lane" in data["terminal"]


# -- tables ----------------------------------------------------------------------

def test_split_rows_keeps_rows_together():
    # Common practice, no single source (typesetting): no widow or orphan of fewer than
    # three rows when a table breaks across pages.
    for n in range(1, 40):
        for first in (0.5, 2.5, 4.5, 7.5, 12.0):
            chunks = report.split_rows([1.0] * n, first, 10.0)
            assert sum(chunks, []) == list(range(n))
            parts = [c for c in chunks if c]
            assert all(len(c) >= min(3, n) for c in parts), (n, first, chunks)
            assert all(len(c) <= 10 for c in parts[1:]) and len(chunks[0]) <= first


@pytest.mark.parametrize("path", DEMOS)
def test_no_orphan_rows_and_rows_centred_on_their_stripes(demos, path):
    seen: dict[int, int] = {}
    for page in demos[path]["pages"]:
        for number, here, total in page["tables"]:
            assert here >= min(3, total), (number, here, total)
            seen[number] = seen.get(number, 0) + here
        assert not _stripe_faults(page)
    totals = {}
    for page in demos[path]["pages"]:
        for number, _, total in page["tables"]:
            totals[number] = total
    assert seen == totals  # every row printed once


def test_long_wrapped_cells_grow_their_rows():
    table = report.Table("Long sources", ["check", "source"],
                         [[f"row {i}", "a long source text " * (1 + 9 * (i % 5))] for i in range(60)],
                         [0.2, 0.8], 1)
    lay = report._Layout()
    lay.table(table)
    assert len(lay.pages) > 1
    lines = {len(report._wrap(r[1], 200, report._CELL)) for r in table.rows}
    assert len(lines) > 2  # rows of one, two and more lines
    for page in lay.pages:
        measured = _measure(page)
        boxes = [bb for _, _, bb, _ in measured["texts"]]
        for i, a in enumerate(boxes):  # a wrapped cell never runs into the next row
            for b in boxes[i + 1:]:
                assert not _overlap(a, b)
        assert not _stripe_faults(measured)
        for number, here, total in page.tables:
            assert here >= 3


# -- fonts and text --------------------------------------------------------------

@pytest.mark.parametrize("path", DEMOS)
def test_pdf_text_is_truetype(demos, path):
    # Source: ISO 32000-1:2008 (PDF 1.7), 9.6 and 9.7: font subtypes Type1, TrueType,
    # Type3, Type0 with CIDFontType0 or CIDFontType2 descendants.
    pdf = demos[path]["pdf"]
    subtypes = re.findall(rb"/Type\s*/Font\b[^>]*?/Subtype\s*/(\w+)|/Subtype\s*/(\w+)[^>]*?/Type\s*/Font\b", pdf)
    kinds = {(a or b).decode() for a, b in subtypes}
    assert kinds, "no font dictionaries found"
    assert "Type3" not in kinds and b"/Type3" not in pdf
    assert kinds <= {"TrueType", "Type0", "CIDFontType2"}, kinds
    if "Type0" in kinds:
        assert b"/CIDFontType2" in pdf


def _embedded_fonts(pdf: bytes) -> list[bytes]:
    """The font programs of every /FontFile2 stream (ISO 32000-1:2008, 9.9), inflated."""
    fonts = []
    for number in re.findall(rb"/FontFile2\s+(\d+)\s+0\s+R", pdf):
        obj = re.search(rb"\n" + number + rb"\s+0\s+obj\s*<<(.*?)>>\s*stream\r?\n", pdf, re.S)
        assert obj is not None
        length = int(re.search(rb"/Length\s+(\d+)", obj.group(1)).group(1))
        data = pdf[obj.end():obj.end() + length]
        fonts.append(zlib.decompress(data) if b"/FlateDecode" in obj.group(1) else data)
    return fonts


def test_embedded_fonts_are_whole_truetype_without_layout_tables(demos):
    # Reference: fontTools reads every embedded program as a TrueType font with its
    # outlines and metrics; the glyph substitution and positioning tables, which a PDF
    # viewer never reads (ISO 32000-1:2008, 9.4.4: the PDF places each glyph), are left
    # out of the subsets.
    from fontTools.ttLib import TTFont
    fonts = _embedded_fonts(demos["configs/demo-metric.yaml"]["pdf"])
    assert fonts
    for program in fonts:
        font = TTFont(io.BytesIO(program))
        assert {"glyf", "loca", "hmtx", "head"} <= set(font.keys())
        assert not {"GSUB", "GPOS", "GDEF", "kern"} & set(font.keys())
        assert font["maxp"].numGlyphs > 1


@pytest.mark.skipif(shutil.which("pdftotext") is None, reason="pdftotext (poppler-utils) is not installed")
def test_page_one_text_can_be_extracted(demos, tmp_path):
    data = demos["configs/demo-imperial.yaml"]
    pdf = tmp_path / "report.pdf"
    pdf.write_bytes(data["pdf"])
    done = subprocess.run(["pdftotext", "-f", "1", "-l", "1", "-layout", str(pdf), "-"], capture_output=True,
                          text=True, check=True)
    text = done.stdout
    n = len(data["pages"])
    assert "Oak Hollow garage" in text and f"page 1 of {n}" in text and "CAUTION" in text
    assert "licensed professionals govern" in text


# -- legibility ------------------------------------------------------------------

def _legibility_faults(page) -> list[str]:
    w, h = page["size"]
    faults = []
    texts = page["texts"]
    for s, mm, bb, _ in texts:
        if mm < report.MIN_TEXT_MM - 1e-9:
            faults.append(f"{s!r} is {mm:.2f} mm high")
        if bb[0] < -0.01 or bb[1] < -0.01 or bb[2] > w + 0.01 or bb[3] > h + 0.01:
            faults.append(f"{s!r} leaves the page")
    for i, a in enumerate(texts):
        for b in texts[i + 1:]:
            if (a[3] or b[3] or page["own"]) and _overlap(a[2], b[2]):
                faults.append(f"{a[0][:30]!r} overlaps {b[0][:30]!r}")
    return faults


@pytest.mark.parametrize("path", DEMOS)
def test_report_pages_are_legible(demos, path):
    """Text pages: no text below 2.5 mm, nothing outside the page, nothing overlapping."""
    for n, page in enumerate(demos[path]["pages"], 1):
        if page["own"]:
            assert not _legibility_faults(page), (n, _legibility_faults(page)[:5])


@pytest.mark.parametrize("path", DEMOS)
def test_figure_pages_leave_room_for_the_header_and_caption(demos, path):
    """Figure pages: the header, caption and page number overlap none of the figure's
    text, are legible and lie on the page."""
    faults = []
    for n, page in enumerate(demos[path]["pages"], 1):
        if not page["own"]:
            furniture = [t for t in page["texts"] if t[3]]
            assert furniture and page["caption"].startswith("Figure ")
            faults += [(n, f) for f in _legibility_faults(page)]
    assert not faults, faults[:5]


@pytest.mark.parametrize("path", DEMOS)
def test_every_page_has_its_header_and_number(demos, path):
    pages = demos[path]["pages"]
    name = demos[path]["ev"].project.name
    for n, page in enumerate(pages, 1):
        furniture = [s for s, *_, mine in page["texts"] if mine]
        assert f"page {n} of {len(pages)}" in furniture
        assert any(s.startswith(name) for s in furniture)
        assert any("licensed professionals govern" in s for s in furniture)
    numbers = list(dict.fromkeys(int(m) for m in re.findall(r"Figure (\d+) \u2014", demos[path]["md"])))
    assert numbers == list(range(1, len(numbers) + 1)) and len(numbers) >= 5
    tables = list(dict.fromkeys(int(m) for m in re.findall(r"Table (\d+) \u2014", demos[path]["md"])))
    assert tables == list(range(1, len(tables) + 1)) and len(tables) >= 6


def test_revision_from_the_drawing_section_when_there_is_one():
    import dataclasses
    project = helix.load_project(DEMOS[0])
    assert report._header(project).endswith("helix design report")

    @dataclasses.dataclass(frozen=True)
    class Drawing:
        revision: str

    class WithDrawing:
        name = project.name
        drawing = Drawing("C")

    assert report._header(WithDrawing()).endswith("revision C")
