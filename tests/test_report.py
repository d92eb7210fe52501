"""The design report: PDF, Markdown, DXF, determinism and safe writing."""
import json
import math

import numpy as np
import pytest

import helix
from helix.cli import MANIFEST, main

ezdxf = pytest.importorskip("ezdxf")

METRIC = "configs/demo-metric.yaml"
IMPERIAL = "configs/demo-imperial.yaml"


@pytest.fixture(scope="module")
def metric_out(tmp_path_factory):
    out = tmp_path_factory.mktemp("metric")
    assert main(["check", METRIC, "-o", str(out)]) == 0
    return out


def test_dxf_reads_back_passes_audit_and_matches_the_design(metric_out):
    # Source: the reference DXF library ezdxf (readfile and its auditor) on the file
    # helix wrote; radii and levels measured from the file against the design.
    doc = ezdxf.readfile(metric_out / "plan.dxf")
    auditor = doc.audit()
    assert not auditor.has_errors
    layers = {layer.dxf.name for layer in doc.layers}
    assert {"KERBS", "LANE_CENTRE_LINES", "STRUCTURE", "LEVEL_CONNECTIONS", "TEXT"} <= layers
    ev = helix.evaluate(helix.load_project(METRIC))
    t = ev.helix.threads[0]
    msp = doc.modelspace()
    arcs = [a for a in msp.query("ARC") if a.dxf.layer == "KERBS"]
    radii = sorted({round(a.dxf.radius, 6) for a in arcs})
    assert radii == pytest.approx([t.inner_radius, t.outer_radius], abs=1e-3)
    cx, cy = ev.helix.centre
    polylines = [p for p in msp.query("POLYLINE") if p.dxf.layer == "KERBS"]
    assert len(polylines) == 2
    for pl in polylines:
        pts = np.array([v.dxf.location for v in pl.vertices])
        r = np.hypot(pts[:, 0] - cx, pts[:, 1] - cy)
        assert np.allclose(r, r[0], atol=1e-3)
        bearing = np.unwrap(np.arctan2(pts[:, 1] - cy, pts[:, 0] - cx))
        theta = (bearing - t.start_bearing) * t.hand
        theta -= 2 * math.pi * round((theta[0] - t.profile.start) / (2 * math.pi))  # first vertex: the start
        assert np.allclose(pts[:, 2], t.level(theta, r[0]), atol=1e-3)
        # The kerb starts at the lowest floor and ends at the top one.
        assert pts[0, 2] == pytest.approx(ev.project.levels[0].level, abs=1e-3)
        assert pts[-1, 2] == pytest.approx(ev.project.levels[-1].level, abs=1e-3)


def test_pdf_has_the_expected_pages(metric_out):
    pdf = (metric_out / "report.pdf").read_bytes()
    assert pdf.startswith(b"%PDF")
    pages = pdf.count(b"/Type /Page\n") + pdf.count(b"/Type /Page ") + pdf.count(b"/Type /Page>")
    # Summary, inputs (1 or 2 pages), checks (2 pages: the check table and where each
    # check governs), five figures, setting-out excerpt; every page counted in its footer.
    from helix.report import report_pages
    ev = helix.evaluate(helix.load_project(METRIC))
    assert 10 <= pages <= 12 and pages == sum(1 for _ in report_pages(ev))
    md = (metric_out / "report.md").read_text()
    for name in ("plan.png", "section.png", "cross_section.png", "clearance.png", "gradient.png"):
        assert f"({name})" in md and (metric_out / name).is_file()
    assert "Caution" in md


def test_outputs_are_byte_identical_between_runs(tmp_path):
    # Two separate processes with different string-hash seeds: nothing may depend on
    # set or dict ordering.
    import os
    import subprocess
    import sys
    a, b = tmp_path / "a", tmp_path / "b"
    for out, seed in ((a, "1"), (b, "2")):
        env = dict(os.environ, PYTHONHASHSEED=seed)
        done = subprocess.run([sys.executable, "-m", "helix", "check", METRIC, "-o", str(out),
                               "--formats", "pdf,md,png,svg,csv,json,dxf"], env=env,
                              capture_output=True, text=True)
        assert done.returncode == 0, done.stderr
    for name in ("result.json", "setting_out.csv", "plan.dxf", "report.pdf", "report.md", "plan.svg",
                 "section.svg", "gradient.svg"):
        assert (a / name).read_bytes() == (b / name).read_bytes(), name
    assert b"CreationDate" not in (a / "report.pdf").read_bytes()


