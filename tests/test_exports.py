"""The building-model exports: IFC4, glTF/OBJ, the registry, site-grid coordinates.

Every file is read back with the reference library of its format (ifcopenshell,
trimesh, ezdxf) and its geometry compared with the helicoid and with the site-grid
transform worked by hand in the test.
"""
import dataclasses
import importlib.util
import io
import math

import numpy as np
import pytest

import helix
from helix.cli import main
from helix.exports import FORMATS, missing_note
from helix.site_grid import SiteGrid

# An invented survey grid: large eastings and northings (precision) and a rotation.
E0, N0, ROTATION = 512345.678, 181234.5, math.radians(30.0)


def _on_grid(name: str):
    p = helix.load_project(f"configs/{name}.yaml")
    p = dataclasses.replace(p, site=dataclasses.replace(p.site, grid=SiteGrid((E0, N0), ROTATION)))
    return helix.evaluate(p)


def _plot_xy(e, n):
    """Plot coordinates of grid points, the grid transform inverted by hand.

    E = E0 + x cos a + y sin a and N = N0 - x sin a + y cos a is a rotation by -a
    plus a shift, so x = (E - E0) cos a - (N - N0) sin a, y = (E - E0) sin a + (N - N0) cos a.
    """
    # Source: Uren and Price, Surveying for Engineers, 5th ed. (2010), chapter 6
    # (rotation of plane coordinates); inverted by hand above.
    c, s = math.cos(ROTATION), math.sin(ROTATION)
    de, dn = np.asarray(e) - E0, np.asarray(n) - N0
    return c * de - s * dn, s * de + c * dn


def _surface_offset(ev, thread, xyz, storey=None):
    """Smallest |z - level(theta, r)| over the turns of ``thread`` for each vertex
    (x, y plot; z level), ``theta`` from the plan bearing (ambiguous by whole turns)."""
    cx, cy = ev.helix.centre
    r = np.hypot(xyz[:, 0] - cx, xyz[:, 1] - cy)
    bearing = np.arctan2(xyz[:, 1] - cy, xyz[:, 0] - cx)
    theta0 = ((bearing - thread.start_bearing) * thread.hand) % (2 * math.pi)
    p = thread.profile
    best = np.full(len(xyz), np.inf)
    for k in range(-1, int(math.ceil(p.end / (2 * math.pi))) + 2):  # -1: a bearing just under the start
        theta = np.clip(theta0 + 2 * math.pi * k, p.start, p.end)
        best = np.minimum(best, np.abs(xyz[:, 2] - thread.level(theta, r)))
    return best, r


# --- the registry and the command line ---------------------------------------------

def test_registry_names_each_file_once_and_the_missing_extras():
    files = [f for fmt in FORMATS.values() for f in fmt.files]
    assert len(files) == len(set(files))
    assert {"plan.dxf", "model.ifc", "model.glb", "model.obj", "model.html"} <= set(files)
    assert FORMATS["ifc"].extra == "bim" and FORMATS["mesh"].extra == "mesh" and FORMATS["html"].extra is None


def test_without_the_extras_one_line_names_them(monkeypatch):
    real = importlib.util.find_spec
    monkeypatch.setattr(importlib.util, "find_spec",
                        lambda name, *a: None if name in ("ifcopenshell", "trimesh") else real(name, *a))
    note = missing_note()
    assert note is not None and "\n" not in note
    assert "model.ifc" in note and "model.glb" in note and "helix-ramp-planner[bim,mesh]" in note
    from helix.exports import export_files
    ev = helix.evaluate(helix.load_project("configs/demo-metric.yaml"))
    assert set(export_files(ev)) == {"plan.dxf", "model.html"}


