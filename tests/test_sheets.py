"""Drawing sheets: legibility (no overlapping text, nothing off the sheet, no text under
2.5 mm), true scales, one slab per turn in the cross-section, the site grid, and the
title block filled from the project's ``drawing:`` section."""
from __future__ import annotations

import math
from pathlib import Path

import matplotlib
import numpy as np
import pytest
import yaml
from matplotlib.text import Text

import helix
from helix import figures as F
from helix.sheet import MIN_FONT_PT, SCALES, SHEETS, Sheet
from helix.site_grid import SiteGrid, grid_bearing, to_grid

CONFIGS = Path(__file__).resolve().parent.parent / "configs"
DEMOS = sorted(p.stem for p in CONFIGS.glob("demo-*.yaml"))
_CACHE: dict = {}


def _evaluation(name: str):
    """The demo's design (the search demo: its chosen design) and, for the search demo,
    the search result."""
    if name not in _CACHE:
        project = helix.load_project(CONFIGS / f"{name}.yaml")
        if project.search is not None and not project.search.fixed:
            from helix.search import design
            result = design(project)
            _CACHE[name] = (result.options[result.best].evaluation, result)
        else:
            _CACHE[name] = (helix.evaluate(project), None)
    return _CACHE[name]


def _figures(name: str):
    ev, result = _evaluation(name)
    out = [(stem, make) for stem, make, _ in F.FIGURES]
    if result is not None:
        out.append(("pareto", lambda _ev, result=result: F.pareto_figure(result)))
        out.append(("options", lambda _ev, result=result: F.options_figure(result)))
    return ev, out


def _visible_texts(fig):
    renderer = fig.canvas.get_renderer()
    # The text's own box (an annotation's get_window_extent adds its leader line).
    return [(t, Text.get_window_extent(t, renderer)) for t in F.drawn_texts(fig)]


@pytest.mark.parametrize("demo", DEMOS)
def test_every_sheet_is_legible(demo):
    # Common practice, no single source: drawing text at least 2.5 mm high when printed
    # (ISO 3098-1 smallest lettering height 2.5 mm; from memory; verify), no two labels
    # overlapping, nothing outside the sheet.
    ev, makers = _figures(demo)
    for stem, make in makers:
        with matplotlib.rc_context(F.STYLE):
            fig = make(ev)
            fig.canvas.draw()
            w_mm, h_mm = SHEETS[F.SHEET_OF[stem]]
            assert fig.get_figwidth() * 25.4 == pytest.approx(w_mm, abs=0.01), stem
            assert fig.get_figheight() * 25.4 == pytest.approx(h_mm, abs=0.01), stem
            sheet = fig.bbox
            texts = _visible_texts(fig)
            assert len(texts) > 10, stem
            for t, box in texts:
                assert t.get_fontsize() >= MIN_FONT_PT - 1e-9, (demo, stem, t.get_text(), t.get_fontsize())
                assert sheet.x0 - 0.5 <= box.x0 and box.x1 <= sheet.x1 + 0.5 and \
                    sheet.y0 - 0.5 <= box.y0 and box.y1 <= sheet.y1 + 0.5, (demo, stem, t.get_text())
            # Inside the frame: the report's header (top 10 mm) and page number (bottom
            # 10 mm) strips stay free.
            px_mm = fig.dpi / 25.4
            x0, y0, x1, y1 = (v * px_mm for v in Sheet(F.SHEET_OF[stem]).frame)
            for t, box in texts:
                assert x0 - 0.5 <= box.x0 and box.x1 <= x1 + 0.5 and y0 - 0.5 <= box.y0 and box.y1 <= y1 + 0.5, \
                    (demo, stem, t.get_text())
            for a in range(len(texts)):
                for b in range(a + 1, len(texts)):
                    (ta, ba), (tb, bb) = texts[a], texts[b]
                    # Shrunk by a quarter point: boxes that only touch do not overlap.
                    assert not ba.padded(-0.25).overlaps(bb.padded(-0.25)), \
                        (demo, stem, ta.get_text(), tb.get_text())


def _mm_between(ax, p, q) -> float:
    fig = ax.figure
    a, b = ax.transData.transform([p, q])
    return float(np.hypot(*(b - a))) / fig.dpi * 25.4


@pytest.mark.parametrize("demo", ["demo-metric", "demo-imperial"])
def test_plan_and_cross_section_are_at_their_stated_scale(demo):
    # Common practice, no single source: a drawing at 1:n shows 1 m as 1000/n mm.
    ev, _ = _evaluation(demo)
    s = F._Scale(ev.project.units)
    for make in (F.plan_figure, F.cross_section_figure):
        with matplotlib.rc_context(F.STYLE):
            fig = make(ev)
        ax = fig.axes[0]
        scale = [t.get_text() for t in fig.findobj(Text) if t.get_text().startswith("1:")][0]
        n = int(scale.split()[0][2:])
        assert n in SCALES
        # The overall diameter of the helix, a known length, measured on the sheet.
        d = ev.helix.overall_diameter
        measured = _mm_between(ax, (0.0, 0.0), (float(s(d)), 0.0))
        assert measured == pytest.approx(1000.0 * d / n, rel=1e-6), (make.__name__, measured, n)
        measured_y = _mm_between(ax, (0.0, 0.0), (0.0, float(s(d))))
        assert measured_y == pytest.approx(1000.0 * d / n, rel=1e-6)


