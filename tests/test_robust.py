"""Hostile and odd inputs, one test per reproducer: exit statuses, limits at load,
text that is not what it seems, numeric failures, duplicate keys, library names and
paths, dataclass validation and the all-or-nothing writing of outputs (including a
child process killed at every step, and at random moments, of the rename phase).

All project data here is invented.
"""
from __future__ import annotations

import dataclasses
import errno
import importlib
import json
import os
import random
import re
import signal
import stat
import subprocess
import sys
import textwrap
import time
import warnings
from pathlib import Path

import numpy as np
import pytest
import yaml

import helix
import helix.outputs as outputs
from helix.cli import main
from helix.errors import DesignError, InvalidValue, clean_text
from helix.project import MAX_LEVELS

ROOT = Path(__file__).resolve().parent.parent
CONFIGS = ROOT / "configs"
METRIC = CONFIGS / "demo-metric.yaml"
BASE = yaml.safe_load(METRIC.read_text(encoding="utf-8"))


def project_file(tmp_path: Path, name: str = "p.yaml", **changes) -> Path:
    data = json.loads(json.dumps(BASE))
    for key, value in changes.items():
        data[key] = value
    path = tmp_path / name
    path.write_text(yaml.safe_dump(data, allow_unicode=True), encoding="utf-8")
    return path


def run(capsys, *args) -> tuple[int, str, str]:
    capsys.readouterr()
    status = main([str(a) for a in args])
    out, err = capsys.readouterr()
    return status, out, err


def one_line(err: str) -> str:
    assert err.endswith("\n") and err.count("\n") == 1, repr(err)
    assert "Traceback" not in err
    return err[:-1]


# ----------------------------------------------------------------------------------
# 1. Exit statuses


def test_a_crash_is_status_3_with_one_line_and_the_traceback_only_with_debug(tmp_path, capsys, monkeypatch):
    evaluate = importlib.import_module("helix.evaluate")  # the module (helix.evaluate is the function)

    def boom(*args, **kwargs):
        raise RuntimeError("something inside broke")

    monkeypatch.setattr(evaluate, "evaluate", boom)
    status, out, err = run(capsys, "check", METRIC)
    line = one_line(err)
    assert status == 3 and out == ""
    assert line.startswith("helix: internal error: RuntimeError") and "something inside broke" in line
    assert "report" in line and "--debug" in line and "not a verdict" in line
    status, _, err = run(capsys, "check", METRIC, "--debug")
    assert status == 3 and "Traceback (most recent call last)" in err and "something inside broke" in err


def test_exit_statuses_pass_fail_input_output(tmp_path, capsys):
    assert run(capsys, "check", METRIC)[0] == 0
    small = project_file(tmp_path, site={"width": "12 m", "depth": "12 m"})
    assert run(capsys, "check", small)[0] == 1  # footprint check fails
    bad = project_file(tmp_path, "bad.yaml", site={"width": "-1 m", "depth": "12 m"})
    status, _, err = run(capsys, "check", bad)
    assert status == 2 and "site.width" in one_line(err)
    out = tmp_path / "locked"
    out.mkdir()
    with outputs.folder_lock(out):
        status, _, err = run(capsys, "check", METRIC, "-o", out)
    assert status == 4 and "locked by another helix run" in one_line(err)
    assert sorted(p.name for p in out.iterdir()) == [outputs.LOCK]


def test_successful_runs_print_no_warnings(capsys, monkeypatch):
    evaluate = importlib.import_module("helix.evaluate")
    real = evaluate.evaluate

    def noisy(*args, **kwargs):
        warnings.warn("a library grumbles", UserWarning)
        np.log(np.zeros(2))  # RuntimeWarning: divide by zero
        return real(*args, **kwargs)

    monkeypatch.setattr(evaluate, "evaluate", noisy)
    status, out, err = run(capsys, "check", METRIC)
    assert status == 0 and err == ""
    with pytest.warns(UserWarning, match="a library grumbles"), np.errstate(divide="ignore"):  # --debug lets them through
        status, out, err = run(capsys, "check", METRIC, "--debug")
    assert status == 0


# ----------------------------------------------------------------------------------
# 2. Limits at load


def _levels(n: int) -> list[dict]:
    return [{"name": "L0", "level": "0 m"}] + [{"name": f"L{i}", "height": "3 m"} for i in range(1, n)]


