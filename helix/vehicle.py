"""Design vehicles: the dimensions the ramp must carry, each with its source.

A vehicle is a YAML file in ``configs/vehicles/`` or an inline mapping in the
project file, with the same keys (see DEVELOPERS.md).
"""
from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

from .errors import InputError, Node, _short, finite, require
from .library_files import find_named, read_yaml

__all__ = ["Vehicle", "load_vehicle", "VEHICLE_KEYS"]

#: Dimension keys; all are lengths in metres.  The first six are required.
VEHICLE_KEYS = ("length", "width", "height", "wheelbase", "front_overhang", "rear_overhang",
                "width_with_mirrors", "track", "ground_clearance", "front_overhang_clearance",
                "rear_overhang_clearance", "min_turning_radius")
_REQUIRED = VEHICLE_KEYS[:6]
#: No road vehicle that uses a car-park ramp comes near this in any dimension (an
#: articulated lorry is about 16.5 m long); larger values are typos.
MAX_DIMENSION = 30.0


@dataclass(frozen=True)
class Vehicle:
    """A design vehicle in metres: body, wheelbase, overhangs, optional track, ground
    and overhang clearances and turning radius, each with its source in ``sources``.

    >>> import helix
    >>> v = helix.load_project(helix.demo_file("demo-metric")).vehicle
    >>> v.name, v.length, round(v.front_overhang + v.wheelbase + v.rear_overhang, 2)
    ('aashto-p', 5.8, 5.8)
    """

    name: str
    title: str
    length: float
    width: float
    height: float
    wheelbase: float
    front_overhang: float
    rear_overhang: float
    width_with_mirrors: float | None = None
    track: float | None = None
    ground_clearance: float | None = None
    front_overhang_clearance: float | None = None
    rear_overhang_clearance: float | None = None
    min_turning_radius: float | None = None
    notes: str = ""
    sources: dict = field(default_factory=dict, compare=False, hash=False)

    def __post_init__(self):
        for key in VEHICLE_KEYS:
            v = getattr(self, key)
            require((v is None and key not in _REQUIRED) or finite(v, 0, MAX_DIMENSION, open_low=True), self, key,
                    v, f"a positive length of at most {MAX_DIMENSION:g} m")
        total = self.front_overhang + self.wheelbase + self.rear_overhang
        require(abs(total - self.length) <= 0.05 + 1e-9, self, "length", self.length,
                f"front overhang + wheelbase + rear overhang ({total:.3f} m) within 0.05 m")

    def dimensions(self) -> dict[str, float]:
        return {k: getattr(self, k) for k in VEHICLE_KEYS if getattr(self, k) is not None}


def _from_node(root: Node, name: str) -> Vehicle:
    root.require_mapping()
    values: dict[str, float] = {}
    sources: dict[str, str] = {}
    for key in VEHICLE_KEYS:
        node = root.child(key, required=key in _REQUIRED)
        if node is None:
            continue
        if isinstance(node.data, dict):
            values[key] = node.child("value").length(positive=True, maximum=MAX_DIMENSION)
            src = node.child("source", required=False)
            sources[key] = src.text() if src is not None else "not stated"
            node.done()
        else:
            values[key] = node.length(positive=True, maximum=MAX_DIMENSION)
            sources[key] = "not stated"
    title = root.child("title", required=False)
    notes = root.child("notes", required=False)
    root.child("name", required=False)
    root.done()
    total = values["front_overhang"] + values["wheelbase"] + values["rear_overhang"]
    if abs(total - values["length"]) > 0.05:
        raise root.error(
            f"length {values['length']:.3f} m differs from front overhang + wheelbase + rear "
            f"overhang = {total:.3f} m; expected them to agree within 0.05 m", root._key_path("length"))
    return Vehicle(name=name, title=title.text() if title is not None else name,
                   notes=notes.text() if notes is not None else "", sources=sources, **values)


def load_vehicle(spec: Node, project_dir: Path | None) -> Vehicle:
    """A vehicle from a project file's ``vehicle`` key: a library name or a mapping."""
    if isinstance(spec.data, str):
        path = find_named("vehicles", spec.text(), project_dir, spec.file, spec.path)
        root = Node(read_yaml(path), str(path))
        return _from_node(root, spec.text())
    if isinstance(spec.data, dict):
        # text(), not str(): str() of a YAML alias bomb never finishes.
        name = spec.child("name").text() if spec.has("name") else "inline vehicle"
        return _from_node(spec, name)
    raise InputError(spec.file, spec.path,
                     f"got {_short(spec.data)}; expected a vehicle name such as 'aashto-p' or a mapping of dimensions")
