"""Odd but real buildings, end to end through the command line and the Python API.

One storey, forty storeys, a tall ground storey under low decks, a split (half) storey,
a plot too small for any helix, and storey heights written in mixed units.  Each test
states the outcome it expects.  For every building that yields a design the test checks,
independently of helix's own checks:

* every floor level is reached within 1 mm at its connection;
* the smallest clear headroom, found here by brute force (20001 plan angles per thread and
  five radii across it, with this file's own search for the surface overhead at the same
  plan bearing, using only numpy and ``Thread.level``), agrees within 1 mm with the
  reported ``headroom.clear``;
* every number in the ``--json`` output is finite;
* ``helix design`` is deterministic: two runs print the same JSON text.

All project data here are invented.
"""
from __future__ import annotations

import json
import math
import re
from pathlib import Path

import numpy as np
import pytest
import yaml

import helix
from helix.cli import main
from helix.search import design as search_design
from helix.setting_out import stations

FT, IN = 0.3048, 0.0254  # Source: International Yard and Pound Agreement (1959): exact definitions
DEPTH = 0.25 + 0.20  # slab and hanging depth of every building below
WALL = 0.25
MARGIN = 0.30
# Source: IStructE, Design recommendations for multi-storey and underground car parks, 4th ed.
# (2011), table 4.4: curved ramps 1:10 for a storey rise up to 3.0 m, 1:12 above, on the centre line
GRADE_LOW_RISE, GRADE_HIGH_RISE = 1 / 10, 1 / 12
# Source: IStructE 4th ed. (2011), tables 4.5 and 4.6: 0.60 m structure clearance outside the outer kerb
CLEARANCE_OUTSIDE = 0.60
# From memory: IStructE 4th ed. (2011), minimum clear headroom 2.1 m; verify against the edition in force
CLEAR_HEIGHT = 2.1


def building(levels, design=None, site=("25 m", "26 m"), traffic="one-way") -> dict:
    return {
        "project": {"name": "Test building (invented data)"},
        "levels": levels,
        "structure": {"slab_depth": "250 mm", "hanging_depth": "200 mm", "wall_thickness": "250 mm"},
        "site": {"width": site[0], "depth": site[1], "margin": "0.30 m"},
        "traffic": traffic,
        "vehicle": "aashto-p",
        "rules": "istructe-2011",
        "design": design or {"centre_radius": "9.0 m", "lane_width": "3.65 m", "turns_per_storey": 1,
                             "start_bearing": "270 deg"},
    }


def storeys(*heights) -> list[dict]:
    return [{"name": "Ground", "level": "0 m"}] + [
        {"name": f"Level {i + 1}", "height": h if isinstance(h, str) else f"{h} m"} for i, h in enumerate(heights)]


def search(turns, layouts=("single-one-way",), radius=("4 m", "14 m")) -> dict:
    return {"layouts": list(layouts), "centre_radius": {"min": radius[0], "max": radius[1]},
            "lane_width": "3.65 m", "turns_per_storey": turns, "start_bearing": "270 deg"}


def write(tmp_path: Path, name: str, data: dict) -> Path:
    path = tmp_path / f"{name}.yaml"
    path.write_text(yaml.safe_dump(data, sort_keys=False), encoding="utf-8")
    return path


# ----------------------------------------------------------------------------------
# Independent checks


def _numbers(value):
    if isinstance(value, dict):
        for v in value.values():
            yield from _numbers(v)
    elif isinstance(value, list):
        for v in value:
            yield from _numbers(v)
    elif isinstance(value, (int, float)) and not isinstance(value, bool):
        yield value


def _refuse(name):
    raise AssertionError(f"JSON holds {name}")


def cli_json(capsys, *args) -> tuple[int, dict, str]:
    capsys.readouterr()
    status = main([*args, "--json"])
    out, err = capsys.readouterr()
    assert err == "" and status in (0, 1), err
    data = json.loads(out, parse_constant=_refuse)
    assert all(math.isfinite(x) for x in _numbers(data))
    return status, data, out


def assert_levels_reached(hx, expected: list[float]) -> None:
    """Every thread meets every floor it serves at its connection, within 1 mm."""
    for t in hx.threads:
        got = t.profile.level(t.profile.connections)
        want = np.array([expected[i] for i in t.levels])
        assert len(got) == len(want)
        assert np.max(np.abs(got - want)) <= 1e-3, (t.name, got, want)