def test_too_many_levels_are_refused_at_load(tmp_path, capsys):
    path = project_file(tmp_path, levels=_levels(MAX_LEVELS + 1))
    t0 = time.perf_counter()
    status, _, err = run(capsys, "check", path)
    assert status == 2
    assert re.fullmatch(rf"helix: error: {re.escape(str(path))}:\d+:\d+: levels: got {MAX_LEVELS + 1} levels; "
                        rf"expected at most {MAX_LEVELS}", one_line(err)), err
    assert time.perf_counter() - t0 < 30  # a hang guard, not a timing target
    assert len(helix.load_project(project_file(tmp_path, "ok.yaml", levels=_levels(MAX_LEVELS))).levels) == MAX_LEVELS


def test_two_hundred_levels_are_checked(tmp_path, capsys):
    # Once 31 s and 1.7 GB; the work is now linear in the levels (benchmarks/levels.py
    # prints the figures; no timing here).
    status, out, err = run(capsys, "check", project_file(tmp_path, levels=_levels(MAX_LEVELS)), "--json")
    result = json.loads(out)
    assert status in (0, 1) and err == "" and len(result["storeys"]) == MAX_LEVELS - 1
    assert result["headroom_min_m"] == pytest.approx(3.0 - 0.45, abs=1e-6)  # storey less slab and hanging depth


@pytest.mark.parametrize("n", [201, 400])
def test_hundreds_of_levels_are_refused(tmp_path, capsys, n):
    status, _, err = run(capsys, "check", project_file(tmp_path, levels=_levels(n)))
    assert status == 2 and f"levels: got {n} levels; expected at most 200" in one_line(err)


def test_ten_thousand_levels_do_not_reach_numpy(tmp_path, capsys):
    path = project_file(tmp_path, levels=_levels(10_000))
    status, _, err = run(capsys, "check", path, "-o", tmp_path / "out")
    assert status == 2 and "expected at most 200" in one_line(err)
    assert not (tmp_path / "out").exists()


def test_a_helix_thousands_of_kilometres_long_is_refused_at_load(tmp_path, capsys):
    # 199 storeys of 20 turns at 999 m: 25,000 km of ramp, 10^8 vehicle positions.
    path = project_file(tmp_path, levels=_levels(MAX_LEVELS),
                        design=dict(BASE["design"], turns_per_storey=20, centre_radius="999 m"))
    status, _, err = run(capsys, "check", path)
    assert status == 2 and re.search(rf"{re.escape(str(path))}:\d+:\d+: design: the helix would be 24,982 km long",
                                     one_line(err)), err
    assert "expected at most 50 km" in err


@pytest.mark.parametrize("spacing", ["1e-9 m", "0.05 m", "1 in", "0 m", "-5 m"])
def test_station_spacing_below_a_tenth_of_a_metre_is_refused(tmp_path, capsys, spacing):
    status, _, err = run(capsys, "check", METRIC, "--stations", spacing, "-o", tmp_path / "st")
    assert status == 2 and "--stations" in one_line(err) and "at least 0.1 m" in err
    assert not (tmp_path / "st").exists()


def test_station_spacing_of_a_tenth_of_a_metre_is_accepted():
    from helix.cli import _station_spacing
    assert _station_spacing("0.1 m", "metric") == pytest.approx(0.1)
    assert _station_spacing("4 in", "imperial") == pytest.approx(0.1016)


@pytest.mark.parametrize("size", [50_000, 1_000_000])
def test_a_huge_name_is_refused_at_once(tmp_path, capsys, size):
    path = project_file(tmp_path, project={"name": "x" * size})
    t0 = time.perf_counter()
    status, _, err = run(capsys, "check", path, "-o", tmp_path / "out")
    assert status == 2 and one_line(err).endswith(f"project.name: got a text of {size} characters; expected at most 200")
    assert time.perf_counter() - t0 < 30  # a hang guard, not a timing target


def test_a_long_level_name_is_refused(tmp_path, capsys):
    levels = _levels(3)
    levels[1]["name"] = "Level " * 40
    status, _, err = run(capsys, "check", project_file(tmp_path, levels=levels))
    assert status == 2 and "levels[1].name: got a text of 240 characters; expected at most 200" in one_line(err)


