"""The design search against closed forms, an exhaustive grid and its own promises."""
import math
from dataclasses import replace

import numpy as np
import pytest

import helix
from helix.approach import Approach
from helix.clearance import minimum_headroom
from helix.layout import build_helix
from helix.project import Level, SearchSpace
from helix.search import Family, design, family_project, pareto_mask, screen

DEMO = "configs/demo-search.yaml"


def _space(project, **changes):
    base = SearchSpace(layouts=("single-one-way",), radius_min=3.0, radius_max=30.0, turns_choices=(1.0,),
                       lane_widths=(3.65,), target_gradient=None, objective="footprint", fixed=False)
    return replace(project, search=replace(base, **changes))


def _uniform(storey=3.0, n=4, rules=None):
    p = helix.load_project("configs/demo-metric.yaml")
    levels = tuple(Level(f"L{i}", storey * i) for i in range(n + 1))
    # Short floor approaches: under a low storey a long straight entry passes under the
    # turn above with less than the clear height, which is not what these tests are about
    # (tests/test_driving_lines.py checks the approaches).
    design_ = replace(p.design, landing_length=0.0, transition_length=0.0, cross_fall=0.0,
                      approach=Approach(length=0.3))
    p = replace(p, levels=levels, design=design_)
    if rules is not None:
        p = replace(p, rules=rules)
    p = replace(p, site=replace(p.site, width=200.0, depth=200.0))
    return p


def test_analytic_smallest_radius_gradient_governs():
    # Common practice, no single source: on a constant-pitch helicoid the gradient on
    # the centre line is p / (2 pi R), so the smallest radius meeting g_max is
    # p / (2 pi g_max), unless the minimum outer kerb radius governs.
    # Source: IStructE 4th ed. (2011) table 4.4 (1:12 above 3.0 m rise, centre line)
    # and table 4.5 (outer kerb radius 7.5 m absolute minimum).
    p = _space(_uniform(storey=3.6))
    res = design(p)
    opt = res.options[0]
    r = opt.evaluation.helix.threads[0].centre_radius
    expected = max(3.6 / (2 * math.pi / 12), 7.5 - 3.65 / 2)
    assert r == pytest.approx(expected, abs=1e-3)
    assert opt.binding == "gradient_centre_line"


def test_analytic_smallest_radius_outer_kerb_governs():
    # Source: IStructE 4th ed. (2011) tables 4.4 and 4.5: at a 2.6 m rise (1:10) the
    # gradient needs only 4.14 m, so the 9.0 m preferred minimum outer kerb radius
    # governs (the passenger car's swept path needs less than that).
    from helix.rules import Limit
    p = _uniform(storey=2.6)
    p = _space(replace(p, rules=replace(p.rules, outer_kerb_radius=Limit(9.0, "IStructE table 4.5"))))
    opt = design(p).options[0]
    assert opt.evaluation.helix.threads[0].outer_radius == pytest.approx(9.0, abs=1e-3)
    assert opt.binding == "outer_kerb_radius"


def test_vehicle_turning_circle_governs_a_tight_outer_kerb():
    # From memory: AASHTO Green Book 2011, passenger car P minimum design turning
    # radius 7.3 m (outer front wheel); verify.  With the 7.5 m outer kerb minimum the
    # body's outer front corner on the car's tightest circle sweeps
    # hypot(sqrt(7.3^2 - 3.4^2), 3.4 + 0.9) = 7.76 m, so the swept path governs.
    p = _space(_uniform(storey=2.6))
    opt = design(p).options[0]
    corner = math.hypot(math.sqrt(7.3 ** 2 - 3.4 ** 2), 3.4 + 0.9)
    assert opt.evaluation.helix.threads[0].outer_radius == pytest.approx(corner, abs=1e-3)
    assert opt.binding == "lane_width_swept"


def test_search_matches_an_exhaustive_grid_on_a_small_space():
    # The footprint objective: the smallest diameter of every screened-feasible radius on
    # a 2 mm grid (uniform turns; tests/test_search_exhaustive.py does every combination).
    p = helix.load_project(DEMO)
    p = replace(p, search=replace(p.search, layouts=("double", "single-two-way")))
    res = design(p)
    step = 0.002
    for o in res.options:
        fam_best = None
        for t in p.search.turns_choices:
            fam = Family(o.layout, (t,) * p.storeys, None)
            radii = np.arange(p.search.radius_min, p.search.radius_max, step)
            sc = screen(p, fam, radii)
            ok = sc.feasible()
            if np.any(ok):
                d = float(np.min(sc.diameter[ok]))
                if fam_best is None or d < fam_best:
                    fam_best = d
        if o.feasible:
            d = o.evaluation.helix.overall_diameter
            assert fam_best is not None and fam_best - 2 * step <= d <= fam_best + 1e-6
        elif o.evaluation is not None and o.evaluation.check("footprint").ok:
            assert fam_best is None