def clear_heights(hx, structure, i: int, theta: np.ndarray, radius: float) -> np.ndarray:
    """Clear headroom over thread ``i`` at plan angles ``theta`` and ``radius``: the gap to
    the nearest running surface above at the same plan bearing (any thread, any turn),
    less slab and hanging depth; or the gap to a cover soffit.  inf where nothing is above."""
    t = hx.threads[i]
    z = t.level(theta, radius)
    bearing = t.start_bearing + t.hand * theta
    gap = np.full(theta.shape, np.inf)
    for j, u in enumerate(hx.threads):
        if not u.inner_radius - 1e-9 <= radius <= u.outer_radius + 1e-9:
            continue
        # Plan angles of thread u at the same bearing: u.start_bearing + u.hand * phi = bearing + 2 pi k.
        phi0 = u.hand * (bearing - u.start_bearing)
        k_lo = math.floor((u.profile.start - phi0.max()) / (2 * math.pi)) - 1
        k_hi = math.ceil((u.profile.end - phi0.min()) / (2 * math.pi)) + 1
        for k in range(k_lo, k_hi + 1):
            phi = phi0 + 2 * math.pi * k
            on = (phi >= u.profile.start - 1e-12) & (phi <= u.profile.end + 1e-12)
            if j == i:
                on &= np.abs(phi - theta) > 1e-6  # not the point itself
            if not on.any():
                continue
            dz = np.where(on, u.level(np.where(on, phi, u.profile.start), radius) - z, np.inf)
            gap = np.minimum(gap, np.where(dz > 1e-6, dz, np.inf))  # surfaces above only
    clear = gap - structure.depth
    if structure.cover_soffit is not None:
        clear = np.minimum(clear, structure.cover_soffit - z)
    return clear


def brute_force_headroom(hx, structure, samples: int = 20001) -> float | None:
    best = math.inf
    for i, t in enumerate(hx.threads):
        theta = np.linspace(t.profile.start, t.profile.end, samples)
        for r in np.linspace(t.inner_radius, t.outer_radius, 5):
            clear = clear_heights(hx, structure, i, theta, r)
            if np.any(np.isfinite(clear)):
                best = min(best, float(np.min(clear[np.isfinite(clear)])))
    return best if math.isfinite(best) else None


def assert_headroom(ev, reported_json) -> float:
    brute = brute_force_headroom(ev.helix, ev.project.structure)
    if brute is None:  # nothing overhead anywhere (e.g. less than a turn in all)
        assert ev.headroom is None and reported_json is None
        return None
    assert ev.headroom is not None
    assert abs(brute - ev.headroom.clear) <= 1e-3, (brute, ev.headroom.clear)
    assert abs(reported_json - ev.headroom.clear) <= 1e-3
    return brute


def verify_check(capsys, file: Path, levels: list[float]) -> tuple[int, dict, object]:
    """``helix check --json`` plus the independent checks of its design."""
    status, data, _ = cli_json(capsys, "check", str(file))
    ev = helix.evaluate(helix.load_project(file))
    assert status == (0 if ev.ok else 1)
    assert_levels_reached(ev.helix, levels)
    assert_headroom(ev, data["headroom_min_m"])
    return status, data, ev


def verify_design(capsys, file: Path, levels: list[float]) -> tuple[int, dict, object]:
    """``helix design --json`` twice (identical text), plus the independent checks of the
    chosen design when there is one."""
    status, data, text = cli_json(capsys, "design", str(file))
    again, _, text_again = cli_json(capsys, "design", str(file))
    assert (again, text_again) == (status, text)
    assert status == (1 if data["best"] is None else 0)
    result = search_design(helix.load_project(file))
    assert result.best == data["best"]
    ev = None
    if result.best is not None:
        ev = result.options[result.best].evaluation
        best = data["options"][data["best"]]
        assert ev.helix.threads[0].centre_radius == pytest.approx(best["geometry"]["centre_radius_m"], abs=1e-4)
        assert_levels_reached(ev.helix, levels)
        assert_headroom(ev, best["headroom_min_m"])
    return status, data, ev


def checks(data: dict) -> dict:
    return {c["id"]: c for c in data["checks"]}


# ----------------------------------------------------------------------------------
# The buildings