def test_a_fifo_as_project_file_is_refused_without_blocking(tmp_path, capsys):
    fifo = tmp_path / "pipe.yaml"
    os.mkfifo(fifo)
    previous = signal.signal(signal.SIGALRM, lambda *a: pytest.fail("blocked on the FIFO"))
    signal.alarm(20)
    try:
        status, _, err = run(capsys, "check", fifo)
    finally:
        signal.alarm(0)
        signal.signal(signal.SIGALRM, previous)
    assert status == 2 and one_line(err) == f"helix: error: {fifo}: is a named pipe (FIFO); expected a regular YAML file"


@pytest.mark.parametrize("device", ["/dev/zero", "/dev/urandom", "/dev/null"])
def test_devices_are_refused_without_reading(capsys, device):
    if not os.path.exists(device):
        pytest.skip(f"no {device}")
    status, _, err = run(capsys, "check", device)
    assert status == 2 and one_line(err) == f"helix: error: {device}: is a device; expected a regular YAML file"


def test_a_file_over_the_size_limit_is_refused(tmp_path, capsys):
    from helix.library_files import MAX_FILE_BYTES
    path = tmp_path / "big.yaml"
    path.write_text(METRIC.read_text() + "\n# " + "x" * MAX_FILE_BYTES + "\n")
    status, _, err = run(capsys, "check", path)
    assert status == 2 and "expected a file of at most 2 MB" in one_line(err)


# ----------------------------------------------------------------------------------
# 3. Text: mathtext, byte-order marks, control characters; figures at odd scales


NASTY = {"project": "Cost $\\frac{1}{$ park A\ufeffB", "levels": [r"$\alpha_{$", "Deck\u200b 2 \u202eevil", "L\x1b[1m3"]}


def test_text_that_matplotlib_would_parse_is_drawn_as_written(tmp_path, capsys):
    levels = json.loads(json.dumps(BASE["levels"]))
    for lv, name in zip(levels[1:], NASTY["levels"]):
        lv["name"] = name
    path = project_file(tmp_path, project={"name": NASTY["project"]}, levels=levels)
    out = tmp_path / "out"
    status, stdout, err = run(capsys, "check", path, "-o", out)
    assert status == 0 and err == ""
    assert (out / "plan.png").read_bytes().startswith(b"\x89PNG") and (out / "report.pdf").stat().st_size > 0
    result = json.loads((out / "result.json").read_text(encoding="utf-8"))
    assert result["project"] == r"Cost $\frac{1}{$ park AB"
    assert [s["to"] for s in result["storeys"]][:3] == [r"$\alpha_{$", "Deck 2 evil", "L3"]


def test_mathtext_is_off_in_the_figure_style():
    import matplotlib.pyplot as plt

    from helix.figures import STYLE
    with plt.rc_context(STYLE):
        fig = plt.figure()
        t = fig.text(0, 0, r"$\alpha_{$")
        fig.canvas.draw()  # would raise a ParseException with mathtext on
        plt.close(fig)
    assert STYLE["text.parse_math"] is False and t.get_text() == r"$\alpha_{$"


@pytest.mark.parametrize("raw,clean", [
    ("Deck\x00 2", "Deck 2"), ("bell\x07", "bell"), ("\x1b[31mred\x1b[0m", "red"), ("A\ufeffB", "AB"),
    ("two\nlines\ttab", "two lines tab"), ("Süd – Ebene 2", "Süd – Ebene 2"), ("\x1b]0;title\x07x", "x"),
])
def test_clean_text_strips_control_and_format_characters(raw, clean):
    assert clean_text(raw) == clean


def test_control_characters_never_reach_the_terminal(tmp_path, capsys):
    levels = json.loads(json.dumps(BASE["levels"]))
    levels[2]["name"] = "Level\x07 2\x1b[2J"
    path = project_file(tmp_path, project={"name": "Park\x00ing \x1b[31mred"}, levels=levels)
    status, out, err = run(capsys, "check", path)
    assert status == 0 and err == ""
    assert "Parking red" in out and "Level 2" in out
    assert not any(ord(c) < 32 and c != "\n" for c in out)
    # In an error line too: an unknown key written with an escape sequence.
    data = dict(BASE, design=dict(BASE["design"], **{"\x1b[31mradius\x07": 3}))
    bad = tmp_path / "bad.yaml"
    bad.write_text(yaml.safe_dump(data, allow_unicode=True))
    status, out, err = run(capsys, "check", bad)
    assert status == 2 and "unknown key 'radius'" in one_line(err) and "\x1b" not in err and "\x07" not in err