def test_demo_story_single_fits_double_needs_a_larger_plot():
    res = design(helix.load_project(DEMO))
    by = {o.layout: o for o in res.options}
    assert by["single-two-way"].feasible and not by["double"].feasible
    assert res.options[res.best].layout == "single-two-way"
    # The two-way helix, worked by hand: its inner lane must hold the passenger car on its
    # tightest circle (outer front corner at hypot(sqrt(7.3^2 - 3.4^2), 3.4 + 0.9) = 7.76 m,
    # more than the 7.5 m outer kerb minimum), then the 0.5 m central kerb and a 3.5 m
    # outer lane; plus 0.6 m clearance and the 0.25 m wall each side.  Lane widths are
    # whole centimetres.
    # From memory: AASHTO Green Book 2011, P minimum turning radius 7.3 m; verify.
    corner = math.hypot(math.sqrt(7.3 ** 2 - 3.4 ** 2), 3.4 + 0.9)
    expected = 2 * (corner + 0.5 + 3.5 + 0.6 + 0.25)
    assert by["single-two-way"].evaluation.helix.overall_diameter == pytest.approx(expected, abs=0.021)
    # The double helix: its 6 m landings (level where each floor's aisle passes under the
    # other thread) steepen the runs, so at 1:10 it needs a radius of at least
    # (2.9 / 0.1 + 6.0) / pi = 11.14 m (centre-line grade 2.9 / (pi R - 6.0) on half a
    # turn), more than the plot holds.
    # Source: IStructE 4th ed. (2011) table 4.4: 1:10 on the centre line up to a 3.0 m rise.
    changes = {e["constraint"]: e for e in by["double"].explanation}
    r_min = (2.9 / 0.1 + 6.0) / math.pi
    need = 2 * (r_min + 1.825 + 0.6 + 0.25) + 0.6
    assert changes["footprint"]["value"] == pytest.approx(need, abs=0.02)


def test_infeasibility_reasons():
    base = helix.load_project(DEMO)
    # The demo as first issued (24.8 m plot, no landings): the screened explanations.
    base = replace(base, site=replace(base.site, width=24.8), design=replace(base.design, landing_length=None))
    # Footprint too small for anything: every layout explained, no best, exit 1.
    tiny = replace(base, site=replace(base.site, width=12.0, depth=12.0))
    res = design(tiny)
    assert res.best is None
    for o in res.options:
        assert not o.feasible and any(e["constraint"] == "footprint" for e in o.explanation)
    # Gradient: a plot that fits only a steep double helix.
    steep = replace(base, site=replace(base.site, width=22.0))
    o = {x.layout: x for x in design(steep).options}["double"]
    assert not o.feasible
    assert any(e["constraint"].startswith("gradient") and e.get("value", 0) > 0 for e in o.explanation)
    # Headroom: a structure too deep for the stacked gap of any layout.
    deep = replace(base, structure=replace(base.structure, hanging_depth=1.0))
    o = {x.layout: x for x in design(deep).options}["double"]
    assert not o.feasible
    head = [e for e in o.explanation if e["constraint"] == "clear_height"]
    assert head and head[0]["value"] == pytest.approx(2.9 - 2.1, abs=1e-6)


def test_pareto_set_contains_no_dominated_option():
    res = design(helix.load_project(DEMO))
    pts = np.array([[c["diameter_m"], c["steepest_inner_pct"], c["drive_m"]] for c in res.pareto])
    assert len(pts) > 1
    for i in range(len(pts)):
        others = np.delete(pts, i, axis=0)
        dominated = np.all(others <= pts[i], axis=1) & np.any(others < pts[i], axis=1)
        assert not np.any(dominated)
    assert pareto_mask(np.array([[1, 1, 1], [2, 2, 2], [0, 3, 1]])).tolist() == [True, False, True]


def test_batched_headroom_equals_the_exact_one():
    p = helix.load_project("configs/demo-double.yaml")
    fam = Family("double", p.design.turns_per_storey, p.design.lane_widths)
    for r in (11.0, 12.75, 16.0):
        q = family_project(p, fam, r)
        exact = minimum_headroom(build_helix(q), q.structure).clear
        assert screen(p, fam, [r]).headroom[0] == pytest.approx(exact, abs=1e-9)


def test_boundary_radius_is_exact_to_a_millimetre():
    # The demo as first issued (24.8 m plot, no landings), with floor approaches short
    # enough to clear the other thread, so that only the gradient binds the double helix.
    base = helix.load_project(DEMO)
    base = replace(base, site=replace(base.site, width=24.8),
                   design=replace(base.design, landing_length=None, approach=Approach(length=2.0)))
    res = design(base)
    assert res.options[res.best].layout == "double"
    best = res.options[res.best]
    r = best.evaluation.helix.threads[0].centre_radius
    # Source: IStructE 4th ed. (2011) table 4.4, 1:10 on the centre line for 2.9 m rises;
    # each double-helix thread rises one storey in half a turn: R = H / (pi g).
    assert r == pytest.approx(2.9 / (math.pi * 0.1), abs=1e-3)
    assert best.evaluation.check("gradient_centre_line").margin == pytest.approx(0.0, abs=1e-6)


def test_design_command_json_and_exit_status(tmp_path, capsys):
    from helix.cli import main
    import json
    assert main(["design", DEMO, "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert data["best"] is not None and len(data["options"]) >= 2
    for o in data["options"]:
        for key in ("ok", "checks", "geometry", "headroom_min_m", "layout", "footprint_m"):
            assert key in o
    out = tmp_path / "o"
    assert main(["design", DEMO, "-o", str(out)]) == 0
    for name in ("pareto.png", "options.png", "design.json", "plan.png", "result.json", "report.pdf"):
        assert (out / name).is_file()
    assert main(["check", DEMO]) == 2  # ranges are for 'design'
    assert "helix design" in capsys.readouterr().err
