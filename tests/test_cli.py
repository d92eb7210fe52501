"""The ``helix`` command on the demo projects: table, JSON, files and exit status."""
import json
import math
import subprocess
import sys
from importlib.metadata import version
from pathlib import Path

import pytest
import yaml

import helix
from helix.cli import main

CONFIGS = Path(__file__).resolve().parent.parent / "configs"
DEMOS = ["demo-metric.yaml", "demo-imperial.yaml"]
# The checks the README lists: gradient on the reference line, inner and outer kerb radius,
# lane width, clear headroom, cross-fall and fit in the footprint, the four checks of the
# design vehicle, the floor approaches, and (the demos' rule sets limit the centre line
# only) the inner-kerb warning.
CHECK_IDS = {"gradient_centre_line", "inner_kerb_radius", "outer_kerb_radius", "lane_width",
             "clear_height", "cross_fall", "footprint", "lane_width_swept", "underbody_clearance",
             "roof_clearance", "side_friction", "gradient_inner_kerb_warning", "approach_clear_height",
             "approach_roof_clearance", "approach_grade_change"}
FIGURES = ["plan.png", "plan.svg", "section.png", "section.svg", "cross_section.png",
           "cross_section.svg", "clearance.png", "clearance.svg"]


def run(capsys, *args):
    status = main(list(args))
    captured = capsys.readouterr()
    return status, captured.out, captured.err


def run_json(capsys, project):
    status, out, err = run(capsys, "check", str(project), "--json")
    return status, json.loads(out, parse_constant=_refuse_non_finite), err


def _refuse_non_finite(name):
    raise AssertionError(f"JSON holds {name}")


def _numbers(value):
    if isinstance(value, dict):
        for v in value.values():
            yield from _numbers(v)
    elif isinstance(value, list):
        for v in value:
            yield from _numbers(v)
    elif isinstance(value, (int, float)) and not isinstance(value, bool):
        yield value


@pytest.mark.parametrize("demo", DEMOS)
def test_check_prints_a_table_with_every_check(demo, capsys):
    status, out, err = run(capsys, "check", str(CONFIGS / demo))
    assert status == 0 and err == ""
    from helix.checks import check_title
    rows = [line.replace("no limit", "no-limit") for line in out.splitlines()]
    titles = {check_title(i) for i in CHECK_IDS}
    shown = {t for t in titles for row in rows if row.split()[:1] and row.split()[0] in ("pass", "FAIL",
             "no-limit", "WARN") and f"  {t}  " in row}
    assert shown == titles  # each check by its name in words
    for title in titles:  # each with the source of its limit
        assert f"\n  {title}" in out
    assert "RESULT: all checks pass" in out
    assert "CAUTION" in out


@pytest.mark.parametrize("demo", DEMOS)
def test_check_json(demo, capsys):
    status, data, err = run_json(capsys, CONFIGS / demo)
    assert status == 0 and err == ""
    assert data["ok"] is True
    assert {c["id"] for c in data["checks"]} == CHECK_IDS
    for check in data["checks"]:
        assert {"id", "value", "limit", "ok", "source"} <= set(check)
        assert isinstance(check["ok"], bool) and check["source"].strip()
    geometry = data["geometry"]
    for key in ("centre_radius_m", "inner_radius_m", "outer_radius_m", "lane_width_m", "threads"):
        assert isinstance(geometry[key], (int, float))
    assert isinstance(geometry["turns_per_storey"], list)
    assert isinstance(geometry["pitch_m"], list)
    assert set(geometry["gradient_pct"]) == {"inner", "centre", "outer"}
    assert isinstance(data["headroom_min_m"], float)
    assert all(math.isfinite(x) for x in _numbers(data))