def test_a_one_millimetre_site_gives_figures_not_a_crash(tmp_path, capsys):
    path = project_file(tmp_path, site={"width": "1 mm", "depth": "1 mm"})
    out = tmp_path / "out"
    status, stdout, err = run(capsys, "check", path, "-o", out)
    assert status == 1 and err == "" and "footprint" in stdout
    assert (out / "plan.png").read_bytes().startswith(b"\x89PNG")


def test_a_figure_the_renderer_cannot_draw_says_so(monkeypatch):
    import matplotlib.pyplot as plt

    import helix.figures as figures
    real = figures._savefig
    calls = {"n": 0}

    def overflow(fig, fmt, *dpi):
        calls["n"] += 1
        if calls["n"] == 1:
            raise RuntimeError("FT_Render_Glyph failed with error 0x62: raster overflow")
        return real(fig, fmt, *dpi)

    monkeypatch.setattr(figures, "_savefig", overflow)
    fig = plt.figure()
    fig.suptitle(r"Cost $\frac{1}{$ park (invented): plan")  # user text in the title of the note too
    svg = figures._save(fig, "svg")
    plt.close(fig)
    assert svg.startswith(b"<?xml") and calls["n"] == 2


# ----------------------------------------------------------------------------------
# 4. Numeric failures become input errors naming the key


def test_an_absurd_vehicle_is_refused_at_load(tmp_path, capsys):
    vehicle = {"length": "999 m", "width": "2 m", "height": "2 m", "wheelbase": "997 m",
               "front_overhang": "1 m", "rear_overhang": "1 m"}
    status, _, err = run(capsys, "design", project_file(tmp_path, vehicle=vehicle))
    assert status == 2 and one_line(err).endswith("vehicle.length: got '999 m'; expected a length of at most 30 m")


def test_a_radius_too_small_for_the_vehicle_names_the_key(tmp_path, capsys):
    path = project_file(tmp_path, design=dict(BASE["design"], centre_radius="0.1 m", lane_width="0.05 m"))
    status, _, err = run(capsys, "check", path)
    line = one_line(err)
    # Found after loading (the design cannot be built), still at the key's line and column.
    assert status == 2 and re.search(rf"{re.escape(str(path))}:\d+:\d+: design.centre_radius: the design vehicle "
                                     "aashto-p", line), line
    assert "zero-size array" not in line and "expected a centre-line radius" in line


# ----------------------------------------------------------------------------------
# 6. Duplicate keys; rule sets and vehicles by library name or explicit path


def test_duplicate_keys_are_an_error(tmp_path, capsys):
    text = METRIC.read_text().replace("  centre_radius: 9.0 m\n", "  centre_radius: 9.0 m\n  centre_radius: 12 m\n")
    path = tmp_path / "dup.yaml"
    path.write_text(text)
    status, _, err = run(capsys, "check", path)
    line_no = text.splitlines().index("  centre_radius: 12 m") + 1
    assert status == 2
    assert one_line(err) == (f"helix: error: {path}:{line_no}:3: YAML does not parse: line {line_no}, column 3: duplicate key "
                             "'centre_radius'; expected each key once in a mapping")


def test_merge_keys_may_still_be_overridden(tmp_path):
    text = METRIC.read_text().replace("site:\n", "base_site: &s {width: 30 m, depth: 30 m}\nsite:\n  <<: *s\n", 1)
    data = yaml.safe_load(text)
    assert data["site"]["width"] == "25.0 m"
    from helix.library_files import read_yaml
    path = tmp_path / "merge.yaml"
    path.write_text(text)
    assert read_yaml(path)["site"]["width"] == "25.0 m"