def test_section_states_its_vertical_exaggeration_and_is_at_those_scales():
    ev, _ = _evaluation("demo-metric")
    with matplotlib.rc_context(F.STYLE):
        fig = F.section_figure(ev)
    text = " ".join(t.get_text() for t in fig.findobj(Text))
    scale = [t.get_text() for t in fig.findobj(Text) if t.get_text().startswith("H 1:")][0]
    n_h = int(scale.split(",")[0].split(":")[1])
    n_v = int(scale.split(",")[1].split(":")[1].split()[0])
    assert f"vertical scale 1:{n_v}, horizontal 1:{n_h}: {n_h / n_v:g}x" in text.lower() or n_h == n_v
    ax = fig.axes[0]
    assert _mm_between(ax, (0.0, 0.0), (100.0, 0.0)) == pytest.approx(1000.0 * 100.0 / n_h, rel=1e-6)
    assert _mm_between(ax, (0.0, 0.0), (0.0, 10.0)) == pytest.approx(1000.0 * 10.0 / n_v, rel=1e-6)


def test_two_way_sections_follow_each_lane_not_the_central_kerb():
    ev, _ = _evaluation("demo-imperial")
    with matplotlib.rc_context(F.STYLE):
        fig = F.section_figure(ev)
    titles = [ax.get_title(loc="left") for ax in fig.axes if ax.get_title(loc="left")]
    lanes = ev.helix.threads[0].lanes
    assert len(titles) == len(lanes) == 2
    for lane, title in zip(lanes, titles):
        assert lane.name in title
    assert not any("36'-0\"" in t for t in titles)  # the central-kerb line (r = 36'-0") is not drawn


def test_cross_section_draws_one_slab_per_turn_per_thread():
    # Worked by hand: demo-metric climbs one whole turn per storey from bearing 270 deg
    # (plan angle), five levels, so the cut on that bearing meets the ramp at each of
    # the five floor connections (+0.000, +3.000, +6.000, +8.900, +11.800) and the
    # opposite half meets it half-way up each of the four storeys: 5 + 4 slabs.
    ev, _ = _evaluation("demo-metric")
    with matplotlib.rc_context(F.STYLE):
        fig = F.cross_section_figure(ev, bearing=math.radians(270.0))
    gids = [a.get_gid() for a in fig.axes[0].patches if (a.get_gid() or "").startswith("slab:")]
    right = [g for g in gids if g.split(":")[2] == "1"]
    left = [g for g in gids if g.split(":")[2] == "-1"]
    assert (len(right), len(left)) == (5, 4)
    # The double helix: each of its two threads, half a turn apart, once per turn.
    ev, _ = _evaluation("demo-double")
    with matplotlib.rc_context(F.STYLE):
        fig = F.cross_section_figure(ev)
    gids = [a.get_gid() for a in fig.axes[0].patches if (a.get_gid() or "").startswith("slab:")]
    for i, t in enumerate(ev.helix.threads):
        turns = (t.profile.end - t.profile.start) / (2 * math.pi)
        mine = [g for g in gids if g.split(":")[1] == str(i)]
        # Both halves together meet a thread twice per turn, plus its ends on the cut.
        assert 2 * math.floor(turns) <= len(mine) <= 2 * math.ceil(turns) + 1, (t.name, len(mine), turns)


def test_site_grid_agrees_with_a_point_worked_by_hand():
    # Worked by hand (plane rotation of coordinates; whole-circle bearings clockwise from
    # north; Source: Uren and Price, Surveying for Engineers, 5th ed. (2010), ch. 6):
    # plot +y on bearing 30 deg, plot origin at E 500 000, N 180 000.  A point 10 m from
    # an axis at plot (12, 13), in the plan direction 0 deg (plot +x), lies at plot
    # (22, 13).  E = 500000 + 22 cos30 + 13 sin30 = 500000 + 19.0526 + 6.5 = 500025.5526;
    # N = 180000 - 22 sin30 + 13 cos30 = 180000 - 11 + 11.2583 = 180000.2583.
    # Its bearing from the axis: plot +x is 90 deg clockwise from plot +y, which is on
    # 30 deg, so 120 deg; check: atan2(dE, dN) with dE = 10 cos30 = 8.660, dN = -10 sin30
    # = -5.000 gives 180 - 60 = 120 deg.
    grid = SiteGrid((500000.0, 180000.0), math.radians(30.0))
    e, n = to_grid(22.0, 13.0, grid)
    assert float(e) == pytest.approx(500025.5526, abs=1e-4)
    assert float(n) == pytest.approx(180000.2583, abs=1e-4)
    assert math.degrees(float(grid_bearing(0.0, grid))) == pytest.approx(120.0)
    # Default grid: easting x, northing y, plot +y is north: plan angle 90 deg is bearing 0.
    assert float(grid_bearing(math.pi / 2, SiteGrid())) == 0.0
    assert math.degrees(float(grid_bearing(0.0, SiteGrid()))) == pytest.approx(90.0)