def test_one_storey(tmp_path, capsys):
    # Expected: a single storey of 3.00 m in one turn at R = 9 m passes every check (exit 0).
    # The only place the ramp lies under itself is where its top end comes round over its
    # foot, so the clear headroom is the storey height less slab and hanging depth.
    file = write(tmp_path, "one", building(storeys(3.0)))
    status, data, ev = verify_check(capsys, file, [0.0, 3.0])
    assert status == 0
    # Common practice, no single source: the stacked gap of a helix is its pitch
    assert data["headroom_min_m"] == pytest.approx(3.0 - DEPTH, abs=1e-3)
    # Common practice, no single source: centre-line grade p / (2 pi R) of a constant-pitch helicoid
    assert checks(data)["gradient_centre_line"]["value"] == pytest.approx(100 * 3.0 / (2 * math.pi * 9.0), abs=1e-2)
    # Expected: the search also finds a passing design (exit 0).
    status, _, _ = verify_design(capsys, file, [0.0, 3.0])
    assert status == 0


@pytest.mark.parametrize("hand", ["anticlockwise", "clockwise"])
def test_forty_storeys(hand, tmp_path, capsys):
    # Expected: 40 storeys of 3.00 m, a single helix with one turn per storey from a
    # connection due east (0 deg): every check passes (exit 0); after 40 whole turns every
    # floor connection is back on the 0 deg bearing and every bearing written is in [0, 360).
    design = {"centre_radius": "9.0 m", "lane_width": "3.65 m", "turns_per_storey": 1,
              "start_bearing": "0 deg", "hand": hand}
    sense = 1 if hand == "anticlockwise" else -1
    file = write(tmp_path, "forty", building(storeys(*[3.0] * 40), design))
    levels = [3.0 * i for i in range(41)]
    status, data, ev = verify_check(capsys, file, levels)
    assert status == 0
    assert data["headroom_min_m"] == pytest.approx(3.0 - DEPTH, abs=1e-3)  # Common practice, no single source
    t = ev.helix.threads[0]
    assert len(t.profile.connections) == 41
    assert t.profile.level(t.profile.connections)[-1] == pytest.approx(120.0, abs=1e-3)
    # Own wrap of the connection bearings: 360 deg more (or less) per storey.
    for k, theta in enumerate(t.profile.connections):
        own = (sense * 360.0 * k) % 360.0
        diff = (math.degrees(float(t.bearing(theta))) - own + 180.0) % 360.0 - 180.0
        assert abs(diff) < 1e-6
    # Bearings in the JSON output.
    assert 0 <= data["geometry"]["thread_details"][0]["start_bearing_deg"] < 360
    at = data["headroom_min_at"]
    assert 0 <= at["bearing_deg"] < 360
    theta = t.profile.start + at["chainage_m"] / t.centre_radius
    own = (sense * math.degrees(theta)) % 360.0
    assert abs((at["bearing_deg"] - own + 180.0) % 360.0 - 180.0) < 0.02
    # Bearings of the setting-out stations, every 5 m along 2.3 km of ramp, connections included.
    rows = stations(ev, 5.0)
    assert len(rows) > 400
    assert all(0 <= r["bearing_deg"] < 360 for r in rows), sorted({r["bearing_deg"] for r in rows})[-3:]
    if hand == "clockwise":
        # Expected: the search over one layout and one turn per storey passes too.
        status, _, _ = verify_design(capsys, write(tmp_path, "forty-search", building(
            storeys(*[3.0] * 40), search(1, radius=("6 m", "12 m")))), levels)
        assert status == 0


def test_forty_storeys_bearing_due_east_stays_below_360(tmp_path, capsys):
    # Expected: the smallest headroom lies under the lower top storey (2.90 m), over the
    # connection of level 38, after 38 whole turns from 0 deg: its bearing is 0 deg, which
    # must be written as 0, not 360.
    design = {"centre_radius": "9.0 m", "lane_width": "3.65 m", "turns_per_storey": 1,
              "start_bearing": "0 deg", "landing_length": "0 m"}
    file = write(tmp_path, "forty-east", building(storeys(*[3.0] * 39, 2.9), design))
    status, data, _ = cli_json(capsys, "check", str(file))
    assert status == 0
    assert data["headroom_min_m"] == pytest.approx(2.9 - DEPTH, abs=1e-3)
    assert 0 <= data["headroom_min_at"]["bearing_deg"] < 360


