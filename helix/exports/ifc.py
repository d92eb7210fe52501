"""The helix as an IFC4 building model (``model.ifc``), via ifcopenshell (optional:
``helix-ramp-planner[bim]``).

Spatial structure: ``IfcProject`` > ``IfcSite`` > ``IfcBuilding`` > one
``IfcBuildingStorey`` per level at its finished floor level.  The site's placement is the
site grid (:mod:`helix.site_grid`): its origin at the plot origin's easting and northing,
its x axis along the plot's ``+x`` turned by the grid rotation, so world coordinates are
(easting, northing, level) and the context's true north is grid north.

Each thread is an ``IfcRamp`` (``SPIRAL_RAMP``) aggregating, storey by storey, an
``IfcRampFlight`` (``SPIRAL``) whose body is the slab under the running surface (a closed
``IfcTriangulatedFaceSet`` of the slab depth; its 'Surface' representation is the running
surface alone) and the two kerbs (``IfcBuildingElementProxy``, object type ``KERB``: IFC4
has no kerb entity).  The outer wall is an ``IfcWall``, the central core an
``IfcColumn``.  Flights are also referenced in the storey they start from.  Property set
``Helix_Design`` on each ramp holds the design values and the rule set with its sources;
``Pset_RampFlightCommon`` gives each flight's clear width and slope.

The file is deterministic: GUIDs are derived from the element names (UUID version 5),
and the header carries a fixed time stamp.

References
----------
buildingSMART, IFC4 ADD2 TC1 (ISO 16739-1:2018): IfcRamp, IfcRampFlight, IfcRampTypeEnum
SPIRAL_RAMP, IfcRampFlightTypeEnum SPIRAL, IfcTriangulatedFaceSet, Pset_RampFlightCommon.
"""
from __future__ import annotations

import math
import uuid
from typing import Any

import numpy as np

from .._version import __version__
from ..evaluate import Evaluation
from .model import Part, model_parts

__all__ = ["ifc_model", "ifc_files", "guid"]

_NAMESPACE = uuid.UUID("6a1e1c00-0000-4000-8000-000000000013")
FIXED_TIME = "2000-01-01T00:00:00"  # no run dates: the same design gives the same bytes


def guid(name: str) -> str:
    """The IFC GlobalId (22 characters) of ``name``, the same on every run."""
    import ifcopenshell.guid
    return ifcopenshell.guid.compress(uuid.uuid5(_NAMESPACE, name).hex)


def _design_values(ev: Evaluation, thread_index: int) -> dict[str, Any]:
    t = ev.helix.threads[thread_index]
    rules = ev.project.rules
    storeys = [s for s in ev.storeys if s.thread == t.name]
    steepest = {line: max(s.gradient[line] for s in storeys) for line in ("inner kerb", "centre line", "outer kerb")}
    sources = [g.source for g in rules.gradient if getattr(g, "source", "")]
    values: dict[str, Any] = {
        "Layout": ("IfcLabel", ev.helix.layout),
        "Traffic": ("IfcLabel", t.traffic),
        "InnerKerbRadius": ("IfcPositiveLengthMeasure", t.inner_radius),
        "CentreLineRadius": ("IfcPositiveLengthMeasure", t.centre_radius),
        "OuterKerbRadius": ("IfcPositiveLengthMeasure", t.outer_radius),
        "CarriagewayWidth": ("IfcPositiveLengthMeasure", t.width),
        "LaneWidths": ("IfcLabel", ", ".join(f"{lane.name} {lane.width:.3f} m" for lane in t.lanes)),
        "TurnsPerStorey": ("IfcLabel", ", ".join(f"{s.turns:g}" for s in storeys)),
        "MaxGradientInnerKerb": ("IfcRatioMeasure", steepest["inner kerb"]),
        "MaxGradientCentreLine": ("IfcRatioMeasure", steepest["centre line"]),
        "MaxGradientOuterKerb": ("IfcRatioMeasure", steepest["outer kerb"]),
        "CrossFall": ("IfcRatioMeasure", t.cross_fall),
        "StructureRadius": ("IfcPositiveLengthMeasure", ev.helix.structure_radius),
        "SlabDepth": ("IfcPositiveLengthMeasure", ev.project.structure.slab_depth),
        "RuleSet": ("IfcLabel", rules.name),
        "RuleSetTitle": ("IfcText", rules.title),
        "GradientRuleSource": ("IfcText", "; ".join(sources) or "no gradient limit"),
        "Caution": ("IfcText", "Design aid only: verify; local codes and licensed professionals govern."),
    }
    if ev.headroom is not None and math.isfinite(ev.headroom.clear):
        values["ClearHeadroom"] = ("IfcPositiveLengthMeasure", ev.headroom.clear)
    if rules.clear_height is not None:
        values["ClearHeightRule"] = ("IfcPositiveLengthMeasure", rules.clear_height.value)
        values["ClearHeightRuleSource"] = ("IfcText", rules.clear_height.source)
    return values