def test_the_command_line_names_the_missing_extras_and_passes(tmp_path, monkeypatch, capsys):
    real = importlib.util.find_spec
    monkeypatch.setattr(importlib.util, "find_spec",
                        lambda name, *a: None if name in ("ezdxf", "ifcopenshell", "trimesh") else real(name, *a))
    assert main(["check", "configs/demo-metric.yaml", "-o", str(tmp_path)]) == 0
    lines = [line for line in capsys.readouterr().out.splitlines() if "not written" in line]
    # The default names the extra of its own export only: the models are on request.
    assert len(lines) == 1 and "plan.dxf" in lines[0] and "[cad]" in lines[0] and "model.ifc" not in lines[0]
    assert (tmp_path / "report.pdf").is_file() and not (tmp_path / "plan.dxf").exists()


@pytest.mark.skipif(importlib.util.find_spec("ifcopenshell") is None or importlib.util.find_spec("trimesh") is None,
                    reason="needs the bim and mesh extras")
def test_design_writes_the_models(tmp_path, capsys):
    assert main(["design", "configs/demo-search.yaml", "-o", str(tmp_path), "--formats", "dxf,ifc,mesh,html"]) == 0
    for name in ("model.ifc", "model.glb", "model.obj", "model.html", "plan.dxf"):
        assert (tmp_path / name).stat().st_size > 1000
    assert "not written" not in capsys.readouterr().out


# --- DXF ----------------------------------------------------------------------------

def test_dxf_is_in_site_grid_coordinates():
    ezdxf = pytest.importorskip("ezdxf")
    from helix.exports.dxf import plan_dxf
    ev = _on_grid("demo-metric")
    doc = ezdxf.read(io.StringIO(plan_dxf(ev).decode()))
    msp = doc.modelspace()
    cx, cy = ev.helix.centre
    # Worked by hand: the axis at plot (12.5, 13.0), a = 30 deg:
    # E = 512345.678 + 12.5 cos 30 + 13 sin 30 = 512345.678 + 10.8253 + 6.5 = 512363.0033
    # N = 181234.5 - 12.5 sin 30 + 13 cos 30 = 181234.5 - 6.25 + 11.2583 = 181239.5083
    # Source: Uren and Price, Surveying for Engineers, 5th ed. (2010), chapter 6.
    assert (cx, cy) == (12.5, 13.0)
    for circle in msp.query("CIRCLE"):
        assert circle.dxf.center[0] == pytest.approx(512363.0033, abs=1e-3)
        assert circle.dxf.center[1] == pytest.approx(181239.5083, abs=1e-3)
    t = ev.helix.threads[0]
    for pl in msp.query("POLYLINE"):
        pts = np.array([v.dxf.location for v in pl.vertices])
        x, y = _plot_xy(pts[:, 0], pts[:, 1])
        off, _ = _surface_offset(ev, t, np.column_stack([x, y, pts[:, 2]]))
        assert off.max() < 1e-3


def test_dxf_draws_a_polygon_plot_and_its_no_build_zones():
    ezdxf = pytest.importorskip("ezdxf")
    pytest.importorskip("shapely")
    from helix.exports.dxf import plan_dxf
    project = helix.load_project(helix.demo_file("demo-lshaped"))
    doc = ezdxf.read(io.StringIO(plan_dxf(helix.evaluate(project)).decode()))
    rings = [[tuple(p[:2]) for p in pl.get_points()] for pl in doc.modelspace().query("LWPOLYLINE")]
    # The corners as written in configs/demo-lshaped.yaml (no site grid: plot = grid).
    corners = {(0, 0), (44, 0), (44, 17), (30, 17), (30, 40), (0, 40)}
    assert any({(round(x, 6), round(y, 6)) for x, y in r} == corners for r in rings)
    # Every zone drawn: two columns of radius 0.4 m (their outlines within 1 mm of the
    # circle; 96 chords of a 0.4 m circle fall 0.2 mm inside it) and the lift shaft.
    zones = project.site.no_build
    assert len(rings) == 1 + len(zones)
    for zone in zones:
        if zone.polygon is None:
            ring = next(r for r in rings if len(r) == 96 and
                        abs(np.mean([p[0] for p in r]) - zone.centre[0]) < 1e-6)
            dist = [math.hypot(x - zone.centre[0], y - zone.centre[1]) for x, y in ring]
            assert max(abs(d - zone.radius) for d in dist) < 1e-3


