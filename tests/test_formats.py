"""``-o`` with ``--formats`` and ``--dpi``: parsing, refusals, the files each format
writes, PNG pixel size, and bytes that do not depend on how the figures were rendered."""
import re
import struct
from pathlib import Path

import pytest

import helix
from helix import cli, figures, formats
from helix.cli import main
from helix.formats import FORMATS, Format, parse_dpi, parse_formats

CONFIGS = Path(__file__).resolve().parent.parent / "configs"
DESIGN_FIGURES = ["plan", "section", "cross_section", "clearance", "gradient"]
#: The files each format writes for 'helix check -o' (the README's list of outputs).
CHECK_FILES = {
    "pdf": {"report.pdf"},
    "md": {"report.md"},
    "png": {f"{n}.png" for n in DESIGN_FIGURES},
    "svg": {f"{n}.svg" for n in DESIGN_FIGURES},
    "dxf": {"plan.dxf"},
    "csv": {"setting_out.csv"},
    "json": {"result.json"},
    "ifc": {"model.ifc"},
    "mesh": {"model.glb", "model.obj"},
    "html": {"model.html"},
}


def _written(folder: Path) -> set[str]:
    return {p.name for p in folder.iterdir() if not p.name.startswith(".helix")}


@pytest.fixture(scope="module")
def metric():
    project = helix.load_project(CONFIGS / "demo-metric.yaml")
    return project, helix.evaluate(project)


def test_parse_formats_keeps_table_order_and_ignores_case_and_spaces():
    assert parse_formats(" SVG,pdf , png") == ("pdf", "png", "svg")
    assert set(parse_formats(None)) == {n for n in formats.DEFAULT if FORMATS[n].available()}


@pytest.mark.parametrize("option, value, expected", [
    ("--formats", "pdf,xyz", "unknown format 'xyz'; expected a comma-separated list of pdf, md, png, svg, csv, json, dxf, ifc, mesh, "
                                    "html"),
    ("--formats", ",", "expected a comma-separated list of"),
    ("--dpi", "20", "expected a whole number of dots per inch from 50 to 600"),
    ("--dpi", "high", "got 'high'"),
])
@pytest.mark.parametrize("command, project", [("check", "demo-metric.yaml"), ("design", "demo-search.yaml")])
def test_bad_output_option_is_one_line_exit_2_and_writes_nothing(tmp_path, capsys, option, value, expected,
                                                                   command, project):
    out = tmp_path / "out"
    status = main([command, str(CONFIGS / project), "-o", str(out), option, value])
    err = capsys.readouterr().err
    assert status == 2
    assert err.count("\n") == 1 and err.startswith(f"helix: error: command line: {option}: ")
    assert expected in err
    assert not out.exists()


def test_a_format_whose_extra_is_missing_is_refused_with_the_extra_to_install(monkeypatch, tmp_path, capsys):
    # A row as the exports package adds them, needing a module that is not installed.
    row = Format("ifc", "model.ifc", needs="helix_no_such_module", extra="bim")
    monkeypatch.setitem(FORMATS, "ifc", row)
    status = main(["check", str(CONFIGS / "demo-metric.yaml"), "-o", str(tmp_path / "o"), "--formats", "pdf,ifc"])
    err = capsys.readouterr().err
    assert status == 2 and err.count("\n") == 1
    assert "format 'ifc' needs helix_no_such_module" in err and "helix-ramp-planner[bim]" in err
    assert not (tmp_path / "o").exists()
    assert "ifc" not in parse_formats(None)  # and the default leaves it out


def test_a_format_row_with_a_writer_is_written(monkeypatch, metric):
    project, ev = metric
    monkeypatch.setitem(FORMATS, "txt", Format("txt", "levels.txt", writer=lambda e: {
        "levels.txt": "\n".join(level.name for level in e.project.levels).encode()}))
    files = cli._check_outputs(ev, project, None, formats=parse_formats("txt"))
    assert set(files) == {"levels.txt"} and files["levels.txt"].startswith(b"Ground")


@pytest.mark.parametrize("name", list(CHECK_FILES))
def test_each_format_writes_exactly_its_files(name, metric):
    project, ev = metric
    if not FORMATS[name].available():
        pytest.skip(f"{FORMATS[name].needs} not installed")
    files = cli._check_outputs(ev, project, None, formats=(name,))
    assert set(files) == CHECK_FILES[name]


def test_the_default_writes_the_report_formats_and_its_markdown_links_only_files_written(tmp_path, capsys):
    out = tmp_path / "out"
    assert main(["check", str(CONFIGS / "demo-metric.yaml"), "-o", str(out)]) == 0
    expected = set().union(*(CHECK_FILES[n] for n in formats.DEFAULT if FORMATS[n].available()))
    assert _written(out) == expected
    assert not {"svg", "ifc", "mesh", "html"} & set(formats.DEFAULT)  # on request only
    md = (out / "report.md").read_text()
    linked = set(re.findall(r"\]\(([\w.]+)\)", md))
    assert linked and linked <= _written(out), linked - _written(out)
    # Asked for, the SVG is linked beside each PNG.
    assert main(["check", str(CONFIGS / "demo-metric.yaml"), "-o", str(out), "--formats", "md,png,svg"]) == 0
    assert "(plan.png)" in (out / "report.md").read_text() and "(plan.svg)" in (out / "report.md").read_text()


