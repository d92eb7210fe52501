"""The output formats of ``-o`` in one table, for ``--formats``.

Each row is a format name, what it writes, the package it needs beyond the core install
(with the pip extra that brings it) and, for formats made from the checked design alone,
the function that writes them.  The command line reads only this table: a new export
adds one row here (with its ``writer``) and appears in ``--formats``, its help and its
error messages.  Importing this module is cheap (no numpy, no matplotlib).
"""
from __future__ import annotations

import importlib.util
from dataclasses import dataclass
from typing import Any, Callable

from .errors import InputError

__all__ = ["Format", "FORMATS", "DEFAULT", "parse_formats", "DEFAULT_DPI", "MIN_DPI", "MAX_DPI", "parse_dpi"]


@dataclass(frozen=True)
class Format:
    """One output format of ``-o``.

    ``needs`` is an importable module the format requires beyond the core install and
    ``extra`` the pip extra that installs it; ``writer`` (optional) makes the format's
    files from the checked design (an ``Evaluation``) as ``{file name: bytes}``; formats
    without one are made by the command line's own report pipeline."""

    name: str
    writes: str
    needs: str | None = None
    extra: str | None = None
    writer: Callable[[Any], dict[str, bytes]] | None = None

    def available(self) -> bool:
        return self.needs is None or importlib.util.find_spec(self.needs) is not None


def _export(name: str) -> Format:
    """A row for an export of :mod:`helix.exports` (its registry holds the files, the
    extra and the writer; the writer is imported only when used)."""
    from . import exports
    fmt = exports.FORMATS[name]
    return Format(name, f"{', '.join(fmt.files)}, {fmt.description}", needs=fmt.modules[0] if fmt.modules else None,
                  extra=fmt.extra, writer=lambda ev: fmt.load()(ev))


#: Every format ``--formats`` accepts, in the order help lists them.
FORMATS: dict[str, Format] = {f.name: f for f in (
    Format("pdf", "report.pdf, the numbered design report with every figure as a page"),
    Format("md", "report.md, the same report in Markdown (its figures show the PNG, and link the SVG, "
                 "of those written)"),
    Format("png", "a PNG of every figure (plan, sections, cross-section, clearances, gradient; "
                  "with 'design' also pareto and options), at --dpi"),
    Format("svg", "an SVG of every figure"),
    Format("csv", "setting_out.csv, the setting-out stations"),
    Format("json", "result.json (and design.json with 'design'), every value in SI"),
    _export("dxf"), _export("ifc"), _export("mesh"), _export("html"),
)}

#: What ``-o`` writes when ``--formats`` is not given: what a design report is read,
#: checked and set out from (the PDF to read and print, with every figure as a vector
#: page; the Markdown and a PNG of each figure to read on screen; the setting-out CSV;
#: JSON for other tools; the DXF plan for CAD, where its extra is installed).  The rest
#: is on request: ``svg`` (each figure again as vectors, which the PDF's pages already
#: are), ``ifc``, ``mesh`` and ``html`` (the building model, the mesh and the 3-D viewer
#: come later in a project than the report, and bring the largest files and the slowest
#: libraries: trimesh with scipy takes 0.5 s to import, ifcopenshell 0.15 s).
DEFAULT = ("pdf", "md", "png", "csv", "json", "dxf")

#: PNG resolution by default: 150 dpi puts an A3 sheet at 2480 x 1754 pixels, sharp on
#: screen and in the Markdown report.  300 dpi takes twice the time (3.0 s against 1.4 s
#: of CPU for the seven sheets of a design: benchmarks/report_stages.py -- --dpi 300), longer than
#: the PDF that runs beside it, so the report would wait for its rasters; the sheets to
#: print are the PDF's vectors.  Ask for ``--dpi 300`` for a print-quality raster.
DEFAULT_DPI = 150
MIN_DPI, MAX_DPI = 50, 600  # 600 dpi keeps an A3 raster under 300 MB of memory


def _names() -> str:
    return ", ".join(FORMATS)


def parse_formats(text: str | None) -> tuple[str, ...]:
    """The formats named in ``--formats`` (comma separated), in table order; ``None``
    gives :data:`DEFAULT` less the formats whose extra is not installed.  An unknown
    name, or one whose extra is missing, is an input error on the command line."""
    if text is None:
        return tuple(n for n in DEFAULT if FORMATS[n].available())
    names = [n.strip().lower() for n in text.split(",") if n.strip()]
    if not names:
        raise InputError("command line", "--formats", f"got {text[:80]!r}; expected a comma-separated list of "
                         f"{_names()}")
    for n in names:
        if n not in FORMATS:
            raise InputError("command line", "--formats", f"unknown format {n[:40]!r}; expected a "
                             f"comma-separated list of {_names()}")
        f = FORMATS[n]
        if not f.available():
            raise InputError("command line", "--formats", f"format {n!r} needs {f.needs}, which is not installed; "
                             f"expected it installed (pip install 'helix-ramp-planner[{f.extra}]') or the "
                             "format left out")
    return tuple(n for n in FORMATS if n in names)


def parse_dpi(text: str | None) -> int:
    """The PNG resolution of ``--dpi`` (default :data:`DEFAULT_DPI`)."""
    if text is None:
        return DEFAULT_DPI
    try:
        value = int(text)
    except ValueError:
        value = 0
    if not MIN_DPI <= value <= MAX_DPI:
        raise InputError("command line", "--dpi", f"got {text[:40]!r}; expected a whole number of dots per inch "
                         f"from {MIN_DPI} to {MAX_DPI} such as '300'")
    return value
