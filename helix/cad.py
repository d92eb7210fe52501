"""Compatibility import: the DXF plan moved to :mod:`helix.exports.dxf`."""
from .exports.dxf import LAYERS, dxf_available, plan_dxf

__all__ = ["dxf_available", "plan_dxf", "LAYERS"]