def test_tall_ground_storey(tmp_path, capsys):
    # A 6.00 m ground storey (shops) under three 2.60 m decks, one turn per storey, R = 9 m.
    # Expected: exit 1, and only gradient_centre_line fails, in the ground storey: its
    # average grade alone, 6.0 / (2 pi 9) = 10.6 %, is over the 1:12 that applies to a
    # rise over 3.0 m.  Headroom does not fail: over the tall storey the turn above is a
    # 2.60 m deck, so the clear height falls from 6.00 - 0.45 = 5.55 m at its foot to
    # 2.60 - 0.45 = 2.15 m at its top, which is also the clear height under every deck.
    levels = [0.0, 6.0, 8.6, 11.2, 13.8]
    file = write(tmp_path, "tall", building(storeys(6.0, 2.6, 2.6, 2.6)))
    status, data, ev = verify_check(capsys, file, levels)
    assert status == 1
    assert [c["id"] for c in data["checks"] if not c["ok"]] == ["gradient_centre_line"]
    grade = checks(data)["gradient_centre_line"]
    assert grade["limit"] == pytest.approx(100 * GRADE_HIGH_RISE, abs=1e-2)
    # Common practice, no single source: the steepest grade is at least the average grade H / (2 pi R)
    assert grade["value"] >= 100 * 6.0 / (2 * math.pi * 9.0) - 1e-2
    centre = [s["gradient_pct"]["centre"] for s in data["storeys"]]
    assert centre[0] == max(centre) and centre[0] > 100 * GRADE_HIGH_RISE
    assert all(g <= 100 * GRADE_LOW_RISE for g in centre[1:])
    assert checks(data)["clear_height"]["ok"]
    assert data["headroom_min_m"] == pytest.approx(2.6 - DEPTH, abs=1e-3)  # Common practice, no single source
    # Under the turn above the tall storey, sampled here along its centre line.
    t = ev.helix.threads[0]
    a, b = t.profile.connections[0], t.profile.connections[1]
    over_tall = clear_heights(ev.helix, ev.project.structure, 0, np.linspace(a, b, 2001), t.centre_radius)
    assert over_tall[0] == pytest.approx(6.0 - DEPTH, abs=1e-3)
    assert over_tall[-1] == pytest.approx(2.6 - DEPTH, abs=1e-3)
    assert np.all(np.diff(over_tall) <= 1e-9)  # falling all the way up the tall storey

    # Expected: two turns for the tall storey and one for each deck pass every check
    # (exit 0): 6.0 / (2 x 2 pi 9) = 5.3 %, and the clear height under the first deck is
    # still 2.15 m >= 2.1 m.
    design = {"centre_radius": "9.0 m", "lane_width": "3.65 m", "turns_per_storey": [2, 1, 1, 1],
              "start_bearing": "270 deg"}
    status, data, _ = verify_check(capsys, write(tmp_path, "tall-2111", building(storeys(6.0, 2.6, 2.6, 2.6),
                                                                                design)), levels)
    assert status == 0
    assert data["headroom_min_m"] == pytest.approx(2.6 - DEPTH, abs=1e-3) and 2.6 - DEPTH >= CLEAR_HEIGHT

    # Expected: with one turn in every storey nothing fits (exit 1): one turn needs
    # R >= 6.0 / (2 pi / 12) = 11.46 m for the tall storey, too wide for the 25 m plot.
    # The explanation asks for the footprint that radius needs.
    status, data, _ = verify_design(capsys, write(tmp_path, "tall-uniform", building(
        storeys(6.0, 2.6, 2.6, 2.6), search({"choices": [1]}))), levels)
    assert status == 1
    footprint = [e for e in data["options"][0]["explanation"] if e["constraint"] == "footprint"]
    r_min = 6.0 / (2 * math.pi * GRADE_HIGH_RISE)
    need = 2 * (r_min + 3.65 / 2 + CLEARANCE_OUTSIDE + WALL) + 2 * MARGIN
    assert footprint and footprint[0]["value"] == pytest.approx(need, abs=2e-3)
    # Expected: choosing the turns storey by storey from [0.5, 1, 1.5, 2] finds a design
    # that passes (exit 0): two turns leave 1.30 m between the decks' turns, so the decks
    # keep one turn, and the tall storey takes more (a second turn brings it to
    # 6.0 / (2 x 2 pi R), within 1:12 at the smallest radius the rest allows).
    status, data, ev = verify_design(capsys, write(tmp_path, "tall-per-storey", building(
        storeys(6.0, 2.6, 2.6, 2.6), search({"choices": [0.5, 1, 1.5, 2]}))), levels)
    assert status == 0
    turns = data["options"][data["best"]]["turns_per_storey"]
    assert turns[1:] == [1.0, 1.0, 1.0] and turns[0] > 1.0
    # Expected: the search with the turns fixed storey by storey, [2, 1, 1, 1], passes (exit 0).
    status, _, _ = verify_design(capsys, write(tmp_path, "tall-search", building(
        storeys(6.0, 2.6, 2.6, 2.6), search([2, 1, 1, 1]))), levels)
    assert status == 0