# --- IFC ----------------------------------------------------------------------------

ifcopenshell = pytest.importorskip("ifcopenshell") if importlib.util.find_spec("ifcopenshell") else None
needs_ifc = pytest.mark.skipif(ifcopenshell is None, reason="needs the bim extra (ifcopenshell)")


@pytest.fixture(scope="module")
def ifc_double():
    from helix.exports.ifc import ifc_files
    ev = _on_grid("demo-double")
    data = ifc_files(ev)["model.ifc"]
    assert data == ifc_files(ev)["model.ifc"]  # deterministic: GUIDs from names, fixed time stamp
    return ev, ifcopenshell.file.from_string(data.decode())


@needs_ifc
def test_ifc_structure_counts_and_storey_elevations(ifc_double):
    # Source: buildingSMART IFC4 ADD2 TC1 (ISO 16739-1:2018), IfcRamp / IfcRampFlight /
    # IfcBuildingStorey; read back with the reference library ifcopenshell.
    ev, f = ifc_double
    threads, levels = ev.helix.threads, ev.project.levels
    assert f.schema == "IFC4"
    assert len(f.by_type("IfcProject")) == len(f.by_type("IfcSite")) == len(f.by_type("IfcBuilding")) == 1
    storeys = f.by_type("IfcBuildingStorey")
    assert [s.Name for s in storeys] == [lv.name for lv in levels]
    for s, lv in zip(storeys, levels):
        assert abs(s.Elevation - lv.level) < 1e-3
        assert abs(s.ObjectPlacement.RelativePlacement.Location.Coordinates[2] - lv.level) < 1e-3
    ramps = f.by_type("IfcRamp")
    assert len(ramps) == len(threads) == 2 and {r.PredefinedType for r in ramps} == {"SPIRAL_RAMP"}
    flights = f.by_type("IfcRampFlight")
    assert len(flights) == sum(len(t.levels) - 1 for t in threads)
    kerbs = [p for p in f.by_type("IfcBuildingElementProxy") if p.ObjectType == "KERB"]
    assert len(kerbs) == 2 * len(flights)
    assert len(f.by_type("IfcWall")) == 1 and len(f.by_type("IfcColumn")) == 1
    for ramp in ramps:
        parts = [o for rel in ramp.IsDecomposedBy for o in rel.RelatedObjects]
        assert sum(p.is_a("IfcRampFlight") for p in parts) == len(flights) // 2
    guids = [e.GlobalId for e in f.by_type("IfcRoot")]
    assert len(guids) == len(set(guids))


@needs_ifc
def test_ifc_property_sets_carry_the_design_values(ifc_double):
    import ifcopenshell.util.element as util
    ev, f = ifc_double
    for ramp, t in zip(f.by_type("IfcRamp"), ev.helix.threads):
        pset = util.get_psets(ramp)["Helix_Design"]
        assert pset["CentreLineRadius"] == pytest.approx(t.centre_radius)
        assert pset["InnerKerbRadius"] == pytest.approx(t.inner_radius)
        assert pset["ClearHeadroom"] == pytest.approx(ev.headroom.clear)
        assert pset["RuleSet"] == ev.project.rules.name and pset["RuleSetTitle"] == ev.project.rules.title
        assert pset["MaxGradientCentreLine"] == pytest.approx(
            max(s.gradient["centre line"] for s in ev.storeys if s.thread == t.name))
        assert "verify" in pset["Caution"]