def test_vehicle_from_an_explicit_path_only(tmp_path, capsys):
    van = yaml.safe_load((CONFIGS / "vehicles" / "high-van.yaml").read_text())
    (tmp_path / "vehicles").mkdir()
    (tmp_path / "vehicles" / "my-van.yaml").write_text(yaml.safe_dump(van))
    ok = project_file(tmp_path, "ok.yaml", vehicle="./vehicles/my-van.yaml")
    assert helix.load_project(ok).vehicle.length == helix.load_project(
        project_file(tmp_path, "lib.yaml", vehicle="high-van")).vehicle.length
    status, _, err = run(capsys, "check", project_file(tmp_path, "bare.yaml", vehicle="my-van"))
    assert status == 2 and "vehicle: unknown vehicle 'my-van'" in one_line(err)


@pytest.mark.parametrize("spec", ["../../../etc/passwd", "/etc/hosts", "sub/dir", "~/.ssh/id_rsa", "./missing.yaml"])
def test_rules_do_not_read_arbitrary_files(tmp_path, capsys, spec):
    status, _, err = run(capsys, "check", project_file(tmp_path, rules=spec))
    line = one_line(err)
    assert status == 2 and ": rules: " in line
    assert "root:" not in line and "localhost" not in line


def test_rules_from_an_explicit_path(tmp_path):
    (tmp_path / "local.yaml").write_text("name: local\ntitle: Local rules (invented)\nextends: istructe-2011\n")
    p = helix.load_project(project_file(tmp_path, rules="./local.yaml"))
    assert p.rules.title == "Local rules (invented)" and p.rules.gradient


# ----------------------------------------------------------------------------------
# 7. Frozen dataclasses validate themselves; evaluate refuses another project's helix


@pytest.mark.parametrize("change", [
    {"cross_fall": float("nan")}, {"centre_radius": 0.0}, {"centre_radius": float("inf")},
    {"lane_widths": (0.0,)}, {"turns_per_storey": (1.0, -1.0, 1.0, 1.0)}, {"hand": 0},
    {"layout": "spiral"}, {"landing_fall": float("nan")},
])
def test_replace_cannot_build_an_invalid_design(change):
    p = helix.load_project(METRIC)
    with pytest.raises(InvalidValue) as exc:
        dataclasses.replace(p.design, **change)
    assert isinstance(exc.value, ValueError) and exc.value.path == next(iter(change))


def test_replace_cannot_build_an_invalid_project():
    p = helix.load_project(METRIC)
    with pytest.raises(InvalidValue):
        dataclasses.replace(p, levels=p.levels[:1])
    with pytest.raises(InvalidValue):
        dataclasses.replace(p, levels=tuple(reversed(p.levels)))
    with pytest.raises(InvalidValue):
        dataclasses.replace(p.site, width=float("nan"))
    with pytest.raises(InvalidValue):
        dataclasses.replace(p.structure, slab_depth=-0.1)
    with pytest.raises(InvalidValue):
        dataclasses.replace(p.vehicle, length=999.0)
    with pytest.raises(InvalidValue):
        dataclasses.replace(p.levels[0], level=float("nan"))


def test_evaluate_refuses_a_helix_of_another_project(tmp_path):
    a = helix.load_project(METRIC)
    b = helix.load_project(project_file(tmp_path, levels=_levels(9)))
    with pytest.raises(DesignError, match="built for another project"):
        helix.evaluate(a, helix.build_helix(b))
    with pytest.raises(DesignError, match="built for another project"):
        helix.evaluate(b, helix.build_helix(a))


# ----------------------------------------------------------------------------------
# 5. Outputs: lock, pre-flight, rollback, stale temporaries, all new or all old


@pytest.fixture(scope="module")
def written(tmp_path_factory) -> Path:
    """A folder of the metric demo's outputs, written once by the command line."""
    out = tmp_path_factory.mktemp("written") / "out"
    assert main(["check", str(METRIC), "-o", str(out)]) == 0
    return out


def _copy(written: Path, tmp_path: Path) -> Path:
    import shutil
    out = tmp_path / "out"
    shutil.copytree(written, out)
    return out


def _snapshot(folder: Path) -> dict[str, bytes]:
    return {p.name: p.read_bytes() for p in folder.iterdir() if p.is_file() and p.name != outputs.LOCK}


def test_a_folder_where_an_output_should_go_leaves_everything_as_it_was(tmp_path, capsys, written):
    out = _copy(written, tmp_path)
    (out / "plan.png").unlink()
    (out / "plan.png").mkdir()
    before = _snapshot(out)
    status, _, err = run(capsys, "check", METRIC, "-o", out)
    assert status == 2 and "plan.png is a folder" in one_line(err)
    assert _snapshot(out) == before