def test_a_failed_run_leaves_the_previous_outputs(tmp_path, monkeypatch, capsys, refuse_writes):
    out = tmp_path / "o"
    assert main(["check", METRIC, "-o", str(out)]) == 0
    before = {p.name: p.read_bytes() for p in out.iterdir()}
    import helix.report as report

    def boom(*args, **kwargs):
        raise RuntimeError("disk on fire")

    monkeypatch.setattr(report, "report_makers", boom)
    assert main(["check", IMPERIAL, "-o", str(out)]) == 3  # an internal error, not a verdict
    assert "internal error: RuntimeError" in capsys.readouterr().err
    after = {p.name: p.read_bytes() for p in out.iterdir()}
    assert after == before
    # A failure while writing the files themselves leaves no temporary behind either.
    monkeypatch.undo()  # the report works again; now the disk fails
    refuse_writes(28, 3)  # ENOSPC
    assert main(["check", IMPERIAL, "-o", str(out)]) == 4
    monkeypatch.undo()
    assert "the disk is full" in capsys.readouterr().err
    assert {p.name: p.read_bytes() for p in out.iterdir()} == before


def test_files_helix_did_not_write_are_never_overwritten(tmp_path, capsys):
    out = tmp_path / "mine"
    out.mkdir()
    (out / "report.pdf").write_bytes(b"my own report")
    (out / "notes.txt").write_text("keep me")
    assert main(["check", METRIC, "-o", str(out)]) == 2
    assert "not written by helix" in capsys.readouterr().err
    assert (out / "report.pdf").read_bytes() == b"my own report"
    assert sorted(p.name for p in out.iterdir()) == ["notes.txt", "report.pdf"]
    # A folder helix wrote before is rewritten; other files in it stay.
    ours = tmp_path / "ours"
    assert main(["check", METRIC, "-o", str(ours)]) == 0
    (ours / "notes.txt").write_text("keep me")
    assert main(["check", METRIC, "-o", str(ours)]) == 0
    assert (ours / "notes.txt").read_text() == "keep me"
    assert "report.pdf" in (ours / MANIFEST).read_text()


def test_several_rule_sets_in_one_run(tmp_path, capsys):
    code = main(["check", IMPERIAL, "--json", "--rules", "istructe-2011,de-garage-ordinance"])
    data = json.loads(capsys.readouterr().out)
    sets = [c["rules"] for c in data["rules_comparison"]]
    assert sets == ["us-ibc-2015", "istructe-2011", "de-garage-ordinance"]
    german = data["rules_comparison"][2]
    # Source: GaVO BW s. 3 (1): at least 3 % cross-fall on curved ramps; the demo has none.
    assert not german["ok"] and any(c["id"] == "cross_fall" and not c["ok"] for c in german["checks"])
    assert code == 1
    assert main(["check", IMPERIAL, "--rules", "no-such-rules"]) == 2


def test_imperial_report_is_in_feet_and_inches(tmp_path):
    out = tmp_path / "imp"
    assert main(["check", IMPERIAL, "-o", str(out)]) == 0
    md = (out / "report.md").read_text()
    assert "36'-0\"" in md and "(1:" in md
    head = (out / "setting_out.csv").read_text().splitlines()[1]  # after the comment line
    assert "chainage_ft" in head and "level_centre_ftin" in head


def test_design_report_has_the_comparison(tmp_path):
    out = tmp_path / "d"
    assert main(["design", "configs/demo-search.yaml", "-o", str(out)]) == 0
    md = (out / "report.md").read_text()
    assert "Comparison of layouts" in md and "pareto.png" in md
    assert (out / "design.json").is_file() and (out / "plan.dxf").is_file()