def test_setting_out_is_in_the_site_grid_and_matches_the_plan(tmp_path):
    from helix.setting_out import setting_out_csv, stations
    data = yaml.safe_load((CONFIGS / "demo-metric.yaml").read_text())
    data["site"]["grid"] = {"origin": ["500000 m", "180000 m"], "rotation": "30 deg"}
    data["drawing"] = {"number": "MB-HX", "revision": "P2", "date": "2026-12-01", "drawn": "A. Drafter"}
    file = tmp_path / "grid.yaml"
    file.write_text(yaml.safe_dump(data))
    ev = helix.evaluate(helix.load_project(file), vehicle=False)
    rows = stations(ev, 5.0)
    first = rows[0]
    # demo-metric: axis at plot (12.5, 13.0), centre radius 9.0 m, first station at plan
    # angle 270 deg (plot -y), i.e. plot (12.5, 4.0).  By hand, with the grid above:
    # E = 500000 + 12.5 cos30 + 4.0 sin30 = 500000 + 10.8253 + 2.0 = 500012.8253;
    # N = 180000 - 12.5 sin30 + 4.0 cos30 = 180000 - 6.25 + 3.4641 = 179997.2141;
    # bearing from the axis: plot -y is 180 deg from plot +y (on 30 deg): 210 deg.
    assert first["x_m"] == pytest.approx(12.5, abs=1e-4) and first["y_m"] == pytest.approx(4.0, abs=1e-4)
    assert first["easting_m"] == pytest.approx(500012.8253, abs=1e-3)
    assert first["northing_m"] == pytest.approx(179997.2141, abs=1e-3)
    assert first["bearing_deg"] == pytest.approx(210.0, abs=1e-3)
    text = setting_out_csv(ev, 5.0)
    assert text.startswith("# ") and "clockwise from grid north" in text.splitlines()[0]
    # The plan lists the same bearing for the first connection, and the title block the fields.
    with matplotlib.rc_context(F.STYLE):
        fig = F.plan_figure(ev)
    texts = " ".join(t.get_text() for t in fig.findobj(Text))
    assert "bearing 210.0 deg" in texts
    for value in ("MB-HX-01", "P2", "2026-12-01", "A. Drafter", "design aid - verify"):
        assert value in texts, value


def test_sheets_are_deterministic():
    ev, _ = _evaluation("demo-metric")
    a = F.render_all(ev)
    b = F.render_all(ev)
    assert a.keys() == b.keys() and all(a[k] == b[k] for k in a)


def test_legends_list_only_what_is_drawn():
    # demo-metric has neither landings nor transitions (every segment a run, checked
    # here from its alignment): no legend may offer them.  demo-double has both.
    for demo, expect in (("demo-metric", False), ("demo-double", True)):
        ev, _ = _evaluation(demo)
        kinds = {k for t in ev.helix.threads for k, *_ in t.profile.segments()}
        assert (kinds > {"run"}) == expect, kinds
        for make in (F.plan_figure, F.section_figure, F.clearance_figure):
            with matplotlib.rc_context(F.STYLE):
                fig = make(ev)
            labels = [t.get_text() for ax in fig.axes if ax.get_legend() for t in ax.get_legend().get_texts()]
            assert labels, make.__name__
            has = any(lab.startswith(("landing", "transition")) for lab in labels)
            if make is F.clearance_figure:  # its view shows a few metres: only what lies in it
                assert expect or not has, (demo, labels)
            else:
                assert has == expect, (demo, make.__name__, labels)


def test_plan_draws_up_and_down_centre_lines_in_different_colours_and_styles():
    ev, _ = _evaluation("demo-imperial")  # two-way: one lane up, one down
    with matplotlib.rc_context(F.STYLE):
        fig = F.plan_figure(ev)
    legend = fig.axes[0].get_legend()
    lines = {t.get_text(): h for t, h in zip(legend.get_texts(), legend.legend_handles)}
    up = next(h for k, h in lines.items() if "traffic up" in k)
    down = next(h for k, h in lines.items() if "traffic down" in k)
    # The dash patterns themselves (get_linestyle() says '--' for any custom dash).
    assert up.get_color() != down.get_color() and up._unscaled_dash_pattern != down._unscaled_dash_pattern
    assert any("clearance to structure" in k for k in lines)