def test_design_formats_write_the_search_files_too(tmp_path, capsys):
    out = tmp_path / "out"
    status = main(["design", str(CONFIGS / "demo-search.yaml"), "-o", str(out), "--formats", "png,json"])
    assert status == 0, capsys.readouterr().err
    assert _written(out) == CHECK_FILES["png"] | {"pareto.png", "options.png", "result.json", "design.json"}
    # A second run with fewer formats removes the files it no longer makes.
    assert main(["design", str(CONFIGS / "demo-search.yaml"), "-o", str(out), "--formats", "json"]) == 0
    assert _written(out) == {"result.json", "design.json"}


def _png_size(data: bytes) -> tuple[int, int]:
    assert data[:8] == b"\x89PNG\r\n\x1a\n" and data[12:16] == b"IHDR"
    return struct.unpack(">II", data[16:24])


@pytest.mark.parametrize("dpi", [72, 200])
def test_dpi_sets_the_png_pixel_size_from_the_sheet_size(dpi, metric):
    project, ev = metric
    files = cli._check_outputs(ev, project, None, formats=("png",), dpi=dpi)
    # Source: ISO 216:2007, Writing paper and certain classes of printed matter, A series
    # (A3 297 x 420 mm, A4 210 x 297 mm); pixels = sheet mm * dpi / 25.4 (1 in = 25.4 mm).
    sheet_mm = {"A3": (420.0, 297.0), "A4": (297.0, 210.0)}
    for name in DESIGN_FIGURES:
        w_mm, h_mm = sheet_mm[figures.SHEET_OF[name]]
        w, h = _png_size(files[f"{name}.png"])
        assert abs(w - w_mm * dpi / 25.4) < 1.0 and abs(h - h_mm * dpi / 25.4) < 1.0, (name, w, h)


def test_parse_dpi_default_and_bounds():
    assert parse_dpi(None) == formats.DEFAULT_DPI == figures.PNG_DPI
    assert parse_dpi("300") == 300 and parse_dpi("50") == 50 and parse_dpi("600") == 600
    for bad in ("49", "601", "150.5", ""):
        with pytest.raises(helix.InputError):
            parse_dpi(bad)


def test_outputs_are_byte_identical_between_runs_and_however_rendered(monkeypatch, metric):
    project, ev = metric
    first = cli._check_outputs(ev, project, None)
    second = cli._check_outputs(ev, project, None)
    assert set(first) == set(second) and all(first[k] == second[k] for k in first)
    # The same bytes with every figure saved in this process (no worker processes).
    monkeypatch.setattr(figures, "_workers", lambda tasks: 0)
    serial = cli._check_outputs(ev, project, None)
    assert all(serial[k] == first[k] for k in first)


def test_the_pdf_gets_a_worker_of_its_own_and_a_failed_worker_is_made_again_here(metric):
    import os
    project, ev = metric
    if not hasattr(os, "fork") or figures._cores() < 2:
        pytest.skip("needs fork and two cores")
    from helix.report import report_makers
    figs: dict = {}
    parent = os.getpid()
    pdf = report_makers(ev, figures=figs, formats=("pdf",))["report.pdf"]

    def pdf_failing_in_a_worker() -> bytes:
        if os.getpid() != parent:
            os._exit(1)  # a worker that dies: its file is made in the parent instead
        return pdf()

    try:
        _, job = figures.start_render(ev, figs, ("png",), 50, also={"report.pdf": pdf_failing_in_a_worker})
        assert [share for _, _, share in job.children][0] == ["report.pdf"]  # first, alone
        assert all("report.pdf" not in share for _, _, share in job.children[1:])
        files = job.result()
    finally:
        for fig in figs.values():
            figures.close_sheet(fig)
    assert set(files) == {"report.pdf"} | {f"{n}.png" for n in DESIGN_FIGURES}
    # The same bytes as the report made in one process, start to end.
    assert files["report.pdf"] == cli._check_outputs(ev, project, None, formats=("pdf",))["report.pdf"]


def test_svg_keeps_its_text_as_text_with_a_generic_family_last(metric):
    import xml.etree.ElementTree as ET
    project, ev = metric
    svg = cli._check_outputs(ev, project, None, formats=("svg",))["plan.svg"]
    root = ET.fromstring(svg)
    ns = "{http://www.w3.org/2000/svg}"
    texts = [t for t in root.iter(f"{ns}text")]
    # Source: W3C, SVG 1.1 (Second Edition), 2011, 10.4 (the 'text' element) and 10.15
    # ('xml:space': "preserve" keeps runs of spaces); W3C, CSS 2.1, 15.3 (font-family: a
    # list of families, a generic family last as the fallback).
    assert root.get("{http://www.w3.org/XML/1998/namespace}space") == "preserve"
    assert project.name in {"".join(t.itertext()) for t in texts}
    families = {part.split(":", 1)[1].strip() for t in texts for part in t.get("style", "").split(";")
                if part.strip().startswith("font-family")}
    assert families and all(f.startswith("'DejaVu Sans'") and f.endswith("sans-serif") for f in families)