SPLIT = [{"name": "Ground", "level": "0 m"}, {"name": "Level 1", "level": "3.0 m"},
         {"name": "Level 1.5", "level": "4.5 m"}, {"name": "Level 2", "level": "7.5 m"}]


def test_split_storey(tmp_path, capsys):
    # Levels 0, 3.0, 4.5 (a half storey) and 7.5 m.
    # Expected with one turn per storey: exit 1.  The turn of the 1.50 m half storey lies
    # only 1.50 m above the turn below it, so clear_height fails at 1.50 - 0.45 = 1.05 m
    # (and the design vehicle's roof does not clear the soffit either).
    levels = [0.0, 3.0, 4.5, 7.5]
    status, data, _ = verify_check(capsys, write(tmp_path, "split", building(SPLIT)), levels)
    assert status == 1
    by_id = checks(data)
    assert not by_id["clear_height"]["ok"]
    assert by_id["clear_height"]["limit"] == pytest.approx(CLEAR_HEIGHT, abs=1e-4)
    assert by_id["clear_height"]["value"] == pytest.approx(1.5 - DEPTH, abs=1e-3)
    assert not by_id["roof_clearance"]["ok"]

    # Expected with turns [1, 0.5, 1]: exit 0.  The half storey is half a turn of the same
    # 3.00 m pitch, so there are 3.00 m between every pair of stacked turns (2.55 m clear),
    # and the half level's connection is on the opposite side of the helix.
    design = {"centre_radius": "9.0 m", "lane_width": "3.65 m", "turns_per_storey": [1, 0.5, 1],
              "start_bearing": "270 deg"}
    status, data, ev = verify_check(capsys, write(tmp_path, "split-half", building(SPLIT, design)), levels)
    assert status == 0
    assert data["headroom_min_m"] == pytest.approx(3.0 - DEPTH, abs=1e-3)  # Common practice, no single source
    t = ev.helix.threads[0]
    connection_bearings = [math.degrees(float(t.bearing(c))) % 360 for c in t.profile.connections]
    assert connection_bearings == pytest.approx([270.0, 270.0, 90.0, 90.0], abs=1e-6)

    # Expected: one number of turns for every storey finds nothing (exit 1): one turn
    # leaves 1.50 - 0.45 = 1.05 m under the half storey's turn, one and a half turns
    # stack the 3 m storeys 2.0 m apart (1.55 m clear).  Choosing storey by storey from [0.5, 1, 1.5] finds [1, 0.5, 1] (exit 0), as does
    # the search with those turns fixed.
    for choice in ([1], [1.5]):
        status, _, _ = verify_design(capsys, write(tmp_path, "split-uniform", building(
            SPLIT, search({"choices": choice}))), levels)
        assert status == 1
    status, data, _ = verify_design(capsys, write(tmp_path, "split-per-storey", building(
        SPLIT, search({"choices": [0.5, 1, 1.5]}))), levels)
    assert status == 0
    assert data["options"][data["best"]]["turns_per_storey"] == [1.0, 0.5, 1.0]
    status, _, _ = verify_design(capsys, write(tmp_path, "split-search", building(SPLIT, search([1, 0.5, 1]))),
                                 levels)
    assert status == 0


_NEED = re.compile(r"a footprint of at least ([\d.]+) m x ([\d.]+) m \(now 12\.000 m x 12\.000 m\)")


