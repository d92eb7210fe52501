"""Output formats for the drawing office and the building model, in one registry.

:data:`FORMATS` maps a format's name to its :class:`Format`: the files it writes, the
optional extra that supplies its library, and its writer (``module:function``, imported
only when used, so ``helix --help`` stays fast).  The command line writes every format
whose library is installed and names, in one line, the extra that would add the others
(:func:`missing_note`).  Every writer takes an :class:`~helix.evaluate.Evaluation` and
returns ``{file name: bytes}``, deterministic, in site-grid coordinates
(:mod:`helix.site_grid`).

To add a format: a module here with a writer, and one entry in :data:`FORMATS`.
"""
from __future__ import annotations

import importlib
import importlib.util
from dataclasses import dataclass
from typing import Any, Callable

__all__ = ["Format", "FORMATS", "available", "export_files", "missing_note", "DISTRIBUTION"]

#: The name pip installs helix under (extras are spelled on it).
DISTRIBUTION = "helix-ramp-planner"


@dataclass(frozen=True)
class Format:
    """One output format: ``files`` it writes, the ``extra`` that installs the
    ``modules`` it needs (``None``: core only), and its ``writer``."""

    name: str
    files: tuple[str, ...]
    description: str
    writer: str  # "module:function" inside helix.exports
    extra: str | None = None
    modules: tuple[str, ...] = ()

    def load(self) -> Callable[[Any], dict[str, bytes]]:
        module, function = self.writer.split(":")
        return getattr(importlib.import_module(f"{__name__}.{module}"), function)


FORMATS: dict[str, Format] = {f.name: f for f in (
    Format("dxf", ("plan.dxf",), "plan with 3-D kerb polylines (DXF R2010)", "dxf:dxf_files", "cad", ("ezdxf",)),
    Format("ifc", ("model.ifc",), "building model (IFC4): storeys, ramps, flights, kerbs, walls",
           "ifc:ifc_files", "bim", ("ifcopenshell",)),
    Format("mesh", ("model.glb", "model.obj"), "3-D mesh, one named mesh per thread and element (glTF, OBJ)",
           "mesh:mesh_files", "mesh", ("trimesh",)),
    Format("html", ("model.html",), "offline 3-D viewer page (WebGL, no network)", "viewer:viewer_files"),
)}


def available(fmt: Format) -> bool:
    """Whether every library ``fmt`` needs is installed."""
    return all(importlib.util.find_spec(m) is not None for m in fmt.modules)


def export_files(ev: Any, names: tuple[str, ...] | None = None) -> dict[str, bytes]:
    """The files of the formats ``names`` (default: all) whose libraries are installed."""
    files: dict[str, bytes] = {}
    for name in FORMATS if names is None else names:
        fmt = FORMATS[name]
        if available(fmt):
            files.update(fmt.load()(ev))
    return files


def missing_note(names: tuple[str, ...] | None = None) -> str | None:
    """One line naming the extras that would add the formats not written, or ``None``."""
    missing = [FORMATS[n] for n in (FORMATS if names is None else names) if not available(FORMATS[n])]
    if not missing:
        return None
    extras = ",".join(sorted({f.extra for f in missing if f.extra}))
    files = ", ".join(f for m in missing for f in m.files)
    return f"not written: {files} (install '{DISTRIBUTION}[{extras}]' for them)"