@pytest.mark.parametrize("damage", ["folder", "bytes"])
def test_a_damaged_manifest_is_refused_before_any_rename(tmp_path, written, damage):
    out = _copy(written, tmp_path)
    (out / outputs.MANIFEST).unlink()
    if damage == "folder":
        (out / outputs.MANIFEST).mkdir()
    else:
        (out / outputs.MANIFEST).write_bytes(b"plan.png\n\xff\xfe\x00report.pdf\n")
    before = _snapshot(out)
    files = {n: b"new" for n in before if not n.startswith(".")}
    with pytest.raises(helix.InputError, match=outputs.MANIFEST):
        outputs.write_outputs(out, files)
    assert _snapshot(out) == before and not [n for n in os.listdir(out) if n.endswith((".tmp", ".old"))]


def test_a_rename_that_fails_rolls_back_to_the_previous_set(tmp_path, monkeypatch):
    out = tmp_path / "out"
    old = {f"f{i}.txt": b"old %d" % i for i in range(6)}
    outputs.write_outputs(out, old)
    before = _snapshot(out)
    real = os.replace
    calls = {"n": 0}

    def flaky(src, dst):
        calls["n"] += 1
        if calls["n"] == 5:  # journal's own rename is call 1; fail on the fourth file
            raise OSError(errno.EACCES, "Permission denied")
        return real(src, dst)

    monkeypatch.setattr(outputs.os, "replace", flaky)
    with pytest.raises(helix.errors.OutputError, match="previous outputs were restored"):
        outputs.write_outputs(out, {f"f{i}.txt": b"new %d" % i for i in range(6)})
    monkeypatch.undo()
    assert _snapshot(out) == before
    assert not (out / outputs.JOURNAL).exists()


@pytest.mark.parametrize("code,words", [(errno.ENOSPC, "the disk is full"),
                                        (errno.EROFS, "the file system is read-only"),
                                        (errno.EACCES, "permission denied")])
def test_a_write_the_os_refuses_is_status_4_and_leaves_the_old_outputs(tmp_path, capsys, monkeypatch, written,
                                                                       refuse_writes, code, words):
    out = _copy(written, tmp_path)
    before = _snapshot(out)
    refuse_writes(code, 4)
    if code == errno.ENOSPC:  # the whole command line once
        status, _, err = run(capsys, "check", METRIC, "-o", out)
        assert status == 4 and words in one_line(err) and "unchanged" in err
    else:
        with pytest.raises(helix.errors.OutputError, match=words):
            outputs.write_outputs(out, {n: b"new" for n in before if not n.startswith(".")})
    monkeypatch.undo()
    assert _snapshot(out) == before


@pytest.mark.skipif(os.geteuid() == 0 if hasattr(os, "geteuid") else True, reason="root may write anywhere")
def test_a_read_only_folder_is_status_4(tmp_path, capsys):
    out = tmp_path / "ro"
    out.mkdir()
    out.chmod(stat.S_IRUSR | stat.S_IXUSR)
    try:
        status, _, err = run(capsys, "check", METRIC, "-o", out)
    finally:
        out.chmod(stat.S_IRWXU)
    assert status == 4 and "permission denied" in one_line(err)


def test_stale_temporaries_of_helix_are_removed_and_others_kept(tmp_path):
    out = tmp_path / "out"
    outputs.write_outputs(out, {"a.txt": b"1"})
    (out / ".helix-0123456789ab.a.txt.tmp").write_bytes(b"half")
    (out / ".helix-0123456789ab.b.txt.old").write_bytes(b"old")
    (out / ".mine.tmp").write_bytes(b"user's")
    outputs.write_outputs(out, {"a.txt": b"2"})
    assert sorted(os.listdir(out)) == sorted([".helix-lock", outputs.MANIFEST, ".mine.tmp", "a.txt"])
    assert (out / "a.txt").read_bytes() == b"2"


def test_outputs_of_the_previous_run_not_made_again_are_removed(tmp_path):
    out = tmp_path / "out"
    outputs.write_outputs(out, {"a.txt": b"1", "b.txt": b"1"})
    (out / "mine.txt").write_bytes(b"keep")
    outputs.write_outputs(out, {"a.txt": b"2"})
    assert _snapshot(out) == {"a.txt": b"2", "mine.txt": b"keep", outputs.MANIFEST: b"a.txt\n"}