def ifc_model(ev: Evaluation) -> Any:
    """The IFC4 model of ``ev`` as an ``ifcopenshell.file``."""
    import ifcopenshell

    proj, h = ev.project, ev.helix
    f = ifcopenshell.file(schema="IFC4")
    header = f.header
    header.file_name.name = "model.ifc"
    header.file_name.time_stamp = FIXED_TIME
    header.file_name.preprocessor_version = f"helix {__version__}"
    header.file_name.originating_system = f"helix {__version__}"
    header.file_name.author = ("",)
    header.file_name.organization = ("",)
    header.file_description.description = ("ViewDefinition [DesignTransferView]",)

    def point(xyz) -> Any:
        return f.create_entity("IfcCartesianPoint", tuple(float(v) for v in xyz))

    def axes(origin=(0.0, 0.0, 0.0), x_axis=(1.0, 0.0, 0.0)) -> Any:
        return f.create_entity("IfcAxis2Placement3D", point(origin), f.create_entity("IfcDirection", (0.0, 0.0, 1.0)),
                               f.create_entity("IfcDirection", tuple(float(v) for v in x_axis)))

    def placed(relative_to, origin=(0.0, 0.0, 0.0), x_axis=(1.0, 0.0, 0.0)) -> Any:
        return f.create_entity("IfcLocalPlacement", relative_to, axes(origin, x_axis))

    units = f.create_entity("IfcUnitAssignment", [
        f.create_entity("IfcSIUnit", UnitType=u, Name=n) for u, n in
        (("LENGTHUNIT", "METRE"), ("AREAUNIT", "SQUARE_METRE"), ("VOLUMEUNIT", "CUBIC_METRE"),
         ("PLANEANGLEUNIT", "RADIAN"))])
    context = f.create_entity("IfcGeometricRepresentationContext", ContextIdentifier="Model", ContextType="Model",
                              CoordinateSpaceDimension=3, Precision=1e-5, WorldCoordinateSystem=axes(),
                              TrueNorth=f.create_entity("IfcDirection", (0.0, 1.0)))
    body = f.create_entity("IfcGeometricRepresentationSubContext", ContextIdentifier="Body", ContextType="Model",
                           ParentContext=context, TargetView="MODEL_VIEW")
    project = f.create_entity("IfcProject", guid("project"), Name=proj.name, Description=proj.notes or None,
                              LongName="helix ramp (design aid: verify)", UnitsInContext=units,
                              RepresentationContexts=[context])
    grid = proj.site.grid
    c, s = math.cos(grid.rotation), math.sin(grid.rotation)
    site = f.create_entity("IfcSite", guid("site"), Name="site", CompositionType="ELEMENT",
                           Description="placement: the site grid (x easting, y northing) of the plot's origin",
                           ObjectPlacement=placed(None, (grid.origin[0], grid.origin[1], 0.0), (c, -s, 0.0)))
    building = f.create_entity("IfcBuilding", guid("building"), Name=proj.name, CompositionType="ELEMENT",
                               ObjectPlacement=placed(site.ObjectPlacement))
    f.create_entity("IfcRelAggregates", guid("project/site"), RelatingObject=project, RelatedObjects=[site])
    f.create_entity("IfcRelAggregates", guid("site/building"), RelatingObject=site, RelatedObjects=[building])
    storeys = []
    for i, lv in enumerate(proj.levels):
        storeys.append(f.create_entity("IfcBuildingStorey", guid(f"storey {i}"), Name=lv.name, CompositionType="ELEMENT",
                                       Elevation=float(lv.level),
                                       ObjectPlacement=placed(building.ObjectPlacement, (0.0, 0.0, lv.level))))
    f.create_entity("IfcRelAggregates", guid("building/storeys"), RelatingObject=building, RelatedObjects=storeys)

    def shape(parts: list[tuple[str, Part]], dz: float) -> Any:
        reps = []
        for ident, part in parts:
            v = np.round(part.vertices - [0.0, 0.0, dz], 6)
            faces = f.create_entity("IfcTriangulatedFaceSet",
                                    f.create_entity("IfcCartesianPointList3D", [tuple(map(float, p)) for p in v]),
                                    None, bool(part.closed), [tuple(int(i) + 1 for i in tri) for tri in part.faces])
            reps.append(f.create_entity("IfcShapeRepresentation", body if ident == "Body" else context, ident,
                                        "Tessellation", [faces]))
        return f.create_entity("IfcProductDefinitionShape", Representations=reps)

    def element(entity: str, name: str, storey: int, parts: list[tuple[str, Part]], **attrs) -> Any:
        z = float(proj.levels[storey].level)
        return f.create_entity(entity, guid(name), Name=name, ObjectPlacement=placed(storeys[storey].ObjectPlacement),
                               Representation=shape(parts, z), **attrs)

    parts = model_parts(ev)
    contained: list[Any] = []
    referenced: dict[int, list[Any]] = {}
    for ti, t in enumerate(h.threads):
        ramp = f.create_entity("IfcRamp", guid(f"ramp {t.name}"), Name=t.name, PredefinedType="SPIRAL_RAMP",
                               Description="helical ramp: running surface on the flights' slabs",
                               ObjectPlacement=placed(storeys[t.levels[0]].ObjectPlacement))
        contained.append(ramp)
        pieces = []
        mine = [p for p in parts if p.thread == t.name]
        surfaces = {p.storey: p for p in mine if p.kind == "running_surface"}
        storey_rows = [s for s in ev.storeys if s.thread == t.name]
        for k, p in enumerate(p for p in mine if p.kind == "slab"):
            assert p.storey is not None
            flight = element("IfcRampFlight", f"{t.name}, storey {k + 1}", p.storey,
                             [("Body", p), ("Surface", surfaces[p.storey])], PredefinedType="SPIRAL",
                             Description=f"slab {proj.structure.slab_depth:.3f} m deep under the running surface")
            pieces.append(flight)
            referenced.setdefault(p.storey, []).append(flight)
            _pset(f, flight, "Pset_RampFlightCommon", {
                "ClearWidth": ("IfcPositiveLengthMeasure", t.width),
                "Slope": ("IfcPlaneAngleMeasure", math.atan(storey_rows[k].gradient["centre line"]))})
        for p in mine:
            if p.kind == "kerb":
                assert p.storey is not None
                pieces.append(element("IfcBuildingElementProxy", p.name, p.storey, [("Body", p)],
                                      ObjectType="KERB", PredefinedType="USERDEFINED"))
        f.create_entity("IfcRelAggregates", guid(f"ramp {t.name}/parts"), RelatingObject=ramp, RelatedObjects=pieces)
        _pset(f, ramp, "Helix_Design", _design_values(ev, ti))
    for p in parts:
        if p.kind == "outer_wall":
            contained.append(element("IfcWall", p.name, 0, [("Body", p)], PredefinedType="SOLIDWALL",
                                     Description=f"{proj.structure.wall_thickness:.3f} m thick"))
        elif p.kind == "core":
            contained.append(element("IfcColumn", p.name, 0, [("Body", p)], PredefinedType="COLUMN",
                                     Description="the central core inside the inner kerbs and their clearance"))
    f.create_entity("IfcRelContainedInSpatialStructure", guid("contained"), RelatedElements=contained,
                    RelatingStructure=storeys[0])
    for storey, items in sorted(referenced.items()):
        f.create_entity("IfcRelReferencedInSpatialStructure", guid(f"referenced {storey}"), RelatedElements=items,
                        RelatingStructure=storeys[storey])
    return f


def _pset(f: Any, obj: Any, name: str, values: dict[str, tuple[str, Any]]) -> None:
    props = [f.create_entity("IfcPropertySingleValue", key, None, f.create_entity(kind, value), None)
             for key, (kind, value) in values.items()]
    pset = f.create_entity("IfcPropertySet", guid(f"{obj.GlobalId}/{name}"), Name=name, HasProperties=props)
    f.create_entity("IfcRelDefinesByProperties", guid(f"{obj.GlobalId}/{name}/rel"), RelatedObjects=[obj],
                    RelatingPropertyDefinition=pset)


def ifc_files(ev: Evaluation) -> dict[str, bytes]:
    """``model.ifc`` (the registry's writer)."""
    return {"model.ifc": ifc_model(ev).to_string().encode("utf-8")}