def test_metric_demo_numbers(capsys):
    _, data, _ = run_json(capsys, CONFIGS / "demo-metric.yaml")
    g = data["geometry"]
    assert g["threads"] == 1
    assert g["centre_radius_m"] == pytest.approx(9.0)
    assert g["lane_width_m"] == pytest.approx(3.65)
    assert g["inner_radius_m"] == pytest.approx(9.0 - 3.65 / 2, abs=1e-3)
    assert g["outer_radius_m"] == pytest.approx(9.0 + 3.65 / 2, abs=1e-3)
    assert g["turns_per_storey"] == [1, 1, 1, 1]
    assert g["pitch_m"] == pytest.approx([3.0, 3.0, 2.9, 2.9], abs=1e-3)
    # Common practice, no single source
    # (on a helicoid g(r) = p / (2 pi r): the inner edge is steeper, the outer flatter;
    # the steepest storey has the largest pitch)
    p = max(g["pitch_m"])
    for key, r in (("inner", g["inner_radius_m"]), ("centre", g["centre_radius_m"]),
                   ("outer", g["outer_radius_m"])):
        assert g["gradient_pct"][key] == pytest.approx(100 * p / (2 * math.pi * r), abs=2e-3)
    # Common practice, no single source
    # (clear headroom = stacked gap, here the pitch of one thread at one turn per storey,
    # less the slab (250 mm) and hanging depth (200 mm) of the demo)
    assert data["headroom_min_m"] == pytest.approx(min(g["pitch_m"]) - 0.45, abs=1e-3)


def test_output_directory_gets_figures_and_result(tmp_path, capsys):
    out_dir = tmp_path / "out"
    status, out, _ = run(capsys, "check", str(CONFIGS / "demo-metric.yaml"), "-o", str(out_dir),
                         "--formats", "png,svg,json")
    assert status == 0
    names = {p.name for p in out_dir.iterdir()}
    assert set(FIGURES + ["result.json"]) <= names
    assert not [n for n in names if n.endswith(".tmp")]  # no temporary files left behind
    for name in ("plan.png", "section.png"):
        assert (out_dir / name).read_bytes().startswith(b"\x89PNG\r\n\x1a\n")
    for name in ("plan.svg", "section.svg"):
        assert b"<svg" in (out_dir / name).read_bytes()
    _, printed, _ = run_json(capsys, CONFIGS / "demo-metric.yaml")
    assert json.loads((out_dir / "result.json").read_text(encoding="utf-8")) == printed


def test_result_json_is_byte_identical_between_runs(tmp_path, capsys):
    project = CONFIGS / "demo-imperial.yaml"
    for name in ("a", "b"):
        assert run(capsys, "check", str(project), "-o", str(tmp_path / name))[0] == 0
    assert (tmp_path / "a" / "result.json").read_bytes() == (tmp_path / "b" / "result.json").read_bytes()


def test_footprint_too_small_fails_with_exit_1(tmp_path, capsys):
    data = yaml.safe_load((CONFIGS / "demo-metric.yaml").read_text(encoding="utf-8"))
    data["site"]["width"] = "20 m"
    project = tmp_path / "narrow.yaml"
    project.write_text(yaml.safe_dump(data, sort_keys=False), encoding="utf-8")

    status, out, err = run(capsys, "check", str(project))
    assert status == 1 and err == ""
    rows = [line.split() for line in out.splitlines() if " footprint " in f" {line} "]
    assert rows and rows[0][0] == "FAIL"
    assert "RESULT: all checks pass" not in out

    status, result, _ = run_json(capsys, project)
    assert status == 1 and result["ok"] is False
    by_id = {c["id"]: c for c in result["checks"]}
    assert by_id["footprint"]["ok"] is False
    assert by_id["footprint"]["limit"] == pytest.approx(20.0 - 2 * 0.30)
    # Source: IStructE, Design recommendations for multi-storey and underground car parks,
    # 4th ed. (2011), tables 4.5 and 4.6: 0.60 m clearance to structure outside the outer kerb
    assert by_id["footprint"]["value"] == pytest.approx(
        2 * (result["geometry"]["outer_radius_m"] + 0.60 + 0.25), abs=1e-3)
    assert [c for c in result["checks"] if not c["ok"]] == [by_id["footprint"]]


def test_python_m_helix_version():
    proc = subprocess.run([sys.executable, "-m", "helix", "--version"],
                          capture_output=True, text=True, timeout=120)
    assert proc.returncode == 0
    assert proc.stdout.strip() == f"helix {helix.__version__}"
    assert helix.__version__ == version(helix.DIST_NAME)  # one version source: helix/_version.py


def test_no_arguments_prints_help(capsys):
    status, out, err = run(capsys)
    assert status == 0 and err == ""
    assert out.startswith("usage: helix")
    assert "check" in out


@pytest.mark.parametrize("command", ["check", "design"])
def test_every_command_has_help_with_an_example(command, capsys):
    with pytest.raises(SystemExit) as exit_info:
        main([command, "--help"])
    assert exit_info.value.code == 0
    out = capsys.readouterr().out
    assert "example:" in out and f"helix {command} configs/" in out