CHILD = textwrap.dedent("""
    import sys, time
    from pathlib import Path
    import helix.outputs as o
    folder, pause_at, delay = Path(sys.argv[1]), int(sys.argv[2]), float(sys.argv[3])
    steps = []
    def step(label):
        steps.append(label)
        print(len(steps) - 1, label, flush=True)
        if len(steps) - 1 == pause_at:
            time.sleep(60)
        time.sleep(delay)
    o._STEP = step
    o.write_outputs(folder, {f"f{i}.txt": b"new %d" % i for i in range(NEW)})
    print("done", flush=True)
""")
OLD = {f"f{i}.txt": b"old %d" % i for i in range(7)}  # f6 is not made again: it is removed
NEW = {f"f{i}.txt": b"new %d" % i for i in range(6)}


def _kill_child(folder: Path, pause_at: int, delay: float = 0.0, after: float | None = None) -> list[str]:
    code = CHILD.replace("NEW", str(len(NEW)))
    proc = subprocess.Popen([sys.executable, "-c", code, str(folder), str(pause_at), str(delay)],
                            stdout=subprocess.PIPE, text=True, cwd=ROOT)
    seen = []
    try:
        if after is not None:
            time.sleep(after)
        else:
            for line in proc.stdout:
                seen.append(line.strip())
                if line.startswith(f"{pause_at} ") or line.startswith("done"):
                    break
        proc.send_signal(signal.SIGKILL)
        proc.wait(timeout=30)
    finally:
        if proc.poll() is None:
            proc.kill()
        proc.stdout.close()
    return seen


def _all_old_or_all_new(folder: Path) -> str:
    with outputs.folder_lock(folder):
        outputs.recover(folder)
    files = {k: v for k, v in _snapshot(folder).items() if not k.startswith(".")}
    left = [n for n in os.listdir(folder) if n.endswith((".tmp", ".old")) or n == outputs.JOURNAL]
    assert not left, left
    assert files in (OLD, NEW), files
    return "new" if files == NEW else "old"


def test_sigkill_at_every_step_of_the_rename_phase_leaves_all_old_or_all_new(tmp_path):
    # Steps: the journal written, six renames and the manifest, one removal, the journal
    # removed: kill the child paused at each one.
    outcomes = []
    for pause_at in range(10):
        folder = tmp_path / f"k{pause_at}"
        outputs.write_outputs(folder, OLD)
        seen = _kill_child(folder, pause_at)
        outcomes.append((seen[-1] if seen else "", _all_old_or_all_new(folder)))
    assert outcomes[0] == ("0 journal", "new")  # the journal is the commit point
    assert {o for _, o in outcomes} == {"new"}
    assert any("rename" in label for label, _ in outcomes) and any("remove" in label for label, _ in outcomes)


def test_a_second_run_into_a_folder_being_written_stops_with_status_4(tmp_path, capsys):
    folder = tmp_path / "busy"
    outputs.write_outputs(folder, OLD)
    code = CHILD.replace("NEW", str(len(NEW)))
    proc = subprocess.Popen([sys.executable, "-c", code, str(folder), "0", "0"], stdout=subprocess.PIPE, text=True,
                            cwd=ROOT)
    try:
        assert proc.stdout.readline().startswith("0 journal")  # the child holds the lock, paused
        status, _, err = run(capsys, "check", METRIC, "-o", folder)
        assert status == 4 and "locked by another helix run" in one_line(err)
    finally:
        proc.kill()
        proc.wait(timeout=30)
        proc.stdout.close()
    assert _all_old_or_all_new(folder) == "new"  # the killed run is finished by the next one


def test_sigkill_at_random_moments_leaves_all_old_or_all_new(tmp_path):
    rng = random.Random(14)
    seen_outcomes = set()
    for k in range(6):
        folder = tmp_path / f"r{k}"
        outputs.write_outputs(folder, OLD)
        # The child takes about 0.4 s to import helix, then 10 ms per step.
        _kill_child(folder, pause_at=-1, delay=0.01, after=rng.uniform(0.2, 0.8))
        seen_outcomes.add(_all_old_or_all_new(folder))
    assert seen_outcomes <= {"old", "new"}