@needs_ifc
def test_ifc_geometry_tessellates_and_lies_on_the_helicoid(ifc_double):
    # Source: ifcopenshell.geom (the reference IFC geometry kernel) in world
    # coordinates; the helicoid z(theta, r) of helix.geometry.Thread.level; the
    # site-grid transform inverted by hand (_plot_xy).
    import ifcopenshell.geom
    ev, f = ifc_double
    settings = ifcopenshell.geom.settings()
    settings.set("use-world-coords", True)
    depth = ev.project.structure.slab_depth
    by_name = {t.name: t for t in ev.helix.threads}
    elements = [e for e in f.by_type("IfcProduct") if e.Representation is not None]
    # Every element has a body, but the ramps: they are the aggregates of their flights and kerbs.
    assert {e.id() for e in f.by_type("IfcElement")} - {e.id() for e in elements} == \
        {r.id() for r in f.by_type("IfcRamp")}
    checked = 0
    for el in elements:
        shape = ifcopenshell.geom.create_shape(settings, el)
        v = np.array(shape.geometry.verts).reshape(-1, 3)
        assert len(shape.geometry.faces) > 0
        if el.is_a("IfcRampFlight"):
            thread = by_name[el.Name.split(", storey")[0]]
            x, y = _plot_xy(v[:, 0], v[:, 1])
            top, r = _surface_offset(ev, thread, np.column_stack([x, y, v[:, 2]]))
            under, _ = _surface_offset(ev, thread, np.column_stack([x, y, v[:, 2] + depth]))
            # Every vertex is on the running surface or one slab depth under it.
            assert np.minimum(top, under).max() < 1e-3
            assert (top < 1e-3).sum() > 100 and (under < 1e-3).sum() > 100
            assert r.min() > thread.inner_radius - 1e-3 and r.max() < thread.outer_radius + 1e-3
            checked += 1
    assert checked == len(f.by_type("IfcRampFlight"))


@needs_ifc
def test_ifc_running_surface_at_mid_storey_is_at_the_mean_floor_level(ifc_double):
    # Worked by hand: each storey has equal landings and transitions at both ends, so
    # its profile is point-symmetric about the middle and the centre line there is at
    # the mean of the two floor levels.
    # Common practice, no single source (symmetry of a symmetric alignment).
    ev, f = ifc_double
    t = ev.helix.threads[0]
    levels = [lv.level for lv in ev.project.levels]
    flight = next(e for e in f.by_type("IfcRampFlight") if e.Name == f"{t.name}, storey 2")
    surface = next(r for r in flight.Representation.Representations if r.RepresentationIdentifier == "Surface")
    pts = np.array(surface.Items[0].Coordinates.CoordList) + [0.0, 0.0, levels[1]]  # storey placement
    cx, cy = ev.helix.centre
    mid = 0.5 * (t.profile.connections[1] + t.profile.connections[2])
    b = t.bearing(mid)
    want = np.array([cx + t.centre_radius * math.cos(b), cy + t.centre_radius * math.sin(b)])
    k = np.argmin(np.hypot(pts[:, 0] - want[0], pts[:, 1] - want[1]))
    assert np.hypot(*(pts[k, :2] - want)) < 1e-3
    assert abs(pts[k, 2] - 0.5 * (levels[1] + levels[2])) < 1e-3


# --- glTF and OBJ -------------------------------------------------------------------

trimesh = pytest.importorskip("trimesh") if importlib.util.find_spec("trimesh") else None
needs_mesh = pytest.mark.skipif(trimesh is None, reason="needs the mesh extra (trimesh)")


def _expected_meshes(ev):
    names = {f"{t.name}: {e}" for t in ev.helix.threads
             for e in ("running surface", "slab", "inner kerb", "outer kerb")}
    if ev.project.structure.wall_thickness > 0:
        names.add("outer wall")
    if ev.helix.core_radius > 0:
        names.add("central core")
    return names