def test_plot_too_small(tmp_path, capsys):
    # A 12 m x 12 m plot for three 3.00 m storeys.
    # Expected: helix design exits 1; every layout's explanation names the footprint with a
    # concrete size, which is the diameter of the helix at the smallest radius that meets
    # every other rule, with its structure clearance, wall and the plot margin; that radius
    # meets at least the centre-line gradient.
    levels = [0.0, 3.0, 6.0, 9.0]
    data_ = building(storeys(3.0, 3.0, 3.0), site=("12 m", "12 m"), design={
        "layouts": ["single-one-way", "single-two-way", "double", "concentric"],
        "centre_radius": {"min": "4 m", "max": "20 m"}, "lane_width": "3.65 m",
        "turns_per_storey": {"choices": [0.5, 1]}})
    status, data, _ = verify_design(capsys, write(tmp_path, "small", data_), levels)
    assert status == 1
    assert {o["layout"] for o in data["options"]} == {"single-one-way", "single-two-way", "double", "concentric"}
    for option in data["options"]:
        assert not option["feasible"]
        items = [e for e in option["explanation"] if e["constraint"] == "footprint"]
        assert len(items) == 1, option["explanation"]
        item = items[0]
        m = _NEED.search(item["change"])
        assert m and m.group(1) == m.group(2), item
        assert float(m.group(1)) == pytest.approx(item["value"], abs=0.006)
        assert item["value"] > 12.0
        r = item["at_radius_m"]
        outer = {"single-one-way": r + 3.65 / 2, "double": r + 3.65 / 2,
                 # Source: IStructE 4th ed. (2011) table 4.6 note 2: central raised kerb of 0.5 m
                 "single-two-way": r + (2 * 3.65 + 0.5) / 2,
                 # README: design.divider between the helices of a concentric pair, default 0.3 m
                 "concentric": r + 3.65 / 2 + 3.65 + 0.3}[option["layout"]]
        assert item["value"] == pytest.approx(2 * (outer + CLEARANCE_OUTSIDE + WALL) + 2 * MARGIN, abs=2e-3)
        pitch = 3.0 / item["turns_per_storey"][0]
        assert r >= pitch / (2 * math.pi * GRADE_LOW_RISE) - 1e-3

    # Expected: the same with the default search of a fixed design (every layout, lane
    # widths from the rules and the vehicle): exit 1, the footprint named for every layout,
    # and the least-bad design shown for each layout is a buildable helix, its inner kerb
    # at a positive radius.
    data_ = building(storeys(3.0, 3.0, 3.0), site=("12 m", "12 m"))
    status, data, _ = verify_design(capsys, write(tmp_path, "small-default", data_), levels)
    assert status == 1
    for option in data["options"]:
        items = [e for e in option["explanation"] if e["constraint"] == "footprint"]
        assert items and items[0]["value"] > 12.0 and _NEED.search(items[0]["change"]), option["explanation"]
        if "geometry" in option:
            assert option["geometry"]["inner_radius_m"] > 0, (option["layout"], option["geometry"])
            assert all(ln["inner_radius_m"] > 0 for t in option["geometry"]["thread_details"]
                       for ln in t["lanes"])


def test_storey_heights_in_mixed_units(tmp_path, capsys):
    # Storey heights written as 3.0 m, 9 ft 10 in and 3100 mm.
    # Expected: SI levels 0, 3.0, 3.0 + 118 in = 5.9972 m and 9.0972 m; every check passes
    # (exit 0); the smallest clear headroom is under the lowest storey, 2.9972 - 0.45 m;
    # results in feet and inches, as the README says for a project written in them.
    levels = [0.0, 3.0, 3.0 + 9 * FT + 10 * IN, 3.0 + 9 * FT + 10 * IN + 3.1]
    file = write(tmp_path, "mixed", building(storeys("3.0 m", "9 ft 10 in", "3100 mm")))
    project = helix.load_project(file)
    assert [lv.level for lv in project.levels] == pytest.approx(levels, abs=1e-9)
    status, data, _ = verify_check(capsys, file, levels)
    assert status == 0
    assert [s["rise_m"] for s in data["storeys"]] == pytest.approx([3.0, 2.9972, 3.1], abs=1e-4)
    assert data["units"] == "imperial"
    assert data["headroom_min_m"] == pytest.approx(9 * FT + 10 * IN - DEPTH, abs=1e-3)
    status, _, _ = verify_design(capsys, file, levels)
    assert status == 0
