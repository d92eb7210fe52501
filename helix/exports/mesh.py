"""The helix as a 3-D mesh: glTF binary (``model.glb``) and OBJ (``model.obj``), via
trimesh (optional: ``helix-ramp-planner[mesh]``).

One named mesh per thread and element (``"helix: running surface"``, ``"up thread:
slab"``, ``"outer wall"``), all storeys together, in site-grid coordinates (easting,
northing, level; metres).  glTF is y-up (its convention): the mesh's vertices are
relative to the helix axis, in single precision, and one root node carries the axis's
easting and northing in double precision and turns (E, N, level) into glTF's (x, y, z) =
(E, level, -N), so large grid coordinates lose nothing.  OBJ has no axis convention: it
holds (E, N, level) as written, to 0.1 mm.

References
----------
Khronos Group, glTF 2.0 Specification (2021), section 3.4 (coordinate system: +y up,
metres) and 3.5 (node transforms); the Wavefront OBJ format (``v``, ``f``, ``o``).
"""
from __future__ import annotations

from typing import Any

import numpy as np

from ..evaluate import Evaluation
from .model import axis_origin, groups, model_parts, site_xyz

__all__ = ["mesh_files", "scene", "GLTF_FROM_SITE"]

#: glTF (x, y, z) from site (E, N, level): x = E, y = level, z = -N.
GLTF_FROM_SITE = np.array([[1.0, 0.0, 0.0, 0.0], [0.0, 0.0, 1.0, 0.0], [0.0, -1.0, 0.0, 0.0], [0.0, 0.0, 0.0, 1.0]])


def _merged(ev: Evaluation) -> list[tuple[str, np.ndarray, np.ndarray]]:
    """(name, site vertices, faces) of every thread's element, storeys merged."""
    out = []
    grid = ev.project.site.grid
    for name, parts in groups(model_parts(ev)).items():
        verts, faces, n = [], [], 0
        for p in parts:
            verts.append(site_xyz(p.vertices, grid))
            faces.append(p.faces + n)
            n += len(p.vertices)
        out.append((name, np.concatenate(verts), np.concatenate(faces)))
    return out


def scene(ev: Evaluation) -> Any:
    """A trimesh Scene: the meshes relative to the axis, under a root node placing them."""
    import trimesh
    e0, n0 = axis_origin(ev)
    root = GLTF_FROM_SITE.copy()
    root[:3, 3] = GLTF_FROM_SITE[:3, :3] @ np.array([e0, n0, 0.0])
    sc = trimesh.Scene()
    for name, v, f in _merged(ev):
        mesh = trimesh.Trimesh(v - [e0, n0, 0.0], f, process=False)
        sc.add_geometry(mesh, geom_name=name, node_name=name, transform=root)
    return sc


def _obj(ev: Evaluation) -> bytes:
    lines = [f"# {ev.project.name}: helix model, site grid (easting, northing, level), metres.",
             "# Design aid only: verify against the codes in force; local codes and licensed professionals govern."]
    n = 0
    for name, v, f in _merged(ev):
        lines.append(f"o {name}")
        lines += [f"v {x:.4f} {y:.4f} {z:.4f}" for x, y, z in v]
        lines += [f"f {a} {b} {c}" for a, b, c in f + n + 1]
        n += len(v)
    return ("\n".join(lines) + "\n").encode()


def mesh_files(ev: Evaluation) -> dict[str, bytes]:
    """``model.glb`` and ``model.obj`` (the registry's writer)."""
    from trimesh.exchange.gltf import export_glb
    return {"model.glb": export_glb(scene(ev), include_normals=False), "model.obj": _obj(ev)}