@needs_mesh
def test_glb_reads_back_named_meshes_on_the_helicoid():
    # Source: trimesh (reference reader of glTF 2.0); glTF 2.0 Specification (2021)
    # section 3.4: +y up, so (x, y, z) = (E, level, -N); the grid inverted by hand.
    from helix.exports.mesh import mesh_files
    ev = _on_grid("demo-double")
    files = mesh_files(ev)
    assert files == mesh_files(ev)
    scene = trimesh.load(io.BytesIO(files["model.glb"]), file_type="glb")
    assert set(scene.geometry) == _expected_meshes(ev)
    for t in ev.helix.threads:
        node = f"{t.name}: running surface"
        transform, geom = scene.graph[node]
        v = trimesh.transform_points(scene.geometry[geom].vertices, transform)
        x, y = _plot_xy(v[:, 0], -v[:, 2])
        off, r = _surface_offset(ev, t, np.column_stack([x, y, v[:, 1]]))
        assert off.max() < 1e-3 and len(v) > 1000
        assert r.min() == pytest.approx(t.inner_radius, abs=1e-3) and r.max() == pytest.approx(t.outer_radius, abs=1e-3)


@needs_mesh
def test_obj_reads_back_in_site_coordinates():
    # Source: trimesh (reference reader of Wavefront OBJ); the grid inverted by hand.
    from helix.exports.mesh import mesh_files
    ev = _on_grid("demo-metric")
    text = mesh_files(ev)["model.obj"].decode()
    names = [line[2:] for line in text.splitlines() if line.startswith("o ")]
    assert set(names) == _expected_meshes(ev) and len(names) == len(set(names))
    mesh = trimesh.load(io.StringIO(text), file_type="obj", process=False, force="mesh")
    n_vertices = sum(1 for line in text.splitlines() if line.startswith("v "))
    assert len(mesh.vertices) == n_vertices
    assert len(mesh.faces) == sum(1 for line in text.splitlines() if line.startswith("f "))
    # The first object's vertices are the running surface.
    first = text.split("\no ")[1]
    v = np.array([[float(c) for c in line.split()[1:]] for line in first.splitlines() if line.startswith("v ")])
    x, y = _plot_xy(v[:, 0], v[:, 1])
    off, _ = _surface_offset(ev, ev.helix.threads[0], np.column_stack([x, y, v[:, 2]]))
    assert names[0].endswith("running surface") and off.max() < 1e-3


@needs_ifc
def test_ifc_conforms_to_the_schema(ifc_double):
    # Source: buildingSMART IFC4 EXPRESS schema (ISO 16739-1:2018), attribute types and
    # WHERE rules, checked by ifcopenshell.validate.
    import ifcopenshell.validate
    _, f = ifc_double
    log = ifcopenshell.validate.json_logger()
    ifcopenshell.validate.validate(f, log, express_rules=True)
    assert log.statements == []


@needs_mesh
@pytest.mark.parametrize("hand", [1, -1])
def test_solids_are_closed_and_the_slab_holds_its_volume(hand):
    # Source: Cavalieri's principle: a slab hung a constant depth d under a surface has
    # the volume (plan area) x d; the plan of a storey is the annulus sector
    # (r_o^2 - r_i^2) phi / 2.  Watertightness and winding by trimesh.
    from helix.exports.model import model_parts
    from helix.layout import with_design
    ev = helix.evaluate(with_design(helix.load_project("configs/demo-metric.yaml"), hand=hand))
    t = ev.helix.threads[0]
    d = ev.project.structure.slab_depth
    for part in model_parts(ev):
        mesh = trimesh.Trimesh(part.vertices, part.faces, process=False)
        assert mesh.is_winding_consistent
        if part.closed:
            assert mesh.is_watertight and mesh.volume > 0
        else:
            assert (mesh.face_normals[:, 2] > 0).all()  # the running surface faces up
        if part.kind == "slab":
            conn = t.profile.connections
            phi = conn[part.storey + 1] - conn[part.storey]
            want = 0.5 * (t.outer_radius ** 2 - t.inner_radius ** 2) * phi * d
            assert mesh.volume == pytest.approx(want, rel=2e-3)
